// libFuzzer target: the CSV obligor reader and the streaming scorer must never crash, hang or
// print a non-finite number, whatever bytes they are given.
#include <cstdint>
#include <cstdio>
#include <cstdlib>
#include <string>
#include <vector>

#include "firmcall/book/errors.hpp"
#include "firmcall/engine/score_book.hpp"
#include "firmcall/engine/score_output.hpp"
#include "firmcall/io/csv.hpp"
#include "firmcall/io/obligor_io.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const std::string text(reinterpret_cast<const char*>(data), size);
  try {
    const firmcall::Book book = firmcall::parse_csv_book(text, "fuzz.csv");
    (void)book;
  } catch (const firmcall::InputError&) {
  }
  std::FILE* f = ::fmemopen(const_cast<char*>(text.data()), text.size(), "r");
  if (f == nullptr) return 0;
  firmcall::ScoreBookOptions run;
  run.threads = 1;
  run.chunk_bytes = 256;  // exercise the batch boundaries
  std::string out;
  try {
    firmcall::score_csv_stream(f, "fuzz.csv", firmcall::ScoreSettings{}, run,
                               [&](std::string_view s) { out.append(s); });
  } catch (const firmcall::InputError&) {
  }
  std::fclose(f);
  // Every numeric cell of the output (equity_value .. spread_bp, residual) is empty or finite.
  std::string_view rest(out);
  std::vector<std::string_view> fields;
  std::string scratch;
  bool open_quote = false;
  while (!rest.empty()) {
    const std::size_t used = firmcall::split_csv_record(rest, fields, scratch, open_quote);
    rest.remove_prefix(used);
    if (fields.size() != firmcall::score_columns().size() || fields[0] == "id") continue;
    for (std::size_t i = 3; i + 1 < fields.size(); ++i) {
      double v = 0.0;
      if (i != 13 && !fields[i].empty() && !firmcall::parse_number(fields[i], v)) std::abort();
    }
  }
  return 0;
}
