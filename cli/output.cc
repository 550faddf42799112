#include "output.h"

#include <fcntl.h>
#include <fmt/format.h>
#include <sys/stat.h>
#include <unistd.h>

#include <cerrno>
#include <csignal>
#include <cstdio>
#include <cstring>
#include <filesystem>
#include <string>

namespace knee::cli {
namespace {

// The temporary file being written, for the signal handler (async-signal-safe access
// only: a fixed buffer, unlink and write).
char g_temp_path[4096] = {0};
volatile std::sig_atomic_t g_temp_active = 0;

extern "C" void OnInterrupt(int signal_number) {
  if (g_temp_active) ::unlink(g_temp_path);
  static const char kMessage[] = "\nknee: interrupted\n";
  [[maybe_unused]] const ssize_t ignored = ::write(STDERR_FILENO, kMessage, sizeof kMessage - 1);
  ::_exit(128 + signal_number);
}

std::string FolderOf(const std::string& path) {
  std::filesystem::path folder = std::filesystem::path(path).parent_path();
  return folder.empty() ? "." : folder.string();
}

// Writes all of `content` to `fd`, retrying short writes and EINTR.
int WriteAll(int fd, const std::string& content) {
  size_t done = 0;
  while (done < content.size()) {
    ssize_t n = ::write(fd, content.data() + done, content.size() - done);
    if (n < 0) {
      if (errno == EINTR) continue;
      return errno;
    }
    done += static_cast<size_t>(n);
  }
  return 0;
}

}  // namespace

std::string CheckWritable(const std::string& path) {
  struct stat info;
  if (::stat(path.c_str(), &info) == 0 && !S_ISREG(info.st_mode) && !S_ISDIR(info.st_mode)) {
    if (::access(path.c_str(), W_OK) != 0) {
      return fmt::format("cannot write '{}': {}", path, std::strerror(errno));
    }
    return "";
  }
  std::error_code ec;
  if (std::filesystem::is_directory(path, ec)) {
    return fmt::format("cannot write '{}': it is a folder", path);
  }
  const std::string folder = FolderOf(path);
  if (!std::filesystem::is_directory(folder, ec)) {
    return fmt::format("cannot write '{}': folder '{}' does not exist", path, folder);
  }
  if (::access(folder.c_str(), W_OK) != 0) {
    return fmt::format("cannot write '{}': {}", path, std::strerror(errno));
  }
  return "";
}

// A path that exists and is not a regular file (/dev/null, /dev/stdout, a named pipe)
// is written in place: renaming a temporary file over it would replace the device.
std::string WriteInPlace(const std::string& path, const std::string& content) {
  int fd = ::open(path.c_str(), O_WRONLY | O_APPEND);
  if (fd < 0) return fmt::format("cannot write '{}': {}", path, std::strerror(errno));
  int err = WriteAll(fd, content);
  if (::close(fd) != 0 && err == 0) err = errno;
  if (err != 0) return fmt::format("cannot write '{}': {}", path, std::strerror(err));
  return "";
}

std::string WriteFileAtomically(const std::string& given_path, const std::string& content) {
  // Through a symbolic link, replace the file it points to, not the link.
  std::error_code ec;
  std::string path = given_path;
  if (std::filesystem::is_symlink(given_path, ec)) {
    std::filesystem::path target = std::filesystem::weakly_canonical(given_path, ec);
    if (!ec) path = target.string();
  }
  struct stat info;
  if (::stat(path.c_str(), &info) == 0 && !S_ISREG(info.st_mode) && !S_ISDIR(info.st_mode)) {
    return WriteInPlace(path, content);
  }
  std::string problem = CheckWritable(path);
  if (!problem.empty()) return problem;
  std::string temp = FolderOf(path) + "/.knee-XXXXXX";
  if (temp.size() >= sizeof g_temp_path) {
    return fmt::format("cannot write '{}': the path is too long", path);
  }
  int fd = ::mkstemp(temp.data());
  if (fd < 0) return fmt::format("cannot write '{}': {}", path, std::strerror(errno));
  std::memcpy(g_temp_path, temp.c_str(), temp.size() + 1);
  g_temp_active = 1;
  int err = WriteAll(fd, content);
  if (err == 0 && ::fsync(fd) != 0) err = errno;
  if (::close(fd) != 0 && err == 0) err = errno;
  if (err == 0) {
    // mkstemp creates 0600; give the report the permissions a plain open() would.
    const mode_t mask = ::umask(0);
    ::umask(mask);
    ::chmod(temp.c_str(), 0666 & ~mask);
    if (std::rename(temp.c_str(), path.c_str()) != 0) err = errno;
  }
  if (err != 0) ::unlink(temp.c_str());
  g_temp_active = 0;
  if (err != 0) return fmt::format("cannot write '{}': {}", path, std::strerror(err));
  return "";
}

void InstallInterruptHandler() {
  struct sigaction action {};
  action.sa_handler = OnInterrupt;
  sigemptyset(&action.sa_mask);
  ::sigaction(SIGINT, &action, nullptr);
  ::sigaction(SIGTERM, &action, nullptr);
}

std::string WriteStdout(const std::string& content) {
  std::fflush(stdout);
  int err = WriteAll(STDOUT_FILENO, content);
  if (err != 0) return fmt::format("cannot write to standard output: {}", std::strerror(err));
  return "";
}

}  // namespace knee::cli
