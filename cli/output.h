// Where reports go: standard output, or a file written whole or not at all.
#pragma once

#include <string>

namespace knee::cli {

// Checks before any work that `path` can be written (its folder exists and is
// writable); returns an error message or "".
std::string CheckWritable(const std::string& path);

// Writes `content` to `path` through a temporary file in the same folder that is renamed
// over `path` only when everything was written and flushed; "" on success, else a
// message. On failure no file is left behind.
std::string WriteFileAtomically(const std::string& path, const std::string& content);

// On SIGINT or SIGTERM: removes the temporary file being written (if any), says
// "knee: interrupted" on standard error and exits with 128 + the signal number (130 for
// SIGINT), so that no partial report is ever left behind (docs/errors.md).
void InstallInterruptHandler();

// Writes to standard output; "" on success, else a message (e.g. a closed pipe).
std::string WriteStdout(const std::string& content);

}  // namespace knee::cli
