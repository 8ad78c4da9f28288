// The FX file reader (fx_io.hpp).
#include "firmcall/io/fx_io.hpp"

#include <array>

#include "firmcall/book/errors.hpp"
#include "firmcall/book/settings.hpp"
#include "firmcall/io/csv.hpp"
#include "firmcall/io/history_io.hpp"
#include "io/yaml_util.hpp"

namespace firmcall {

namespace {

constexpr std::string_view kAsOfPrefix = "# as_of:";

[[noreturn]] void bad_cell(const std::string& origin, std::size_t line, std::string_view field,
                           std::string_view reason, std::string_view value) {
  std::string m = "field '";
  m.append(field).append("': ").append(reason).append(", got ").append(quoted_cell(value));
  throw InputError(located(origin, line, m));
}

// The as-of date of the first line, "# as_of: YYYY-MM-DD".
std::string read_as_of(std::string_view first, const std::string& origin) {
  if (!first.empty() && first.back() == '\r') first.remove_suffix(1);
  if (first.substr(0, kAsOfPrefix.size()) != kAsOfPrefix) {
    throw InputError(located(origin, 1,
                             "field 'as_of': missing; the first line must give the date of the rates as "
                             "'# as_of: YYYY-MM-DD', got " +
                                 quoted_cell(first)));
  }
  const std::string_view date = trim_blanks(first.substr(kAsOfPrefix.size()));
  if (!parse_iso_date(date)) bad_cell(origin, 1, "as_of", "expected a calendar date YYYY-MM-DD", date);
  return std::string(date);
}

class FxParser {
 public:
  explicit FxParser(const std::string& origin) { fx_.origin = origin; }

  void record(const std::vector<std::string_view>& fields, std::size_t line) {
    if (!have_header_) return header(fields, line);
    if (fields.size() != width_) {
      throw InputError(located(
          fx_.origin, line,
          "row has " + std::to_string(fields.size()) + " fields, the header has " + std::to_string(width_)));
    }
    const std::string_view code = trim_blanks(fields[currency_at_]);
    if (!is_currency_code(code)) {
      bad_cell(fx_.origin, line, "currency", "expected three upper-case letters (ISO 4217 style, e.g. EUR)",
               code);
    }
    for (const FxRate& r : fx_.rates) {
      if (r.currency == code) {
        bad_cell(fx_.origin, line, "currency",
                 "appears twice (first on line " + std::to_string(r.line) + "; one rate per currency)", code);
      }
    }
    const std::string_view cell = trim_blanks(fields[rate_at_]);
    double rate = 0.0;
    if (!parse_number(cell, rate) || !(rate > 0.0)) {
      bad_cell(fx_.origin, line, "rate",
               "expected a finite number above 0 (units of the reporting currency per unit of the currency)",
               cell);
    }
    fx_.rates.push_back({std::string(code), rate, line});
  }

  FxTable finish() {
    if (!have_header_) {
      throw InputError(located(fx_.origin, 2, "header: missing (expected the columns currency,rate)"));
    }
    if (fx_.rates.empty()) throw InputError(located(fx_.origin, 0, "no rates: give one row per currency"));
    return std::move(fx_);
  }

  void set_as_of(std::string as_of) { fx_.as_of = std::move(as_of); }

 private:
  void header(const std::vector<std::string_view>& fields, std::size_t line) {
    have_header_ = true;
    width_ = fields.size();
    std::array<bool, 2> seen{};
    for (std::size_t i = 0; i < fields.size(); ++i) {
      const std::string_view name = trim_blanks(fields[i]);
      std::size_t k = 2;
      if (name == "currency") k = 0;
      if (name == "rate") k = 1;
      if (k == 2) {
        throw InputError(located(
            fx_.origin, line,
            "header: unknown column " + quoted_cell(name) + " (an FX file has the columns currency,rate)"));
      }
      if (seen[k]) {
        throw InputError(
            located(fx_.origin, line, "header: column '" + std::string(name) + "' appears twice"));
      }
      seen[k] = true;
      (k == 0 ? currency_at_ : rate_at_) = i;
    }
    for (std::size_t k = 0; k < 2; ++k) {
      if (!seen[k]) {
        throw InputError(located(
            fx_.origin, line,
            std::string("header: required column '") + (k == 0 ? "currency" : "rate") + "' is missing"));
      }
    }
  }

  FxTable fx_;
  bool have_header_ = false;
  std::size_t width_ = 0;
  std::size_t currency_at_ = 0;
  std::size_t rate_at_ = 0;
};

}  // namespace

const FxRate* FxTable::find(std::string_view currency) const noexcept {
  for (const FxRate& r : rates) {
    if (r.currency == currency) return &r;
  }
  return nullptr;
}

FxTable parse_fx_rates(std::string_view text, const std::string& origin) {
  if (text.substr(0, 3) == "\xEF\xBB\xBF") text.remove_prefix(3);
  const std::size_t end = text.find('\n');
  const std::string_view first = text.substr(0, end);
  FxParser parser(origin);
  parser.set_as_of(read_as_of(first, origin));
  if (end != std::string_view::npos) {
    CsvRecordReader records(origin);
    records.start(text.substr(end + 1), 2);
    while (records.next()) parser.record(records.fields(), records.line());
  }
  return parser.finish();
}

FxTable load_fx_rates(const std::string& path) {
  const std::string text = detail::read_text_file(path, kMaxFxFileBytes, "FX file");
  return parse_fx_rates(text, path);
}

}  // namespace firmcall
