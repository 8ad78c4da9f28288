#include "firmcall/monitor/record_book.hpp"

#include <sys/stat.h>
#include <unistd.h>

#include <algorithm>
#include <atomic>
#include <cerrno>
#include <charconv>
#include <cstdio>
#include <cstring>
#include <exception>
#include <filesystem>
#include <future>
#include <thread>

#include "firmcall/book/errors.hpp"
#include "firmcall/engine/score_output.hpp"
#include "firmcall/io/obligor_io.hpp"
#include "firmcall/io/sha256.hpp"
#include "firmcall/util/parallel.hpp"
#include "firmcall/util/timestamp.hpp"

namespace firmcall {

namespace {

// Writes the members of one JSON object in order, `"key": value` joined by ", " (compact: by ","
// with ":" after the key). The caller writes the braces.
class JsonMembers {
 public:
  JsonMembers(std::string& out, bool compact) : out_(out), compact_(compact) {}
  /// The separator and the key; the caller appends the value to the string returned.
  std::string& key(std::string_view k) {
    if (!first_) out_ += compact_ ? "," : ", ";
    first_ = false;
    append_json_string(out_, k);
    out_ += compact_ ? ":" : ": ";
    return out_;
  }
  void number(std::string_view k, double v) { append_json_number(key(k), v); }
  void text(std::string_view k, std::string_view v) { append_json_string(key(k), v); }

 private:
  std::string& out_;
  bool compact_;
  bool first_ = true;
};

// Bytes hashed at a time.
constexpr std::size_t kDigestBlockBytes = std::size_t{1} << 20;

struct FileStamp {
  std::uintmax_t bytes = 0;
  std::int64_t mtime_ns = 0;
};

FileStamp file_stamp(const std::string& path) {
  struct stat st {};
  if (::stat(path.c_str(), &st) != 0) {
    throw InputError("cannot read file '" + path + "': " + std::strerror(errno));
  }
  return {static_cast<std::uintmax_t>(st.st_size),
          static_cast<std::int64_t>(st.st_mtim.tv_sec) * 1000000000 + st.st_mtim.tv_nsec};
}

// SHA-256 of the file's bytes, read in blocks.
std::string file_sha256_hex(const std::string& path) {
  std::unique_ptr<std::FILE, int (*)(std::FILE*)> f(std::fopen(path.c_str(), "rb"), &std::fclose);
  if (!f) throw InputError("cannot open file '" + path + "'");
  Sha256 digest;
  std::string block(kDigestBlockBytes, '\0');
  for (;;) {
    const std::size_t got = std::fread(block.data(), 1, block.size(), f.get());
    digest.update(std::string_view(block.data(), got));
    if (got < block.size()) {
      if (std::ferror(f.get())) throw InputError("cannot read file '" + path + "': " + std::strerror(errno));
      break;
    }
  }
  return to_hex(digest.finish());
}

}  // namespace

OptionCheck RecordBookOptions::validate() const {
  if (store_path.empty()) return OptionProblem{"store_path", "", "must name the history store file"};
  if (!as_of.empty() && !is_calendar_date(as_of)) {
    return OptionProblem{"as_of", as_of, "must be empty or a date YYYY-MM-DD"};
  }
  if (driving_pd == DrivingPd::calibrated && pd_calibration == nullptr) {
    return OptionProblem{"driving_pd", "calibrated", "needs pd_calibration"};
  }
  return std::nullopt;
}

std::string fields_json(const ObligorRecord& rec) {
  std::string out = "{";
  JsonMembers fields(out, true);
  for (std::size_t i = 0; i < kTextFieldCount; ++i) {
    const auto f = static_cast<TextField>(i);
    if (!rec.get(f).empty()) fields.text(to_string(f), rec.get(f));
  }
  for (std::size_t i = 0; i < kNumFieldCount; ++i) {
    const auto f = static_cast<NumField>(i);
    if (!rec.has(f)) continue;
    // Shortest text that reads back as the same double: the store keeps it compact, and exact.
    char buf[32];
    const auto r = std::to_chars(buf, buf + sizeof buf, rec.get(f));
    fields.key(to_string(f)).append(buf, r.ptr);
  }
  out += "}";
  return out;
}

StoredObligor stored_obligor(const ObligorRecord& rec, const ScoredObligor& s, const GradeScale& grades,
                             const PdCalibration* calibration, DrivingPd driving_pd) {
  StoredObligor o;
  o.id = rec.get(TextField::id);
  o.name = rec.get(TextField::name);
  o.status = s.status;
  o.message = s.message;
  o.fields_json = fields_json(rec);
  o.has_inputs = s.resolved.ok();
  if (o.has_inputs) o.inputs = s.resolved.inputs;
  o.has_measures = s.status == RowStatus::ok;
  if (o.has_measures) {
    o.measures = s.measures;
    o.grade = std::string(grades.label_of_pd_at(s.measures.pd, s.resolved.inputs.horizon_years));
    if (calibration != nullptr) {
      const CalibratedPd c = calibration->evaluate(s.measures.distance_to_default);
      o.pd_calibrated = c.pd;
      o.pd_calibrated_lower = c.lower;
      o.pd_calibrated_upper = c.upper;
      o.pd_calibrated_extrapolated = c.extrapolated;
      if (driving_pd == DrivingPd::calibrated) o.grade = std::string(grades.label_of(c.pd));
    }
  }
  if (s.solution.residual >= 0.0) {
    o.iterations = s.solution.iterations;
    o.residual = s.solution.residual;
  }
  return o;
}

std::string settings_json(const ScoreSettings& s, const GradeScale& grades) {
  std::string out = "{";
  JsonMembers run(out, false);
  run.number("default_point_weight", s.default_point_weight);
  run.number("horizon", s.horizon_years);
  run.text("measure", to_string(s.measure));
  run.number("default_lgd", s.default_lgd);
  run.number("max_equity_vol", s.max_equity_vol);
  run.key("solver") += "{";
  JsonMembers solver(out, false);
  solver.number("max_newton_iterations", s.solver.max_newton_iterations);
  solver.number("max_fallback_iterations", s.solver.max_fallback_iterations);
  solver.number("residual_tolerance", s.solver.residual_tolerance);
  out += "}";
  run.key("overrides") += "{";
  JsonMembers overrides(out, false);
  for (const auto& [name, value] :
       {std::pair{"rate", s.rate_override}, std::pair{"horizon", s.horizon_override},
        std::pair{"default_point_weight", s.weight_override}}) {
    if (value) overrides.number(name, *value);
  }
  out += "}";
  run.key("grades") += "[";
  for (std::size_t i = 0; i < grades.bands.size(); ++i) {
    out += i == 0 ? "{" : ", {";
    JsonMembers band(out, false);
    band.text("label", grades.bands[i].label);
    band.number("max_pd", grades.bands[i].max_pd);
    out += "}";
  }
  out += "]}";
  return out;
}

PreparedRun prepare_run(const std::string& book_path, const ScoreSettings& settings, const Config& config,
                        const RecordBookOptions& options) {
  PreparedRun run;
  // The digest first, and the stamp before it: a change while hashing shows as a new stamp later.
  const FileStamp stamp = file_stamp(book_path);
  run.info.input_sha256 = file_sha256_hex(book_path);
  run.book_bytes = stamp.bytes;
  run.book_mtime_ns = stamp.mtime_ns;
  run.book = BookStream::open(book_path);
  const BookStream& book = *run.book;

  if (const OptionCheck problem = options.validate(); problem && problem->field == "driving_pd") {
    throw OptionError(problem->field, problem->constraint);
  }
  RunInfo& info = run.info;
  if (!options.as_of.empty()) {
    if (!is_calendar_date(options.as_of)) {
      throw OptionError("as_of", "expected a date YYYY-MM-DD, got '" + options.as_of + "'");
    }
    info.as_of = options.as_of;
  } else if (!book.as_of().empty()) {
    if (!is_calendar_date(book.as_of())) {
      throw InputError(
          located(book_path, 0, "field 'as_of': expected a date YYYY-MM-DD, got '" + book.as_of() + "'"));
    }
    info.as_of = book.as_of();
  } else {
    info.as_of = local_date_today();
  }

  info.recorded_at = utc_timestamp_now();
  info.book_path = book_path;
  info.book_label = book.label();
  info.settings_json = settings_json(settings, config.grades);
  info.tool_version = options.tool_version;
  if (options.pd_calibration != nullptr) {
    info.calibration = options.calibration;
    info.driving_pd = options.driving_pd;
  }
  run.settings = settings;
  run.grades = config.grades;
  return run;
}

void refuse_same_book(const PreparedRun& run, const RecordBookOptions& options, double busy_timeout_seconds) {
  if (options.replace_run) return;
  std::error_code ec;
  const std::string& path = options.store_path;
  if (!std::filesystem::exists(path, ec) || std::filesystem::file_size(path, ec) == 0 || ec) return;
  const RunStore store(path, StoreOpen::read_only, busy_timeout_seconds);
  // Asked before the writer's transaction, so that an older store is not upgraded for a run that is
  // refused. The writer asks again, in case another process recorded meanwhile.
  store.refuse_same_book(run.info);
}

struct RunRecorder::State {
  State(PreparedRun& r, const RecordBookOptions& o, double timeout)
      : run(r), options(o), busy_timeout_seconds(timeout) {}
  PreparedRun& run;
  const RecordBookOptions& options;
  double busy_timeout_seconds;
  std::unique_ptr<BookStream> book;
  std::unique_ptr<RunStore> store;
  std::unique_ptr<RunWriter> writer;
  bool store_existed = false;
  bool committed = false;
  RecordedRun result;
  std::exception_ptr error;
  std::atomic<bool> stop{false};
  std::thread thread;

  // One piece of the book, scored and ready to insert.
  struct Piece {
    std::vector<ObligorRecord> records;
    std::vector<StoredObligor> stored;
    std::size_t scored = 0;
    std::vector<std::size_t> worker_scored;
    std::vector<std::exception_ptr> worker_error;
  };

  // Reads and scores the next piece; false when the book is done (or the recording is stopped).
  bool produce(Piece& p) {
    if (stop.load() || !book->next(p.records, std::max<std::size_t>(options.piece_obligors, 1))) return false;
    const unsigned threads = std::max(options.threads, 1U);
    p.stored.resize(p.records.size());
    p.worker_scored.assign(threads, 0);
    p.worker_error.assign(threads, nullptr);
    // Each worker scores its own contiguous slice; the store takes the piece in book order.
    parallel_slices(
        p.records.size(), threads,
        [&](unsigned w, std::size_t b, std::size_t e) {
          try {
            ScoredObligor s;
            for (std::size_t i = b; i < e; ++i) {
              score_obligor(p.records[i], book->defaults(), run.settings, s);
              p.stored[i] =
                  stored_obligor(p.records[i], s, run.grades, options.pd_calibration, options.driving_pd);
              if (s.status == RowStatus::ok) ++p.worker_scored[w];
            }
          } catch (...) {
            p.worker_error[w] = std::current_exception();
          }
        },
        256);
    p.scored = 0;
    for (std::size_t w = 0; w < threads; ++w) {
      if (p.worker_error[w]) std::rethrow_exception(p.worker_error[w]);
      p.scored += p.worker_scored[w];
    }
    return true;
  }

  void insert(const Piece& p) {
    for (const StoredObligor& o : p.stored) writer->add(o);
    result.obligors += p.stored.size();
    result.scored += p.scored;
  }

  // The recording thread: the next piece is scored while the last one is inserted.
  void record() {
    refuse_same_book(run, options, busy_timeout_seconds);
    store_existed = ::access(options.store_path.c_str(), F_OK) == 0;
    store = std::make_unique<RunStore>(options.store_path, StoreOpen::create, busy_timeout_seconds);
    writer = std::make_unique<RunWriter>(*store, run.info,
                                         options.replace_run ? SameBook::replace : SameBook::refuse);
    Piece ready;
    Piece next;
    bool have = produce(ready);
    while (have) {
      std::future<bool> scoring = std::async(std::launch::async, [&] { return produce(next); });
      try {
        insert(ready);
      } catch (...) {
        stop = true;
        scoring.wait();
        throw;
      }
      have = scoring.get();
      std::swap(ready, next);
    }
    if (stop.load()) return;
    const FileStamp now = file_stamp(run.info.book_path);
    if (now.bytes != run.book_bytes || now.mtime_ns != run.book_mtime_ns) {
      throw InputError("'" + run.info.book_path +
                       "' changed while it was being recorded; nothing was recorded, record it again");
    }
  }

  // Rolls back an unfinished run; a store file this recording created is removed when it holds no run.
  void abandon() noexcept {
    if (committed) return;
    writer.reset();
    try {
      if (store && !store_existed && store->runs().empty()) {
        store.reset();
        std::error_code ec;
        std::filesystem::remove(options.store_path, ec);
      }
    } catch (...) {
      // Leaving an empty store behind is harmless.
    }
    store.reset();
  }
};

RunRecorder::RunRecorder(PreparedRun& run, const RecordBookOptions& options, double busy_timeout_seconds)
    : state_(std::make_unique<State>(run, options, busy_timeout_seconds)) {
  if (!run.book) throw InputError("'" + run.info.book_path + "': this prepared run was already recorded");
  state_->book = std::move(run.book);
  State& st = *state_;
  st.thread = std::thread([&st] {
    try {
      st.record();
    } catch (...) {
      st.error = std::current_exception();
    }
  });
}

RunRecorder::~RunRecorder() {
  if (state_->thread.joinable()) {
    state_->stop = true;
    state_->thread.join();
  }
  state_->abandon();
}

RecordedRun RunRecorder::finish() {
  State& st = *state_;
  if (st.thread.joinable()) st.thread.join();
  if (st.error) std::rethrow_exception(st.error);
  if (st.stop.load() || !st.writer)
    throw InputError("'" + st.run.info.book_path + "': the recording was stopped");
  RecordedRun result = st.result;
  result.run_id = st.writer->commit();
  st.committed = true;
  result.as_of = st.run.info.as_of;
  for (const RunInfo& r : st.writer->replaced()) result.replaced_run_ids.push_back(r.run_id);
  return result;
}

RecordedRun record_prepared_run(PreparedRun& run, const RecordBookOptions& options,
                                double busy_timeout_seconds) {
  RunRecorder recorder(run, options, busy_timeout_seconds);
  return recorder.finish();
}

RecordedRun record_book(const std::string& book_path, const ScoreSettings& settings, const Config& config,
                        const RecordBookOptions& options) {
  PreparedRun run = prepare_run(book_path, settings, config, options);
  return record_prepared_run(run, options, config.monitor.busy_timeout_seconds);
}

}  // namespace firmcall
