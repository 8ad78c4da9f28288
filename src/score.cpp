#include "firmcall/score.hpp"

#include <algorithm>
#include <cmath>
#include <cstring>
#include <functional>
#include <thread>

#include "firmcall/csv.hpp"
#include "firmcall/errors.hpp"
#include "firmcall/output.hpp"

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

void score_obligor(const ObligorRecord& rec, const BookDefaults& book, const ScoreSettings& settings,
                   ScoredObligor& out) {
  out.message.clear();
  out.solution = AssetSolution{};
  resolve_obligor(rec, book, settings, out.resolved);
  if (!out.resolved.ok()) {
    out.status = RowStatus::invalid_input;
    out.message = "line " + std::to_string(rec.line) + ": " + out.resolved.error;
    return;
  }
  out.solution = solve_asset(out.resolved.inputs, settings.solver);
  if (!out.solution.usable()) {
    out.status = RowStatus::not_converged;
    char buf[160];
    std::snprintf(buf, sizeof buf, "line %zu: solver did not converge (residual %.3g after %d iterations)",
                  rec.line, out.solution.residual, out.solution.iterations);
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

namespace {

// Runs fn(worker, begin, end) over [0, n) split into `threads` contiguous slices.
void parallel_slices(std::size_t n, unsigned threads,
                     const std::function<void(unsigned, std::size_t, std::size_t)>& fn) {
  const unsigned t =
      std::max(1U, std::min<unsigned>(threads, static_cast<unsigned>(std::max<std::size_t>(n / 64, 1))));
  if (t == 1) {
    fn(0, 0, n);
    return;
  }
  std::vector<std::thread> pool;
  pool.reserve(t - 1);
  const auto bound = [&](unsigned w) { return n * w / t; };
  for (unsigned w = 1; w < t; ++w) pool.emplace_back(fn, w, bound(w), bound(w + 1));
  fn(0, 0, bound(1));
  for (auto& th : pool) th.join();
}

// Ids seen so far, as 64-bit hashes with the line of first appearance (open addressing). A hash
// collision between two different ids (probability ~ n^2 / 2^65) would be reported as a duplicate.
class IdRegistry {
 public:
  // Returns 0 if new, else the line where the id was first seen.
  std::size_t insert(std::string_view id, std::size_t line) {
    if ((count_ + 1) * 10 > slots_.size() * 7) grow();
    const std::uint64_t h = hash(id);
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
    std::size_t line = 0;
  };
  static std::uint64_t hash(std::string_view s) {
    std::uint64_t h = 1469598103934665603ULL;  // FNV-1a, then a final mix
    for (char c : s) {
      h ^= static_cast<unsigned char>(c);
      h *= 1099511628211ULL;
    }
    h ^= h >> 33;
    h *= 0xff51afd7ed558ccdULL;
    h ^= h >> 33;
    return h;
  }
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
        writer_(make_score_writer(run.format, origin, settings, run.sensitivities)),
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
      for (std::size_t i = b; i < e; ++i) {
        score_obligor(recs[i], book_, settings_, wk.scored);
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
    for (Worker& wk : workers_) sink_(wk.out);
    summary_.total += n;
  }

  ScoreSummary finish(std::vector<std::string> notes) {
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
  std::vector<char> block(run.chunk_bytes);
  bool eof = false;
  const auto fill = [&]() {
    while (!eof && buf.size() < run.chunk_bytes) {
      const std::size_t got = std::fread(block.data(), 1, block.size(), in);
      buf.append(block.data(), got);
      if (got < block.size()) {
        if (std::ferror(in)) throw InputError("cannot read file '" + origin + "'");
        eof = true;
      }
    }
  };

  // Header.
  fill();
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
  struct Span {
    std::size_t begin, end, line;
  };
  std::vector<Span> spans;

  while (true) {
    fill();
    if (buf.empty()) break;
    const std::size_t cut = eof ? buf.size() : last_record_end(buf);
    if (cut == 0) {
      // One record longer than the whole buffer: read more.
      const std::size_t before = buf.size();
      std::vector<char> more(run.chunk_bytes);
      const std::size_t got = std::fread(more.data(), 1, more.size(), in);
      buf.append(more.data(), got);
      if (got == 0) eof = true;
      if (buf.size() == before && eof) continue;
      continue;
    }
    const std::string_view text(buf.data(), cut);
    // 1. Record boundaries (sequential; quote-aware only when the chunk has quotes).
    spans.clear();
    const bool quoted = std::memchr(text.data(), '"', text.size()) != nullptr;
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
      // Skip blank lines.
      const std::string_view rec_text = text.substr(p, e - p);
      if (rec_text.find_first_not_of(" \t\r\n") != std::string_view::npos) spans.push_back({p, e, line});
      line += breaks;
      p = e;
    }
    if (recs.size() < spans.size()) recs.resize(spans.size());
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
        if (open_quote && rec.read_error.empty()) rec.read_error = "a quoted field is never closed";
      }
    });
    // 3. Duplicate ids (sequential, in input order).
    for (std::size_t i = 0; i < spans.size(); ++i) {
      ObligorRecord& rec = recs[i];
      const std::string& id = rec.get(TextField::id);
      if (id.empty()) continue;
      const std::size_t first = ids.insert(id, rec.line);
      if (first != 0 && rec.read_error.empty()) {
        rec.read_error = "field 'id': duplicate of the obligor at line " + std::to_string(first);
      }
    }
    // 4. Score, format and write (parallel, written in order).
    scorer.score(recs, spans.size());
    buf.erase(0, cut);
  }
  return scorer.finish(std::move(notes));
}

}  // namespace firmcall
