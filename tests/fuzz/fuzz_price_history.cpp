// libFuzzer target: the equity price history reader (history command) must accept or refuse any
// bytes with an InputError, never crash or hang; what it accepts is sorted, finite and positive.
#include <cmath>
#include <cstdint>
#include <cstdlib>
#include <string>

#include "firmcall/book/errors.hpp"
#include "firmcall/io/history_io.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const std::string text(reinterpret_cast<const char*>(data), size);
  try {
    const firmcall::EquityHistory h = firmcall::parse_equity_history(text, "fuzz.csv");
    for (std::size_t i = 1; i < h.calendar.size(); ++i) {
      if (h.calendar[i - 1] >= h.calendar[i]) std::abort();  // ascending and unique
    }
    for (const firmcall::ObligorEquityHistory& o : h.obligors) {
      if (h.find(o.id) != &o) std::abort();
      if (!o.usable()) continue;
      for (std::size_t i = 0; i < o.rows.size(); ++i) {
        const firmcall::EquityRow& r = o.rows[i];
        if (!std::isfinite(r.equity_value) || r.equity_value <= 0.0) std::abort();
        if (r.trading_day < 0 || static_cast<std::size_t>(r.trading_day) >= h.calendar.size()) std::abort();
        if (h.calendar[static_cast<std::size_t>(r.trading_day)] != r.date) std::abort();
        if (i > 0 && o.rows[i - 1].date >= r.date) std::abort();
      }
    }
  } catch (const firmcall::InputError&) {
  }
  return 0;
}
