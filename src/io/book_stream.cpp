#include "firmcall/io/book_stream.hpp"

#include <algorithm>
#include <cerrno>
#include <cstdio>
#include <cstring>

#include "firmcall/book/errors.hpp"
#include "firmcall/io/csv.hpp"
#include "firmcall/io/id_registry.hpp"

namespace firmcall {

namespace {

// Bytes read from the file at a time; a record longer than this grows the buffer.
constexpr std::size_t kReadBytes = std::size_t{1} << 20;

// A CSV book read in blocks cut at record ends.
class CsvBookStream final : public BookStream {
 public:
  CsvBookStream(const std::string& path, BookUse use) : file_(std::fopen(path.c_str(), "rb")) {
    origin_ = path;
    if (file_ == nullptr) throw InputError("cannot open file '" + path + "'");
    // The header: read until it is complete (or the file ends).
    fill_until_complete();
    std::string_view rest(buf_);
    cols_ = detail::parse_csv_header(rest, line_, origin_, use, notes_);
    pos_ = buf_.size() - rest.size();
  }
  ~CsvBookStream() override {
    if (file_ != nullptr) std::fclose(file_);
  }

  bool next(std::vector<ObligorRecord>& out, std::size_t max_obligors) override {
    out.clear();
    const std::size_t want = std::max<std::size_t>(max_obligors, 1);
    while (out.size() < want) {
      if (complete_ == pos_ && !eof_) {
        compact();
        fill_until_complete();
      }
      if (complete_ <= pos_) break;
      std::string_view rest(buf_.data() + pos_, complete_ - pos_);
      const std::size_t last =
          detail::parse_csv_records(rest, line_, cols_, want - out.size(), out, scratch_);
      if (last != 0) last_line_ = last;
      pos_ = complete_ - rest.size();
    }
    if (out.empty() && eof_ && !noted_end_) {
      noted_end_ = true;
      if (last_line_ != 0 && ends_without_break_)
        notes_.push_back(located(origin_, last_line_, no_final_line_break_note()));
    }
    for (ObligorRecord& rec : out) {
      const std::string& id = rec.get(TextField::id);
      if (id.empty()) continue;
      const std::size_t first = ids_.insert(IdRegistry::hash(id), rec.line);
      if (first != 0 && rec.read_error.empty())
        rec.read_error = "field 'id': duplicate of the obligor at line " + std::to_string(first);
    }
    return !out.empty();
  }

 private:
  // Drops the bytes already parsed.
  void compact() {
    buf_.erase(0, pos_);
    complete_ -= pos_;
    pos_ = 0;
  }
  // Reads until buf_ holds at least one complete record past pos_ (or the file ends);
  // complete_ is then the end of the last complete record.
  void fill_until_complete() {
    while (!eof_) {
      const std::size_t old = buf_.size();
      buf_.resize(old + kReadBytes);
      const std::size_t got = std::fread(buf_.data() + old, 1, kReadBytes, file_);
      buf_.resize(old + got);
      if (got < kReadBytes) {
        if (std::ferror(file_))
          throw InputError("cannot read file '" + origin_ + "': " + std::strerror(errno));
        eof_ = true;
        break;
      }
      const std::size_t end = last_record_end(std::string_view(buf_).substr(pos_));
      if (end > 0) {
        complete_ = pos_ + end;
        return;
      }
    }
    complete_ = buf_.size();
    ends_without_break_ = !buf_.empty() && buf_.back() != '\n' && buf_.back() != '\r';
  }

  std::FILE* file_;
  std::string buf_;
  std::size_t pos_ = 0;       // first byte not parsed
  std::size_t complete_ = 0;  // end of the complete records in buf_
  bool eof_ = false;
  bool ends_without_break_ = false;
  bool noted_end_ = false;
  std::size_t line_ = 1;  // line of buf_[pos_]
  std::size_t last_line_ = 0;
  CsvColumns cols_;
  detail::CsvParseScratch scratch_;
  IdRegistry ids_;
};

// A book held whole, handed out in pieces: moved out of a book the stream owns (a YAML file
// parsed whole), or copied from one the caller keeps.
class WholeBookStream final : public BookStream {
 public:
  explicit WholeBookStream(Book book) : owned_(std::move(book)), book_(&owned_), move_out_(true) {
    describe();
  }
  explicit WholeBookStream(const Book* book) : book_(book), move_out_(false) { describe(); }
  bool next(std::vector<ObligorRecord>& out, std::size_t max_obligors) override {
    out.clear();
    const std::size_t n = std::min(std::max<std::size_t>(max_obligors, 1), book_->obligors.size() - next_);
    for (std::size_t i = 0; i < n; ++i) {
      if (move_out_) {
        out.push_back(std::move(owned_.obligors[next_ + i]));
      } else {
        out.push_back(book_->obligors[next_ + i]);
      }
    }
    next_ += n;
    return n > 0;
  }

 private:
  void describe() {
    origin_ = book_->origin;
    label_ = book_->label;
    as_of_ = book_->as_of;
    defaults_ = book_->defaults;
    notes_ = book_->notes;
  }
  Book owned_;
  const Book* book_;
  bool move_out_;
  std::size_t next_ = 0;
};

}  // namespace

std::unique_ptr<BookStream> BookStream::open(const std::string& path, BookUse use) {
  if (book_format_of(path) == BookFormat::csv) return std::make_unique<CsvBookStream>(path, use);
  return std::make_unique<WholeBookStream>(load_book(path, use));
}

std::unique_ptr<BookStream> BookStream::over(const Book& book) {
  return std::make_unique<WholeBookStream>(&book);
}

}  // namespace firmcall
