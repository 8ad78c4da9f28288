// libFuzzer target: the YAML book reader and the scorer on what it reads.
#include <cstdint>
#include <string>

#include "firmcall/book/errors.hpp"
#include "firmcall/engine/score_book.hpp"
#include "firmcall/io/obligor_io.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const std::string text(reinterpret_cast<const char*>(data), size);
  try {
    const firmcall::Book book = firmcall::parse_yaml_book(text, "fuzz.yaml");
    firmcall::ScoreBookOptions run;
    run.threads = 1;
    std::string out;
    firmcall::score_book(book, firmcall::ScoreSettings{}, run, [&](std::string_view s) { out.append(s); });
  } catch (const firmcall::InputError&) {
  }
  return 0;
}
