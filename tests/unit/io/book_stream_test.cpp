// BookStream hands out the same obligors as load_book (the whole-book reader is the reference):
// on every CSV and YAML book of the samples and the hostile-input corpus, for pieces of 1, 3 and
// 100,000 obligors, the fields, lines, read errors, notes and file-level errors are the same.
#include <doctest/doctest.h>

#include <bit>
#include <cstdio>
#include <filesystem>
#include <string>
#include <vector>

#include "firmcall/book/errors.hpp"
#include "firmcall/io/book_stream.hpp"
#include "firmcall/io/obligor_io.hpp"

using namespace firmcall;

namespace {

bool same_record(const ObligorRecord& a, const ObligorRecord& b) {
  if (a.text != b.text || a.present != b.present || a.read_error != b.read_error || a.line != b.line)
    return false;
  for (std::size_t i = 0; i < a.num.size(); ++i)
    if (std::bit_cast<std::uint64_t>(a.num[i]) != std::bit_cast<std::uint64_t>(b.num[i])) return false;
  return true;
}

// The whole book through the stream, or the text of the error it threw.
struct Streamed {
  std::vector<ObligorRecord> obligors;
  std::vector<std::string> notes;
  std::string error;
};

Streamed stream_all(const std::string& path, std::size_t piece) {
  Streamed s;
  try {
    auto book = BookStream::open(path);
    std::vector<ObligorRecord> part;
    while (book->next(part, piece)) {
      CHECK(part.size() <= piece);
      for (auto& r : part) s.obligors.push_back(std::move(r));
    }
    CHECK(part.empty());
    s.notes = book->notes();
  } catch (const InputError& e) {
    s.error = e.what();
  }
  return s;
}

}  // namespace

TEST_CASE("BookStream reads every sample and corpus book as load_book does, in pieces of any size") {
  const std::filesystem::path root(FIRMCALL_SOURCE_DIR);
  std::size_t books = 0, obligors = 0, refused = 0;
  for (const auto* dir : {"samples", "tests/bad_inputs"}) {
    for (const auto& entry : std::filesystem::recursive_directory_iterator(root / dir)) {
      const std::string ext = entry.path().extension().string();
      if (!entry.is_regular_file() || (ext != ".csv" && ext != ".yaml")) continue;
      const std::string path = entry.path().string();
      Book whole;
      std::string whole_error;
      try {
        whole = load_book(path);
      } catch (const InputError& e) {
        whole_error = e.what();
      }
      ++books;
      if (!whole_error.empty()) ++refused;
      obligors += whole.obligors.size();
      for (std::size_t piece : {std::size_t{1}, std::size_t{3}, std::size_t{100000}}) {
        CAPTURE(path);
        CAPTURE(piece);
        const Streamed s = stream_all(path, piece);
        CHECK(s.error == whole_error);
        if (!whole_error.empty()) continue;
        REQUIRE(s.obligors.size() == whole.obligors.size());
        std::size_t differing = 0;
        for (std::size_t i = 0; i < s.obligors.size(); ++i)
          differing += same_record(s.obligors[i], whole.obligors[i]) ? 0 : 1;
        CHECK(differing == 0);
        CHECK(s.notes == whole.notes);
      }
    }
  }
  MESSAGE(books << " books (" << refused << " refused), " << obligors << " obligors");
  CHECK(books > 50);
}

TEST_CASE("BookStream cuts a book of several read blocks between records, quotes and all") {
  // 40,000 rows (about 2.6 MB, so three 1 MiB blocks): names with quoted commas and line breaks,
  // blank lines, a duplicate id and a last row without a line break.
  std::string text = "id,name,market_cap,equity_vol,short_term_debt,long_term_debt\n";
  for (int i = 0; i < 40000; ++i) {
    const std::string n = std::to_string(i);
    text.append(1, 'R').append(i == 39000 ? std::string("17") : n).append(1, ',');
    if (i % 7 == 0) {
      text.append("\"Firm ").append(n).append(",\nLtd\"");
    } else {
      text.append("Firm ").append(n);
    }
    text.append(1, ',').append(std::to_string(1000 + i)).append(",0.3,200,400\n");
    if (i % 1000 == 0) text.append(1, '\n');
  }
  text += "LAST,Last Firm,900,0.25,100,300";
  const auto path = std::filesystem::temp_directory_path() / "firmcall_book_stream_test.csv";
  {
    std::FILE* f = std::fopen(path.c_str(), "wb");
    REQUIRE(f != nullptr);
    std::fwrite(text.data(), 1, text.size(), f);
    std::fclose(f);
  }
  const Book whole = parse_csv_book(text, path.string());
  REQUIRE(whole.obligors.size() == 40001);
  for (std::size_t piece : {std::size_t{999}, std::size_t{65536}}) {
    const Streamed s = stream_all(path.string(), piece);
    REQUIRE(s.obligors.size() == whole.obligors.size());
    std::size_t differing = 0;
    for (std::size_t i = 0; i < s.obligors.size(); ++i)
      differing += same_record(s.obligors[i], whole.obligors[i]) ? 0 : 1;
    CHECK(differing == 0);
    CHECK(s.obligors[39000].read_error == whole.obligors[39000].read_error);
    CHECK(s.obligors[39000].read_error.find("duplicate") != std::string::npos);
    CHECK(s.notes == whole.notes);
    CHECK(s.notes.size() == 1);  // the missing final line break
  }
  std::filesystem::remove(path);
}
