// libFuzzer target: the settings reader (--config / --settings) must accept or refuse any text
// with an InputError, never crash or hang; every configuration it accepts passes validate().
#include <cstdint>
#include <cstdlib>
#include <string>

#include "firmcall/book/errors.hpp"
#include "firmcall/io/settings_io.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const std::string text(reinterpret_cast<const char*>(data), size);
  try {
    const firmcall::Config config = firmcall::parse_config(text, "fuzz.yaml");
    if (config.validate()) std::abort();
  } catch (const firmcall::InputError&) {
  }
  return 0;
}
