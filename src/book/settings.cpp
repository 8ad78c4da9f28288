#include "firmcall/book/settings.hpp"

namespace firmcall {

std::string_view to_string(Measure m) noexcept {
  return m == Measure::physical ? "physical" : "risk-neutral";
}

std::optional<Measure> measure_from_string(std::string_view s) noexcept {
  if (s == "physical") return Measure::physical;
  if (s == "risk-neutral") return Measure::risk_neutral;
  return std::nullopt;
}

}  // namespace firmcall
