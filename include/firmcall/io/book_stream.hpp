// A book read a piece at a time, so that a command's memory does not grow with the book: the
// obligors come in book order, with the same fields, line numbers and messages as load_book, and
// the later of two obligors with the same id is marked invalid as mark_duplicate_ids does.
//
// **Example**:
//   auto book = BookStream::open("book.csv");
//   std::vector<ObligorRecord> piece;
//   while (book->next(piece, 65536)) use(piece, book->defaults());
//   report(book->notes());
#pragma once

#include <cstddef>
#include <memory>
#include <string>
#include <vector>

#include "firmcall/book/obligor.hpp"
#include "firmcall/io/obligor_io.hpp"

namespace firmcall {

class BookStream {
 public:
  virtual ~BookStream() = default;
  BookStream(const BookStream&) = delete;
  BookStream& operator=(const BookStream&) = delete;

  /// Opens a CSV or YAML book (format from the name, as load_book). InputError when the file
  /// cannot be read, its header (CSV) or top-level keys (YAML) are bad.
  static std::unique_ptr<BookStream> open(const std::string& path, BookUse use = BookUse::scoring);
  /// A book already in memory, handed out as copies of its obligors (`book` must outlive the
  /// stream).
  static std::unique_ptr<BookStream> over(const Book& book);

  /// Replaces `out` with the next obligors of the book, at most `max_obligors` (at least one is
  /// taken); false, with `out` empty, when none are left. InputError for a file-level error found
  /// on the way (e.g. YAML syntax), naming the file and line.
  virtual bool next(std::vector<ObligorRecord>& out, std::size_t max_obligors) = 0;

  const std::string& origin() const noexcept { return origin_; }
  const std::string& label() const noexcept { return label_; }  ///< YAML `book:` or empty
  const std::string& as_of() const noexcept { return as_of_; }  ///< YAML `as_of:` or empty
  const BookDefaults& defaults() const noexcept { return defaults_; }
  /// Notes on the book (unused columns, a missing final line break); complete once next() has
  /// returned false.
  const std::vector<std::string>& notes() const noexcept { return notes_; }

 protected:
  BookStream() = default;
  std::string origin_, label_, as_of_;
  BookDefaults defaults_;
  std::vector<std::string> notes_;
};

}  // namespace firmcall
