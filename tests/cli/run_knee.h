// Runs the knee executable as a user would and captures what it prints.
#pragma once

#include <sys/wait.h>
#include <unistd.h>

#include <cstdio>
#include <cstdlib>
#include <fstream>
#include <sstream>
#include <string>

#include "test_util.h"

namespace knee::testing {

struct KneeRun {
  int status = -1;
  std::string out;
  std::string err;
};

inline std::string ReadWhole(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  std::ostringstream text;
  text << in.rdbuf();
  return text.str();
}

inline std::string TempPath(const std::string& stem) {
  const char* dir = std::getenv("TMPDIR");
  static int counter = 0;
  return std::string(dir ? dir : "/tmp") + "/knee-test-" + std::to_string(::getpid()) + "-" +
         std::to_string(counter++) + "-" + stem;
}

// `args` is passed through the shell, so quote what needs quoting. `input` becomes
// standard input.
inline KneeRun RunKnee(const std::string& args, const std::string& input = "") {
  const std::string in_path = TempPath("stdin");
  const std::string out_path = TempPath("stdout");
  const std::string err_path = TempPath("stderr");
  {
    std::ofstream in(in_path, std::ios::binary);
    in << input;
  }
  const std::string command =
      std::string(KNEE_BINARY) + " " + args + " <" + in_path + " >" + out_path + " 2>" + err_path;
  const int raw = std::system(command.c_str());
  KneeRun run;
  run.status = WIFEXITED(raw) ? WEXITSTATUS(raw) : 128 + WTERMSIG(raw);
  run.out = ReadWhole(out_path);
  run.err = ReadWhole(err_path);
  std::remove(in_path.c_str());
  std::remove(out_path.c_str());
  std::remove(err_path.c_str());
  return run;
}

inline std::string Netlist(const std::string& name) { return SourcePath("netlists/" + name); }

}  // namespace knee::testing
