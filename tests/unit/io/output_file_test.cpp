// Tests of OutputFile and OutputSet (io/output_file.hpp): regular files through a temporary and a
// rename, FIFOs and devices in place, symbolic links followed, mode kept, one file per output.
#include <doctest/doctest.h>
#include <sys/stat.h>
#include <sys/sysmacros.h>
#include <unistd.h>

#include <filesystem>
#include <fstream>
#include <functional>
#include <sstream>
#include <stdexcept>
#include <string>
#include <thread>

#include "firmcall/book/errors.hpp"
#include "firmcall/io/output_file.hpp"

namespace {

namespace fs = std::filesystem;
using firmcall::InputError;
using firmcall::OutputFile;
using firmcall::OutputSet;

struct Scratch {
  fs::path dir;
  Scratch() {
    dir = fs::temp_directory_path() / ("firmcall_output_file_" + std::to_string(::getpid()));
    fs::remove_all(dir);
    fs::create_directories(dir);
  }
  ~Scratch() {
    std::error_code ec;
    fs::remove_all(dir, ec);
  }
  std::string file(const std::string& name) const { return (dir / name).string(); }
  // Files whose name holds ".partial-": temporaries left behind.
  int partials() const {
    int n = 0;
    for (const auto& e : fs::directory_iterator(dir)) {
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

mode_t mode_of(const std::string& p) {
  struct stat st {};
  REQUIRE(::stat(p.c_str(), &st) == 0);
  return st.st_mode & 07777;
}

std::string error_of(const std::function<void()>& f) {
  try {
    f();
  } catch (const InputError& e) {
    return e.what();
  }
  return {};
}

}  // namespace

TEST_CASE("OutputFile: a FIFO is written in place and its reader gets every byte") {
  Scratch s;
  const std::string fifo = s.file("pipe");
  REQUIRE(::mkfifo(fifo.c_str(), 0600) == 0);
  std::string text;
  for (int i = 0; i < 200000; ++i) text += std::to_string(i) + ",";  // ~1.2 MB, more than a pipe holds
  std::string got;
  std::thread reader([&] { got = read_file(fifo); });
  {
    OutputFile out(fifo);
    CHECK(out.in_place());
    out.write(text);
    out.commit();
  }
  reader.join();
  CHECK(got == text);
  struct stat st {};
  REQUIRE(::lstat(fifo.c_str(), &st) == 0);
  CHECK(S_ISFIFO(st.st_mode));
  CHECK(s.partials() == 0);
}

TEST_CASE("OutputFile: a character device is written in place and stays a device") {
  // A private null device (as root), else the system's: the test does not depend on, nor harm,
  // the machine's /dev/null.
  Scratch s;
  std::string device = s.file("null");
  if (::mknod(device.c_str(), S_IFCHR | 0666, makedev(1, 3)) != 0) device = "/dev/null";
  struct stat before {};
  REQUIRE(::lstat(device.c_str(), &before) == 0);
  REQUIRE(S_ISCHR(before.st_mode));
  {
    OutputFile out(device);
    CHECK(out.in_place());
    out.write("discarded\n");
    out.commit();
  }
  struct stat st {};
  REQUIRE(::lstat(device.c_str(), &st) == 0);
  CHECK(S_ISCHR(st.st_mode));
  CHECK(st.st_ino == before.st_ino);
  CHECK(s.partials() == 0);
}

TEST_CASE("OutputFile: a symbolic link is written through and stays a link") {
  Scratch s;
  fs::create_directories(s.dir / "real");
  const std::string target = s.file("real/out.csv");
  const std::string link = s.file("link.csv");
  write_file(target, "old\n");
  fs::create_symlink(target, link);
  {
    OutputFile out(link);
    out.write("new\n");
    out.commit();
  }
  CHECK(fs::is_symlink(link));
  CHECK(fs::read_symlink(link) == fs::path(target));
  CHECK(read_file(target) == "new\n");
  CHECK(s.partials() == 0);
  int real_partials = 0;
  for (const auto& e : fs::directory_iterator(s.dir / "real")) {
    if (e.path().filename().string().find(".partial-") != std::string::npos) ++real_partials;
  }
  CHECK(real_partials == 0);
}

TEST_CASE("OutputFile: a dangling link, a directory are refused by path; nothing is created") {
  Scratch s;
  const std::string link = s.file("dangling.csv");
  fs::create_symlink(s.file("missing/out.csv"), link);
  const std::string e1 = error_of([&] { OutputFile out(link, "--summary-output"); });
  CHECK(e1.find("--summary-output '" + link + "'") != std::string::npos);
  CHECK(e1.find("does not exist") != std::string::npos);
  const std::string e2 = error_of([&] { OutputFile out(s.dir.string()); });
  CHECK(e2.find("-o '" + s.dir.string() + "': is a directory") != std::string::npos);
  CHECK(fs::is_symlink(link));
  CHECK(s.partials() == 0);
}

TEST_CASE("OutputFile: a replaced file keeps its mode, a new one gets 0666 less the umask") {
  Scratch s;
  const std::string old_file = s.file("secret.csv");
  write_file(old_file, "old\n");
  fs::permissions(old_file, fs::perms::owner_read | fs::perms::owner_write);
  {
    OutputFile out(old_file);
    out.write("new\n");
    out.commit();
  }
  CHECK(read_file(old_file) == "new\n");
  CHECK(mode_of(old_file) == 0600);

  const mode_t mask = ::umask(027);
  const std::string new_file = s.file("new.csv");
  {
    OutputFile out(new_file);
    out.write("x\n");
    out.commit();
  }
  ::umask(mask);
  CHECK(mode_of(new_file) == (0666 & ~027));  // POSIX creat(2) default mode, common practice
}

TEST_CASE("OutputFile: dropped before commit, the target is untouched and no temporary is left") {
  Scratch s;
  const std::string file = s.file("keep.csv");
  write_file(file, "keep\n");
  {
    OutputFile out(file);
    out.write("half");
    CHECK(s.partials() == 1);
  }
  CHECK(read_file(file) == "keep\n");
  CHECK(s.partials() == 0);
}

TEST_CASE("OutputSet: two outputs naming the same file are refused") {
  Scratch s;
  const std::string a = s.file("a.csv");
  write_file(a, "a\n");
  fs::create_symlink(a, s.file("link.csv"));
  fs::create_directories(s.dir / "sub");
  fs::create_directory_symlink(s.dir / "sub", s.dir / "sublink");
  {
    OutputSet set;
    set.add("-o", a);
    const std::string e = error_of([&] { set.add("--summary-output", s.file("link.csv")); });
    CHECK(e.find("--summary-output '" + s.file("link.csv") + "' names the same file as -o '" + a + "'") !=
          std::string::npos);
  }
  {
    OutputSet set;
    set.add("-o", a);
    CHECK(!error_of([&] { set.add("--series", s.dir.string() + "/./a.csv"); }).empty());
  }
  {
    OutputSet set;  // not yet existing, one through a linked folder
    set.add("-o", s.file("sub/new.csv"));
    CHECK(!error_of([&] { set.add("--series", s.file("sublink/new.csv")); }).empty());
  }
  {
    OutputSet set;
    set.add("-o", "-");
    CHECK(error_of([&] { set.add("--summary-output", "-"); }).find("standard output") != std::string::npos);
  }
  {
    OutputSet set;
    set.add("-o", a);
    CHECK(!error_of([&] { set.reserve("--db", a); }).empty());
  }
  CHECK(read_file(a) == "a\n");
  CHECK(s.partials() == 0);
}

TEST_CASE("OutputSet: a failure before the renames leaves every target as it was") {
  Scratch s;
  const std::string a = s.file("a.csv");
  const std::string b = s.file("b.csv");
  write_file(a, "old a\n");
  {
    OutputSet set;
    set.add("-o", a).write("new a\n");
    set.add("--summary-output", b).write("new b\n");
    CHECK_THROWS_AS(set.commit([] { throw InputError("the store is busy"); }), InputError);
  }
  CHECK(read_file(a) == "old a\n");
  CHECK(!fs::exists(b));
  CHECK(s.partials() == 0);
  {
    OutputSet set;
    set.add("-o", a).write("new a\n");
    set.add("--summary-output", b).write("new b\n");
    bool ran = false;
    set.commit([&] { ran = true; });
    CHECK(ran);
  }
  CHECK(read_file(a) == "new a\n");
  CHECK(read_file(b) == "new b\n");
}
