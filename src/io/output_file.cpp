#include "firmcall/io/output_file.hpp"

#include <sys/stat.h>
#include <unistd.h>

#include <cerrno>
#include <cstdlib>
#include <cstring>
#include <vector>

#include "firmcall/book/errors.hpp"

namespace firmcall {

OutputFile::OutputFile(const std::string& path) : path_(path) {
  if (path.empty() || path == "-") {
    file_ = stdout;
    return;
  }
  std::vector<char> tmpl(path.begin(), path.end());
  const char suffix[] = ".partial-XXXXXX";
  tmpl.insert(tmpl.end(), suffix, suffix + sizeof suffix);  // includes the terminating NUL
  const int fd = ::mkstemp(tmpl.data());
  if (fd < 0) throw InputError("cannot create output file '" + path + "': " + std::strerror(errno));
  temp_path_.assign(tmpl.data());
  const mode_t mask = ::umask(0);
  ::umask(mask);
  ::fchmod(fd, 0666 & ~mask);
  file_ = ::fdopen(fd, "wb");
  if (file_ == nullptr) {
    ::close(fd);
    ::unlink(temp_path_.c_str());
    throw InputError("cannot open output file '" + path + "': " + std::strerror(errno));
  }
}

OutputFile::~OutputFile() {
  if (file_ != nullptr && file_ != stdout) std::fclose(file_);
  if (!temp_path_.empty() && !committed_) ::unlink(temp_path_.c_str());
}

void OutputFile::write(std::string_view text) {
  if (text.empty()) return;
  if (std::fwrite(text.data(), 1, text.size(), file_) != text.size()) {
    throw InputError("cannot write output '" + (temp_path_.empty() ? std::string("stdout") : path_) +
                     "': " + std::strerror(errno));
  }
}

void OutputFile::commit() {
  if (std::fflush(file_) != 0)
    throw InputError("cannot write output '" + path_ + "': " + std::strerror(errno));
  if (temp_path_.empty()) return;
  std::FILE* f = file_;
  file_ = nullptr;
  if (std::fclose(f) != 0) throw InputError("cannot write output '" + path_ + "': " + std::strerror(errno));
  if (std::rename(temp_path_.c_str(), path_.c_str()) != 0) {
    throw InputError("cannot move output into place at '" + path_ + "': " + std::strerror(errno));
  }
  committed_ = true;
}

}  // namespace firmcall
