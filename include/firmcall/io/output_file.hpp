// Writing a command's outputs, all or nothing (docs/outputs.md, "How outputs are written").
//
// A regular file (new or existing, also through a symbolic link) is written to a temporary file
// `TARGET.partial-XXXXXX` beside its final target and renamed onto it only when the command
// completes; a replaced file keeps its mode and owner, a new one gets 0666 less the umask. Standard
// output ("-"), a FIFO and a character device (/dev/null, /dev/stdout) are written in place: they are
// never replaced. A directory, a dangling symbolic link or any other kind of file is refused.
//
// OutputSet groups the outputs of one run: it refuses two outputs naming the same file, and commits
// them together: every output is written and closed first, then the caller's store transaction
// commits, then the files are renamed into place.
//
// remove_partial_outputs_on_signal() makes SIGINT, SIGTERM and SIGHUP remove the temporary files of
// the run before the process ends by the signal.
#pragma once

#include <sys/stat.h>

#include <cstdio>
#include <functional>
#include <memory>
#include <string>
#include <string_view>
#include <vector>

namespace firmcall {

class OutputFile {
 public:
  /// Empty path or "-": standard output. `option` names the output in messages ("-o",
  /// "--summary-output"). Throws InputError when the target cannot be written (a directory, a
  /// dangling link, a read-only folder).
  explicit OutputFile(const std::string& path, std::string option = "-o");
  ~OutputFile();  ///< removes the temporary file unless commit() succeeded
  OutputFile(const OutputFile&) = delete;
  OutputFile& operator=(const OutputFile&) = delete;

  /// Appends text. Throws InputError on a write error (disk full, closed pipe).
  void write(std::string_view text);
  /// Flushes and closes (the temporary file, or the stream written in place). Throws InputError.
  void finish();
  /// Renames the temporary file onto the target (nothing for an output written in place). Call
  /// after finish(). Throws InputError.
  void publish();
  /// finish() and publish().
  void commit();

  /// True when written in place (standard output, FIFO, character device): nothing to rename.
  bool in_place() const noexcept { return temp_path_.empty(); }
  const std::string& path() const noexcept { return path_; }
  const std::string& option() const noexcept { return option_; }
  /// "-o 'out.csv'": the output as messages name it.
  std::string label() const;

 private:
  void open_in_place(int flags);
  void open_temporary(const std::string& target, const struct ::stat* existing);
  void discard() noexcept;

  std::string path_;       ///< as given
  std::string option_;     ///< the option that named it
  std::string target_;     ///< the file renamed onto (a symbolic link resolved)
  std::string temp_path_;  ///< empty when written in place
  std::FILE* file_ = nullptr;
  int slot_ = -1;  ///< in the signal clean-up registry
  bool committed_ = false;
};

/// The outputs of one run, committed together or not at all.
class OutputSet {
 public:
  /// Opens the output `option` names (empty or "-": standard output). Throws InputError when an
  /// output of the set already names the same file (also through a link, or "-" twice) and when
  /// the output cannot be opened. The reference stays valid as long as the set.
  OutputFile& add(const std::string& option, const std::string& path);
  /// Claims `path` for an output the set does not write (the history store), so that no file
  /// output names it too. Throws InputError as add() does.
  void reserve(const std::string& option, const std::string& path);
  /// Finishes every output; then runs `before_publish` (say the store's commit); then renames the
  /// files into place. An exception before the renames leaves every target as it was.
  void commit(const std::function<void()>& before_publish = {});

 private:
  void claim(const std::string& option, const std::string& path);
  struct Claim {
    std::string label;
    std::string key;
  };
  std::vector<Claim> claims_;
  std::vector<std::unique_ptr<OutputFile>> files_;
};

/// A key equal for two paths naming the same file: "-" for standard output, the device and inode
/// of an existing file, else the real path of the folder and the name.
std::string output_identity(const std::string& path);

/// Installs handlers for SIGINT, SIGTERM and SIGHUP (those not ignored) that remove the temporary
/// files of the outputs still open (unlink(2) only), then end the process by the same signal
/// (exit status 128 + signal in a shell).
void remove_partial_outputs_on_signal();

}  // namespace firmcall
