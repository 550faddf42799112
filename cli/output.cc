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
#include <string_view>

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
int WriteAll(int fd, std::string_view content) {
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
  if (::stat(path.c_str(), &info) == 0 && !S_ISDIR(info.st_mode)) {
    // An existing file or device: refused when its own permissions forbid writing, as a
    // shell redirection would refuse it (for root, access() grants what root may do).
    if (::access(path.c_str(), W_OK) != 0) {
      return fmt::format("cannot write '{}': {}", path, std::strerror(errno));
    }
    if (!S_ISREG(info.st_mode)) return "";
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
    return fmt::format(
        "cannot write '{}': {} (knee writes a temporary file in folder '{}' and renames it "
        "over the report)",
        path, std::strerror(errno), folder);
  }
  return "";
}

OutputStream::~OutputStream() { Abandon(); }

void OutputStream::Abandon() {
  if (fd_ >= 0) ::close(fd_);
  fd_ = -1;
  if (!temp_.empty()) {
    ::unlink(temp_.c_str());
    temp_.clear();
    g_temp_active = 0;
  }
}

std::string OutputStream::Fail(int err) {
  Abandon();
  return fmt::format("cannot write '{}': {}", path_, std::strerror(err));
}

std::string OutputStream::Open(const std::string& given_path) {
  if (given_path.empty()) {
    std::fflush(stdout);
    fd_ = STDOUT_FILENO;
    owned_ = false;
    return "";
  }
  // Through a symbolic link, replace the file it points to, not the link.
  std::error_code ec;
  path_ = given_path;
  if (std::filesystem::is_symlink(given_path, ec)) {
    std::filesystem::path target = std::filesystem::weakly_canonical(given_path, ec);
    if (!ec) path_ = target.string();
  }
  struct stat info;
  const bool exists = ::stat(path_.c_str(), &info) == 0;
  if (exists && !S_ISREG(info.st_mode) && !S_ISDIR(info.st_mode)) {
    // A device or a pipe (/dev/null, /dev/stdout, a named pipe) is written in place:
    // renaming a temporary file over it would replace the device.
    fd_ = ::open(path_.c_str(), O_WRONLY | O_APPEND);
    if (fd_ < 0) return fmt::format("cannot write '{}': {}", path_, std::strerror(errno));
    return "";
  }
  std::string problem = CheckWritable(path_);
  if (!problem.empty()) return problem;
  std::string temp = FolderOf(path_) + "/.knee-XXXXXX";
  if (temp.size() >= sizeof g_temp_path) {
    return fmt::format("cannot write '{}': the path is too long", path_);
  }
  fd_ = ::mkstemp(temp.data());
  if (fd_ < 0) return fmt::format("cannot write '{}': {}", path_, std::strerror(errno));
  temp_ = temp;
  std::memcpy(g_temp_path, temp_.c_str(), temp_.size() + 1);
  g_temp_active = 1;
  // mkstemp creates 0600. Over an existing file keep its permissions and, where we may,
  // its owner, as writing into it would; else the permissions a plain open() gives.
  if (exists) {
    ::fchmod(fd_, info.st_mode & 07777);
    [[maybe_unused]] const int kept_owner = ::fchown(fd_, info.st_uid, info.st_gid);
  } else {
    const mode_t mask = ::umask(0);
    ::umask(mask);
    ::fchmod(fd_, 0666 & ~mask);
  }
  return "";
}

std::string OutputStream::Write(std::string_view text) {
  if (fd_ < 0) return fmt::format("cannot write '{}': not open", path_);
  const int err = WriteAll(fd_, text);
  if (err == 0) return "";
  if (!owned_) return fmt::format("cannot write to standard output: {}", std::strerror(err));
  return Fail(err);
}

std::string OutputStream::Commit() {
  if (!owned_) return "";
  if (fd_ < 0) return fmt::format("cannot write '{}': not open", path_);
  if (temp_.empty()) {  // a device written in place
    const int closed = ::close(fd_);
    fd_ = -1;
    return closed == 0 ? "" : fmt::format("cannot write '{}': {}", path_, std::strerror(errno));
  }
  if (::fsync(fd_) != 0) return Fail(errno);
  const int closed = ::close(fd_);
  fd_ = -1;
  if (closed != 0) return Fail(errno);
  if (std::rename(temp_.c_str(), path_.c_str()) != 0) return Fail(errno);
  temp_.clear();
  g_temp_active = 0;
  return "";
}

std::string WriteFileAtomically(const std::string& path, const std::string& content) {
  OutputStream out;
  std::string problem = out.Open(path);
  if (problem.empty()) problem = out.Write(content);
  if (problem.empty()) problem = out.Commit();
  return problem;
}

void InstallInterruptHandler() {
  struct sigaction action {};
  action.sa_handler = OnInterrupt;
  sigemptyset(&action.sa_mask);
  for (int signal_number : {SIGINT, SIGTERM, SIGHUP, SIGQUIT}) {
    ::sigaction(signal_number, &action, nullptr);
  }
}

std::string WriteStdout(std::string_view content) {
  std::fflush(stdout);
  int err = WriteAll(STDOUT_FILENO, content);
  if (err != 0) return fmt::format("cannot write to standard output: {}", std::strerror(err));
  return "";
}

}  // namespace knee::cli
