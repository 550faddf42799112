// Where reports go: standard output, or a file written whole or not at all.
#pragma once

#include <string>
#include <string_view>

namespace knee::cli {

// Checks before any work that `path` can be written (an existing file's permissions
// allow it, its folder exists and is writable); returns an error message or "".
std::string CheckWritable(const std::string& path);

// A report written while it is produced: to standard output, to a device in place, or to
// a temporary file in the target's folder that Commit() renames over the target, so a
// file is replaced whole or not at all. Over an existing file the report keeps that
// file's permissions (and owner where allowed). The destructor removes an uncommitted
// temporary file; the interrupt handler removes it on a signal.
class OutputStream {
 public:
  OutputStream() = default;
  ~OutputStream();
  OutputStream(const OutputStream&) = delete;
  OutputStream& operator=(const OutputStream&) = delete;

  std::string Open(const std::string& path);  // "" = standard output; "" or a message
  std::string Write(std::string_view text);   // "" or a message (then nothing is left)
  std::string Commit();                       // "" or a message (then nothing is left)

 private:
  void Abandon();
  std::string Fail(int err);

  int fd_ = -1;
  bool owned_ = true;  // false for standard output, which is never closed
  std::string path_;
  std::string temp_;  // the temporary file while it exists
};

// Writes `content` to `path` through a temporary file in the same folder that is renamed
// over `path` only when everything was written and flushed; "" on success, else a
// message. On failure no file is left behind.
std::string WriteFileAtomically(const std::string& path, const std::string& content);

// On SIGINT, SIGTERM, SIGHUP (the terminal closed) or SIGQUIT: removes the temporary file being
// written (if any), says "knee: interrupted" on standard error and exits with 128 + the signal
// number (130 for SIGINT), so that no partial report is ever left behind (docs/errors.md).
void InstallInterruptHandler();

// Writes to standard output; "" on success, else a message (e.g. a closed pipe).
std::string WriteStdout(std::string_view content);

}  // namespace knee::cli
