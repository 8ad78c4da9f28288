// libFuzzer target: the balance-sheet reader (history command) must accept or refuse any bytes
// with an InputError, never crash or hang; the sheets it accepts are dated in order, with finite
// non-negative debts and a positive default point.
#include <cmath>
#include <cstdint>
#include <cstdlib>
#include <optional>
#include <string>

#include "firmcall/book/errors.hpp"
#include "firmcall/io/history_io.hpp"

namespace {
bool bad_amount(const std::optional<double>& v, bool zero_allowed) {
  return v && (!std::isfinite(*v) || *v < 0.0 || (!zero_allowed && *v == 0.0));
}
}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const std::string text(reinterpret_cast<const char*>(data), size);
  try {
    const firmcall::BalanceSheets b = firmcall::parse_balance_sheets(text, "fuzz.csv");
    if (b.ids.size() != b.by_id.size()) std::abort();
    for (const std::string& id : b.ids) {
      const firmcall::ObligorBalanceSheets* o = b.find(id);
      if (o == nullptr) std::abort();
      if (!o->error.empty()) continue;
      for (std::size_t i = 0; i < o->sheets.size(); ++i) {
        const firmcall::BalanceSheet& s = o->sheets[i];
        if (bad_amount(s.short_term_debt, true) || bad_amount(s.long_term_debt, true) ||
            bad_amount(s.default_point, false))
          std::abort();
        if (!s.default_point && !(s.short_term_debt && s.long_term_debt)) std::abort();
        if (i > 0 && o->sheets[i - 1].as_of >= s.as_of) std::abort();
      }
    }
  } catch (const firmcall::InputError&) {
  }
  return 0;
}
