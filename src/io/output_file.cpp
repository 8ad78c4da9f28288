#include "firmcall/io/output_file.hpp"

#include <fcntl.h>
#include <pthread.h>
#include <sys/stat.h>
#include <unistd.h>

#include <atomic>
#include <cerrno>
#include <climits>
#include <csignal>
#include <cstdlib>
#include <cstring>
#include <vector>

#include "firmcall/book/errors.hpp"

namespace firmcall {

namespace {

// The temporary files a signal handler removes: fixed buffers, so that the handler only reads
// memory and calls unlink(2). A slot is filled before it is marked used, and marked free before
// its file is renamed or removed.
constexpr int kSlots = 64;
constexpr std::size_t kSlotChars = PATH_MAX;
char g_temp_paths[kSlots][kSlotChars];
std::atomic<bool> g_slot_used[kSlots];
static_assert(std::atomic<bool>::is_always_lock_free, "the signal handler reads these flags");

int register_temporary(const std::string& path) noexcept {
  if (path.size() >= kSlotChars) return -1;
  for (int i = 0; i < kSlots; ++i) {
    if (g_slot_used[i].load()) continue;
    std::memcpy(g_temp_paths[i], path.c_str(), path.size() + 1);
    g_slot_used[i].store(true);
    return i;
  }
  return -1;  // full: the file is still removed by its owner, only not on a signal
}

void release_temporary(int slot) noexcept {
  if (slot >= 0) g_slot_used[slot].store(false);
}

extern "C" void remove_temporaries_and_die(int sig) {
  for (int i = 0; i < kSlots; ++i) {
    if (g_slot_used[i].load()) ::unlink(g_temp_paths[i]);
  }
  // SA_RESETHAND restored the default action and SA_NODEFER lets it act now.
  ::raise(sig);
  ::_exit(128 + sig);
}

std::string errno_text() {
  return std::strerror(errno);
}

mode_t default_file_mode() {
  const mode_t mask = ::umask(0);
  ::umask(mask);
  return 0666 & ~mask;
}

std::string real_path(const std::string& path) {
  char* r = ::realpath(path.c_str(), nullptr);
  if (r == nullptr) return {};
  std::string s(r);
  std::free(r);
  return s;
}

// /dev/stdout, /dev/fd/N, /proc/self/fd/N: an open descriptor of this process, written in place
// (appending, so that `>>` keeps what was there) whatever it is.
bool is_descriptor_alias(const std::string& path) {
  return path == "/dev/stdout" || path == "/dev/stderr" || path.rfind("/dev/fd/", 0) == 0 ||
         path.rfind("/proc/self/fd/", 0) == 0;
}

bool names_standard_output(const std::string& path) {
  return path == "/dev/stdout" || path == "/dev/fd/1" || path == "/proc/self/fd/1";
}

}  // namespace

std::string OutputFile::label() const {
  return option_ + (path_.empty() || path_ == "-" ? " (standard output)" : " '" + path_ + "'");
}

OutputFile::OutputFile(const std::string& path, std::string option)
    : path_(path), option_(std::move(option)) {
  if (path.empty() || path == "-") {
    file_ = stdout;
    return;
  }
  if (is_descriptor_alias(path)) {
    open_in_place(O_WRONLY | O_APPEND);
    return;
  }
  struct stat st {};
  if (::stat(path.c_str(), &st) == 0) {
    if (S_ISREG(st.st_mode)) {
      const std::string target = real_path(path);  // through any symbolic link
      if (target.empty()) throw InputError(label() + ": cannot resolve the path: " + errno_text());
      open_temporary(target, &st);
    } else if (S_ISFIFO(st.st_mode) || S_ISCHR(st.st_mode)) {
      open_in_place(O_WRONLY);
    } else if (S_ISDIR(st.st_mode)) {
      throw InputError(label() + ": is a directory; give a file name");
    } else {
      throw InputError(label() + ": not a regular file, FIFO or character device; nothing is written there");
    }
    return;
  }
  if (errno != ENOENT) throw InputError(label() + ": " + errno_text());
  struct stat lst {};
  if (::lstat(path.c_str(), &lst) == 0 && S_ISLNK(lst.st_mode)) {
    char to[PATH_MAX];
    const ssize_t n = ::readlink(path.c_str(), to, sizeof to - 1);
    const std::string where = n > 0 ? std::string(to, static_cast<std::size_t>(n)) : std::string("?");
    throw InputError(label() + ": a symbolic link to '" + where + "', which does not exist");
  }
  open_temporary(path, nullptr);
}

void OutputFile::open_in_place(int flags) {
  const int fd = ::open(path_.c_str(), flags | O_CLOEXEC);
  if (fd < 0) throw InputError(label() + ": cannot open for writing: " + errno_text());
  file_ = ::fdopen(fd, "wb");
  if (file_ == nullptr) {
    ::close(fd);
    throw InputError(label() + ": cannot open for writing: " + errno_text());
  }
}

void OutputFile::open_temporary(const std::string& target, const struct ::stat* existing) {
  std::vector<char> tmpl(target.begin(), target.end());
  const char suffix[] = ".partial-XXXXXX";
  tmpl.insert(tmpl.end(), suffix, suffix + sizeof suffix);  // includes the terminating NUL
  const int fd = ::mkstemp(tmpl.data());
  if (fd < 0) throw InputError(label() + ": cannot create the file: " + errno_text());
  target_ = target;
  temp_path_.assign(tmpl.data());
  slot_ = register_temporary(temp_path_);
  if (existing != nullptr) {
    // The replacement keeps the owner (where allowed) and the mode of the file it replaces; the
    // owner first, since a change of owner clears the set-id bits.
    if (::fchown(fd, existing->st_uid, existing->st_gid) != 0) {
      (void)::fchown(fd, static_cast<uid_t>(-1), existing->st_gid);
    }
    ::fchmod(fd, existing->st_mode & 07777);
  } else {
    ::fchmod(fd, default_file_mode());
  }
  file_ = ::fdopen(fd, "wb");
  if (file_ == nullptr) {
    const std::string why = errno_text();
    ::close(fd);
    discard();
    throw InputError(label() + ": cannot open the file: " + why);
  }
}

void OutputFile::discard() noexcept {
  if (temp_path_.empty() || committed_) return;
  release_temporary(slot_);
  slot_ = -1;
  ::unlink(temp_path_.c_str());
}

OutputFile::~OutputFile() {
  if (file_ != nullptr && file_ != stdout) std::fclose(file_);
  discard();
}

void OutputFile::write(std::string_view text) {
  if (text.empty()) return;
  if (std::fwrite(text.data(), 1, text.size(), file_) != text.size()) {
    throw InputError("cannot write " + label() + ": " + errno_text());
  }
}

void OutputFile::finish() {
  if (file_ == nullptr) return;
  if (std::fflush(file_) != 0) throw InputError("cannot write " + label() + ": " + errno_text());
  if (file_ == stdout) return;
  std::FILE* f = file_;
  file_ = nullptr;
  if (std::fclose(f) != 0) throw InputError("cannot write " + label() + ": " + errno_text());
}

void OutputFile::publish() {
  if (temp_path_.empty() || committed_) return;
  if (std::rename(temp_path_.c_str(), target_.c_str()) != 0) {
    throw InputError("cannot move " + label() + " into place: " + errno_text());
  }
  committed_ = true;
  release_temporary(slot_);
  slot_ = -1;
}

void OutputFile::commit() {
  finish();
  publish();
}

std::string output_identity(const std::string& path) {
  if (path.empty() || path == "-" || names_standard_output(path)) return "-";
  struct stat st {};
  if (::stat(path.c_str(), &st) == 0) {
    return "file:" + std::to_string(st.st_dev) + ":" + std::to_string(st.st_ino);
  }
  const std::size_t slash = path.find_last_of('/');
  const std::string folder = slash == std::string::npos ? "." : path.substr(0, slash + 1);
  const std::string name = slash == std::string::npos ? path : path.substr(slash + 1);
  const std::string real = real_path(folder);
  return "path:" + (real.empty() ? folder : real) + "/" + name;
}

void OutputSet::claim(const std::string& option, const std::string& path) {
  const std::string key = output_identity(path);
  const std::string label = option + (path.empty() || path == "-" ? " (standard output)" : " '" + path + "'");
  for (const Claim& c : claims_) {
    if (c.key == key) {
      throw InputError(label + " names the same file as " + c.label +
                       "; give each output its own file (nothing is written)");
    }
  }
  claims_.push_back({label, key});
}

OutputFile& OutputSet::add(const std::string& option, const std::string& path) {
  claim(option, path);
  files_.push_back(std::make_unique<OutputFile>(path, option));
  return *files_.back();
}

void OutputSet::reserve(const std::string& option, const std::string& path) {
  claim(option, path);
}

void OutputSet::commit(const std::function<void()>& before_publish) {
  for (const auto& f : files_) f->finish();
  if (before_publish) before_publish();
  // The renames are not split by SIGINT, SIGTERM or SIGHUP: one arriving now acts after them.
  sigset_t stop{};
  sigset_t old{};
  sigemptyset(&stop);
  for (const int sig : {SIGINT, SIGTERM, SIGHUP}) sigaddset(&stop, sig);
  ::pthread_sigmask(SIG_BLOCK, &stop, &old);
  struct Restore {
    const sigset_t* mask;
    ~Restore() { ::pthread_sigmask(SIG_SETMASK, mask, nullptr); }
  } restore{&old};
  std::string done;
  for (const auto& f : files_) {
    try {
      f->publish();
    } catch (const InputError& e) {
      throw InputError(std::string(e.what()) +
                       (done.empty() ? std::string() : "; already in place: " + done));
    }
    if (!f->in_place()) done += (done.empty() ? "" : ", ") + f->label();
  }
}

void remove_partial_outputs_on_signal() {
  for (const int sig : {SIGINT, SIGTERM, SIGHUP}) {
    struct sigaction old {};
    if (::sigaction(sig, nullptr, &old) == 0 && old.sa_handler == SIG_IGN) continue;  // say, under nohup
    struct sigaction sa {};
    sa.sa_handler = remove_temporaries_and_die;
    sigemptyset(&sa.sa_mask);
    sa.sa_flags = SA_RESETHAND | SA_NODEFER;
    ::sigaction(sig, &sa, nullptr);
  }
}

}  // namespace firmcall
