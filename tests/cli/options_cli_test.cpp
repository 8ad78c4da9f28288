// Numeric options refuse NaN, infinities and values outside their range as command-line errors
// (exit 2, the message names the option), and list options take one argument each so that a
// positional argument after them is never taken into the list.
#include <doctest/doctest.h>

#include <filesystem>
#include <fstream>
#include <string>

#include "test_util.hpp"

using firmcall::testing::run_firmcall;

namespace {
const std::string kBook = "samples/demo_book.yaml";

// The run is a command-line error naming `option`, and wrote no rows.
void check_refused(const std::string& args, const std::string& option) {
  CAPTURE(args);
  const auto r = run_firmcall(args);
  CHECK(r.exit_code == 2);
  CHECK(r.err.find(option) != std::string::npos);
  CHECK(r.out.empty());
  // No bound written as a 309-digit number (the largest double printed in fixed notation).
  CHECK(r.err.find("000000000000000000000") == std::string::npos);
}
}  // namespace

TEST_CASE("scoring options: nan and inf are command-line errors naming the option") {
  for (const char* cmd : {"score", "stress", "portfolio"}) {
    const std::string extra = std::string(cmd) == "stress" ? " --equity-shocks -0.1" : "";
    for (const char* value : {"nan", "inf", "-inf", "NaN", "1e999"}) {
      check_refused(std::string(cmd) + " " + kBook + extra + " --rate " + value, "--rate");
      check_refused(std::string(cmd) + " " + kBook + extra + " --horizon " + value, "--horizon");
      check_refused(std::string(cmd) + " " + kBook + extra + " --default-point-weight " + value,
                    "--default-point-weight");
    }
  }
  // The ranges: rate in [-1, 1], horizon in (0, 100] years (as the book's horizon_years), weight in [0, 1].
  check_refused("score " + kBook + " --rate 1.5", "--rate");
  check_refused("score " + kBook + " --horizon 0", "--horizon");
  check_refused("score " + kBook + " --horizon 101", "--horizon");
  check_refused("score " + kBook + " --default-point-weight 1.01", "--default-point-weight");
  // Values inside the ranges still run.
  CHECK(run_firmcall("score " + kBook + " --rate -0.01 --horizon 100 --default-point-weight 1 -f csv")
            .exit_code == 0);
}

TEST_CASE("every other numeric option refuses nan, inf and out-of-range values") {
  check_refused("stress " + kBook + " --equity-shocks nan", "--equity-shocks");
  check_refused("stress " + kBook + " --equity-shocks 0,inf", "--equity-shocks");
  check_refused("stress " + kBook + " --equity-vol-multipliers nan", "--equity-vol-multipliers");
  check_refused("stress " + kBook + " --reverse-pd nan", "--reverse-pd");
  check_refused("stress " + kBook + " --equity-shocks -0.1 --pd-threshold nan", "--pd-threshold");
  check_refused("score " + kBook + " --model first-passage --barrier-ratio nan", "--barrier-ratio");
  check_refused("score " + kBook + " --model first-passage --barrier-growth inf", "--barrier-growth");
  check_refused("portfolio " + kBook + " --levels 0.99,nan", "--levels");
  check_refused("portfolio " + kBook + " --levels 0.99,1", "--levels");
  check_refused("portfolio " + kBook + " --monte-carlo 1e5", "--monte-carlo");
  check_refused("portfolio " + kBook + " --loss-grid -16", "--loss-grid");
  check_refused("score " + kBook + " -j 0", "--threads");
  check_refused("score " + kBook + " -j 1.5", "--threads");
}

TEST_CASE("--seed outside 0..2^64-1 is refused, not clamped") {
  // 2^64 = 18446744073709551616 (from memory); 2^64 - 1 is the largest seed.
  check_refused("portfolio " + kBook + " --monte-carlo 200 --seed 18446744073709551616", "--seed");
  check_refused("portfolio " + kBook + " --monte-carlo 200 --seed -1", "--seed");
  check_refused("portfolio " + kBook + " --monte-carlo 200 --seed 1e3", "--seed");
  CHECK(run_firmcall("portfolio " + kBook +
                     " --reporting-currency EUR --fx samples/demo_fx.csv --monte-carlo 200 --seed "
                     "18446744073709551615 -f csv")
            .exit_code == 0);
}

TEST_CASE("a list option does not take the positional argument after it") {
  const auto r = run_firmcall("stress --equity-shocks 0,-0.1 " + kBook + " -f csv");
  CHECK(r.exit_code == 0);
  CHECK(r.out.find("equity -10% vol x1") != std::string::npos);
  const auto p = run_firmcall("portfolio --levels 0.99,0.999 " + kBook +
                              " --reporting-currency EUR --fx samples/demo_fx.csv -f csv");
  CHECK(p.exit_code == 0);
  // Repeating the flag still adds to the list.
  const auto rep = run_firmcall("stress " + kBook + " --equity-shocks 0 --equity-shocks -0.1 -f csv");
  CHECK(rep.exit_code == 0);
  CHECK(rep.out.find("equity -10% vol x1") != std::string::npos);
}

TEST_CASE("-o takes the format from the file's extension; -f and -o must agree; options after the command") {
  using firmcall::testing::TempDir;
  TempDir t;
  const auto first_byte = [](const std::string& path) {
    std::ifstream in(path);
    return static_cast<char>(in.get());
  };
  // .json writes JSON (an object), .csv writes CSV (the header's first column), .txt the table.
  REQUIRE(run_firmcall("score " + kBook + " -q -o " + t.file("a.json")).exit_code == 0);
  CHECK(first_byte(t.file("a.json")) == '{');
  REQUIRE(run_firmcall("score " + kBook + " -q -o " + t.file("a.CSV")).exit_code == 0);
  std::ifstream csv(t.file("a.CSV"));
  std::string header;
  std::getline(csv, header);
  CHECK(header.rfind("id,name,status,", 0) == 0);
  REQUIRE(run_firmcall("score " + kBook + " -q -o " + t.file("a.txt")).exit_code == 0);
  CHECK(first_byte(t.file("a.txt")) != '{');
  // An unknown extension without -f, and -f disagreeing with the extension: command-line errors
  // that write nothing.
  for (const std::string& args :
       {"score " + kBook + " -o " + t.file("b.xls"), "score " + kBook + " -f csv -o " + t.file("b.json"),
        "stress " + kBook + " --equity-shocks -0.1 -f json -o " + t.file("b.csv")}) {
    CAPTURE(args);
    const auto r = run_firmcall(args);
    CHECK(r.exit_code == 2);
    CHECK(r.err.find("-o") != std::string::npos);
  }
  CHECK_FALSE(std::filesystem::exists(t.file("b.xls")));
  CHECK_FALSE(std::filesystem::exists(t.file("b.json")));
  CHECK_FALSE(std::filesystem::exists(t.file("b.csv")));
  // With -f, any name goes; "-" is standard output.
  CHECK(run_firmcall("score " + kBook + " -q -f csv -o " + t.file("c.out")).exit_code == 0);
  const auto r = run_firmcall("score " + kBook + " -f json -o - -q");
  CHECK(r.exit_code == 0);
  CHECK(r.out.rfind("{", 0) == 0);
  // Global options after the command's name: -q silences the notes, --config is read.
  const auto quiet_after = run_firmcall("score " + kBook + " -f csv -q");
  CHECK(quiet_after.exit_code == 0);
  CHECK(quiet_after.err.empty());
  CHECK(run_firmcall("score " + kBook + " -f csv -q --config config/firmcall.yaml").exit_code == 0);
  CHECK(run_firmcall("score " + kBook + " --config no_such_settings.yaml").exit_code == 2);
}

TEST_CASE("--version names the version and the commit built from") {
  const auto r = run_firmcall("--version");
  CHECK(r.exit_code == 0);
  CHECK(r.out.rfind("firmcall 0.", 0) == 0);
  CHECK(r.out.find(" (commit ") != std::string::npos);
  // A build from a git checkout names its commit (a source archive says "unknown").
  if (std::filesystem::exists(std::filesystem::path(FIRMCALL_SOURCE_DIR) / ".git"))
    CHECK(r.out.find("(commit unknown)") == std::string::npos);
}
