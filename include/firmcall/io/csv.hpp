// CSV reading (RFC 4180: comma separated, double-quoted fields may hold commas, quotes written
// as "" and line breaks; CRLF or LF line ends; a UTF-8 byte-order mark is skipped) and the
// mapping of an obligor CSV's header onto obligor fields.
#pragma once

#include <cstdint>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "firmcall/book/obligor.hpp"
#include "firmcall/util/utf8.hpp"

namespace firmcall {

/// Longest CSV record (row) any command accepts, in bytes; a longer one is reported and skipped.
inline constexpr std::size_t kMaxCsvRecordBytes = std::size_t{4} << 20;

/// Problem text of a record longer than kMaxCsvRecordBytes (the row is skipped).
std::string record_too_long_problem();

/// Note for a file whose last row has no line break after it (the file may have been cut short).
std::string no_final_line_break_note();

/// No stray quote in a record (see split_csv_record).
inline constexpr std::size_t kNoStrayQuote = static_cast<std::size_t>(-1);

/// Splits the first record of `text` into fields. Quoted fields that contain "" are unescaped
/// into `scratch` (whose capacity is reserved first, so the views stay valid). Returns the number
/// of bytes consumed including the line end; sets `unterminated` when a quote never closes.
/// When `stray_quote` is given it receives the index of the first field with a stray '"' (one
/// inside a cell that is not quoted as a whole, or text other than blanks after a closing quote),
/// else kNoStrayQuote: such a cell is malformed and its text is not what the writer meant.
std::size_t split_csv_record(std::string_view text, std::vector<std::string_view>& fields,
                             std::string& scratch, bool& unterminated, std::size_t* stray_quote = nullptr);

/// The same for a record known to hold no '"' (the common case), scanning 16 bytes at a time:
/// fields are views into `text`, the record's fields end at the first '\r' or '\n', and the
/// return value runs up to and including the next '\n' (or the whole text).
std::size_t split_plain_record(std::string_view text, std::vector<std::string_view>& fields);

/// Where a scan of CSV text stands, by split_csv_record's grammar: a '"' opens a quoted field
/// only at the start of a field (elsewhere it is a stray quote and opens nothing), and inside
/// quotes "" is a quote and a single '"' closes the field.
struct CsvScanState {
  enum class At : unsigned char { field_start, in_field, in_quotes, quote_in_quotes };
  At at = At::field_start;

  /// Advances over `text` and returns the offset just past the first '\n' that ends a record
  /// (npos when none does); `lines` counts every '\n' passed. Resumable across buffers.
  std::size_t find_record_end(std::string_view text, std::size_t& lines) noexcept;
};

/// Offset just past the last complete record in `text` (0 when none is complete), honouring
/// quotes as split_csv_record does, so that a buffer can be cut between records.
std::size_t last_record_end(std::string_view text) noexcept;

/// Counts the line breaks in [text.begin(), text.begin() + n).
std::size_t count_lines(std::string_view text) noexcept;

/// The records of CSV text one after another: the loop of the readers that take a whole file (or
/// blocks of one cut at record ends with last_record_end). A UTF-8 byte-order mark at the start of
/// the file is skipped; records end where split_csv_record ends them (a quoted field may hold line
/// breaks); blank records (nothing but spaces and tabs) are skipped; each record knows the line it
/// starts on. A quote that never closes is an InputError "origin:line: a quoted field is never
/// closed".
///
/// **Example**:
///   CsvRecordReader records(path);
///   records.start(text);
///   while (records.next()) use(records.fields(), records.line());
class CsvRecordReader {
 public:
  /// `origin` names the text in messages (kept by reference: it must outlive the reader).
  /// A record longer than `max_record_bytes` (0: no limit) is still returned; too_long() says so.
  explicit CsvRecordReader(const std::string& origin, std::size_t max_record_bytes = 0)
      : origin_(origin), max_record_bytes_(max_record_bytes) {}

  /// Starts on `text` (kept by view: it must outlive the records read from it), whose first byte
  /// is on line `first_line`. At line 1 the text is the start of the file, and a byte-order mark
  /// there is skipped. When `at_end` is false the text is a block of a longer file, and only its
  /// complete records (up to last_record_end) are read: consumed() then says where the next
  /// block starts.
  void start(std::string_view text, std::size_t first_line = 1, bool at_end = true) noexcept;

  /// Moves to the next record that is not blank; false at the end of the text.
  bool next();

  /// The fields of the current record (views into the text, or into the reader for cells with "").
  const std::vector<std::string_view>& fields() const noexcept { return fields_; }
  /// The line the current record starts on.
  std::size_t line() const noexcept { return line_; }
  /// The line of the first byte not yet read.
  std::size_t next_line() const noexcept { return next_line_; }
  /// Bytes of the text read so far (the byte-order mark included).
  std::size_t consumed() const noexcept { return consumed_; }
  /// The current record, line end included, is longer than max_record_bytes.
  bool too_long() const noexcept { return max_record_bytes_ != 0 && record_bytes_ > max_record_bytes_; }
  /// The current record is the last of the text and no line break follows it (the file may have
  /// been cut short: see no_final_line_break_note).
  bool ended_without_line_break() const noexcept { return ended_without_line_break_; }

 private:
  const std::string& origin_;
  std::size_t max_record_bytes_;
  std::string_view rest_;
  std::vector<std::string_view> fields_;
  std::string scratch_;
  std::size_t line_ = 0;
  std::size_t next_line_ = 1;
  std::size_t consumed_ = 0;
  std::size_t record_bytes_ = 0;
  bool ended_without_line_break_ = false;
};

/// Where each CSV column goes.
struct CsvColumns {
  struct Column {
    std::optional<NumField> num;
    std::optional<TextField> text;
    std::string name;
  };
  std::vector<Column> columns;
  std::vector<std::string> unused;  ///< header names firmcall does not read (reported as a note)

  /// Maps a header record. Throws InputError (naming `origin` and the column) when a column is
  /// repeated or the id column is missing, or (for BookUse::scoring) the equity value or
  /// equity_vol is missing.
  static CsvColumns from_header(const std::vector<std::string_view>& header, const std::string& origin,
                                BookUse use = BookUse::scoring);
  /// Name of column i, or "column N" (1-based) past the header.
  std::string name_of(std::size_t i) const;
};

/// Problem text for a stray quote (see split_csv_record) in `cell` of column `column`: the row is
/// refused rather than read with a guessed cell.
std::string stray_quote_problem(std::string_view column, std::string_view cell);

/// A cell as messages show it: in single quotes, its first 40 bytes, "..." when it is longer.
std::string quoted_cell(std::string_view cell);

/// Fills `rec` from one record's fields (rec.line must be set by the caller). Number fields are
/// parsed with std::from_chars; empty cells are absent; the first bad cell sets rec.read_error.
void parse_obligor_fields(const std::vector<std::string_view>& fields, const CsvColumns& cols,
                          ObligorRecord& rec);

/// s without leading and trailing spaces and tabs.
std::string_view trim_blanks(std::string_view s) noexcept;

/// Parses a decimal number cell (surrounding spaces allowed, one optional leading sign). Returns
/// false on anything else, including a doubled sign (`+-0.03`), nan, inf and out-of-range values.
bool parse_number(std::string_view cell, double& value) noexcept;

}  // namespace firmcall
