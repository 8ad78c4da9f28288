// Helpers shared by the tests: running the built binary, temporary files, a fixed-seed generator
// of realistic obligors.
#pragma once

#include <atomic>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <random>
#include <sstream>
#include <string>
#include <vector>

#include <sys/wait.h>

#include "firmcall/model/merton.hpp"

namespace firmcall::testing {

extern std::atomic<long> g_allocations;

inline std::string source_dir() {
  return FIRMCALL_SOURCE_DIR;
}
inline std::string binary() {
  return FIRMCALL_BINARY;
}

/// A fresh temporary directory, removed when the object goes.
struct TempDir {
  std::filesystem::path path;
  TempDir() {
    std::string tmpl = (std::filesystem::temp_directory_path() / "firmcall-test-XXXXXX").string();
    path = ::mkdtemp(tmpl.data());
  }
  ~TempDir() {
    std::error_code ec;
    std::filesystem::remove_all(path, ec);
  }
  std::string file(const std::string& name) const { return (path / name).string(); }
  std::string write(const std::string& name, const std::string& text) const {
    std::ofstream(path / name, std::ios::binary) << text;
    return file(name);
  }
};

inline std::string read_file(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  std::ostringstream ss;
  ss << in.rdbuf();
  return ss.str();
}

struct RunResult {
  int exit_code = -1;
  std::string out;
  std::string err;
};

/// Runs the built firmcall with the given arguments (a shell word list), from the source directory.
inline RunResult run_firmcall(const std::string& args) {
  TempDir t;
  const std::string out = t.file("stdout");
  const std::string err = t.file("stderr");
  const std::string cmd = "cd '" + source_dir() + "' && '" + binary() + "' " + args + " >'" + out + "' 2>'" +
                          err + "' </dev/null";
  const int status = std::system(cmd.c_str());
  RunResult r;
  r.exit_code = WIFEXITED(status) ? WEXITSTATUS(status) : -1;
  r.out = read_file(out);
  r.err = read_file(err);
  return r;
}

/// Splits CSV text without quotes into rows of cells (enough for firmcall's numeric output).
inline std::vector<std::vector<std::string>> split_simple_csv(const std::string& text) {
  std::vector<std::vector<std::string>> rows;
  std::istringstream in(text);
  std::string line;
  while (std::getline(in, line)) {
    std::vector<std::string> cells;
    std::string cell;
    std::istringstream ls(line);
    while (std::getline(ls, cell, ',')) cells.push_back(cell);
    if (!line.empty() && line.back() == ',') cells.emplace_back();
    rows.push_back(cells);
  }
  return rows;
}

/// Realistic random obligors (fixed seed): leverage DP/E log-uniform in [0.005, 25], equity
/// volatility in [0.08, 1.5], horizon in {0.25, 0.5, 1, 2, 5}, rate in [-0.01, 0.12].
inline std::vector<MertonInputs> generated_obligors(std::size_t n, std::uint64_t seed) {
  std::mt19937_64 rng(seed);
  std::uniform_real_distribution<double> u(0.0, 1.0);
  const double horizons[] = {0.25, 0.5, 1.0, 2.0, 5.0};
  std::vector<MertonInputs> out;
  out.reserve(n);
  for (std::size_t i = 0; i < n; ++i) {
    MertonInputs in;
    in.equity_value = std::exp(std::log(1.0) + u(rng) * std::log(1e5));
    in.equity_vol_annual = 0.08 + u(rng) * (1.5 - 0.08);
    in.default_point = in.equity_value * std::exp(std::log(0.005) + u(rng) * std::log(25.0 / 0.005));
    in.risk_free_rate_cc = -0.01 + u(rng) * 0.13;
    in.horizon_years = horizons[static_cast<std::size_t>(u(rng) * 5.0) % 5];
    in.drift_annual = in.risk_free_rate_cc + 0.05 * (u(rng) - 0.5);
    out.push_back(in);
  }
  return out;
}

}  // namespace firmcall::testing
