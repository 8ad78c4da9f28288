// Writes invented, simulated market histories for firmcall's `history` command: the demo files in
// samples/ and the large inputs of bench/history_bench.sh. Deterministic: std::mt19937_64 with
// fixed seeds and our own Box-Muller normal draw, so every platform writes the same files.
//
// Asset values follow geometric Brownian motion, ln V_(t+1) = ln V_t + (mu - sV^2/2) h + sV sqrt(h) Z,
// h = 1/252, and equity is the Merton (1974) call on them (firmcall::equity_value) struck at the
// default point in force that day. Every company, id and number is made up.
//
//   firmcall_make_history samples OUTDIR
//       history_book.yaml, history_prices.csv, history_balance_sheets.csv, history_bad_prices.csv
//   firmcall_make_history bench OUTDIR OBLIGORS DAYS [SEED]
//       bench_book.csv, bench_prices.csv, bench_truth.csv (the simulated sV and mu)
#include <cmath>
#include <cstdint>
#include <cstdio>
#include <cstdlib>
#include <numbers>
#include <random>
#include <string>
#include <vector>

#include "firmcall/model/merton.hpp"

namespace {

double normal_draw(std::mt19937_64& gen) {
  const double u1 = (static_cast<double>(gen() >> 11) + 0.5) * 0x1.0p-53;
  const double u2 = (static_cast<double>(gen() >> 11) + 0.5) * 0x1.0p-53;
  return std::sqrt(-2.0 * std::log(u1)) * std::cos(2.0 * std::numbers::pi * u2);
}

double uniform(std::mt19937_64& gen, double lo, double hi) {
  return lo + (hi - lo) * (static_cast<double>(gen() >> 11) * 0x1.0p-53);
}

// Civil date <-> days since 1970-01-01 (the proleptic Gregorian algorithm of H. Hinnant,
// "chrono-compatible low-level date algorithms", public domain).
int days_from_civil(int y, unsigned m, unsigned d) {
  y -= m <= 2;
  const int era = (y >= 0 ? y : y - 399) / 400;
  const unsigned yoe = static_cast<unsigned>(y - era * 400);
  const unsigned doy = (153 * (m + (m > 2 ? -3 : 9)) + 2) / 5 + d - 1;
  const unsigned doe = yoe * 365 + yoe / 4 - yoe / 100 + doy;
  return era * 146097 + static_cast<int>(doe) - 719468;
}

std::string civil_from_days(int z) {
  z += 719468;
  const int era = (z >= 0 ? z : z - 146096) / 146097;
  const unsigned doe = static_cast<unsigned>(z - era * 146097);
  const unsigned yoe = (doe - doe / 1460 + doe / 36524 - doe / 146096) / 365;
  const int y = static_cast<int>(yoe) + era * 400;
  const unsigned doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
  const unsigned mp = (5 * doy + 2) / 153;
  const unsigned d = doy - (153 * mp + 2) / 5 + 1;
  const unsigned m = mp < 10 ? mp + 3 : mp - 9;
  char buf[40];
  std::snprintf(buf, sizeof buf, "%04d-%02u-%02u", y + (m <= 2), m, d);
  return buf;
}

// Weekdays from `first` on, skipping the listed holidays, `count` of them.
std::vector<int> trading_days(int first, int count, const std::vector<int>& holidays) {
  std::vector<int> out;
  for (int d = first; static_cast<int>(out.size()) < count; ++d) {
    const int weekday = ((d % 7) + 7 + 3) % 7;  // 1970-01-01 was a Thursday: 0 = Monday
    if (weekday >= 5) continue;
    bool holiday = false;
    for (int h : holidays) holiday = holiday || h == d;
    if (!holiday) out.push_back(d);
  }
  return out;
}

struct File {
  explicit File(const std::string& path) : f(std::fopen(path.c_str(), "wb")) {
    if (f == nullptr) {
      std::fprintf(stderr, "make_history: cannot write '%s'\n", path.c_str());
      std::exit(2);
    }
  }
  ~File() { std::fclose(f); }
  File(const File&) = delete;
  File& operator=(const File&) = delete;
  std::FILE* f;
};

struct SheetChange {
  int day;  // days since 1970-01-01
  double short_term_debt;
  double long_term_debt;
};

struct SampleObligor {
  const char* id;
  const char* name;
  const char* sector;
  double v0, asset_vol, drift, short_term_debt, long_term_debt, rate;
  double shares;                    // shares outstanding at the start, millions
  double buyback_per_quarter;       // fraction of shares retired each quarter
  std::vector<SheetChange> sheets;  // dated balance sheets; empty: the book's debt throughout
};

int write_samples(const std::string& dir) {
  const std::vector<int> holidays = {days_from_civil(2025, 12, 25), days_from_civil(2025, 12, 26),
                                     days_from_civil(2026, 1, 1), days_from_civil(2026, 4, 3),
                                     days_from_civil(2026, 4, 6)};
  const std::vector<int> days = trading_days(days_from_civil(2025, 12, 1), 256, holidays);
  std::vector<SampleObligor> obligors = {
      {"HRN-01", "Heronmarsh Rail Services", "Transport", 6200, 0.17, 0.06, 900, 2600, 0.028, 310, 0, {}},
      {"KIL-02", "Kilnworth Ceramics", "Materials", 1650, 0.26, 0.04, 640, 900, 0.031, 88, 0, {}},
      {"MRS-03",
       "Marshby Aggregates",
       "Materials",
       3900,
       0.22,
       0.07,
       1100,
       1600,
       0.029,
       150,
       0,
       {{days_from_civil(2025, 9, 30), 1100, 1600},
        {days_from_civil(2025, 12, 31), 1180, 1700},
        {days_from_civil(2026, 3, 31), 1260, 1850},
        {days_from_civil(2026, 6, 30), 1390, 1900},
        {days_from_civil(2026, 9, 30), 1450, 2050}}},
      {"OSP-04", "Ospreyvale Software", "Technology", 8800, 0.41, 0.11, 300, 700, 0.035, 420, 0, {}},
      {"PLV-05", "Plover Cold Storage", "Consumer", 2100, 0.19, 0.05, 520, 1200, 0.027, 64, 0.01, {}},
      {"TRN-06", "Tarnbeck Ferries", "Transport", 1250, 0.31, -0.02, 760, 900, 0.033, 45, 0, {}},
  };
  std::mt19937_64 gen(20261130);
  const double h = 1.0 / 252.0;
  // Simulate every obligor's equity value and shares on every day.
  struct Path {
    std::vector<double> close, shares;
  };
  std::vector<Path> paths(obligors.size());
  for (std::size_t i = 0; i < obligors.size(); ++i) {
    const SampleObligor& o = obligors[i];
    double log_v = std::log(o.v0);
    double shares = o.shares;
    for (std::size_t t = 0; t < days.size(); ++t) {
      if (t > 0)
        log_v +=
            (o.drift - 0.5 * o.asset_vol * o.asset_vol) * h + o.asset_vol * std::sqrt(h) * normal_draw(gen);
      if (t > 0 && t % 63 == 0) shares *= 1.0 - o.buyback_per_quarter;
      double st = o.short_term_debt;
      double lt = o.long_term_debt;
      for (const SheetChange& s : o.sheets) {
        if (s.day <= days[t]) {
          st = s.short_term_debt;
          lt = s.long_term_debt;
        }
      }
      const firmcall::MertonInputs in{.equity_value = 1.0,
                                      .equity_vol_annual = 1.0,
                                      .default_point = st + 0.5 * lt,
                                      .risk_free_rate_cc = o.rate,
                                      .horizon_years = 1.0,
                                      .drift_annual = o.drift};
      const double e = firmcall::equity_value(in, std::exp(log_v), o.asset_vol);
      paths[i].close.push_back(std::round(e / shares * 1e4) / 1e4);
      paths[i].shares.push_back(std::round(shares * 1e3) / 1e3);
    }
  }

  {
    File f(dir + "/history_book.yaml");
    std::fprintf(f.f,
                 "# firmcall sample book for `firmcall history`: invented obligors of an invented lender.\n"
                 "# Every company and figure here is made up (written by tools/make_history.cpp).\n"
                 "# Amounts are millions of EUR; rates continuously compounded decimals. The debt here is\n"
                 "# used on days before the obligor's first dated balance sheet (or throughout, if none).\n"
                 "book: Fenland credit desk - history demo\n"
                 "as_of: 2026-11-30\n"
                 "defaults:\n  horizon: 1.0\n  default_point_weight: 0.5\n"
                 "obligors:\n");
    for (const SampleObligor& o : obligors) {
      std::fprintf(f.f,
                   "  - {id: %s, name: %s, sector: %s, currency: EUR,\n"
                   "     short_term_debt: %.1f, long_term_debt: %.1f, rate: %.4g}\n",
                   o.id, o.name, o.sector,
                   o.sheets.empty() ? o.short_term_debt : o.sheets.back().short_term_debt,
                   o.sheets.empty() ? o.long_term_debt : o.sheets.back().long_term_debt, o.rate);
    }
  }
  {
    File f(dir + "/history_balance_sheets.csv");
    std::fprintf(f.f, "id,as_of,short_term_debt,long_term_debt\n");
    for (const SampleObligor& o : obligors) {
      for (const SheetChange& s : o.sheets) {
        std::fprintf(f.f, "%s,%s,%.1f,%.1f\n", o.id, civil_from_days(s.day).c_str(), s.short_term_debt,
                     s.long_term_debt);
      }
    }
  }
  // Clean file: rows by date, then obligor.
  {
    File f(dir + "/history_prices.csv");
    std::fprintf(f.f, "date,id,close,shares_outstanding\n");
    for (std::size_t t = 0; t < days.size(); ++t) {
      for (std::size_t i = 0; i < obligors.size(); ++i) {
        std::fprintf(f.f, "%s,%s,%.4f,%.3f\n", civil_from_days(days[t]).c_str(), obligors[i].id,
                     paths[i].close[t], paths[i].shares[t]);
      }
    }
  }
  // Flawed copy, one flaw per obligor (see samples/README or the README's history section):
  //   HRN-01 clean; KIL-02 one date twice; MRS-03 two rows swapped (sorted, noted);
  //   OSP-04 a negative close; PLV-05 five days missing (noted); TRN-06 only the last 60 days.
  {
    File f(dir + "/history_bad_prices.csv");
    std::fprintf(f.f, "date,id,close,shares_outstanding\n");
    const auto row = [&](std::size_t t, std::size_t i, double close) {
      std::fprintf(f.f, "%s,%s,%.4f,%.3f\n", civil_from_days(days[t]).c_str(), obligors[i].id, close,
                   paths[i].shares[t]);
    };
    for (std::size_t t = 0; t < days.size(); ++t) {
      for (std::size_t i = 0; i < obligors.size(); ++i) {
        const std::string id = obligors[i].id;
        double close = paths[i].close[t];
        if (id == "KIL-02" && t == 101) row(t, i, close);  // the same date twice
        if (id == "MRS-03" && t == 40) continue;           // written after day 41 instead
        if (id == "OSP-04" && t == 150) close = -close;
        if (id == "PLV-05" && t >= 200 && t < 205) continue;
        if (id == "TRN-06" && t < days.size() - 60) continue;
        row(t, i, close);
        if (id == "MRS-03" && t == 41) row(40, i, paths[i].close[40]);
      }
    }
  }
  return 0;
}

int write_bench(const std::string& dir, int obligors, int days_n, std::uint64_t seed) {
  std::mt19937_64 gen(seed);
  const std::vector<int> days = trading_days(days_from_civil(2025, 12, 1), days_n, {});
  struct Firm {
    double log_v, asset_vol, drift, dp, rate;
  };
  std::vector<Firm> firms(static_cast<std::size_t>(obligors));
  {
    File f(dir + "/bench_book.csv");
    File truth(dir + "/bench_truth.csv");
    std::fprintf(truth.f, "id,asset_vol,drift\n");
    std::fprintf(f.f, "id,name,short_term_debt,long_term_debt,rate\n");
    for (int i = 0; i < obligors; ++i) {
      Firm& firm = firms[static_cast<std::size_t>(i)];
      const double v0 = uniform(gen, 500.0, 5000.0);
      const double leverage = uniform(gen, 0.2, 0.9);
      // DP = st + 0.5 lt = leverage x V0; values rounded as printed so the book matches the truth.
      const double st = std::round(0.4 * leverage * v0 * 100.0) / 100.0;
      const double lt = std::round(2.0 * (leverage * v0 - st) * 100.0) / 100.0;
      const double asset_vol = uniform(gen, 0.10, 0.50);
      const double drift = uniform(gen, -0.05, 0.15);
      const double rate = std::round(uniform(gen, 0.01, 0.05) * 1e4) / 1e4;
      firm = {std::log(v0), asset_vol, drift, st + 0.5 * lt, rate};
      std::fprintf(f.f, "SIM-%06d,Simulated obligor %d,%.2f,%.2f,%.4f\n", i + 1, i + 1, st, lt, firm.rate);
      std::fprintf(truth.f, "SIM-%06d,%.17g,%.17g\n", i + 1, firm.asset_vol, firm.drift);
    }
  }
  File f(dir + "/bench_prices.csv");
  std::fprintf(f.f, "date,id,market_cap\n");
  const double h = 1.0 / 252.0;
  for (std::size_t t = 0; t < days.size(); ++t) {
    const std::string date = civil_from_days(days[t]);
    for (int i = 0; i < obligors; ++i) {
      Firm& firm = firms[static_cast<std::size_t>(i)];
      if (t > 0) {
        firm.log_v += (firm.drift - 0.5 * firm.asset_vol * firm.asset_vol) * h +
                      firm.asset_vol * std::sqrt(h) * normal_draw(gen);
      }
      const firmcall::MertonInputs in{.equity_value = 1.0,
                                      .equity_vol_annual = 1.0,
                                      .default_point = firm.dp,
                                      .risk_free_rate_cc = firm.rate,
                                      .horizon_years = 1.0,
                                      .drift_annual = firm.drift};
      const double e = firmcall::equity_value(in, std::exp(firm.log_v), firm.asset_vol);
      std::fprintf(f.f, "%s,SIM-%06d,%.9g\n", date.c_str(), i + 1, e);
    }
  }
  return 0;
}

}  // namespace

int main(int argc, char** argv) {
  const std::string mode = argc > 1 ? argv[1] : "";
  if (mode == "samples" && argc == 3) return write_samples(argv[2]);
  if (mode == "bench" && (argc == 5 || argc == 6)) {
    const int n = std::atoi(argv[3]);
    const int d = std::atoi(argv[4]);
    const std::uint64_t seed = argc == 6 ? std::strtoull(argv[5], nullptr, 10) : 42;
    if (n > 0 && d > 2) return write_bench(argv[2], n, d, seed);
  }
  std::fprintf(stderr,
               "usage: firmcall_make_history samples OUTDIR\n"
               "       firmcall_make_history bench OUTDIR OBLIGORS DAYS [SEED]\n");
  return 2;
}
