// End-to-end tests of how the commands write their outputs (docs/outputs.md, "How outputs are
// written"): the outputs of one run replace their targets together or not at all, devices and
// FIFOs are written in place, a signal removes the temporaries, two outputs never share a file.
#include <doctest/doctest.h>
#include <fcntl.h>
#include <signal.h>
#include <sys/stat.h>
#include <sys/sysmacros.h>
#include <sys/wait.h>
#include <unistd.h>

#include <algorithm>
#include <chrono>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <sstream>
#include <string>
#include <thread>
#include <vector>

#include "firmcall/monitor/run_store.hpp"

namespace {

namespace fs = std::filesystem;

const std::string kBinary = FIRMCALL_BINARY;
const std::string kSource = FIRMCALL_SOURCE_DIR;
const std::string kBook = kSource + "/samples/demo_book.yaml";
const std::string kScenarios = kSource + "/samples/stress_scenarios.yaml";
const std::string kSamples = kSource + "/samples/";

struct Scratch {
  fs::path dir;
  Scratch() {
    static int n = 0;
    dir = fs::temp_directory_path() /
          ("firmcall_outputs_cli_" + std::to_string(::getpid()) + "_" + std::to_string(++n));
    fs::remove_all(dir);
    fs::create_directories(dir);
  }
  ~Scratch() {
    std::error_code ec;
    fs::remove_all(dir, ec);
  }
  std::string file(const std::string& name) const { return (dir / name).string(); }
  int partials() const {
    int n = 0;
    for (const auto& e : fs::recursive_directory_iterator(dir)) {
      if (e.path().filename().string().find(".partial-") != std::string::npos) ++n;
    }
    return n;
  }
};

std::string read_file(const std::string& p) {
  std::ifstream in(p, std::ios::binary);
  std::ostringstream ss;
  ss << in.rdbuf();
  return ss.str();
}

void write_file(const std::string& p, const std::string& text) {
  std::ofstream(p, std::ios::binary) << text;
}

std::string quote(const std::string& s) {
  std::string q = "'";
  for (char c : s) {
    if (c == '\'') {
      q += "'\\''";
    } else {
      q.push_back(c);
    }
  }
  return q + "'";
}

struct Result {
  int exit_code = -1;
  std::string out;
  std::string err;
};

// Runs the binary with `args` through the shell; `prefix` goes before it (say "ulimit -v N;").
Result run_firmcall(const std::vector<std::string>& args, const std::string& prefix = "") {
  static int n = 0;
  ++n;
  static const Scratch runs;
  const fs::path& base = runs.dir;
  const std::string out = (base / ("out" + std::to_string(n))).string();
  const std::string err = (base / ("err" + std::to_string(n))).string();
  std::string cmd = prefix + quote(kBinary);
  for (const auto& a : args) cmd += ' ' + quote(a);
  cmd += " >" + quote(out) + " 2>" + quote(err);
  const int status = std::system(cmd.c_str());
  Result r;
  r.exit_code = WIFEXITED(status) ? WEXITSTATUS(status) : -1;
  r.out = read_file(out);
  r.err = read_file(err);
  fs::remove(out);
  fs::remove(err);
  return r;
}

std::string history_book() {
  return kSamples + "history_book.yaml";
}
std::string history_prices() {
  return kSamples + "history_prices.csv";
}

}  // namespace

TEST_CASE("stress: a --summary-output that cannot be written leaves -o as it was") {
  Scratch s;
  const std::string out = s.file("stress.csv");
  write_file(out, "previous stress\n");
  fs::create_directories(s.dir / "a_dir");
  const Result r = run_firmcall({"stress", kBook, "--scenarios", kScenarios, "-f", "csv", "-o", out,
                                 "--summary-output", s.file("a_dir")});
  CHECK(r.exit_code == 2);
  CHECK(r.err.find("--summary-output '" + s.file("a_dir") + "': is a directory") != std::string::npos);
  CHECK(read_file(out) == "previous stress\n");
  CHECK(s.partials() == 0);
}

TEST_CASE("portfolio: a --distribution-output that cannot be written leaves the others as they were") {
  Scratch s;
  const std::string out = s.file("p.csv");
  const std::string summary = s.file("s.csv");
  write_file(out, "previous portfolio\n");
  write_file(summary, "previous summary\n");
  const std::string missing = s.file("no_such_folder/d.csv");
  const Result r = run_firmcall({"portfolio", kBook, "--reporting-currency", "EUR", "--fx",
                                 kSource + "/samples/demo_fx.csv", "-f", "csv", "-o", out, "--summary-output",
                                 summary, "--distribution-output", missing});
  CHECK(r.exit_code == 2);
  CHECK(r.err.find("--distribution-output '" + missing + "'") != std::string::npos);
  CHECK(read_file(out) == "previous portfolio\n");
  CHECK(read_file(summary) == "previous summary\n");
  CHECK(s.partials() == 0);
}

TEST_CASE("history: a --series that cannot be written leaves -o as it was") {
  Scratch s;
  const std::string out = s.file("h.csv");
  write_file(out, "previous history\n");
  fs::create_directories(s.dir / "a_dir");
  const Result r = run_firmcall({"history", history_book(), history_prices(), "--balance-sheets",
                                 kSamples + "history_balance_sheets.csv", "-f", "csv", "-o", out, "--series",
                                 s.file("a_dir")});
  CHECK(r.exit_code == 2);
  CHECK(r.err.find("--series '" + s.file("a_dir") + "'") != std::string::npos);
  CHECK(read_file(out) == "previous history\n");
  CHECK(s.partials() == 0);
}

TEST_CASE("score --record: a store that cannot be written leaves -o as it was") {
  Scratch s;
  const std::string out = s.file("scores.csv");
  write_file(out, "previous scores\n");
  const std::string foreign = s.file("not_a_store.sqlite");
  write_file(foreign, "this is not a history store, it is a text file of some length\n");
  const Result r = run_firmcall({"score", kBook, "-f", "csv", "-o", out, "--record", "--db", foreign});
  CHECK(r.exit_code == 2);
  CHECK(r.err.find(foreign) != std::string::npos);
  CHECK(read_file(out) == "previous scores\n");
  CHECK(read_file(foreign) == "this is not a history store, it is a text file of some length\n");
  CHECK(s.partials() == 0);
}

TEST_CASE("score --record: an -o that cannot be written records no run") {
  Scratch s;
  const std::string store = s.file("h.sqlite");
  REQUIRE(run_firmcall({"score", kBook, "-f", "csv", "-o", s.file("first.csv"), "--record", "--db", store})
              .exit_code == 0);
  fs::create_directories(s.dir / "a_dir");
  const Result r =
      run_firmcall({"score", kBook, "-f", "csv", "-o", s.file("a_dir"), "--record", "--db", store, "--as-of",
                    "2026-12-07"});  // another date: a second run of the same book and date is refused
  CHECK(r.exit_code == 2);
  CHECK(r.err.find("-o '" + s.file("a_dir") + "': is a directory") != std::string::npos);
  const Result runs = run_firmcall({"runs", "--db", store, "-f", "csv"});
  REQUIRE(runs.exit_code == 0);
  CHECK(std::count(runs.out.begin(), runs.out.end(), '\n') == 2);  // the header and the first run
}

TEST_CASE("two outputs naming the same file are refused before the run") {
  Scratch s;
  const std::string out = s.file("same.csv");
  write_file(out, "previous\n");
  fs::create_symlink(out, s.file("link.csv"));
  for (const std::string& second : {out, s.file("link.csv")}) {
    const Result r = run_firmcall(
        {"stress", kBook, "--scenarios", kScenarios, "-f", "csv", "-o", out, "--summary-output", second});
    CHECK(r.exit_code == 2);
    CHECK(r.err.find("names the same file as -o '" + out + "'") != std::string::npos);
    CHECK(read_file(out) == "previous\n");
  }
  const Result r = run_firmcall(
      {"stress", kBook, "--scenarios", kScenarios, "-f", "csv", "-o", "-", "--summary-output", "-"});
  CHECK(r.exit_code == 2);
  CHECK(r.out.empty());
  CHECK(s.partials() == 0);
}

TEST_CASE("-o onto a null device: the device stays a character device") {
  // A private null device (as root), else the system's /dev/null.
  Scratch s;
  std::string device = s.file("null");
  if (::mknod(device.c_str(), S_IFCHR | 0666, makedev(1, 3)) != 0) device = "/dev/null";
  struct stat before {};
  REQUIRE(::lstat(device.c_str(), &before) == 0);
  REQUIRE(S_ISCHR(before.st_mode));
  const Result r = run_firmcall({"score", kBook, "-f", "csv", "-o", device});
  CHECK(r.exit_code == 0);
  struct stat st {};
  REQUIRE(::lstat(device.c_str(), &st) == 0);
  CHECK(S_ISCHR(st.st_mode));
  CHECK(st.st_rdev == makedev(1, 3));  // the null device's numbers (Linux devices.txt, from memory)
  CHECK(st.st_ino == before.st_ino);
  CHECK(s.partials() == 0);
}

TEST_CASE("portfolio: a full disk on the second output leaves -o as it was") {
  Scratch s;
  const std::string out = s.file("p.csv");
  write_file(out, "previous portfolio\n");
  struct stat full {};
  if (::stat("/dev/full", &full) != 0 || !S_ISCHR(full.st_mode)) return;  // Linux's always-full device
  const Result r = run_firmcall({"portfolio", kBook, "--reporting-currency", "EUR", "--fx",
                                 kSource + "/samples/demo_fx.csv", "-f", "csv", "-o", out, "--summary-output",
                                 "/dev/full"});
  CHECK(r.exit_code == 2);
  CHECK(r.err.find("--summary-output '/dev/full'") != std::string::npos);
  CHECK(r.err.find("No space left on device") != std::string::npos);  // ENOSPC, strerror on glibc
  CHECK(read_file(out) == "previous portfolio\n");
  CHECK(s.partials() == 0);
}

TEST_CASE("-o onto a symbolic link: written through, the link stays a link, the mode is kept") {
  Scratch s;
  const std::string target = s.file("target.csv");
  const std::string link = s.file("link.csv");
  write_file(target, "previous\n");
  fs::permissions(target, fs::perms::owner_read | fs::perms::owner_write);
  fs::create_symlink(target, link);
  const Result r = run_firmcall({"score", kBook, "-f", "csv", "-o", link});
  CHECK(r.exit_code == 0);
  CHECK(fs::is_symlink(link));
  const std::string text = read_file(target);
  CHECK(text.rfind("id,", 0) == 0);
  CHECK(text == run_firmcall({"score", kBook, "-f", "csv"}).out);
  struct stat st {};
  REQUIRE(::stat(target.c_str(), &st) == 0);
  CHECK((st.st_mode & 07777) == 0600);
}

TEST_CASE("SIGTERM mid-run: no temporary is left, the previous output stays, exit 128 + 15") {
  Scratch s;
  const std::string fifo = s.file("book.csv");  // a FIFO nobody writes: the run waits on its input
  REQUIRE(::mkfifo(fifo.c_str(), 0600) == 0);
  const std::string out = s.file("scores.csv");
  write_file(out, "previous scores\n");
  const pid_t pid = ::fork();
  REQUIRE(pid >= 0);
  if (pid == 0) {
    const int null = ::open("/dev/null", O_WRONLY);
    ::dup2(null, STDERR_FILENO);
    ::execl(kBinary.c_str(), kBinary.c_str(), "score", fifo.c_str(), "-f", "csv", "-o", out.c_str(),
            static_cast<char*>(nullptr));
    ::_exit(127);
  }
  // The temporary exists once the run has opened its output; then the run waits for the book.
  for (int i = 0; i < 3000 && s.partials() == 0; ++i)
    std::this_thread::sleep_for(std::chrono::milliseconds(10));
  CHECK(s.partials() == 1);
  ::kill(pid, SIGTERM);
  int status = 0;
  REQUIRE(::waitpid(pid, &status, 0) == pid);
  REQUIRE(WIFSIGNALED(status));  // a shell reports 128 + 15 = 143
  CHECK(WTERMSIG(status) == SIGTERM);
  CHECK(s.partials() == 0);
  CHECK(read_file(out) == "previous scores\n");
}

TEST_CASE("SIGTERM mid-run through a shell: exit status 143") {
  Scratch s;
  const std::string fifo = s.file("book.csv");
  REQUIRE(::mkfifo(fifo.c_str(), 0600) == 0);
  const std::string out = s.file("scores.csv");
  // The shell runs firmcall in the background, kills it once its temporary exists, and reports
  // its status (POSIX: 128 + the signal number).
  const std::string script = quote(kBinary) + " score " + quote(fifo) + " -f csv -o " + quote(out) +
                             " 2>/dev/null & p=$!; i=0; while [ $i -lt 3000 ] && ! ls " +
                             quote(s.dir.string()) +
                             " | grep -q partial; do sleep 0.01; i=$((i+1)); done; kill -TERM $p; wait $p; "
                             "echo $? > " +
                             quote(s.file("status"));
  std::system(("sh -c " + quote(script) + " 2>/dev/null").c_str());
  CHECK(read_file(s.file("status")) == "143\n");
  CHECK(s.partials() == 0);
  CHECK(!fs::exists(out));
}

TEST_CASE("-o /dev/stdout writes in place; with --summary-output - it is refused") {
  const Result r = run_firmcall({"score", kBook, "-f", "csv", "-o", "/dev/stdout"});
  CHECK(r.exit_code == 0);
  CHECK(r.out == run_firmcall({"score", kBook, "-f", "csv"}).out);
  const Result both = run_firmcall({"stress", kBook, "--scenarios", kScenarios, "-f", "csv", "-o",
                                    "/dev/stdout", "--summary-output", "-"});
  CHECK(both.exit_code == 2);
  CHECK(both.err.find("--summary-output (standard output) names the same file as -o '/dev/stdout'") !=
        std::string::npos);
}

TEST_CASE("out of memory: a clear message naming the command and the input, exit 2") {
#if defined(__SANITIZE_ADDRESS__)
  // AddressSanitizer reserves terabytes of address space for its shadow memory, so an instrumented
  // binary cannot start under `ulimit -v`; the release build runs this case.
  MESSAGE("skipped under AddressSanitizer: ulimit -v leaves no room for its shadow memory");
  return;
#endif
  Scratch s;
  const std::string book = s.file("big.csv");
  // 200000 invented obligors (about 14 MB): a term-structure stress reads the whole book, which
  // needs more than the 100 MB of address space allowed below.
  {
    std::ofstream f(book, std::ios::binary);
    f << "id,name,market_cap,equity_vol,short_term_debt,long_term_debt,rate,horizon\n";
    for (int i = 1; i <= 200000; ++i) {
      f << "OBL-" << i << ",Obligor " << i << "," << 100 + i % 900 << ",0." << 15 + i % 60 << ","
        << 20 + i % 300 << "," << 40 + i % 500 << ",0.03,1\n";
    }
  }
  const std::string out = s.file("stress.csv");
  write_file(out, "previous stress\n");
  const Result r = run_firmcall(
      {"stress", book, "--equity-shocks", "-0.3", "--horizons", "1", "-f", "csv", "-j", "1", "-o", out},
      "ulimit -v 100000; ");
  CHECK(r.exit_code == 2);
  CHECK(r.err.find("firmcall: error: out of memory in 'stress' on " + book + " (") != std::string::npos);
  CHECK(r.err.find(" MB); no output file was replaced") != std::string::npos);
  CHECK(r.err.find("-j 1") != std::string::npos);
  CHECK(r.err.find("internal error") == std::string::npos);
  CHECK(read_file(out) == "previous stress\n");
  CHECK(s.partials() == 0);
}

TEST_CASE("a store transaction killed before its commit is rolled back by SQLite") {
  Scratch s;
  const std::string store = s.file("h.sqlite");
  REQUIRE(run_firmcall({"score", kBook, "-f", "csv", "-o", s.file("a.csv"), "--record", "--db", store})
              .exit_code == 0);
  // A process that dies, unannounced, halfway through writing a run (as a killed `score --record`).
  const pid_t pid = ::fork();
  REQUIRE(pid >= 0);
  if (pid == 0) {
    firmcall::RunStore open(store, firmcall::StoreOpen::existing, 1.0);
    firmcall::RunInfo info;
    info.as_of = "2026-01-02";
    info.recorded_at = "2026-01-02T00:00:00Z";
    info.book_path = "killed.csv";
    info.input_sha256 = std::string(64, '0');
    info.settings_json = "{}";
    firmcall::RunWriter writer(open, info);
    firmcall::StoredObligor o;
    o.fields_json = "{}";
    for (int i = 0; i < 5000; ++i) {
      o.id = "OBL-" + std::to_string(i);
      writer.add(o);
    }
    ::raise(SIGKILL);
  }
  int status = 0;
  REQUIRE(::waitpid(pid, &status, 0) == pid);
  REQUIRE(WIFSIGNALED(status));
  CHECK(WTERMSIG(status) == SIGKILL);
  {
    const firmcall::RunStore after(store, firmcall::StoreOpen::existing, 1.0);
    CHECK(after.runs().size() == 1);  // the journal rolled the half-written run back
  }
  const Result again = run_firmcall({"score", kBook, "-f", "csv", "-o", s.file("b.csv"), "--record", "--db",
                                     store, "--as-of", "2026-12-07"});
  CHECK(again.exit_code == 0);
  const firmcall::RunStore last(store, firmcall::StoreOpen::existing, 1.0);
  CHECK(last.runs().size() == 2);
}
