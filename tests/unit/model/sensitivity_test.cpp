// Tests of the analytic sensitivities (src/model/sensitivity.cpp) against finite differences and
// against identities of the Merton model that do not use our derivation.
#include "firmcall/model/sensitivity.hpp"

#include <doctest/doctest.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <functional>
#include <limits>
#include <string>

#include "firmcall/model/merton_solver.hpp"
#include "firmcall/model/normal.hpp"
#include "obligor_sample.hpp"
#include "reference_solver.hpp"

using namespace firmcall;

namespace {

// The measures a sensitivity describes, re-solved at given inputs. PD is carried both ways: for
// PD > 1/2 the finite difference is taken on the survival probability N(DD), because PD itself
// rounds towards 1 in double precision there (d(1 - PD) = -dPD).
struct Measured {
  bool ok = false;
  double dd = 0.0, pd = 0.0, survival = 0.0, spread_bp = 0.0;
};

Measured measure(const MertonInputs& in) {
  Measured m;
  const AssetSolution s = solve_asset(in);
  if (!s.usable()) return m;
  const MertonMeasures mm = merton_measures(in, s.asset_value, s.asset_vol_annual);
  m.ok = true;
  m.dd = mm.distance_to_default;
  m.pd = mm.pd;
  m.survival = norm_cdf(mm.distance_to_default);
  m.spread_bp = mm.spread_bp;
  return m;
}

enum class Input { equity, equity_vol, default_point, rate };
const char* name_of(Input p) {
  switch (p) {
    case Input::equity:
      return "equity";
    case Input::equity_vol:
      return "equity_vol";
    case Input::default_point:
      return "default_point";
    case Input::rate:
      return "rate";
  }
  return "";
}

// Moves one input by `delta` in the variable whose derivative the documented unit scales:
// relative for E and DP (per 1% = 0.01 d/d(delta)), absolute for sE (per point = 0.01 d/d(delta))
// and r (per bp = 1e-4 d/d(delta)); mu moves with r when it follows r.
MertonInputs moved(MertonInputs in, Input p, double delta, bool follows) {
  switch (p) {
    case Input::equity:
      in.equity_value *= 1.0 + delta;
      break;
    case Input::equity_vol:
      in.equity_vol_annual += delta;
      break;
    case Input::default_point:
      in.default_point *= 1.0 + delta;
      break;
    case Input::rate:
      in.risk_free_rate_cc += delta;
      if (follows) in.drift_annual += delta;
      break;
  }
  return in;
}

double unit_of(Input p) {
  return p == Input::rate ? 1e-4 : 0.01;
}

// Ridders' method: central differences at steps h, h/1.4, h/1.4^2, ... extrapolated to h -> 0
// in a Neville tableau, keeping the estimate whose error estimate is smallest (Press et al.,
// Numerical Recipes, 3rd ed., section 5.7, dfridr; from memory).
template <class F>
double ridders(F f, double h) {
  constexpr int kTable = 10;
  constexpr double kShrink = 1.4;
  constexpr double kShrink2 = kShrink * kShrink;
  double a[kTable][kTable];
  double step = h;
  a[0][0] = (f(step) - f(-step)) / (2.0 * step);
  double best = a[0][0];
  double error = std::numeric_limits<double>::max();
  for (int i = 1; i < kTable; ++i) {
    step /= kShrink;
    a[0][i] = (f(step) - f(-step)) / (2.0 * step);
    double factor = kShrink2;
    for (int j = 1; j <= i; ++j) {
      a[j][i] = (a[j - 1][i] * factor - a[j - 1][i - 1]) / (factor - 1.0);
      factor *= kShrink2;
      const double e = std::max(std::fabs(a[j][i] - a[j - 1][i]), std::fabs(a[j][i] - a[j - 1][i - 1]));
      if (e <= error) {
        error = e;
        best = a[j][i];
      }
    }
    if (std::fabs(a[i][i] - a[i - 1][i - 1]) >= 2.0 * error) break;  // higher order got worse
  }
  return best;
}

struct Worst {
  double error = 0.0;
  std::string where;
};

double relative_error(double analytic, double fd) {
  const double scale = std::max(std::fabs(analytic), std::fabs(fd));
  return scale == 0.0 ? 0.0 : std::fabs(analytic - fd) / scale;
}

}  // namespace

TEST_CASE("sensitivities agree with central finite differences over a wide generated sample") {
  // Independent method: finite differences of the re-solved model (Ridders' extrapolated central
  // differences); only the derivative formulas are under test. The sample spans leverage DP/E
  // from 0.01 to 30, equity volatility from 5% to 200% and horizons from 3 months to 10 years.
  testing::SampleGenerator gen(20261201);
  constexpr int kObligors = 1500;
  int compared = 0;
  int skipped_tail = 0;
  Worst worst;
  for (int i = 0; i < kObligors; ++i) {
    bool follows = false;
    const MertonInputs in = gen.obligor(follows);
    const AssetSolution sol = solve_asset(in);
    REQUIRE(sol.usable());
    const MertonSensitivities s = merton_sensitivities(in, sol.asset_value, sol.asset_vol_annual, follows);
    REQUIRE(s.ok());
    const Measured base = measure(in);
    for (Input p : {Input::equity, Input::equity_vol, Input::default_point, Input::rate}) {
      const MeasureChange& a = p == Input::equity          ? s.equity
                               : p == Input::equity_vol    ? s.equity_vol
                               : p == Input::default_point ? s.default_point
                                                           : s.rate;
      // Largest step: 1% of E or DP, 5% of sE, 50 bp of r.
      const double cap = p == Input::equity_vol ? 0.05 * in.equity_vol_annual
                         : p == Input::rate     ? 0.005
                                                : 0.01;
      bool ok = true;
      const auto at = [&](double delta) {
        const Measured m = measure(moved(in, p, delta, follows));
        ok = ok && m.ok;
        return m;
      };
      // PD > 1/2 is differenced through the survival probability N(DD) (see Measured).
      const bool upper = base.pd > 0.5;
      const std::function<double(const Measured&)> pick[] = {
          [](const Measured& m) { return m.dd; },
          [upper](const Measured& m) { return upper ? -m.survival : m.pd; },
          [](const Measured& m) { return m.spread_bp; }};
      const double analytic[] = {a.distance_to_default, a.pd, a.spread_bp};
      // The scale on which each measure changes: DD by 1 standard deviation, PD and the spread by
      // their own size (PD: the smaller tail). Ridders starts from a step that moves the measure by
      // about 5% of that scale (at most `cap`); the analytic value only sizes that first step, the
      // differences themselves come from the re-solved model.
      const double size[] = {1.0, std::min(base.pd, base.survival), std::fabs(base.spread_bp)};
      const char* measures[] = {"DD", "PD", "spread"};
      for (int k = 0; k < 3; ++k) {
        // A PD or spread below 1e-280 is close to where doubles lose precision (subnormals from
        // 2.2e-308); such checks are counted, not made. DD is compared everywhere.
        if (k > 0 && !(size[k] > 1e-280)) {
          ++skipped_tail;
          continue;
        }
        const double slope = std::fabs(analytic[k]) / unit_of(p);
        const double h = slope > 0.0 ? std::min(cap, 0.05 * size[k] / slope) : cap;
        const double fd = unit_of(p) * ridders([&](double d) { return pick[k](at(d)); }, h);
        REQUIRE(ok);
        const double error = relative_error(analytic[k], fd);
        if (error > worst.error) {
          char buf[400];
          std::snprintf(
              buf, sizeof buf,
              "%s per %s: analytic %.12g, finite difference %.12g (E=%.6g sE=%.6g DP=%.6g r=%.6g T=%.6g "
              "mu=%.6g, DD=%.4g PD=%.4g)",
              measures[k], name_of(p), analytic[k], fd, in.equity_value, in.equity_vol_annual,
              in.default_point, in.risk_free_rate_cc, in.horizon_years, in.drift_annual, base.dd, base.pd);
          worst = {error, buf};
        }
      }
    }
    ++compared;
  }
  MESSAGE("compared " << compared << " obligors x 4 inputs x 3 measures (" << skipped_tail
                      << " PD or spread checks skipped below 1e-280); worst relative mismatch " << worst.error
                      << ": " << worst.where);
  CHECK(compared == kObligors);
  CHECK(worst.error < 1e-6);
}

TEST_CASE("sensitivities agree with differences of the independent long-double reference solver") {
  // Independent computation: tests/support/reference_solver.hpp solves the model by nested bisection in
  // long double (none of src/ is used for the differences). Central differences with a 1e-5
  // relative step have truncation error ~1e-10 and, at long-double precision, rounding ~1e-14.
  testing::SampleGenerator gen(7);
  double worst = 0.0;
  int compared = 0;
  for (int i = 0; i < 12; ++i) {
    bool follows = false;
    MertonInputs in = gen.obligor(follows);
    in.default_point = in.equity_value * (0.2 + 0.3 * i);  // leverage 0.2 .. 3.5: PDs not in the far tail
    const AssetSolution sol = solve_asset(in);
    REQUIRE(sol.usable());
    const MertonSensitivities s = merton_sensitivities(in, sol.asset_value, sol.asset_vol_annual, follows);
    REQUIRE(s.ok());
    const auto dd_of = [&](const MertonInputs& x) {
      const auto r = testing::reference_solve(x.equity_value, x.equity_vol_annual, x.default_point,
                                              x.risk_free_rate_cc, x.horizon_years);
      const long double t = x.horizon_years;
      return (logl(r.asset_value / x.default_point) +
              (x.drift_annual - 0.5L * r.asset_vol * r.asset_vol) * t) /
             (r.asset_vol * sqrtl(t));
    };
    for (Input p : {Input::equity, Input::equity_vol, Input::default_point, Input::rate}) {
      const double h = p == Input::equity_vol ? 1e-5 * in.equity_vol_annual : p == Input::rate ? 1e-6 : 1e-5;
      const long double fd =
          (dd_of(moved(in, p, h, follows)) - dd_of(moved(in, p, -h, follows))) / (2.0L * h) * unit_of(p);
      const double analytic = p == Input::equity          ? s.equity.distance_to_default
                              : p == Input::equity_vol    ? s.equity_vol.distance_to_default
                              : p == Input::default_point ? s.default_point.distance_to_default
                                                          : s.rate.distance_to_default;
      worst = std::max(worst, relative_error(analytic, static_cast<double>(fd)));
      ++compared;
    }
  }
  MESSAGE("DD sensitivities vs long-double reference differences: "
          << compared << " compared, worst relative mismatch " << worst);
  CHECK(worst < 1e-6);
}

TEST_CASE("equity and default-point sensitivities cancel (homogeneity of the call price)") {
  // Ref: the Black-Scholes call is homogeneous of degree one in (V, K) (Merton 1973, "Theory of
  // rational option pricing"; from memory). Scaling E and DP by the same factor therefore scales V
  // by it and leaves sV, DD, PD and the spread unchanged, so by Euler's theorem
  // E dX/dE + DP dX/dDP = 0: the per-1% equity and default-point sensitivities are opposite.
  testing::SampleGenerator gen(11);
  double worst = 0.0;
  for (int i = 0; i < 500; ++i) {
    bool follows = false;
    const MertonInputs in = gen.obligor(follows);
    const AssetSolution sol = solve_asset(in);
    REQUIRE(sol.usable());
    const MertonSensitivities s = merton_sensitivities(in, sol.asset_value, sol.asset_vol_annual, follows);
    REQUIRE(s.ok());
    const double pairs[][2] = {{s.equity.distance_to_default, s.default_point.distance_to_default},
                               {s.equity.pd, s.default_point.pd},
                               {s.equity.spread_bp, s.default_point.spread_bp},
                               {s.equity.asset_vol_annual, s.default_point.asset_vol_annual}};
    for (const auto& pr : pairs) {
      // Values below 1e-280 (near subnormal doubles) carry too few digits to compare.
      const double scale = std::max(std::fabs(pr[0]), std::fabs(pr[1]));
      if (scale > 1e-280) worst = std::max(worst, std::fabs(pr[0] + pr[1]) / scale);
    }
    // V scales with the pair, so its two sensitivities add up to 1% of V.
    const double v_sum = s.equity.asset_value + s.default_point.asset_value;
    CHECK(v_sum == doctest::Approx(0.01 * sol.asset_value).epsilon(1e-9));
  }
  MESSAGE("worst |equity + default point| / scale over 500 obligors: " << worst);
  CHECK(worst < 1e-9);
}

TEST_CASE("with the drift at the rate, a rate move is an equity move of T times its size") {
  // With mu = r, DD = d2 and every measure depends on E, DP and r only through E/K, K = DP e^{-rT}
  // (homogeneity, as above; Merton 1973, from memory). A rise dr lowers K by the factor e^{-T dr},
  // which is a relative rise of E by T dr: the per-bp rate sensitivity is T/100 times the per-1%
  // equity sensitivity.
  testing::SampleGenerator gen(17);
  double worst = 0.0;
  for (int i = 0; i < 500; ++i) {
    bool follows = false;
    MertonInputs in = gen.obligor(follows);
    in.drift_annual = in.risk_free_rate_cc;
    const AssetSolution sol = solve_asset(in);
    REQUIRE(sol.usable());
    const MertonSensitivities s = merton_sensitivities(in, sol.asset_value, sol.asset_vol_annual, true);
    REQUIRE(s.ok());
    const double t = in.horizon_years / 100.0;
    const double pairs[][2] = {{s.rate.distance_to_default, t * s.equity.distance_to_default},
                               {s.rate.pd, t * s.equity.pd},
                               {s.rate.spread_bp, t * s.equity.spread_bp}};
    for (const auto& pr : pairs) {
      const double scale = std::max(std::fabs(pr[0]), std::fabs(pr[1]));
      if (scale > 1e-280) worst = std::max(worst, std::fabs(pr[0] - pr[1]) / scale);
    }
  }
  MESSAGE("worst |rate - T/100 equity| / scale over 500 obligors: " << worst);
  CHECK(worst < 1e-9);
}

TEST_CASE("sensitivity signs the model guarantees: more equity volatility, more asset volatility") {
  // Why (our derivation, stated in src/model/sensitivity.cpp and docs/stress.md): along
  // the curve C(V, sV) = E, V falls as sV rises, and the second equation picks the unique point on
  // it; with uniqueness for every sE (merton_solver.hpp), sV must rise and V fall with sE. Debt
  // D = V - E then falls, so the spread rises. DD falls (PD rises) where DD > -sV sqrt(T), because
  // there dDD/dsV = -DD/sV - sqrt(T) < 0 as well as dDD/dV > 0.
  testing::SampleGenerator gen(13);
  for (int i = 0; i < 2000; ++i) {
    bool follows = false;
    const MertonInputs in = gen.obligor(follows);
    const AssetSolution sol = solve_asset(in);
    REQUIRE(sol.usable());
    const MertonSensitivities s = merton_sensitivities(in, sol.asset_value, sol.asset_vol_annual, follows);
    REQUIRE(s.ok());
    const MertonMeasures m = merton_measures(in, sol.asset_value, sol.asset_vol_annual);
    CHECK(s.equity_vol.asset_vol_annual > 0.0);
    CHECK(s.equity_vol.asset_value <= 0.0);
    CHECK(s.equity_vol.spread_bp >= 0.0);
    if (m.distance_to_default > -sol.asset_vol_annual * std::sqrt(in.horizon_years)) {
      CHECK(s.equity_vol.distance_to_default < 0.0);
      CHECK(s.equity_vol.pd >= 0.0);
    }
  }
}

TEST_CASE("sensitivities report invalid inputs and never divide by a zero determinant") {
  const MertonInputs in{.equity_value = 400,
                        .equity_vol_annual = 0.45,
                        .default_point = 700,
                        .risk_free_rate_cc = 0.03,
                        .horizon_years = 1,
                        .drift_annual = 0.03};
  CHECK(merton_sensitivities(in, -1.0, 0.2, true).status == SensitivityStatus::invalid_input);
  CHECK(merton_sensitivities(in, 1000.0, std::nan(""), true).status == SensitivityStatus::invalid_input);
  MertonInputs bad = in;
  bad.equity_value = 0.0;
  CHECK(merton_sensitivities(bad, 1000.0, 0.2, true).status == SensitivityStatus::invalid_input);
  const AssetSolution sol = solve_asset(in);
  REQUIRE(sol.usable());
  CHECK(merton_sensitivities(in, sol.asset_value, sol.asset_vol_annual, true).ok());
  CHECK(to_string(SensitivityStatus::singular) == "singular");
}
