// Faults around the analyses: unwritable or full outputs, a closed pipe, an interrupt.
// Each must end with a message and the documented exit status (docs/errors.md) and leave
// no partial file behind. Every path written here is inside a temp folder of the test's
// own; devices (/dev/full) are only ever written, never replaced.
#include <gtest/gtest.h>
#include <sys/wait.h>
#include <unistd.h>

#include <cstdlib>
#include <filesystem>
#include <string>

#include "cli/run_knee.h"

namespace knee::testing {
namespace {

namespace fs = std::filesystem;

struct ShellRun {
  int status = -1;
  std::string err;
};

// Runs `script` under bash -c; standard error of the script goes to a file we read.
ShellRun RunShell(const std::string& script) {
  const std::string err_path = TempPath("shell-stderr");
  const std::string command = "bash -c '" + script + "' 2>" + err_path;
  const int raw = std::system(command.c_str());
  ShellRun run;
  run.status = WIFEXITED(raw) ? WEXITSTATUS(raw) : 128 + WTERMSIG(raw);
  run.err = ReadWhole(err_path);
  std::remove(err_path.c_str());
  return run;
}

class Faults : public ::testing::Test {
 protected:
  void SetUp() override {
    folder_ = TempPath("faults");
    fs::create_directories(folder_);
  }
  void TearDown() override { fs::remove_all(folder_); }
  // Files left in our folder (a temporary .knee-XXXXXX would show up here).
  int FileCount() const {
    int n = 0;
    for (const auto& entry : fs::directory_iterator(folder_)) {
      (void)entry;
      ++n;
    }
    return n;
  }
  std::string folder_;
};

TEST_F(Faults, OutIntoMissingFolderIsRefusedBeforeAnyWork) {
  const std::string out = folder_ + "/no-such-folder/report.csv";
  KneeRun run = RunKnee("bias " + Netlist("input-clamp.knee") + " --out " + out);
  EXPECT_EQ(run.status, 2);
  EXPECT_NE(run.err.find("--out: cannot write"), std::string::npos) << run.err;
  EXPECT_TRUE(run.out.empty());
  EXPECT_FALSE(fs::exists(out));
  EXPECT_EQ(FileCount(), 0);
}

TEST_F(Faults, OutIsAFolder) {
  KneeRun run = RunKnee("bias " + Netlist("input-clamp.knee") + " --out " + folder_);
  EXPECT_EQ(run.status, 2);
  EXPECT_NE(run.err.find("it is a folder"), std::string::npos) << run.err;
  EXPECT_EQ(FileCount(), 0);
}

// /dev/full accepts opens and fails every write with ENOSPC: a full disk.
TEST_F(Faults, FullStandardOutput) {
  if (!fs::exists("/dev/full")) GTEST_SKIP() << "no /dev/full";
  ShellRun run =
      RunShell(std::string(KNEE_BINARY) + " bias " + Netlist("input-clamp.knee") + " >/dev/full");
  EXPECT_EQ(run.status, 2);
  EXPECT_NE(run.err.find("cannot write to standard output"), std::string::npos) << run.err;
}

TEST_F(Faults, FullDeviceAsOutIsWrittenInPlaceAndFails) {
  if (!fs::exists("/dev/full")) GTEST_SKIP() << "no /dev/full";
  KneeRun run = RunKnee("bias " + Netlist("input-clamp.knee") + " --out /dev/full");
  EXPECT_EQ(run.status, 2);
  EXPECT_NE(run.err.find("cannot write '/dev/full'"), std::string::npos) << run.err;
  EXPECT_TRUE(fs::is_character_file("/dev/full"));  // still the device, never replaced
}

TEST_F(Faults, FullDeviceAsPlot) {
  if (!fs::exists("/dev/full")) GTEST_SKIP() << "no /dev/full";
  KneeRun run = RunKnee("sweep " + Netlist("input-clamp.knee") +
                        " Vfield=0..5:11pts --plot /dev/full --quiet --out " + folder_ +
                        "/r.csv --format csv");
  EXPECT_EQ(run.status, 2);
  EXPECT_NE(run.err.find("--plot: cannot write"), std::string::npos) << run.err;
  EXPECT_TRUE(fs::is_character_file("/dev/full"));
}

// More than a pipe's buffer of CSV into `head -1`: the writes after head exits fail with
// EPIPE (SIGPIPE is ignored), which knee reports.
TEST_F(Faults, ClosedPipe) {
  ShellRun run = RunShell(std::string(KNEE_BINARY) + " sweep " + Netlist("input-clamp.knee") +
                          " Vfield=-24..24:0.01 --format csv --quiet | head -c 10 >/dev/null;"
                          " exit ${PIPESTATUS[0]}");
  EXPECT_EQ(run.status, 2);
  EXPECT_NE(run.err.find("cannot write to standard output"), std::string::npos) << run.err;
}

// SIGINT during a long sweep with --out: the process ends by the signal (status 130 in
// the shell) before anything is written, so neither the report nor a temporary file
// exists afterwards.
TEST_F(Faults, InterruptDuringSweepLeavesNoFile) {
  const std::string out = folder_ + "/sweep.csv";
  // set -m: a background job of a non-interactive shell would otherwise ignore SIGINT.
  ShellRun run =
      RunShell("set -m; " + std::string(KNEE_BINARY) + " sweep " + Netlist("input-clamp.knee") +
               " Vfield=-24..24:0.0001 --jobs 1 --format csv --quiet --out " + out +
               " & pid=$!; sleep 0.3; kill -INT $pid; wait $pid");
  EXPECT_EQ(run.status, 130);
  EXPECT_NE(run.err.find("knee: interrupted"), std::string::npos) << run.err;
  EXPECT_FALSE(fs::exists(out));
  EXPECT_EQ(FileCount(), 0);
}

// SIGHUP (the terminal closed), SIGQUIT and SIGTERM clean up like SIGINT: status
// 128 + the signal number, no report and no temporary file.
TEST_F(Faults, HangupQuitAndTerminateLeaveNoFile) {
  const std::pair<const char*, int> signals[] = {{"HUP", 129}, {"QUIT", 131}, {"TERM", 143}};
  for (const auto& [name, status] : signals) {
    const std::string out = folder_ + "/sweep-" + name + ".csv";
    ShellRun run =
        RunShell("set -m; " + std::string(KNEE_BINARY) + " sweep " + Netlist("input-clamp.knee") +
                 " Vfield=-24..24:0.0001 --jobs 1 --format csv --quiet --out " + out +
                 " & pid=$!; sleep 0.3; kill -" + name + " $pid; wait $pid");
    EXPECT_EQ(run.status, status) << name;
    EXPECT_NE(run.err.find("knee: interrupted"), std::string::npos) << name << ": " << run.err;
    EXPECT_FALSE(fs::exists(out)) << name;
    EXPECT_EQ(FileCount(), 0) << name;
  }
}

}  // namespace
}  // namespace knee::testing
