// libFuzzer target: the stress scenario reader must accept or refuse any text with an InputError,
// never crash or hang; accepted scenarios are checked against the sample-like book.
#include <cstdint>
#include <string>

#include "firmcall/book/errors.hpp"
#include "firmcall/io/obligor_io.hpp"
#include "firmcall/io/scenario.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const std::string text(reinterpret_cast<const char*>(data), size);
  static const firmcall::Book book = firmcall::parse_yaml_book(
      "obligors:\n"
      "  - {id: A, sector: Energy, country: NL, currency: EUR, market_cap: 100, equity_vol: 0.3, "
      "default_point: 50, rate: 0.02}\n"
      "  - {id: B, sector: Utilities, country: GB, currency: GBP, market_cap: 80, equity_vol: 0.2, "
      "default_point: 90, rate: 0.03}\n",
      "book.yaml");
  try {
    const firmcall::ScenarioSet set = firmcall::parse_scenarios(text, "fuzz.yaml");
    firmcall::check_filters(set, book);
  } catch (const firmcall::InputError&) {
  }
  return 0;
}
