#include "firmcall/engine/score_book.hpp"

#include <sys/stat.h>

#include <algorithm>
#include <cmath>
#include <condition_variable>
#include <cstdlib>
#include <cstring>
#include <deque>
#include <exception>
#include <functional>
#include <memory>
#include <mutex>
#include <new>
#include <thread>

#include "firmcall/book/errors.hpp"
#include "firmcall/engine/score_output.hpp"
#include "firmcall/io/csv.hpp"
#include "firmcall/io/id_registry.hpp"
#include "firmcall/util/parallel.hpp"

namespace firmcall {

std::string_view to_string(RowStatus s) noexcept {
  switch (s) {
    case RowStatus::ok:
      return "ok";
    case RowStatus::invalid_input:
      return "invalid_input";
    case RowStatus::not_converged:
      return "not_converged";
  }
  return "";
}

namespace {
constexpr std::size_t kMaxRecordBytes = kMaxCsvRecordBytes;  // longest CSV row accepted

// Status, message and measures once out.resolved and (for resolved obligors) out.solution are set.
void complete_score(const ObligorRecord& rec, ScoredObligor& out) {
  out.message.clear();
  if (!out.resolved.ok()) {
    out.status = RowStatus::invalid_input;
    out.message = "line " + std::to_string(rec.line) + ": " + out.resolved.error;
    return;
  }
  if (!out.solution.usable()) {
    out.status = RowStatus::not_converged;
    char buf[160];
    if (std::isfinite(out.solution.residual)) {
      std::snprintf(buf, sizeof buf, "line %zu: solver did not converge (residual %.3g after %d iterations)",
                    rec.line, out.solution.residual, out.solution.iterations);
    } else {
      std::snprintf(buf, sizeof buf,
                    "line %zu: solver did not converge (no finite residual after %d iterations)", rec.line,
                    out.solution.iterations);
    }
    out.message = buf;
    return;
  }
  out.measures =
      merton_measures(out.resolved.inputs, out.solution.asset_value, out.solution.asset_vol_annual);
  const MertonMeasures& m = out.measures;
  const double all[] = {m.asset_value, m.asset_vol_annual, m.leverage,   m.distance_to_default,
                        m.pd,          m.pd_risk_neutral,  m.debt_value, m.spread_bp};
  if (!std::all_of(std::begin(all), std::end(all), [](double x) { return std::isfinite(x); })) {
    out.status = RowStatus::not_converged;
    out.message = "line " + std::to_string(rec.line) + ": a derived measure is not finite for these inputs";
    return;
  }
  out.status = RowStatus::ok;
}
}  // namespace

std::string message_without_line(const std::string& message) {
  const auto colon = message.find(": ");
  return (message.rfind("line ", 0) == 0 && colon != std::string::npos) ? message.substr(colon + 2) : message;
}

std::string obligor_problem(const std::string& origin, const ObligorRecord& rec, const std::string& message) {
  const std::string& id = rec.get(TextField::id);
  return origin + ":" + std::to_string(rec.line) + ": obligor '" + (id.empty() ? std::string("?") : id) +
         "': " + message_without_line(message);
}

void score_obligor(const ObligorRecord& rec, const BookDefaults& book, const ScoreSettings& settings,
                   ScoredObligor& out) {
  out.solution = AssetSolution{};
  resolve_obligor(rec, book, settings, out.resolved);
  if (out.resolved.ok()) out.solution = solve_asset(out.resolved.inputs, settings.solver);
  complete_score(rec, out);
}

namespace {

// Scratch space of one scoring thread, reused from piece to piece.
struct Scratch {
  ScoredObligor scored;
  std::vector<std::string_view> fields;
  std::string unescaped;
  std::vector<ResolvedObligor> resolved;  // one per row of the piece
  std::vector<MertonInputs> inputs;       // the resolved ones, solved together
  std::vector<AssetSolution> solutions;
};

// What a run needs to score and format rows, shared read-only by every thread.
struct RunContext {
  const std::string& origin;
  const BookDefaults& book;
  const ScoreSettings& settings;
  const ScoreBookOptions& run;
  const ScoreWriter& writer;
  const TextSink& sink;
};

std::string problem_text(const RunContext& ctx, const ObligorRecord& rec, const ScoredObligor& s) {
  return obligor_problem(ctx.origin, rec, s.message);
}

// Formatted rows of one piece of the input, with what the summary needs.
struct ScoredRows {
  struct Row {
    std::size_t begin = 0, end = 0;  // the row's text (after the separator before it)
    RowStatus status = RowStatus::invalid_input;
    int iterations = 0;
  };
  std::string text;  // the rows, with the format's separator between them (not before the first)
  std::vector<Row> rows;
  std::size_t scored = 0, invalid = 0, not_converged = 0, iterations = 0;
  std::vector<std::pair<std::size_t, std::string>> problems;  // (row in the piece, text), the first few
  std::size_t problem_count = 0;
  std::vector<std::string> input_notes;  // notes on the inputs of the first few obligors that have any
  std::size_t noted_obligors = 0;        // obligors with input notes, listed or not

  void clear() {
    text.clear();
    rows.clear();
    scored = invalid = not_converged = iterations = 0;
    problems.clear();
    problem_count = 0;
    input_notes.clear();
    noted_obligors = 0;
  }
  // Adds (sign +1) or removes (sign -1) a row from the counts.
  void tally(RowStatus status, int row_iterations, int sign) {
    const auto step = [sign](std::size_t& n) { n = sign > 0 ? n + 1 : n - 1; };
    switch (status) {
      case RowStatus::ok:
        step(scored);
        iterations = sign > 0 ? iterations + static_cast<std::size_t>(row_iterations)
                              : iterations - static_cast<std::size_t>(row_iterations);
        break;
      case RowStatus::invalid_input:
        step(invalid);
        break;
      case RowStatus::not_converged:
        step(not_converged);
        break;
    }
    if (status != RowStatus::ok) step(problem_count);
  }
  void note_problem(std::size_t row, std::string what, std::size_t most) {
    if (problems.size() < most) problems.emplace_back(row, std::move(what));
  }
};

// Resolves, solves (valid obligors together), measures and formats recs[0, n) into `out`.
void score_rows(const RunContext& ctx, const ObligorRecord* recs, std::size_t n, Scratch& sc,
                ScoredRows& out) {
  out.clear();
  if (sc.resolved.size() < n) sc.resolved.resize(n);
  sc.inputs.clear();
  for (std::size_t i = 0; i < n; ++i) {
    resolve_obligor(recs[i], ctx.book, ctx.settings, sc.resolved[i]);
    if (sc.resolved[i].ok()) sc.inputs.push_back(sc.resolved[i].inputs);
  }
  sc.solutions.resize(sc.inputs.size());
  solve_asset_batch(sc.inputs.data(), sc.solutions.data(), sc.inputs.size(), ctx.settings.solver);
  std::size_t solved_index = 0;
  out.rows.resize(n);
  for (std::size_t i = 0; i < n; ++i) {
    std::swap(sc.scored.resolved, sc.resolved[i]);
    sc.scored.solution = sc.scored.resolved.ok() ? sc.solutions[solved_index++] : AssetSolution{};
    complete_score(recs[i], sc.scored);
    if (i > 0) out.text.append(ctx.writer.separator());
    ScoredRows::Row& row = out.rows[i];
    row.begin = out.text.size();
    ctx.writer.row(recs[i], sc.scored, out.text);
    row.end = out.text.size();
    row.status = sc.scored.status;
    row.iterations = sc.scored.solution.iterations;
    out.tally(row.status, row.iterations, +1);
    if (row.status != RowStatus::ok)
      out.note_problem(i, problem_text(ctx, recs[i], sc.scored), ctx.run.max_listed_problems);
    const bool scored = row.status == RowStatus::ok;
    const double leverage = scored ? sc.scored.measures.leverage : std::nan("");
    if (has_input_notes(sc.scored.resolved, leverage, ctx.settings)) {  // rare: only these rows allocate
      if (out.noted_obligors++ < ctx.run.max_listed_problems) {
        const std::size_t from = out.input_notes.size();
        append_input_notes(recs[i], sc.scored.resolved, scored ? sc.scored.measures.pd : std::nan(""),
                           leverage, ctx.settings, out.input_notes);
        for (std::size_t k = from; k < out.input_notes.size(); ++k)
          out.input_notes[k] = located(ctx.origin, recs[i].line, "note: " + out.input_notes[k]);
      }
    }
  }
}

// Writes pieces of scored rows in input order and keeps the run's summary.
class OrderedOutput {
 public:
  explicit OrderedOutput(const RunContext& ctx) : ctx_(ctx) {}

  void begin() {
    std::string s;
    ctx_.writer.begin(s);
    ctx_.sink(s);
  }

  void write(ScoredRows& piece) {
    if (piece.rows.empty()) return;
    if (rows_written_ > 0) ctx_.sink(ctx_.writer.separator());
    ctx_.sink(piece.text);
    rows_written_ += piece.rows.size();
    summary_.total += piece.rows.size();
    summary_.scored += piece.scored;
    summary_.invalid += piece.invalid;
    summary_.not_converged += piece.not_converged;
    summary_.newton_iterations += piece.iterations;
    problem_count_ += piece.problem_count;
    std::sort(piece.problems.begin(), piece.problems.end());
    for (auto& p : piece.problems) {
      if (summary_.problems.size() >= ctx_.run.max_listed_problems) break;
      summary_.problems.push_back(std::move(p.second));
    }
    // Pieces keep the notes of their first obligors; the run lists those of its first ones.
    const std::size_t listed_here = std::min(piece.noted_obligors, ctx_.run.max_listed_problems);
    if (noted_obligors_ < ctx_.run.max_listed_problems) {
      input_notes_.insert(input_notes_.end(), std::make_move_iterator(piece.input_notes.begin()),
                          std::make_move_iterator(piece.input_notes.end()));
      listed_obligors_ += listed_here;
    }
    noted_obligors_ += piece.noted_obligors;
  }

  ScoreSummary finish(std::vector<std::string> notes) {
    summary_.problems_not_listed = problem_count_ - summary_.problems.size();
    summary_.notes = std::move(notes);
    summary_.notes.insert(summary_.notes.end(), std::make_move_iterator(input_notes_.begin()),
                          std::make_move_iterator(input_notes_.end()));
    if (noted_obligors_ > listed_obligors_) {
      summary_.notes.push_back("note: " + std::to_string(noted_obligors_ - listed_obligors_) +
                               " more obligor(s) with notes on their inputs, not listed");
    }
    std::string s;
    ctx_.writer.end(summary_, s);
    ctx_.sink(s);
    return summary_;
  }

 private:
  const RunContext& ctx_;
  std::size_t rows_written_ = 0;
  std::size_t problem_count_ = 0;
  std::vector<std::string> input_notes_;
  std::size_t noted_obligors_ = 0;   // obligors with notes on their inputs
  std::size_t listed_obligors_ = 0;  // those whose notes are in input_notes_
  ScoreSummary summary_;
};

// One piece of a streamed CSV file: whole records, read by the main thread, parsed, scored and
// formatted by one worker, then checked for duplicate ids and written in input order.
struct Chunk {
  std::string text;            // whole records
  std::size_t first_line = 0;  // line of text[0]
  bool quoted = false;         // the text holds a '"' (record ends must honour quotes)
  std::string skipped;         // not empty: one over-long record at first_line, skipped with this reason
  std::vector<ObligorRecord> recs;
  std::size_t n = 0;  // records in use
  std::vector<std::uint64_t> id_hashes;
  ScoredRows rows;
  std::exception_ptr error;
  bool done = false;  // guarded by the pipeline's mutex
};

// Parses and scores one chunk (any thread).
void process_chunk(const RunContext& ctx, const CsvColumns& cols, Chunk& c, Scratch& sc) {
  c.n = 0;
  const auto next_record = [&]() -> ObligorRecord& {
    if (c.recs.size() <= c.n) c.recs.resize(c.n + 1 + c.n / 2);
    ObligorRecord& rec = c.recs[c.n++];
    rec.clear();
    return rec;
  };
  if (!c.skipped.empty()) {
    ObligorRecord& rec = next_record();
    rec.line = c.first_line;
    rec.read_error = c.skipped;
  } else {
    const std::string_view text(c.text);
    std::size_t line = c.first_line;
    std::size_t p = 0;
    bool open_quote = false;
    std::size_t stray = kNoStrayQuote;
    while (p < text.size()) {
      // Record boundaries: line breaks, or (when the chunk has quotes) the CSV record end.
      std::size_t e;
      std::size_t breaks = 1;
      if (!c.quoted) {
        e = p + split_plain_record(text.substr(p), sc.fields);
      } else {
        e = p + split_csv_record(text.substr(p), sc.fields, sc.unescaped, open_quote, &stray);
        breaks = count_lines(text.substr(p, e - p));
      }
      const std::string_view rec_text = text.substr(p, e - p);
      if (rec_text.find_first_not_of(" \t\r\n") != std::string_view::npos) {
        ObligorRecord& rec = next_record();
        rec.line = line;
        if (rec_text.size() > kMaxRecordBytes) {  // a chunk may hold one a little past the limit
          rec.read_error = record_too_long_problem();
        } else {
          parse_obligor_fields(sc.fields, cols, rec);
          if (open_quote) {
            rec.read_error = "a quoted field is never closed";
          } else if (stray != kNoStrayQuote) {
            rec.read_error = stray_quote_problem(cols.name_of(stray), sc.fields[stray]);
          }
        }
      }
      line += breaks;
      p = e;
    }
  }
  c.id_hashes.resize(c.n);
  for (std::size_t i = 0; i < c.n; ++i) c.id_hashes[i] = IdRegistry::hash(c.recs[i].get(TextField::id));
  score_rows(ctx, c.recs.data(), c.n, sc, c.rows);
}

// The later of two rows with the same id is invalid. Checked in input order when a chunk is
// written; such a row (rare) is scored again as invalid and its text replaced.
class DuplicateCheck {
 public:
  explicit DuplicateCheck(const RunContext& ctx) : ctx_(ctx) {}

  void reserve(std::size_t ids) { ids_.reserve(ids); }

  void apply(Chunk& c, Scratch& sc) {
    dups_.clear();
    constexpr std::size_t kAhead = 16;  // the table's random probes are prefetched
    for (std::size_t i = 0; i < c.n && i < kAhead; ++i) ids_.prefetch(c.id_hashes[i]);
    ids_.reserve(c.n);
    for (std::size_t i = 0; i < c.n; ++i) {
      if (i + kAhead < c.n) ids_.prefetch(c.id_hashes[i + kAhead]);
      ObligorRecord& rec = c.recs[i];
      if (rec.get(TextField::id).empty()) continue;
      const std::size_t first = ids_.insert(c.id_hashes[i], rec.line);
      if (first != 0 && rec.read_error.empty()) {
        rec.read_error = "field 'id': duplicate of the obligor at line " + std::to_string(first);
        dups_.push_back(i);
      }
    }
    if (dups_.empty()) return;
    ScoredRows& rows = c.rows;
    fixed_.clear();
    std::size_t from = 0;
    for (std::size_t i : dups_) {
      ScoredRows::Row& row = rows.rows[i];
      fixed_.append(rows.text, from, row.begin - from);
      from = row.end;
      rows.tally(row.status, row.iterations, -1);
      std::erase_if(rows.problems, [i](const auto& p) { return p.first == i; });
      score_obligor(c.recs[i], ctx_.book, ctx_.settings, sc.scored);
      ctx_.writer.row(c.recs[i], sc.scored, fixed_);
      row.status = sc.scored.status;
      row.iterations = sc.scored.solution.iterations;
      rows.tally(row.status, row.iterations, +1);
      rows.note_problem(i, problem_text(ctx_, c.recs[i], sc.scored),
                        ctx_.run.max_listed_problems + dups_.size());
    }
    fixed_.append(rows.text, from, std::string::npos);
    std::swap(rows.text, fixed_);  // row offsets past this point are stale; only the text is used now
  }

 private:
  const RunContext& ctx_;
  IdRegistry ids_;
  std::vector<std::size_t> dups_;
  std::string fixed_;
};

// Chunks in flight: workers parse and score them in any order; the calling thread hands them out
// and writes them in input order, so the output never depends on the number of threads.
// A CSV book read in steps of whole records from the main thread: the header first, then chunks
// of about chunk_bytes, each cut at a record end (quote-aware when the text holds a quote).
class CsvChunkSource {
 public:
  enum class Step : std::uint8_t { records, record_too_long, end };

  CsvChunkSource(std::FILE* in, const std::string& origin, std::size_t chunk_bytes)
      : in_(in), origin_(origin), chunk_bytes_(chunk_bytes) {}

  /// Reads the header row (after a byte-order mark and blank lines); notes its unused columns.
  CsvColumns header(std::vector<std::string>& notes) {
    fill(chunk_bytes_);
    std::size_t pos = 0;
    if (buf_.compare(0, 3, "\xEF\xBB\xBF") == 0) pos = 3;
    while (pos < buf_.size() && (buf_[pos] == '\n' || buf_[pos] == '\r')) {
      if (buf_[pos] == '\n') ++line_;
      ++pos;
    }
    if (pos >= buf_.size()) throw InputError(located(origin_, 0, "empty file: a header row is required"));
    std::vector<std::string_view> fields;
    std::string scratch;
    bool unterminated = false;
    const std::size_t header_len =
        split_csv_record(std::string_view(buf_).substr(pos), fields, scratch, unterminated);
    if (unterminated) throw InputError(located(origin_, line_, "header: a quoted name is never closed"));
    CsvColumns cols = CsvColumns::from_header(fields, origin_);
    for (const auto& u : cols.unused)
      notes.push_back(located(origin_, line_, "note: column '" + u + "' is not used"));
    line_ += count_lines(std::string_view(buf_).substr(pos, header_len));
    buf_.erase(0, pos + header_len);
    return cols;
  }

  /// Rows of a regular file, estimated from its size and the rows read so far; 0 when unknown.
  std::size_t expected_rows() const {
    struct stat st {};
    if (buf_.empty() || ::fstat(::fileno(in_), &st) != 0 || !S_ISREG(st.st_mode)) return 0;
    const std::size_t rows = std::max<std::size_t>(count_lines(buf_), 1);
    const double per_row = static_cast<double>(buf_.size()) / static_cast<double>(rows);
    const double expected = static_cast<double>(st.st_size) / per_row * 1.05;
    return static_cast<std::size_t>(std::min(expected, 1e8));
  }

  /// Reads until whole records are at hand (or one record longer than kMaxRecordBytes is).
  Step advance() {
    std::size_t want = chunk_bytes_;
    while (true) {
      fill(want);
      if (buf_.empty()) return Step::end;
      const std::string_view all(buf_);
      quoted_ = std::memchr(all.data(), '"', all.size()) != nullptr;
      cut_ = all.size();
      if (eof_) return Step::records;
      if (quoted_) {
        cut_ = last_record_end(all);
      } else {
        const void* nl = ::memrchr(all.data(), '\n', all.size());
        cut_ = nl ? static_cast<std::size_t>(static_cast<const char*>(nl) - all.data()) + 1 : 0;
      }
      if (cut_ > 0) return Step::records;
      if (buf_.size() >= kMaxRecordBytes) return Step::record_too_long;
      want = std::min(buf_.size() * 2, kMaxRecordBytes);  // one record longer than the buffer
    }
  }

  /// After Step::records: moves the records into `c`; notes a last row without a line break.
  void take_records(Chunk& c, std::vector<std::string>& notes) {
    c.text.assign(buf_, 0, cut_);
    c.first_line = line_;
    c.quoted = quoted_;
    line_ += count_lines(c.text);
    buf_.erase(0, cut_);
    if (!eof_ || !buf_.empty()) return;
    // The file's last row has no line break after it: read, and noted (it may be cut short).
    const std::string_view text(c.text);
    const std::size_t last_nl = text.find_last_of('\n');
    const std::string_view tail = last_nl == std::string_view::npos ? text : text.substr(last_nl + 1);
    if (text.back() != '\r' && tail.find_first_not_of(" \t") != std::string_view::npos) {
      notes.push_back(located(origin_, line_, no_final_line_break_note()));
    }
  }

  /// After Step::record_too_long: `c` reports the record, which is skipped to its end so that
  /// memory stays bounded whatever the file holds. The end is the first line break outside
  /// quotes, scanned from the record's start as split_csv_record reads it: a quoted field may hold
  /// line breaks, and resuming inside it would read its closing quote as an opening one.
  void skip_long_record(Chunk& c) {
    c.text.clear();
    c.first_line = line_;
    c.skipped = record_too_long_problem();
    CsvScanState scan;
    while (true) {
      const std::size_t end = scan.find_record_end(buf_, line_);
      if (end != std::string_view::npos) {
        buf_.erase(0, end);
        return;
      }
      buf_.clear();
      if (eof_) return;
      fill(chunk_bytes_);
      if (buf_.empty()) return;
    }
  }

 private:
  // Reads until buf_ holds at least `want` bytes or the file ends.
  void fill(std::size_t want) {
    while (!eof_ && buf_.size() < want) {
      const std::size_t old = buf_.size();
      const std::size_t ask = std::max<std::size_t>(want - old, 64 * 1024);
      buf_.resize(old + ask);
      const std::size_t got = std::fread(buf_.data() + old, 1, ask, in_);
      buf_.resize(old + got);
      if (got < ask) {
        if (std::ferror(in_)) throw InputError("cannot read file '" + origin_ + "'");
        eof_ = true;
      }
    }
  }

  std::FILE* in_;
  const std::string& origin_;
  std::size_t chunk_bytes_;
  std::string buf_;
  bool eof_ = false;
  std::size_t line_ = 1;  // line of buf_[0]
  std::size_t cut_ = 0;   // after advance(): bytes of whole records at buf_'s start
  bool quoted_ = false;   // after advance(): buf_ holds a '"'
};

class ChunkPipeline {
 public:
  ChunkPipeline(const RunContext& ctx, const CsvColumns& cols, OrderedOutput& output, DuplicateCheck& dups,
                unsigned threads)
      : ctx_(ctx), cols_(cols), output_(output), dups_(dups), scratch_(threads + 1) {
    max_in_flight_ = threads + 2;
    if (threads > 1) {
      for (unsigned t = 0; t < threads; ++t) workers_.emplace_back([this, t]() { work(t); });
    }
  }
  ~ChunkPipeline() { stop(); }
  ChunkPipeline(const ChunkPipeline&) = delete;
  ChunkPipeline& operator=(const ChunkPipeline&) = delete;

  /// A chunk to fill, writing the oldest ones first when too many are in flight.
  Chunk& take() {
    while (in_order_.size() >= max_in_flight_) write_oldest();
    if (free_.empty()) {
      pool_.push_back(std::make_unique<Chunk>());
      free_.push_back(pool_.back().get());
    }
    Chunk* c = free_.back();
    free_.pop_back();
    c->skipped.clear();
    c->error = nullptr;
    c->done = false;
    return *c;
  }

  /// Queues a filled chunk (processed at once when there are no worker threads).
  void submit(Chunk& c) {
    in_order_.push_back(&c);
    if (workers_.empty()) {
      process(c, scratch_[0]);
      c.done = true;
      return;
    }
    {
      std::lock_guard<std::mutex> lock(mutex_);
      queue_.push_back(&c);
    }
    work_ready_.notify_one();
  }

  /// Writes every chunk still in flight.
  void drain() {
    while (!in_order_.empty()) write_oldest();
  }

 private:
  void process(Chunk& c, Scratch& sc) noexcept {
    try {
      process_chunk(ctx_, cols_, c, sc);
    } catch (...) {
      c.error = std::current_exception();
    }
  }

  void work(unsigned t) {
    while (true) {
      Chunk* c = nullptr;
      {
        std::unique_lock<std::mutex> lock(mutex_);
        work_ready_.wait(lock, [this]() { return stopping_ || !queue_.empty(); });
        if (stopping_) return;
        c = queue_.front();
        queue_.pop_front();
      }
      process(*c, scratch_[t + 1]);
      {
        std::lock_guard<std::mutex> lock(mutex_);
        c->done = true;
      }
      chunk_done_.notify_all();
    }
  }

  void write_oldest() {
    Chunk& c = *in_order_.front();
    if (!workers_.empty()) {
      std::unique_lock<std::mutex> lock(mutex_);
      chunk_done_.wait(lock, [&c]() { return c.done; });
    }
    in_order_.pop_front();
    free_.push_back(&c);
    if (c.error) std::rethrow_exception(c.error);
    dups_.apply(c, scratch_[0]);
    output_.write(c.rows);
  }

  void stop() {
    {
      std::lock_guard<std::mutex> lock(mutex_);
      stopping_ = true;
    }
    work_ready_.notify_all();
    for (auto& w : workers_) w.join();
    workers_.clear();
  }

  const RunContext& ctx_;
  const CsvColumns& cols_;
  OrderedOutput& output_;
  DuplicateCheck& dups_;
  std::vector<Scratch> scratch_;  // [0]: the calling thread; [t + 1]: worker t
  std::size_t max_in_flight_ = 2;
  std::vector<std::unique_ptr<Chunk>> pool_;
  std::vector<Chunk*> free_;
  std::deque<Chunk*> in_order_;  // submitted, oldest first
  std::mutex mutex_;
  std::condition_variable work_ready_, chunk_done_;
  std::deque<Chunk*> queue_;  // submitted, not yet taken by a worker
  bool stopping_ = false;
  std::vector<std::thread> workers_;
};

}  // namespace

ScoreSummary score_book(const Book& book, const ScoreSettings& settings, const ScoreBookOptions& run,
                        const TextSink& sink) {
  const auto writer = make_score_writer(run.format, book.origin, settings, run.sensitivities, run.grades,
                                        run.pd_calibration, run.driving_pd, run.pd_calibration_origin);
  const RunContext ctx{book.origin, book.defaults, settings, run, *writer, sink};
  OrderedOutput output(ctx);
  output.begin();
  const unsigned threads = std::max(1U, run.threads);
  std::vector<Scratch> scratch(threads);
  std::vector<ScoredRows> pieces(threads);
  parallel_slices(book.obligors.size(), threads, [&](unsigned w, std::size_t b, std::size_t e) {
    score_rows(ctx, book.obligors.data() + b, e - b, scratch[w], pieces[w]);
  });
  for (ScoredRows& piece : pieces) output.write(piece);
  return output.finish(book.notes);
}

// Stays one function on purpose: it is the measured streaming hot path. The read buffer, the
// header state and the chunk hand-off to the pipeline share locals that the loop updates in place;
// splitting it would pass them through helpers at every chunk for no gain in clarity.
ScoreSummary score_csv_stream(std::FILE* in, const std::string& origin, const ScoreSettings& settings,
                              const ScoreBookOptions& run, const TextSink& sink) {
  const BookDefaults no_defaults;
  CsvChunkSource source(in, origin, run.chunk_bytes);
  std::vector<std::string> notes;
  const CsvColumns cols = source.header(notes);
  const auto writer = make_score_writer(run.format, origin, settings, run.sensitivities, run.grades,
                                        run.pd_calibration, run.driving_pd, run.pd_calibration_origin);
  const RunContext ctx{origin, no_defaults, settings, run, *writer, sink};
  OrderedOutput output(ctx);
  output.begin();
  DuplicateCheck dups(ctx);
  // Room for every id at once, so that the table does not grow step by step.
  if (const std::size_t rows = source.expected_rows(); rows > 0) dups.reserve(rows);
  ChunkPipeline pipeline(ctx, cols, output, dups, std::max(1U, run.threads));
  for (CsvChunkSource::Step step; (step = source.advance()) != CsvChunkSource::Step::end;) {
    Chunk& c = pipeline.take();
    if (step == CsvChunkSource::Step::records) {
      source.take_records(c, notes);
    } else {
      source.skip_long_record(c);
    }
    pipeline.submit(c);
  }
  pipeline.drain();
  return output.finish(std::move(notes));
}

OptionCheck ScoreBookOptions::validate() const {
  if (threads < 1) return OptionProblem{"threads", std::to_string(threads), "must be at least 1"};
  if (chunk_bytes == 0) return OptionProblem{"chunk_bytes", std::to_string(chunk_bytes), "must be positive"};
  return std::nullopt;
}

}  // namespace firmcall
