// Tests of the typo guards and the model-scope caution on resolved obligors (book/obligor.hpp),
// and of the YAML reader's message for a comma inside a number.
#include <doctest/doctest.h>

#include <cmath>
#include <string>
#include <vector>

#include "firmcall/book/obligor.hpp"
#include "firmcall/io/obligor_io.hpp"

using namespace firmcall;

namespace {
ObligorRecord record(double equity_vol) {
  ObligorRecord rec;
  rec.get(TextField::id) = "TYP-1";
  rec.get(TextField::sector) = "Transport";
  rec.set(NumField::market_cap, 1000.0);
  rec.set(NumField::equity_vol, equity_vol);
  rec.set(NumField::short_term_debt, 400.0);
  rec.set(NumField::long_term_debt, 600.0);
  rec.set(NumField::rate, 0.03);
  return rec;
}

ResolvedObligor resolve(const ObligorRecord& rec, const ScoreSettings& s = {}) {
  ResolvedObligor r;
  resolve_obligor(rec, BookDefaults{}, s, r);
  return r;
}

std::vector<std::string> notes_of(const ObligorRecord& rec, const ResolvedObligor& r, double pd,
                                  double leverage) {
  std::vector<std::string> notes;
  append_input_notes(rec, r, pd, leverage, ScoreSettings{}, notes);
  return notes;
}

bool has(const std::string& text, const std::string& part) {
  return text.find(part) != std::string::npos;
}
}  // namespace

TEST_CASE("an equity_vol above the warning bound is noted, kept as given, and refused when strict") {
  // The bound 2.0 (200% a year) is the shipped default (docs/settings.md); "above" is strict.
  CHECK(ScoreSettings{}.equity_vol_warn_above == 2.0);
  CHECK_FALSE(resolve(record(2.0)).has(InputCaution::high_equity_vol));
  CHECK_FALSE(resolve(record(0.35)).has(InputCaution::high_equity_vol));
  const ResolvedObligor r = resolve(record(5.0));
  REQUIRE(r.ok());
  CHECK(r.has(InputCaution::high_equity_vol));
  CHECK(r.inputs.equity_vol_annual == 5.0);  // the note never changes the value used
  // 5 as an annualised decimal is 500% (arithmetic); 5% would be 0.05.
  auto notes = notes_of(record(5.0), r, 0.61, 0.5);
  REQUIRE(notes.size() == 1);
  CHECK(has(notes[0], "obligor 'TYP-1'"));
  CHECK(has(notes[0], "field 'equity_vol'"));
  CHECK(has(notes[0], "500%"));
  CHECK(has(notes[0], "give 0.05"));
  CHECK(has(notes[0], "PD of 61% (above 50%)"));
  notes = notes_of(record(5.0), r, 0.3, 0.5);
  REQUIRE(notes.size() == 1);
  CHECK_FALSE(has(notes[0], "above 50%"));

  ScoreSettings strict;
  strict.strict_inputs = true;
  const ResolvedObligor refused = resolve(record(5.0), strict);
  CHECK_FALSE(refused.ok());
  CHECK(has(refused.error, "field 'equity_vol'"));
  CHECK(has(refused.error, "strict_inputs"));
  CHECK(has(refused.error, "got 5"));
  CHECK(resolve(record(0.35), strict).ok());
}

TEST_CASE("market_cap and share_price x shares_outstanding differing by more than 1% are noted") {
  ObligorRecord rec = record(0.3);
  rec.set(NumField::market_cap, 800.0);
  rec.set(NumField::share_price, 5.0);
  rec.set(NumField::shares_outstanding, 100.0);  // 500: 37.5% below 800
  ResolvedObligor r = resolve(rec);
  REQUIRE(r.ok());
  CHECK(r.has(InputCaution::equity_value_differs));
  CHECK(r.inputs.equity_value == 800.0);  // market_cap is used, as before
  const auto notes = notes_of(rec, r, 0.01, 0.5);
  REQUIRE(notes.size() == 1);
  CHECK(has(notes[0],
            "obligor 'TYP-1': field 'market_cap': 800 differs from share_price x shares_outstanding = 500"));
  // The 1% tolerance (common practice for a rounded quoted price): 8.08 x 100 = 808 is 1% above 800.
  rec.set(NumField::share_price, 8.08);
  CHECK_FALSE(resolve(rec).has(InputCaution::equity_value_differs));
  rec.set(NumField::share_price, 8.1);  // 810: 1.25% above
  CHECK(resolve(rec).has(InputCaution::equity_value_differs));
  ScoreSettings strict;
  strict.strict_inputs = true;
  r = resolve(rec, strict);
  CHECK_FALSE(r.ok());
  CHECK(has(r.error, "field 'market_cap'"));
}

TEST_CASE("financial firms: by sector name, or by a model leverage above the documented level") {
  for (const char* s : {"Finance", "Financials", "Financial Services", "Banks", "banking", "INSURANCE",
                        "Reinsurance", "Consumer finance"}) {
    CHECK(is_financial_sector(s));
  }
  for (const char* s : {"", "Transport", "Energy", "Healthcare", "Real Estate", "Utilities"}) {
    CHECK_FALSE(is_financial_sector(s));
  }
  ObligorRecord rec = record(0.3);
  rec.get(TextField::sector) = "Banks";
  const ResolvedObligor bank = resolve(rec);
  REQUIRE(bank.ok());
  CHECK(bank.has(InputCaution::financial_sector));
  auto notes = notes_of(rec, bank, 0.0015, 0.945);
  REQUIRE(notes.size() == 1);  // one caution per obligor, sector first
  CHECK(has(notes[0], "obligor 'TYP-1': sector 'Banks' is a financial firm"));
  CHECK(has(notes[0], "does not fit banks, insurers"));

  // Leverage DP/V above 0.92 (scoring.financial_leverage_above, common practice: banks hold equity
  // near 5-8% of assets), whatever the sector.
  const ObligorRecord plain = record(0.3);
  const ResolvedObligor r = resolve(plain);
  CHECK_FALSE(has_input_notes(r, 0.92, ScoreSettings{}));
  CHECK(notes_of(plain, r, 0.01, 0.5).empty());
  CHECK(notes_of(plain, r, std::nan(""), std::nan("")).empty());  // not scored: no leverage note
  notes = notes_of(plain, r, 0.01, 0.945);
  REQUIRE(notes.size() == 1);
  CHECK(has(notes[0], "obligor 'TYP-1': leverage DP/V 0.945 is above 0.92"));
}

TEST_CASE("YAML: a comma inside a number gets a message saying so") {
  // In a flow map YAML ends the value at the comma (YAML 1.2, flow mappings): market_cap 1, key 200.
  Book b = parse_yaml_book(
      "obligors:\n"
      "  - {id: A, market_cap: 1,200, equity_vol: 0.3, short_term_debt: 1, long_term_debt: 1, rate: 0.03}\n"
      "  - {id: B, market_cap: 1,200,500, equity_vol: 0.3}\n"
      "  - id: C\n"
      "    market_cap: 1,200\n"
      "  - {id: D, equity_vol: 0,35, market_cap: 10}\n",
      "c.yaml");
  REQUIRE(b.obligors.size() == 4);
  CHECK(b.obligors[0].read_error.rfind("field 'market_cap': a comma inside the number '1,200'", 0) == 0);
  CHECK_FALSE(has(b.obligors[0].read_error, "unknown field"));
  CHECK(b.obligors[1].read_error.rfind("field 'market_cap': a comma inside the number '1,200,500'", 0) == 0);
  CHECK(b.obligors[2].read_error.rfind("field 'market_cap': a comma inside the number '1,200'", 0) == 0);
  CHECK(b.obligors[3].read_error.rfind("field 'equity_vol': a comma inside the number '0,35'", 0) == 0);
  // A key that is only digits but not after a number is still an unknown field.
  b = parse_yaml_book("obligors:\n  - {id: E, 200: 1}\n", "c.yaml");
  CHECK(has(b.obligors[0].read_error, "unknown field '200'"));
}
