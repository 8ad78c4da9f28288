// Tests of reading obligor books (CSV and YAML) and of resolving each obligor's model inputs.
#include <doctest/doctest.h>

#include <cmath>
#include <cstdlib>
#include <cstring>
#include <random>
#include <string>
#include <vector>

#include "firmcall/book/errors.hpp"
#include "firmcall/io/csv.hpp"
#include "firmcall/io/obligor_io.hpp"

using namespace firmcall;

namespace {
ResolvedObligor resolve(const ObligorRecord& rec, const BookDefaults& book = {},
                        const ScoreSettings& s = {}) {
  ResolvedObligor r;
  resolve_obligor(rec, book, s, r);
  return r;
}

const char* const kHeader = "id,market_cap,equity_vol,short_term_debt,long_term_debt,rate\n";
}  // namespace

TEST_CASE("CSV: columns in any order, quotes, CRLF, BOM, blank lines and unused columns") {
  const std::string text =
      "\xEF\xBB\xBF"
      "rate,equity_vol,note,id,name,market_cap,short_term_debt,long_term_debt\r\n"
      "0.03,0.3,\"a, b\",A1,\"Alpha \"\"Quoted\"\" Ltd\",1000,100,200\r\n"
      "\r\n"
      "0.04, 0.25 ,x,B2,\"Beta\nTwo Lines\",2e3,150,0\r\n";
  const Book book = parse_csv_book(text, "mem.csv");
  REQUIRE(book.obligors.size() == 2);
  const ObligorRecord& a = book.obligors[0];
  CHECK(a.get(TextField::id) == "A1");
  CHECK(a.get(TextField::name) == "Alpha \"Quoted\" Ltd");
  CHECK(a.get(NumField::market_cap) == 1000.0);
  CHECK(a.get(NumField::rate) == 0.03);
  CHECK(a.line == 2);
  CHECK(a.read_error.empty());
  const ObligorRecord& b = book.obligors[1];
  CHECK(b.get(TextField::name) == "Beta\nTwo Lines");
  CHECK(b.get(NumField::market_cap) == 2000.0);
  CHECK(b.get(NumField::equity_vol) == 0.25);
  CHECK(b.line == 4);
  REQUIRE(book.notes.size() == 1);
  CHECK(book.notes[0] == "mem.csv:1: note: column 'note' is not used");
}

TEST_CASE("CSV: header errors are file errors naming the column") {
  CHECK_THROWS_WITH_AS(parse_csv_book("name,market_cap,equity_vol\n", "b.csv"),
                       "b.csv:1: header: required column 'id' is missing", InputError);
  CHECK_THROWS_WITH_AS(parse_csv_book("id,equity_vol\nA,0.3\n", "b.csv"),
                       "b.csv:1: header: required column 'market_cap' (or 'share_price' with "
                       "'shares_outstanding') is missing",
                       InputError);
  CHECK_THROWS_WITH_AS(parse_csv_book("id,market_cap\nA,3\n", "b.csv"),
                       "b.csv:1: header: required column 'equity_vol' is missing", InputError);
  CHECK_THROWS_WITH_AS(parse_csv_book("id,market_cap,equity_vol,market_cap\n", "b.csv"),
                       "b.csv:1: header: column 'market_cap' appears twice", InputError);
  CHECK_THROWS_WITH_AS(parse_csv_book("", "b.csv"), "b.csv: empty file: a header row is required",
                       InputError);
  CHECK_THROWS_WITH_AS(parse_csv_book("id,,equity_vol,market_cap\n", "b.csv"),
                       "b.csv:1: header: column 2 has no name", InputError);
}

TEST_CASE("CSV: bad cells are row errors naming the field, other rows still read") {
  const std::string text = std::string(kHeader) +
                           "A,1000,35%,1,2,0.03\n"
                           "B,1e999,0.3,1,2,0.03\n"
                           "C,1000,inf,1,2,0.03\n"
                           "D,1000,0.3\n"
                           "E,1000,0.3,1,2,0.03\n"
                           "F,\"1000,3,0.3,1,2,0.03\n";
  const Book book = parse_csv_book(text, "b.csv");
  REQUIRE(book.obligors.size() == 6);
  CHECK(book.obligors[0].read_error ==
        "field 'equity_vol': expected a finite decimal number such as 0.35, got '35%'");
  CHECK(book.obligors[1].read_error ==
        "field 'market_cap': expected a finite decimal number such as 0.35, got '1e999'");
  CHECK(book.obligors[2].read_error ==
        "field 'equity_vol': expected a finite decimal number such as 0.35, got 'inf'");
  CHECK(book.obligors[3].read_error == "row has 3 fields, the header has 6");
  CHECK(book.obligors[4].read_error.empty());
  CHECK(book.obligors[5].read_error == "a quoted field is never closed");
}

TEST_CASE("currency: a code of three upper-case letters, else the settings default, else none") {
  const std::string text =
      "id,currency,market_cap,equity_vol,short_term_debt,long_term_debt,rate\n"
      "A,GBP,1000,0.3,100,200,0.03\n"
      "B,,1000,0.3,100,200,0.03\n"
      "C,eur,1000,0.3,100,200,0.03\n"
      "D,Euro,1000,0.3,100,200,0.03\n";
  const Book book = parse_csv_book(text, "c.csv");
  REQUIRE(book.obligors.size() == 4);
  ScoreSettings settings;
  CHECK(resolve(book.obligors[0]).ok());
  CHECK(obligor_currency(book.obligors[0], settings) == "GBP");
  CHECK(resolve(book.obligors[1]).ok());
  CHECK(obligor_currency(book.obligors[1], settings) == "");
  REQUIRE(settings.currency.set("CHF"));
  CHECK(obligor_currency(book.obligors[0], settings) == "GBP");  // the obligor's own wins
  CHECK(obligor_currency(book.obligors[1], settings) == "CHF");
  CHECK(resolve(book.obligors[2]).error ==
        "field 'currency': expected three upper-case letters (ISO 4217 style, e.g. EUR), got 'eur'");
  CHECK(resolve(book.obligors[3]).error ==
        "field 'currency': expected three upper-case letters (ISO 4217 style, e.g. EUR), got 'Euro'");
}

TEST_CASE("number cells: decimal and scientific notation accepted, the rest refused") {
  double v = 0;
  CHECK(parse_number("0.35", v));
  CHECK(v == 0.35);
  CHECK(parse_number(" 1.5e3 ", v));
  CHECK(v == 1500.0);
  CHECK(parse_number("+2", v));
  CHECK(v == 2.0);
  CHECK(parse_number("-0.01", v));
  CHECK(v == -0.01);
  for (const char* bad :
       {"", "35%", "1,000", "0,35", "nan", "NaN", "inf", "-inf", "1e400", "abc", "0x10", "1 2"}) {
    CAPTURE(bad);
    CHECK_FALSE(parse_number(bad, v));
  }
}

TEST_CASE("number cells: every decimal reads to the same double as the C library's strtod") {
  // Reference: strtod (C standard library, correctly rounded in glibc). Covers the fast path for
  // plain decimals and its edges: 2^53 and 2^53 + 1, 18 and 19 digits, 22 and 23 decimals.
  std::mt19937_64 rng(20261202);
  std::vector<std::string> cells = {"0",
                                    "-0",
                                    "1.",
                                    ".5",
                                    "-.5",
                                    "00012.5000",
                                    "9007199254740992",
                                    "9007199254740993",
                                    "0.1",
                                    "123456789012345678",
                                    "1234567890123456789",
                                    "0.0000000000000000000001",
                                    "0.00000000000000000000001",
                                    "4.35",
                                    "633.64"};
  for (int i = 0; i < 200000; ++i) {
    std::string c = (rng() % 4 == 0) ? "-" : "";
    const int int_digits = static_cast<int>(rng() % 12);
    const int frac_digits = static_cast<int>(rng() % 24);
    for (int d = 0; d < int_digits; ++d) c += static_cast<char>('0' + rng() % 10);
    if (int_digits == 0) c += '0';
    if (frac_digits > 0) c += '.';
    for (int d = 0; d < frac_digits; ++d) c += static_cast<char>('0' + rng() % 10);
    cells.push_back(c);
  }
  std::size_t mismatches = 0;
  for (const std::string& c : cells) {
    double ours = 0.0;
    const bool ok = parse_number(c, ours);
    char* end = nullptr;
    const double ref = std::strtod(c.c_str(), &end);
    const bool ref_ok = end == c.c_str() + c.size();
    if (ok != ref_ok || (ok && std::memcmp(&ours, &ref, sizeof ours) != 0)) {
      ++mismatches;
      if (mismatches < 5) {
        CAPTURE(c);
        CHECK(ok == ref_ok);
        CHECK(ours == ref);
      }
    }
  }
  CHECK(mismatches == 0);
}

TEST_CASE("duplicate ids: the later obligor is invalid and names the first line") {
  const Book book =
      parse_csv_book(std::string(kHeader) + "A,1,0.3,1,1,0\nB,1,0.3,1,1,0\nA,2,0.3,1,1,0\n", "d.csv");
  REQUIRE(book.obligors.size() == 3);
  CHECK(book.obligors[0].read_error.empty());
  CHECK(book.obligors[2].read_error == "field 'id': duplicate of the obligor at line 2");
}

TEST_CASE("YAML book: defaults, per-obligor overrides, unknown keys") {
  const std::string text = R"(book: Test book
as_of: 2026-11-30
defaults: {rate: 0.02, horizon: 2, default_point_weight: 0.25}
obligors:
  - {id: A, market_cap: 100, equity_vol: 0.4, short_term_debt: 50, long_term_debt: 40}
  - {id: B, market_cap: 100, equity_vol: 0.4, short_term_debt: 50, long_term_debt: 40, rate: 0.05, horizon: 1}
  - {id: C, market_cap: 100, equity_volatility: 0.4, short_term_debt: 50, long_term_debt: 40}
  - {id: D, market_cap: 35%, equity_vol: 0.4, short_term_debt: 50, long_term_debt: 40}
  - {id: E, share_price: 2.5, shares_outstanding: 40, equity_vol: 0.4, default_point: 70}
)";
  const Book book = parse_yaml_book(text, "t.yaml");
  CHECK(book.label == "Test book");
  CHECK(book.as_of == "2026-11-30");
  REQUIRE(book.obligors.size() == 5);
  const ResolvedObligor a = resolve(book.obligors[0], book.defaults);
  REQUIRE(a.ok());
  CHECK(a.inputs.risk_free_rate_cc == 0.02);
  CHECK(a.inputs.horizon_years == 2.0);
  CHECK(a.inputs.default_point == 50.0 + 0.25 * 40.0);
  CHECK(a.inputs.drift_annual == 0.02);  // drift defaults to the rate
  const ResolvedObligor b = resolve(book.obligors[1], book.defaults);
  CHECK(b.inputs.risk_free_rate_cc == 0.05);
  CHECK(b.inputs.horizon_years == 1.0);
  CHECK(book.obligors[2].read_error == "unknown field 'equity_volatility'");
  CHECK(book.obligors[2].line == 7);
  CHECK(book.obligors[3].read_error ==
        "field 'market_cap': expected a finite decimal number such as 0.35, got '35%'");
  const ResolvedObligor e = resolve(book.obligors[4], book.defaults);
  REQUIRE(e.ok());
  CHECK(e.inputs.equity_value == 100.0);
  CHECK(e.inputs.default_point == 70.0);
}

TEST_CASE("YAML book: a typo close to a field name gets a suggestion") {
  const Book book = parse_yaml_book("obligors:\n  - {id: A, market_cap: 1, equity_vl: 0.3}\n", "t.yaml");
  CHECK(book.obligors[0].read_error == "unknown field 'equity_vl' (did you mean 'equity_vol'?)");
}

TEST_CASE("YAML book: file errors name the file and line") {
  CHECK_THROWS_WITH_AS(parse_yaml_book("obligors: [\n", "t.yaml"), doctest::Contains("t.yaml:"), InputError);
  CHECK_THROWS_WITH_AS(parse_yaml_book("defaults: {rate: 0.02}\nobligor:\n  - {id: A}\n", "t.yaml"),
                       "t.yaml:2: book: unknown key 'obligor' (did you mean 'obligors'?)", InputError);
  CHECK_THROWS_WITH_AS(parse_yaml_book("defaults: {rte: 0.02}\nobligors: []\n", "t.yaml"),
                       "t.yaml:1: defaults: unknown key 'rte' (did you mean 'rate'?)", InputError);
  CHECK_THROWS_WITH_AS(parse_yaml_book("defaults: {rate: 3%}\nobligors: []\n", "t.yaml"),
                       "t.yaml:1: key 'rate': expected a finite number, got '3%'", InputError);
  CHECK_THROWS_WITH_AS(parse_yaml_book("just a scalar\n", "t.yaml"),
                       "t.yaml: expected a map with an 'obligors' list", InputError);
  CHECK_THROWS_WITH_AS(parse_yaml_book("obligors: {id: A}\n", "t.yaml"),
                       "t.yaml:1: 'obligors' must be a list", InputError);
  CHECK_THROWS_WITH_AS(parse_yaml_book("book: x\n", "t.yaml"),
                       "t.yaml: missing key 'obligors' (the list of obligors)", InputError);
}

TEST_CASE("resolving: every bad value names its field") {
  struct Case {
    const char* row;
    const char* error;
  };
  const Case cases[] = {
      {",1000,0.3,1,2,0.03", "field 'id': missing (every obligor needs an id)"},
      {"A,,0.3,1,2,0.03",
       "field 'market_cap': missing (give market_cap, or share_price and shares_outstanding)"},
      {"A,-5,0.3,1,2,0.03", "field 'market_cap': must be positive, got -5"},
      {"A,0,0.3,1,2,0.03", "field 'market_cap': must be positive, got 0"},
      {"A,1000,,1,2,0.03", "field 'equity_vol': missing"},
      {"A,1000,0,1,2,0.03", "field 'equity_vol': must be positive, got 0"},
      {"A,1000,-0.2,1,2,0.03", "field 'equity_vol': must be positive, got -0.2"},
      {"A,1000,35,1,2,0.03",
       "field 'equity_vol': must be an annualised decimal (0.35 means 35%) no larger than 10, got 35"},
      {"A,1000,0.3,-1,2,0.03", "field 'short_term_debt': must not be negative, got -1"},
      {"A,1000,0.3,1,-2,0.03", "field 'long_term_debt': must not be negative, got -2"},
      {"A,1000,0.3,,2,0.03",
       "field 'short_term_debt': missing (give short_term_debt and long_term_debt, or default_point)"},
      {"A,1000,0.3,0,0,0.03",
       "field 'default_point': short_term_debt + weight x long_term_debt is zero: the model needs positive "
       "debt"},
      {"A,1000,0.3,1,2,", "field 'rate': missing (give a rate column, a book default or --rate)"},
      {"A,1000,0.3,1,2,3",
       "field 'rate': must be a continuously compounded decimal in [-1, 1] (0.03 means 3%), got 3"},
  };
  for (const Case& c : cases) {
    CAPTURE(c.row);
    const Book book = parse_csv_book(std::string(kHeader) + c.row + "\n", "r.csv");
    REQUIRE(book.obligors.size() == 1);
    CHECK(resolve(book.obligors[0]).error == c.error);
  }
  const Book hz = parse_csv_book(
      "id,market_cap,equity_vol,default_point,rate,horizon,lgd,ead\n"
      "A,1,0.3,1,0,0,,\nB,1,0.3,1,0,-1,,\nC,1,0.3,1,0,1,45,\nD,1,0.3,1,0,1,0.4,-3\n",
      "h.csv");
  CHECK(resolve(hz.obligors[0]).error == "field 'horizon': must be positive years, at most 100, got 0");
  CHECK(resolve(hz.obligors[1]).error == "field 'horizon': must be positive years, at most 100, got -1");
  CHECK(resolve(hz.obligors[2]).error == "field 'lgd': must be a decimal in [0, 1] (0.45 means 45%), got 45");
  CHECK(resolve(hz.obligors[3]).error == "field 'ead': must not be negative, got -3");
  // The portfolio fields: asset correlation in [0, 1), IRB maturity in (0, 100] years.
  const Book pf = parse_csv_book(
      "id,market_cap,equity_vol,default_point,rate,asset_correlation,maturity\n"
      "A,1,0.3,1,0,1,\nB,1,0.3,1,0,-0.1,\nC,1,0.3,1,0,0.2,0\nD,1,0.3,1,0,0,2.5\nE,1,0.3,1,0,,\n",
      "pf.csv");
  CHECK(resolve(pf.obligors[0]).error ==
        "field 'asset_correlation': must be a decimal in [0, 1) (0.2 means 20%), got 1");
  CHECK(resolve(pf.obligors[1]).error ==
        "field 'asset_correlation': must be a decimal in [0, 1) (0.2 means 20%), got -0.1");
  CHECK(resolve(pf.obligors[2]).error == "field 'maturity': must be positive years, at most 100, got 0");
  const ResolvedObligor d = resolve(pf.obligors[3]);
  CHECK(d.ok());
  CHECK(d.has_asset_correlation);
  CHECK(d.asset_correlation == 0.0);
  CHECK(d.has_maturity);
  CHECK(d.maturity_years == 2.5);
  const ResolvedObligor e = resolve(pf.obligors[4]);
  CHECK(e.ok());
  CHECK_FALSE(e.has_asset_correlation);
  CHECK_FALSE(e.has_maturity);
}

TEST_CASE("resolving: precedence override > obligor > book > configuration") {
  const Book book = parse_csv_book(
      "id,market_cap,equity_vol,short_term_debt,long_term_debt,rate,horizon\n"
      "A,100,0.3,10,20,0.05,2\nB,100,0.3,10,20,,\n",
      "p.csv");
  BookDefaults defaults;
  defaults.rate = 0.01;
  ScoreSettings s;
  s.horizon_years = 3.0;
  ResolvedObligor a = resolve(book.obligors[0], defaults, s);
  ResolvedObligor b = resolve(book.obligors[1], defaults, s);
  CHECK(a.inputs.risk_free_rate_cc == 0.05);
  CHECK(a.inputs.horizon_years == 2.0);
  CHECK(b.inputs.risk_free_rate_cc == 0.01);
  CHECK(b.inputs.horizon_years == 3.0);
  CHECK(b.inputs.default_point == 10.0 + 0.5 * 20.0);  // 0.5: common practice default weight
  CHECK(b.lgd == 0.45);                                // configured default LGD
  CHECK_FALSE(b.has_lgd);
  s.rate_override = 0.07;
  s.horizon_override = 0.5;
  s.weight_override = 1.0;
  s.measure = Measure::risk_neutral;
  a = resolve(book.obligors[0], defaults, s);
  CHECK(a.inputs.risk_free_rate_cc == 0.07);
  CHECK(a.inputs.horizon_years == 0.5);
  CHECK(a.inputs.default_point == 30.0);
  CHECK(a.inputs.drift_annual == 0.07);
}

TEST_CASE("CSV: the fast splitter for records without quotes agrees with the general one") {
  // Random records of commas, blanks, digits, letters, CR and LF (lengths around the 16-byte block):
  // the same fields, and the same bytes consumed as the general splitter on the record's line.
  std::mt19937_64 rng(77);
  const std::string alphabet = "0123456789.,,, \t-abcXYZ\r\n";
  std::vector<std::string_view> fast, general;
  std::string scratch;
  for (int i = 0; i < 50000; ++i) {
    std::string text;
    const std::size_t len = rng() % 70;
    for (std::size_t k = 0; k < len; ++k) text += alphabet[rng() % alphabet.size()];
    const std::size_t used = split_plain_record(text, fast);
    const std::size_t nl = text.find('\n');
    const std::size_t line = nl == std::string::npos ? text.size() : nl + 1;
    bool open = false;
    split_csv_record(std::string_view(text).substr(0, line), general, scratch, open);
    CAPTURE(text);
    CHECK(used == line);
    CHECK(fast == general);
    CHECK_FALSE(open);
  }
}

TEST_CASE("number cells: a doubled sign is refused") {
  // Common practice (and strtod's grammar): one optional sign; "+-0.03" used to read as -0.03.
  double v = 0;
  for (const char* bad : {"+-0.03", "++1", "-+1", "--1", "+", "+ 1"}) {
    CAPTURE(bad);
    CHECK_FALSE(parse_number(bad, v));
  }
}

TEST_CASE("CSV: a stray quote refuses the row naming the field; a missing final line break is noted") {
  const std::string text = std::string(kHeader) +
                           "A,1000,0.3,1,2,0.03\n"
                           "B\"x\",1000,0.3,1,2,0.03\n"
                           "\"C\"x,1000,0.3,1,2,0.03\n"
                           "\"D\" ,1000,0.3,1,2,0.03\n"
                           "E,1000,0.3,1,2,0.0";
  const Book book = parse_csv_book(text, "b.csv");
  REQUIRE(book.obligors.size() == 5);
  CHECK(book.obligors[0].read_error.empty());
  // RFC 4180, section 2: a field holding quotes must be enclosed in quotes, inner ones doubled.
  CHECK(book.obligors[1].read_error == stray_quote_problem("id", "B\"x\""));
  CHECK(book.obligors[1].read_error ==
        "field 'id': stray '\"' in the cell 'B\"x\"' (a cell holding quotes must be quoted whole, with "
        "each inner quote doubled)");
  CHECK(book.obligors[2].read_error == stray_quote_problem("id", "\"C\"x"));
  CHECK(book.obligors[3].read_error.empty());  // blanks after the closing quote are tolerated
  CHECK(book.obligors[3].get(TextField::id) == "D");
  CHECK(book.obligors[4].read_error.empty());  // the last row is read as it stands
  CHECK(book.obligors[4].get(NumField::rate) == 0.0);
  REQUIRE(book.notes.size() == 1);
  CHECK(book.notes[0] == "b.csv:6: " + no_final_line_break_note());
  CHECK(parse_csv_book(std::string(kHeader) + "A,1000,0.3,1,2,0.03\r\n", "b.csv").notes.empty());
}

TEST_CASE("YAML book: many unknown keys are listed up to five, then counted, in linear time") {
  std::string text = "obligors:\n  - {id: A, market_cap: 1, equity_vol: 0.3";
  for (int i = 0; i < 20000; ++i) text += ", k" + std::to_string(i) + ": 1";
  text += "}\n";
  const Book book = parse_yaml_book(text, "t.yaml");
  REQUIRE(book.obligors.size() == 1);
  CHECK(book.obligors[0].read_error == "unknown fields 'k0', 'k1', 'k2', 'k3', 'k4' and 19995 more");
  const Book two = parse_yaml_book("obligors:\n  - {id: A, rte: 1, equity_vl: 2}\n", "t.yaml");
  CHECK(two.obligors[0].read_error == "unknown fields 'rte', 'equity_vl'");
}

TEST_CASE("YAML book: a second document is a file error naming its line") {
  CHECK_THROWS_WITH_AS(parse_yaml_book("obligors:\n  - {id: A}\n---\nobligors:\n  - {id: B}\n", "t.yaml"),
                       "t.yaml:3: a second YAML document starts here; a file holds one document "
                       "(remove the '---' line, or split the file)",
                       InputError);
  // A file that opens with the document marker holds one document.
  const Book one = parse_yaml_book("---\nobligors:\n  - {id: A, market_cap: 1, equity_vol: 0.3}\n", "t.yaml");
  CHECK(one.obligors.size() == 1);
  CHECK_THROWS_WITH_AS(parse_yaml_book("---\nobligors: []\n---\n", "t.yaml"),
                       doctest::Contains("t.yaml:3: a second YAML document starts here"), InputError);
}

TEST_CASE("YAML book: aliases are expanded where read, and their expansion is bounded") {
  // Nine aliases of nested lists, 9^29 items if expanded: each obligor is one alias, not a map.
  std::string laughs = "description:\n  a0: &a0 [1, 2, 3]\n";
  for (int i = 1; i < 30; ++i) {
    laughs += "  a" + std::to_string(i) + ": &a" + std::to_string(i) + " [";
    for (int k = 0; k < 9; ++k) laughs += (k ? ", *a" : "*a") + std::to_string(i - 1);
    laughs += "]\n";
  }
  laughs += "obligors: *a29\n";
  const Book book = parse_yaml_book(laughs, "t.yaml");
  REQUIRE(book.obligors.size() == 9);
  CHECK(book.obligors[0].read_error == "obligor entry is not a map of field: value");
  // An alias of a map of 1,000 keys, read 1,000 times: 2 million events, past the bound.
  std::string wide = "description:\n  m: &m {";
  for (int k = 0; k < 1000; ++k) wide += (k ? ", k" : "k") + std::to_string(k) + ": 1";
  wide += "}\nobligors:\n";
  for (int i = 0; i < 1000; ++i) wide += "  - *m\n";
  CHECK_THROWS_WITH_AS(parse_yaml_book(wide, "t.yaml"),
                       doctest::Contains("aliases (*name) expand to more than"), InputError);
  // Within the bound, an aliased obligor reads as if written out (line of the anchored map).
  const Book two = parse_yaml_book("obligors:\n  - &o {id: A, market_cap: 5}\n  - *o\n", "t.yaml");
  REQUIRE(two.obligors.size() == 2);
  CHECK(two.obligors[1].line == 2);
  CHECK(two.obligors[1].get(NumField::market_cap) == 5.0);
  CHECK(two.obligors[1].read_error == "field 'id': duplicate of the obligor at line 2");
}
