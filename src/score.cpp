#include "firmcall/score.hpp"

#include <algorithm>
#include <cmath>
#include <cstring>
#include <exception>
#include <functional>
#include <thread>

#include "firmcall/csv.hpp"
#include "firmcall/errors.hpp"
#include "firmcall/output.hpp"
#include "firmcall/parallel.hpp"

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
constexpr std::size_t kMaxRecordBytes = std::size_t{4} << 20;  // longest CSV row accepted

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

void score_obligor(const ObligorRecord& rec, const BookDefaults& book, const ScoreSettings& settings,
                   ScoredObligor& out) {
  out.solution = AssetSolution{};
  resolve_obligor(rec, book, settings, out.resolved);
  if (out.resolved.ok()) out.solution = solve_asset(out.resolved.inputs, settings.solver);
  complete_score(rec, out);
}

namespace {

// Ids seen so far, as 64-bit hashes with the line of first appearance (open addressing). A hash
// collision between two different ids (probability ~ n^2 / 2^65) would be reported as a duplicate.
class IdRegistry {
 public:
  /// 64-bit hash of an id (FNV-1a with a final mix).
  static std::uint64_t hash(std::string_view s) noexcept {
    std::uint64_t h = 1469598103934665603ULL;
    for (char c : s) {
      h ^= static_cast<unsigned char>(c);
      h *= 1099511628211ULL;
    }
    h ^= h >> 33;
    h *= 0xff51afd7ed558ccdULL;
    h ^= h >> 33;
    return h;
  }

  /// Returns 0 if the id with hash h is new, else the line where it was first seen.
  std::size_t insert(std::uint64_t h, std::size_t line) {
    if ((count_ + 1) * 10 > slots_.size() * 7) grow();
    std::size_t i = static_cast<std::size_t>(h) & (slots_.size() - 1);
    while (slots_[i].line != 0) {
      if (slots_[i].hash == h) return slots_[i].line;
      i = (i + 1) & (slots_.size() - 1);
    }
    slots_[i] = {h, line};
    ++count_;
    return 0;
  }

 private:
  struct Slot {
    std::uint64_t hash = 0;
    std::size_t line = 0;  // 0: empty
  };
  void grow() {
    std::vector<Slot> old = std::move(slots_);
    slots_.assign(old.empty() ? 1024 : old.size() * 2, Slot{});
    for (const Slot& s : old) {
      if (s.line == 0) continue;
      std::size_t i = static_cast<std::size_t>(s.hash) & (slots_.size() - 1);
      while (slots_[i].line != 0) i = (i + 1) & (slots_.size() - 1);
      slots_[i] = s;
    }
  }
  std::vector<Slot> slots_;
  std::size_t count_ = 0;
};

// Per-worker state reused across batches.
struct Worker {
  std::string out;
  ScoredObligor scored;
  std::vector<std::pair<std::size_t, std::string>> problems;  // (row index, text)
  std::size_t problem_count = 0;
  std::size_t scored_n = 0, invalid_n = 0, not_converged_n = 0, iterations = 0;
  std::vector<std::string_view> fields;
  std::string scratch;
  std::vector<ResolvedObligor> resolved;  // one per row of the slice
  std::vector<MertonInputs> inputs;       // the resolved ones, solved together
  std::vector<AssetSolution> solutions;
};

// Scores records [0, n) of `recs` in parallel and writes them in order to the sink.
class BatchScorer {
 public:
  BatchScorer(const std::string& origin, const BookDefaults& book, const ScoreSettings& settings,
              const ScoreRunOptions& run, const TextSink& sink)
      : origin_(origin),
        book_(book),
        settings_(settings),
        run_(run),
        sink_(sink),
        writer_(make_score_writer(run.format, origin, settings, run.sensitivities, run.grades)),
        workers_(std::max(1U, run.threads)) {}

  void begin() {
    std::string s;
    writer_->begin(s);
    sink_(s);
  }

  void score(const std::vector<ObligorRecord>& recs, std::size_t n) {
    const std::size_t base = summary_.total;
    parallel_slices(n, run_.threads, [&](unsigned w, std::size_t b, std::size_t e) {
      Worker& wk = workers_[w];
      wk.out.clear();
      // Resolve the slice, solve its valid obligors together, then measure and format in order.
      if (wk.resolved.size() < e - b) wk.resolved.resize(e - b);
      wk.inputs.clear();
      for (std::size_t i = b; i < e; ++i) {
        resolve_obligor(recs[i], book_, settings_, wk.resolved[i - b]);
        if (wk.resolved[i - b].ok()) wk.inputs.push_back(wk.resolved[i - b].inputs);
      }
      wk.solutions.resize(wk.inputs.size());
      solve_asset_batch(wk.inputs.data(), wk.solutions.data(), wk.inputs.size(), settings_.solver);
      std::size_t solved_index = 0;
      for (std::size_t i = b; i < e; ++i) {
        std::swap(wk.scored.resolved, wk.resolved[i - b]);
        wk.scored.solution = wk.scored.resolved.ok() ? wk.solutions[solved_index++] : AssetSolution{};
        complete_score(recs[i], wk.scored);
        if (base + i > 0) wk.out.append(writer_->separator());
        writer_->row(recs[i], wk.scored, wk.out);
        switch (wk.scored.status) {
          case RowStatus::ok:
            ++wk.scored_n;
            wk.iterations += static_cast<std::size_t>(wk.scored.solution.iterations);
            break;
          case RowStatus::invalid_input:
            ++wk.invalid_n;
            break;
          case RowStatus::not_converged:
            ++wk.not_converged_n;
            break;
        }
        if (wk.scored.status != RowStatus::ok) {
          if (wk.problems.size() < run_.max_listed_problems) {
            std::string id = recs[i].get(TextField::id);
            wk.problems.emplace_back(base + i, origin_ + ":" + std::to_string(recs[i].line) + ": obligor '" +
                                                   (id.empty() ? std::string("?") : id) +
                                                   "': " + message_without_line(wk.scored.message));
          }
          ++wk.problem_count;
        }
      }
    });
    // Hand the formatted text to the writer thread, which writes it while the next batch is
    // read and scored; its buffers come back to the workers for reuse.
    wait_for_writer();
    for (std::size_t w = 0; w < workers_.size(); ++w) std::swap(pending_[w], workers_[w].out);
    writer_thread_ = std::thread([this]() {
      try {
        for (const std::string& text : pending_) sink_(text);
      } catch (...) {
        write_error_ = std::current_exception();
      }
    });
    summary_.total += n;
  }

  ~BatchScorer() {
    if (writer_thread_.joinable()) writer_thread_.join();
  }
  BatchScorer(const BatchScorer&) = delete;
  BatchScorer& operator=(const BatchScorer&) = delete;

  ScoreSummary finish(std::vector<std::string> notes) {
    wait_for_writer();
    std::vector<std::pair<std::size_t, std::string>> all;
    std::size_t problem_count = 0;
    for (Worker& wk : workers_) {
      summary_.scored += wk.scored_n;
      summary_.invalid += wk.invalid_n;
      summary_.not_converged += wk.not_converged_n;
      summary_.newton_iterations += wk.iterations;
      problem_count += wk.problem_count;
      for (auto& p : wk.problems) all.push_back(std::move(p));
    }
    std::sort(all.begin(), all.end());
    for (std::size_t i = 0; i < all.size() && i < run_.max_listed_problems; ++i) {
      summary_.problems.push_back(std::move(all[i].second));
    }
    summary_.problems_not_listed = problem_count - summary_.problems.size();
    summary_.notes = std::move(notes);
    std::string s;
    writer_->end(summary_, s);
    sink_(s);
    return summary_;
  }

  std::vector<Worker>& workers() { return workers_; }

 private:
  void wait_for_writer() {
    if (writer_thread_.joinable()) writer_thread_.join();
    if (write_error_) {
      std::exception_ptr e = write_error_;
      write_error_ = nullptr;
      std::rethrow_exception(e);
    }
  }
  static std::string message_without_line(const std::string& m) {
    const auto colon = m.find(": ");
    return (m.rfind("line ", 0) == 0 && colon != std::string::npos) ? m.substr(colon + 2) : m;
  }
  const std::string& origin_;
  const BookDefaults& book_;
  const ScoreSettings& settings_;
  const ScoreRunOptions& run_;
  const TextSink& sink_;
  std::unique_ptr<ScoreWriter> writer_;
  std::vector<Worker> workers_;
  std::vector<std::string> pending_ = std::vector<std::string>(workers_.size());  // being written
  std::thread writer_thread_;
  std::exception_ptr write_error_;
  ScoreSummary summary_;
};

}  // namespace

ScoreSummary score_book(const Book& book, const ScoreSettings& settings, const ScoreRunOptions& run,
                        const TextSink& sink) {
  BatchScorer scorer(book.origin, book.defaults, settings, run, sink);
  scorer.begin();
  scorer.score(book.obligors, book.obligors.size());
  return scorer.finish(book.notes);
}

ScoreSummary score_csv_stream(std::FILE* in, const std::string& origin, const ScoreSettings& settings,
                              const ScoreRunOptions& run, const TextSink& sink) {
  const BookDefaults no_defaults;
  std::string buf;
  bool eof = false;
  // Reads until buf holds at least `want` bytes or the file ends.
  const auto fill = [&](std::size_t want) {
    while (!eof && buf.size() < want) {
      const std::size_t old = buf.size();
      const std::size_t ask = std::max<std::size_t>(want - old, 64 * 1024);
      buf.resize(old + ask);
      const std::size_t got = std::fread(buf.data() + old, 1, ask, in);
      buf.resize(old + got);
      if (got < ask) {
        if (std::ferror(in)) throw InputError("cannot read file '" + origin + "'");
        eof = true;
      }
    }
  };

  // Header.
  fill(run.chunk_bytes);
  std::size_t pos = 0;
  if (buf.compare(0, 3, "\xEF\xBB\xBF") == 0) pos = 3;
  std::size_t line = 1;
  while (pos < buf.size() && (buf[pos] == '\n' || buf[pos] == '\r')) {
    if (buf[pos] == '\n') ++line;
    ++pos;
  }
  if (pos >= buf.size()) throw InputError(located(origin, 0, "empty file: a header row is required"));
  std::vector<std::string_view> fields;
  std::string scratch;
  bool unterminated = false;
  const std::size_t header_len =
      split_csv_record(std::string_view(buf).substr(pos), fields, scratch, unterminated);
  if (unterminated) throw InputError(located(origin, line, "header: a quoted name is never closed"));
  const CsvColumns cols = CsvColumns::from_header(fields, origin);
  std::vector<std::string> notes;
  for (const auto& u : cols.unused)
    notes.push_back(located(origin, line, "note: column '" + u + "' is not used"));
  line += count_lines(std::string_view(buf).substr(pos, header_len));
  buf.erase(0, pos + header_len);

  BatchScorer scorer(origin, no_defaults, settings, run, sink);
  scorer.begin();
  IdRegistry ids;
  std::vector<ObligorRecord> recs;
  std::vector<std::uint64_t> id_hashes;
  struct Span {
    std::size_t begin, end, line;
  };
  std::vector<Span> spans;

  std::size_t want = run.chunk_bytes;
  while (true) {
    fill(want);
    if (buf.empty()) break;
    const std::string_view all(buf);
    const bool quoted = std::memchr(all.data(), '"', all.size()) != nullptr;
    std::size_t cut = all.size();
    if (!eof) {
      if (quoted) {
        cut = last_record_end(all);
      } else {
        const void* nl = ::memrchr(all.data(), '\n', all.size());
        cut = nl ? static_cast<std::size_t>(static_cast<const char*>(nl) - all.data()) + 1 : 0;
      }
      if (cut == 0) {
        if (buf.size() < kMaxRecordBytes) {  // one record longer than the buffer: read more
          want = std::min(buf.size() * 2, kMaxRecordBytes);
          continue;
        }
        // A record longer than kMaxRecordBytes: report it and skip to the next line break, so
        // that memory stays bounded whatever the file holds.
        recs.resize(std::max<std::size_t>(recs.size(), 1));
        recs[0].clear();
        recs[0].line = line;
        recs[0].read_error = "row is longer than " + std::to_string(kMaxRecordBytes) + " bytes (skipped)";
        scorer.score(recs, 1);
        while (true) {
          const void* nl = std::memchr(buf.data(), '\n', buf.size());
          if (nl != nullptr) {
            buf.erase(0, static_cast<std::size_t>(static_cast<const char*>(nl) - buf.data()) + 1);
            ++line;
            break;
          }
          buf.clear();
          if (eof) break;
          fill(run.chunk_bytes);
          if (buf.empty()) break;
        }
        want = run.chunk_bytes;
        continue;
      }
    }
    want = run.chunk_bytes;
    const std::string_view text = all.substr(0, cut);
    // 1. Record boundaries (sequential; quote-aware only when the chunk has quotes).
    spans.clear();
    std::size_t p = 0;
    while (p < text.size()) {
      std::size_t e;
      std::size_t breaks = 1;
      if (!quoted) {
        const void* nl = std::memchr(text.data() + p, '\n', text.size() - p);
        e = nl ? static_cast<std::size_t>(static_cast<const char*>(nl) - text.data()) + 1 : text.size();
      } else {
        e = p + split_csv_record(text.substr(p), fields, scratch, unterminated);
        breaks = count_lines(text.substr(p, e - p));
      }
      const std::string_view rec_text = text.substr(p, e - p);
      if (rec_text.find_first_not_of(" \t\r\n") != std::string_view::npos) spans.push_back({p, e, line});
      line += breaks;
      p = e;
    }
    if (recs.size() < spans.size()) recs.resize(spans.size());
    id_hashes.resize(spans.size());
    // 2. Parse (parallel).
    parallel_slices(spans.size(), run.threads, [&](unsigned w, std::size_t b, std::size_t e) {
      Worker& wk = scorer.workers()[w];
      for (std::size_t i = b; i < e; ++i) {
        ObligorRecord& rec = recs[i];
        rec.clear();
        rec.line = spans[i].line;
        bool open_quote = false;
        split_csv_record(text.substr(spans[i].begin, spans[i].end - spans[i].begin), wk.fields, wk.scratch,
                         open_quote);
        parse_obligor_fields(wk.fields, cols, rec);
        if (open_quote) rec.read_error = "a quoted field is never closed";
        id_hashes[i] = IdRegistry::hash(rec.get(TextField::id));
      }
    });
    // 3. Duplicate ids (sequential, in input order).
    for (std::size_t i = 0; i < spans.size(); ++i) {
      ObligorRecord& rec = recs[i];
      if (rec.get(TextField::id).empty()) continue;
      const std::size_t first = ids.insert(id_hashes[i], rec.line);
      if (first != 0 && rec.read_error.empty()) {
        rec.read_error = "field 'id': duplicate of the obligor at line " + std::to_string(first);
      }
    }
    // 4. Score and format (parallel); the writer thread writes in order.
    scorer.score(recs, spans.size());
    buf.erase(0, cut);
  }
  return scorer.finish(std::move(notes));
}

}  // namespace firmcall
