// A YAML book read one obligor at a time from the parser's events (libyaml), so that memory does
// not grow with the book. Every YAML book goes through it (parse_yaml_book, load_book, BookStream,
// score), so the messages are the same whatever reads the book.
//
// Aliases are expanded only where the book reads their content (the obligors list, an obligor's
// map, a field's value); an alias that is skipped (a value that is not a single value, a
// description) costs one event. Expansion is bounded: at most kMaxYamlAliasEvents events plus as
// many as the file itself holds, and anchored nodes hold at most kMaxYamlAnchoredEvents events.
//
// **Example**:
//   YamlBookReader reader(text, "book.yaml");
//   ObligorRecord rec;
//   while (reader.next(rec)) use(rec, reader.defaults());
#pragma once

#include <cstddef>
#include <cstdio>
#include <memory>
#include <string>
#include <string_view>

#include "firmcall/book/obligor.hpp"

namespace firmcall {

/// Events an alias may replay beyond those of the file.
inline constexpr std::size_t kMaxYamlAliasEvents = 1'000'000;
/// Events kept for the anchored nodes of a book.
inline constexpr std::size_t kMaxYamlAnchoredEvents = 1'000'000;
/// Deepest nesting of collections accepted.
inline constexpr std::size_t kMaxYamlDepth = 64;

/// What the reader's input holds.
enum class YamlBookPart {
  whole_book,     ///< a book: a map with book, as_of, description, defaults, obligors
  obligor_items,  ///< a block sequence of obligors only (a piece of a book's obligors list)
};

class YamlBookReader {
 public:
  /// Reads `text` (kept alive by the caller); `first_line` is the line of text[0] in `origin`.
  /// Reads the top-level keys up to the first obligor: InputError (origin:line: ...) for a file
  /// error found there.
  YamlBookReader(std::string_view text, const std::string& origin,
                 YamlBookPart part = YamlBookPart::whole_book, std::size_t first_line = 1);
  /// Reads a book from `in` (kept open by the caller), a block at a time.
  YamlBookReader(std::FILE* in, const std::string& origin);
  ~YamlBookReader();
  YamlBookReader(const YamlBookReader&) = delete;
  YamlBookReader& operator=(const YamlBookReader&) = delete;

  /// The next obligor into `rec` (its line, fields and read_error as in parse_yaml_book; ids
  /// are not checked for duplicates). False when the list has ended: the rest of the file has
  /// then been read and checked (InputError for a file error).
  bool next(ObligorRecord& rec);

  const std::string& label() const noexcept;
  const std::string& as_of() const noexcept;
  /// The `defaults:` read so far (all of them once the obligors come, unless they follow the list).
  const BookDefaults& defaults() const noexcept;
  /// True once `defaults:` has been read after an obligor was handed out.
  bool defaults_after_obligors() const noexcept;

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

}  // namespace firmcall
