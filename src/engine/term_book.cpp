// PD term structures for a book. See include/firmcall/term_run.hpp.
#include "firmcall/engine/term_book.hpp"

#include <algorithm>
#include <charconv>
#include <cmath>
#include <cstdio>

#include "engine/chunked_rows.hpp"
#include "engine/term_output.hpp"
#include "firmcall/book/errors.hpp"
#include "firmcall/engine/stress_book.hpp"

namespace firmcall {

namespace {

std::string quoted(std::string_view s) {
  std::string out(1, '\'');
  out.append(s);
  out.push_back('\'');
  return out;
}

}  // namespace

std::string term_point_problem(std::size_t line_number, const MertonInputs& in, TermModel model,
                               const Barrier& barrier, const TermPoint& p) {
  const std::string line = "line " + std::to_string(line_number) + ": ";
  char buf[400];
  switch (p.status) {
    case TermStatus::ok:
      return {};
    case TermStatus::invalid_input:
      std::snprintf(buf, sizeof buf, "the %s model rejects these inputs at horizon %g",
                    std::string(to_string(model)).c_str(), p.horizon_years);
      return line + buf;
    case TermStatus::max_iterations:
      std::snprintf(buf, sizeof buf, "%s calibration did not converge (residual %.3g after %d iterations)",
                    std::string(to_string(model)).c_str(), p.residual, p.iterations);
      return line + buf;
    case TermStatus::not_bracketed: {
      const double t = p.calibration_horizon_years;
      const double h0 = barrier.default_point_ratio * in.default_point;
      const double riskless_floor = h0 - in.default_point * std::exp(-in.risk_free_rate_cc * t);
      if (barrier.growth_rate_cc <= in.risk_free_rate_cc && in.equity_value < riskless_floor) {
        std::snprintf(
            buf, sizeof buf,
            "first-passage calibration found no solution: equity value %.6g is below barrier - "
            "default point x e^(-rT) = %.6g at T = %g, about the least equity is worth this close to "
            "the barrier (a lower barrier ratio may help)",
            in.equity_value, riskless_floor, t);
      } else {
        std::snprintf(buf, sizeof buf, "first-passage calibration found no solution for these inputs");
      }
      return line + buf;
    }
    case TermStatus::not_finite:
      std::snprintf(buf, sizeof buf, "a derived %s measure is not finite at horizon %g",
                    std::string(to_string(model)).c_str(), p.horizon_years);
      return line + buf;
  }
  return line + "unknown status";
}

std::vector<double> parse_horizons(std::string_view text, std::string_view field) {
  const std::string name(field);
  std::vector<double> out;
  const auto fail = [&](const std::string& why) {
    throw OptionError(name, why + " (a list of years such as 0.5,1,2,3,5,7,10)");
  };
  if (text.find_first_not_of(" \t") == std::string_view::npos) fail("empty list");
  std::size_t pos = 0;
  std::string_view previous;
  while (true) {
    const std::size_t comma = text.find(',', pos);
    std::string_view item =
        text.substr(pos, comma == std::string_view::npos ? text.size() - pos : comma - pos);
    while (!item.empty() && (item.front() == ' ' || item.front() == '\t')) item.remove_prefix(1);
    while (!item.empty() && (item.back() == ' ' || item.back() == '\t')) item.remove_suffix(1);
    if (item.empty()) fail("empty item in " + quoted(text));
    double v = 0.0;
    const auto r = std::from_chars(item.data(), item.data() + item.size(), v);
    if (r.ec != std::errc() || r.ptr != item.data() + item.size() || !std::isfinite(v)) {
      fail("expected a number of years, got " + quoted(item));
    }
    if (!(v > 0.0) || v > 100.0) fail("each horizon must lie in (0, 100] years, got " + quoted(item));
    if (!out.empty() && !(v > out.back())) {
      fail("horizons must be strictly increasing, got " + quoted(item) + " after " + quoted(previous));
    }
    out.push_back(v);
    previous = item;
    if (out.size() > kMaxHorizons) fail("at most " + std::to_string(kMaxHorizons) + " horizons");
    if (comma == std::string_view::npos) break;
    pos = comma + 1;
  }
  return out;
}

bool wants_term_structure(const TermOptionText& c) {
  return c.horizons.has_value() || (!c.model.empty() && c.model != "merton");
}

TermBookOptions term_book_options(const TermSettings& term, const TermOptionText& c) {
  TermBookOptions run;
  run.calibration = term.calibration;
  run.barrier = {term.barrier_ratio, term.barrier_growth};
  if (!wants_term_structure(c)) {
    for (const auto& [given, name] : {std::pair{!c.calibration.empty(), "calibration"},
                                      std::pair{c.barrier_ratio.has_value(), "barrier_ratio"},
                                      std::pair{c.barrier_growth.has_value(), "barrier_growth"}}) {
      if (given) {
        throw OptionError(name, "applies to term structures; give horizons or a model other than merton",
                          OptionNeed::term_structure);
      }
    }
    return run;
  }
  if (c.horizons) run.horizons = parse_horizons(*c.horizons);
  if (c.model.empty() || c.model == "merton") {
    run.models = {TermModel::merton};
  } else if (c.model == "first-passage") {
    run.models = {TermModel::first_passage};
  } else if (c.model == "both") {
    run.models = {TermModel::merton, TermModel::first_passage};
  } else {
    throw OptionError("model", "expected merton, first-passage or both, got " + quoted(c.model));
  }
  if (!c.calibration.empty()) {
    const auto cal = calibration_from_string(c.calibration);
    if (!cal) throw OptionError("calibration", "expected once or per-horizon, got " + quoted(c.calibration));
    run.calibration = *cal;
  }
  const bool first_passage = run.models.back() == TermModel::first_passage;
  if ((c.barrier_ratio || c.barrier_growth) && !first_passage) {
    throw OptionError(c.barrier_ratio ? "barrier_ratio" : "barrier_growth",
                      "applies to the first-passage model (model first-passage or both)",
                      OptionNeed::first_passage);
  }
  if (c.barrier_ratio) {
    if (!std::isfinite(*c.barrier_ratio) || !(*c.barrier_ratio > 0.0)) {
      throw OptionError("barrier_ratio",
                        "expected a positive multiple of the default point (1 puts the barrier at the "
                        "default point)");
    }
    run.barrier.default_point_ratio = *c.barrier_ratio;
  }
  if (c.barrier_growth) {
    if (!(std::fabs(*c.barrier_growth) <= 1.0)) {
      throw OptionError("barrier_growth",
                        "expected a continuously compounded decimal in [-1, 1] (0.02 means 2% a year)");
    }
    run.barrier.growth_rate_cc = *c.barrier_growth;
  }
  return run;
}

std::string TermScoredObligor::first_problem() const {
  for (const std::string& m : messages) {
    if (!m.empty()) return m;
  }
  return {};
}

void score_term_obligor(const ObligorRecord& rec, const BookDefaults& book, const ScoreSettings& settings,
                        const TermBookOptions& run, TermScoredObligor& out) {
  resolve_obligor(rec, book, settings, out.resolved);
  out.horizons = run.horizons;
  if (out.horizons.empty()) out.horizons = {out.resolved.ok() ? out.resolved.inputs.horizon_years : 0.0};
  const std::size_t nh = out.horizons.size();
  out.points.assign(run.models.size() * nh, TermPoint{});
  out.messages.assign(out.points.size(), std::string());
  bool all_ok = out.resolved.ok();
  for (std::size_t m = 0; m < run.models.size(); ++m) {
    TermPoint* pts = out.points.data() + m * nh;
    if (out.resolved.ok()) {
      const TermRequest req = detail::term_request(run, m, out.resolved.lgd, settings);
      term_structure(out.resolved.inputs, req, out.horizons.data(), nh, pts);
    } else {
      for (std::size_t i = 0; i < nh; ++i) {
        pts[i].horizon_years = out.horizons[i];
        pts[i].status = TermStatus::invalid_input;
      }
    }
    for (std::size_t i = 0; i < nh; ++i) {
      out.messages[m * nh + i] =
          out.resolved.ok()
              ? term_point_problem(rec.line, out.resolved.inputs, run.models[m], run.barrier, pts[i])
              : "line " + std::to_string(rec.line) + ": " + out.resolved.error;
      all_ok = all_ok && pts[i].ok();
    }
  }
  out.status = all_ok              ? RowStatus::ok
               : out.resolved.ok() ? RowStatus::not_converged
                                   : RowStatus::invalid_input;
}

const std::vector<std::string_view>& term_columns() {
  static const std::vector<std::string_view> cols = split_names(
      "id,name,model,horizon,status,calibration_horizon,equity_value,default_point,barrier,"
      "asset_value,asset_vol,distance_to_default,pd,pd_annualised,pd_forward,pd_risk_neutral,"
      "spread_bp,lgd,iterations,residual,message");
  return cols;
}

ScoreSummary score_term_structure(BookStream& book, const ScoreSettings& settings, const TermBookOptions& run,
                                  const TextSink& sink) {
  const unsigned threads = std::max(1U, run.threads);
  detail::TermRunInfo info{book.origin(), settings, run, 0};
  const auto writer = detail::make_term_writer(run.format, info);
  ScoreSummary sum;
  detail::sink_text(sink, [&](std::string& s) { writer->begin(s); });
  struct Worker {
    std::string out;
    TermScoredObligor scored;
    std::vector<std::pair<std::size_t, std::string>> problems;  // (obligor index, text)
    std::size_t ok = 0, invalid = 0, not_converged = 0, problem_count = 0;
    long iterations = 0;
  };
  std::vector<Worker> workers(threads);
  constexpr std::size_t kChunk = 4096;
  std::vector<ObligorRecord> piece;
  std::vector<std::pair<std::size_t, std::string>> all;  // the first few problems, in book order
  std::size_t problem_count = 0;
  std::size_t first = 0;  // book index of the piece's first obligor
  while (book.next(piece, run.piece_obligors)) {
    const BookDefaults& defaults = book.defaults();
    detail::write_in_chunks(
        piece.size(), kChunk, workers, 16, sink, [&](Worker& wk, std::size_t b, std::size_t e) {
          for (std::size_t i = b; i < e; ++i) {
            const ObligorRecord& rec = piece[i];
            score_term_obligor(rec, defaults, settings, run, wk.scored);
            writer->obligor(rec, wk.scored, first + i == 0, wk.out);
            if (wk.scored.status == RowStatus::ok) {
              ++wk.ok;
              for (const TermPoint& p : wk.scored.points) wk.iterations += std::max(p.iterations, 0);
              continue;
            }
            ++(wk.scored.status == RowStatus::invalid_input ? wk.invalid : wk.not_converged);
            if (wk.problems.size() < run.max_listed_problems) {
              wk.problems.emplace_back(first + i,
                                       obligor_problem(book.origin(), rec, wk.scored.first_problem()));
            }
            ++wk.problem_count;
          }
        });
    // Keep only the first few problems of the book so far.
    for (Worker& wk : workers) {
      for (auto& p : wk.problems) all.push_back(std::move(p));
      wk.problems.clear();
    }
    std::sort(all.begin(), all.end());
    if (all.size() > run.max_listed_problems) all.resize(run.max_listed_problems);
    first += piece.size();
  }
  sum.total = first;
  sum.notes = book.notes();
  for (Worker& wk : workers) {
    sum.scored += wk.ok;
    sum.invalid += wk.invalid;
    sum.not_converged += wk.not_converged;
    sum.newton_iterations += static_cast<std::size_t>(wk.iterations);
    problem_count += wk.problem_count;
  }
  for (std::size_t i = 0; i < all.size() && i < run.max_listed_problems; ++i) {
    sum.problems.push_back(std::move(all[i].second));
  }
  sum.problems_not_listed = problem_count - sum.problems.size();
  detail::sink_text(sink, [&](std::string& s) { writer->end(sum, s); });
  return sum;
}

ScoreSummary score_term_structure(const Book& book, const ScoreSettings& settings, const TermBookOptions& run,
                                  const TextSink& sink) {
  const std::unique_ptr<BookStream> stream = book_passes(book)();
  return score_term_structure(*stream, settings, run, sink);
}

OptionCheck TermBookOptions::validate() const {
  if (threads < 1) return OptionProblem{"threads", std::to_string(threads), "must be at least 1"};
  if (piece_obligors < 1) return OptionProblem{"piece_obligors", "0", "must be at least 1"};
  if (horizons.size() > kMaxHorizons) {
    return OptionProblem{"horizons", std::to_string(horizons.size()) + " horizons",
                         "must hold at most " + std::to_string(kMaxHorizons) + " horizons"};
  }
  for (std::size_t i = 0; i < horizons.size(); ++i) {
    const double t = horizons[i];
    if (!(t > 0.0 && t <= 100.0))
      return OptionProblem{"horizons", option_value_text(t), "must be in (0, 100] years"};
    if (i > 0 && !(t > horizons[i - 1])) {
      return OptionProblem{"horizons", option_value_text(t), "must be strictly increasing"};
    }
  }
  if (models.empty()) return OptionProblem{"models", "none", "must name at least one model"};
  if (!std::isfinite(barrier.default_point_ratio) || !(barrier.default_point_ratio > 0.0)) {
    return OptionProblem{"barrier.default_point_ratio", option_value_text(barrier.default_point_ratio),
                         "must be positive"};
  }
  if (!(std::fabs(barrier.growth_rate_cc) <= 1.0)) {
    return OptionProblem{"barrier.growth_rate_cc", option_value_text(barrier.growth_rate_cc),
                         "must be in [-1, 1]"};
  }
  return std::nullopt;
}

}  // namespace firmcall
