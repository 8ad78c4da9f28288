// Writing a command's output either to standard output or, all or nothing, to a file: the text
// goes to a temporary file beside the target, which is renamed over it only when the command
// completes. A failed run leaves no half-written file behind.
#pragma once

#include <cstdio>
#include <string>
#include <string_view>

namespace firmcall {

class OutputFile {
 public:
  /// Empty path or "-": standard output. Throws InputError when the temporary file cannot be made.
  explicit OutputFile(const std::string& path);
  ~OutputFile();  ///< removes the temporary file unless commit() succeeded
  OutputFile(const OutputFile&) = delete;
  OutputFile& operator=(const OutputFile&) = delete;

  /// Appends text. Throws InputError on a write error (disk full, closed pipe).
  void write(std::string_view text);
  /// Flushes and, for a file, renames the temporary file onto the target.
  void commit();

 private:
  std::string path_;
  std::string temp_path_;
  std::FILE* file_ = nullptr;
  bool committed_ = false;
};

}  // namespace firmcall
