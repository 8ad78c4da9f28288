// Tests of the default-probability term structure: cumulative, annualised and forward PDs, the
// calibration choices, and how failures propagate along a curve.
#include <doctest/doctest.h>

#include <cmath>
#include <vector>

#include "firmcall/model/merton.hpp"
#include "firmcall/model/merton_solver.hpp"
#include "firmcall/model/term_structure.hpp"
#include "test_util.hpp"

using namespace firmcall;

namespace {
const std::vector<double> kHorizons = {0.5, 1, 2, 3, 5, 7, 10};

std::vector<TermPoint> curve(const MertonInputs& in, const TermRequest& req,
                             const std::vector<double>& horizons = kHorizons) {
  std::vector<TermPoint> out(horizons.size());
  term_structure(in, req, horizons.data(), horizons.size(), out.data());
  return out;
}

TermRequest request(TermModel model, Calibration calibration = Calibration::once, double lgd = 0.45,
                    Barrier barrier = {}) {
  TermRequest r;
  r.model = model;
  r.calibration = calibration;
  r.lgd = lgd;
  r.barrier = barrier;
  return r;
}

const MertonInputs kObligor{.equity_value = 400,
                            .equity_vol_annual = 0.45,
                            .default_point = 700,
                            .risk_free_rate_cc = 0.03,
                            .horizon_years = 1,
                            .drift_annual = 0.05};
}  // namespace

TEST_CASE("forward and annualised PDs are consistent with the cumulative PDs") {
  // Definitions (common practice): survival to t_i is survival to t_(i-1) times the conditional
  // survival, 1 - PD(t_i) = (1 - f_i)(1 - PD(t_(i-1))); the annualised PD a satisfies
  // (1 - a)^t = 1 - PD(t). Checked step by step (a product over the curve would carry the rounding
  // of a forward PD near 1 into every later step).
  const auto book = testing::generated_obligors(300, 77);
  int checked = 0;
  for (const MertonInputs& in : book) {
    for (TermModel model : {TermModel::merton, TermModel::first_passage}) {
      const auto pts = curve(in, request(model));
      if (!pts[0].ok()) continue;
      double before = 1.0;  // survival to the previous horizon (to 0: certain)
      for (const TermPoint& p : pts) {
        REQUIRE(p.ok());
        CHECK(std::fabs((1.0 - p.pd_forward) * before - p.survival) <= 1e-13 * before + 1e-15);
        // (1 - a)^t carries the rounding of 1 - a magnified t / (1 - a) times (a close to 1); tiny
        // PDs are also checked against a ~ PD/t.
        const double one_minus_a = 1.0 - p.pd_annualised;
        const double tol = 1e-13 + 4.0 * p.horizon_years * 2.3e-16 / one_minus_a;
        CHECK(std::fabs(std::pow(one_minus_a, p.horizon_years) - p.survival) <= tol * p.survival);
        if (p.pd < 1e-6) {
          CHECK(std::fabs(p.pd_annualised - p.pd / p.horizon_years) <= 1e-5 * p.pd / p.horizon_years);
        }
        CHECK(p.pd + p.survival == doctest::Approx(1.0).epsilon(1e-15));
        before = p.survival;
      }
      ++checked;
    }
  }
  MESSAGE("curves checked: " << checked);
  CHECK(checked > 500);
}

TEST_CASE("first-passage cumulative PDs rise with the horizon, so forward PDs are probabilities") {
  // P(tau <= t) is a distribution function (Black and Cox 1976).
  const auto book = testing::generated_obligors(300, 78);
  for (const MertonInputs& in : book) {
    const auto pts = curve(in, request(TermModel::first_passage));
    if (!pts[0].ok()) continue;
    for (std::size_t i = 0; i < pts.size(); ++i) {
      // (to rounding: far-tail PDs of neighbouring horizons may agree to the last digit)
      CHECK(pts[i].pd_forward >= -1e-13 * pts[i].pd);
      CHECK(pts[i].pd_forward <= 1.0);
      if (i > 0) CHECK(pts[i].pd >= pts[i - 1].pd * (1 - 1e-13));
      if (i > 0) CHECK(pts[i].pd_risk_neutral >= pts[i - 1].pd_risk_neutral * (1 - 1e-13));
    }
  }
}

TEST_CASE("Merton's P(V_t < DP) rises with t when mu <= sV^2/2, and falls after t* otherwise") {
  // DD(t) = [x + nu t]/(sV sqrt t), x = ln(V/DP), nu = mu - sV^2/2: dDD/dt < 0 iff nu t < x, so PD
  // rises for every t when nu <= 0 and falls once t > t* = x/nu (calculus on the formula).
  MertonInputs in = kObligor;
  in.drift_annual = 0.0;
  const auto rising = curve(in, request(TermModel::merton));
  REQUIRE(rising[0].ok());
  for (std::size_t i = 1; i < rising.size(); ++i) CHECK(rising[i].pd > rising[i - 1].pd);
  // A firm close to its default point with a high drift: x small, nu > 0.
  in.drift_annual = 0.25;
  const AssetSolution s = solve_asset(in);
  REQUIRE(s.usable());
  const double x = std::log(s.asset_value / in.default_point);
  const double nu = in.drift_annual - 0.5 * s.asset_vol_annual * s.asset_vol_annual;
  REQUIRE(nu > 0.0);
  const double t_star = x / nu;
  const auto around = curve(in, request(TermModel::merton), {0.5 * t_star, t_star, 2.0 * t_star});
  CHECK(around[1].pd > around[0].pd);
  CHECK(around[2].pd < around[1].pd);
  CHECK(around[2].pd_forward < 0.0);  // reported as computed: the one-date model gives no curve here
}

TEST_CASE("re-solving at the calibration horizon reproduces the single-horizon score") {
  // Identity: per-horizon calibration at t = T is the score's calibration; the projected curve
  // (calibration once) at t = T is the same point.
  const auto book = testing::generated_obligors(200, 79);
  for (const MertonInputs& in : book) {
    const std::vector<double> at_t = {in.horizon_years};
    const auto once = curve(in, request(TermModel::merton), at_t);
    const auto again = curve(in, request(TermModel::merton, Calibration::per_horizon), at_t);
    const AssetSolution s = solve_asset(in);
    REQUIRE(s.usable());
    const MertonMeasures m = merton_measures(in, s.asset_value, s.asset_vol_annual);
    for (const TermPoint& p : {once[0], again[0]}) {
      REQUIRE(p.ok());
      CHECK(p.asset_value == s.asset_value);
      CHECK(p.asset_vol_annual == s.asset_vol_annual);
      CHECK(p.distance_to_default == m.distance_to_default);
      CHECK(p.pd == m.pd);
      CHECK(p.pd_risk_neutral == m.pd_risk_neutral);
      CHECK(p.spread_bp == m.spread_bp);
      CHECK(p.iterations == s.iterations);
      CHECK(p.residual == s.residual);
    }
    const auto fp_once = curve(in, request(TermModel::first_passage), at_t);
    const auto fp_again = curve(in, request(TermModel::first_passage, Calibration::per_horizon), at_t);
    CHECK(fp_once[0].status == fp_again[0].status);
    if (fp_once[0].ok()) CHECK(fp_once[0].pd == fp_again[0].pd);
  }
}

TEST_CASE("calibrated once the curve keeps one (V, sV), re-solved each horizon has its own") {
  // The two calibrations as defined in term_structure.hpp; the barrier of a constant-barrier run is
  // the default point at every horizon (first_passage.hpp).
  const auto once = curve(kObligor, request(TermModel::first_passage));
  const auto per = curve(kObligor, request(TermModel::first_passage, Calibration::per_horizon));
  for (std::size_t i = 0; i < kHorizons.size(); ++i) {
    REQUIRE(once[i].ok());
    REQUIRE(per[i].ok());
    CHECK(once[i].asset_value == once[0].asset_value);
    CHECK(once[i].calibration_horizon_years == 1.0);
    CHECK(per[i].calibration_horizon_years == kHorizons[i]);
    // The barrier at t grows with the barrier growth only (here none).
    CHECK(once[i].barrier == kObligor.default_point);
  }
  CHECK(per[1].asset_value == once[1].asset_value);  // t = 1 is the calibration horizon
  CHECK(per[6].asset_value != once[6].asset_value);
}

TEST_CASE("the first-passage spread: recovery of face, zero without loss, rising with LGD") {
  // spread(t) = -ln(1 - LGD Q(t))/t (recovery of face at t; common practice): no loss, no spread;
  // for LGD = 1 and small Q it is Q/t to first order.
  double prev = -1.0;
  for (double lgd : {0.0, 0.25, 0.45, 1.0}) {
    const auto pts = curve(kObligor, request(TermModel::first_passage, Calibration::once, lgd));
    REQUIRE(pts[3].ok());
    if (lgd == 0.0) CHECK(pts[3].spread_bp == 0.0);
    CHECK(pts[3].spread_bp > prev);
    prev = pts[3].spread_bp;
    const double q = pts[3].pd_risk_neutral;
    CHECK(pts[3].spread_bp * 1e-4 * pts[3].horizon_years >= lgd * q);  // -ln(1 - y) >= y
  }
  MertonInputs safe = kObligor;
  safe.default_point = 50;
  const auto p = curve(safe, request(TermModel::first_passage, Calibration::once, 1.0));
  REQUIRE(p[0].ok());
  CHECK(p[0].spread_bp * 1e-4 * 0.5 == doctest::Approx(p[0].pd_risk_neutral).epsilon(1e-6).scale(0));
}

TEST_CASE("a growing barrier raises first-passage PDs at long horizons") {
  // H(t) = H0 e^(g t) is higher at every t > 0 for g > 0, so more paths touch it (pathwise).
  const auto flat = curve(kObligor, request(TermModel::first_passage));
  const auto grows =
      curve(kObligor, request(TermModel::first_passage, Calibration::once, 0.45, Barrier{1.0, 0.03}));
  REQUIRE(grows[6].ok());
  CHECK(grows[6].barrier == doctest::Approx(700 * std::exp(0.3)).epsilon(1e-15));
  // Calibration moves (V, sV) too; compare at the same (V, sV) for the pathwise statement.
  const FirstPassageInputs a{kObligor, {}};
  const FirstPassageInputs b{kObligor, {1.0, 0.03}};
  const TermPoint pa = first_passage_point(a, flat[0].asset_value, flat[0].asset_vol_annual, 10, 0.45);
  const TermPoint pb = first_passage_point(b, flat[0].asset_value, flat[0].asset_vol_annual, 10, 0.45);
  CHECK(pb.pd > pa.pd);
}

TEST_CASE("failures propagate along the curve with a status, never as numbers") {
  MertonInputs bad = kObligor;
  bad.equity_vol_annual = -0.2;
  for (TermModel model : {TermModel::merton, TermModel::first_passage}) {
    for (Calibration c : {Calibration::once, Calibration::per_horizon}) {
      const auto pts = curve(bad, request(model, c));
      for (const TermPoint& p : pts) {
        CHECK(p.status == TermStatus::invalid_input);
        CHECK(p.iterations == -1);
        CHECK(std::isnan(p.pd_forward));
        CHECK(std::isnan(p.pd_annualised));
      }
    }
  }
  // Equity below the barrier's floor (first_passage.hpp): no first-passage solution.
  const MertonInputs none{.equity_value = 30,
                          .equity_vol_annual = 0.3,
                          .default_point = 1000,
                          .risk_free_rate_cc = 0.05,
                          .horizon_years = 1,
                          .drift_annual = 0.05};
  const auto fp = curve(none, request(TermModel::first_passage));
  for (const TermPoint& p : fp) CHECK(p.status == TermStatus::not_bracketed);
  CHECK(curve(none, request(TermModel::merton))[3].ok());
  CHECK(to_string(TermStatus::not_bracketed) == "not_bracketed");
  CHECK(to_string(TermModel::first_passage) == "first-passage");
  CHECK(term_model_from_string("first-passage") == TermModel::first_passage);
  CHECK_FALSE(term_model_from_string("black-cox").has_value());
  CHECK(calibration_from_string("per-horizon") == Calibration::per_horizon);
  CHECK(to_string(Calibration::once) == "once");
}

TEST_CASE("a term structure allocates nothing") {
  const auto book = testing::generated_obligors(100, 80);
  TermPoint pts[7];
  double sink = 0.0;
  const long before = testing::g_allocations.load();
  for (const MertonInputs& in : book) {
    for (TermModel model : {TermModel::merton, TermModel::first_passage}) {
      term_structure(in, request(model, Calibration::per_horizon), kHorizons.data(), 7, pts);
      sink += pts[6].pd;
    }
  }
  const long after = testing::g_allocations.load();
  CHECK(std::isfinite(sink));
  CHECK(after == before);
}
