// Bounded resources on hostile input (docs/sweeps.md "Limits", docs/errors.md): every run
// here is made under an address-space limit (`ulimit -v`), and ends with exit 2 and a
// message, or with the streamed output; none may abort at the memory limit (a
// std::bad_alloc would end with status 134 and no message).
#include <gtest/gtest.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <unistd.h>

#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <sstream>
#include <string>
#include <vector>

#include "cli/run_knee.h"

namespace knee::testing {
namespace {

namespace fs = std::filesystem;

// Address-space limits of the runs, in KiB. The knee binary with two worker threads
// runs a streamed sweep in about 100 MB of address space.
constexpr long kSmallLimitKib = 256 * 1024;
constexpr long kLargeLimitKib = 3L * 1024 * 1024;  // room for a 1 GiB input, not for 2

struct LimitedRun {
  int status = -1;
  std::string out;
  std::string err;
};

// AddressSanitizer reserves terabytes of shadow address space at start, so a binary built
// with it cannot start under any `ulimit -v`: there the runs go unlimited, and the memory
// bound is checked by the ordinary build while the sanitizer checks every access.
#if defined(__SANITIZE_ADDRESS__)
constexpr bool kAddressLimitWorks = false;
#else
constexpr bool kAddressLimitWorks = true;
#endif

// Runs `script` under bash with `ulimit -v kib`; $KNEE is the knee binary.
LimitedRun RunLimited(long kib, const std::string& script) {
  const std::string script_path = TempPath("script.sh");
  const std::string out_path = TempPath("stdout");
  const std::string err_path = TempPath("stderr");
  {
    std::ofstream file(script_path);
    if (kAddressLimitWorks) file << "ulimit -v " << kib << "\n";
    file << "KNEE='" << KNEE_BINARY << "'\n" << script << "\n";
  }
  const std::string command = "bash " + script_path + " </dev/null >" + out_path + " 2>" + err_path;
  const int raw = std::system(command.c_str());
  LimitedRun run;
  run.status = WIFEXITED(raw) ? WEXITSTATUS(raw) : 128 + WTERMSIG(raw);
  run.out = ReadWhole(out_path);
  run.err = ReadWhole(err_path);
  std::remove(script_path.c_str());
  std::remove(out_path.c_str());
  std::remove(err_path.c_str());
  return run;
}

std::vector<std::string> Lines(const std::string& text) {
  std::vector<std::string> lines;
  std::istringstream in(text);
  for (std::string line; std::getline(in, line);) lines.push_back(line);
  return lines;
}

size_t Fields(const std::string& line) {
  return static_cast<size_t>(std::count(line.begin(), line.end(), ',')) + 1;
}

class BoundedResources : public ::testing::Test {
 protected:
  void SetUp() override {
    folder_ = TempPath("bounded");
    fs::create_directories(folder_);
  }
  void TearDown() override { fs::remove_all(folder_); }
  std::string Clamp() const { return Netlist("input-clamp.knee"); }
  std::string folder_;
};

// 65536^4 points does not fit a 64-bit count: refused, never wrapped to 0 (which used to
// print an empty sweep with exit 0). The same for a sweep statement under `knee check`.
TEST_F(BoundedResources, PointCountThatOverflowsIsRefused) {
  LimitedRun run = RunLimited(kSmallLimitKib, "$KNEE sweep " + Clamp() +
                                                  " Vfield=0..65535:1 Vrail=0..65535:1 "
                                                  "Rlimit=1..65536:1 temp=0..65535:1 --format csv");
  EXPECT_EQ(run.status, 2) << run.err;
  EXPECT_EQ(run.out, "");
  EXPECT_NE(run.err.find("65536 x 65536 x 65536 x 65536 points, more than the "
                         "9223372036854775807 a sweep can count"),
            std::string::npos)
      << run.err;

  const std::string file = folder_ + "/huge.knee";
  std::ofstream(file)
      << "param R = 1k\nparam S = 1k\nvsource V1 a -> gnd 5\nresistor R1 a -> gnd R\n"
         "resistor R2 a -> gnd S\n"
         "sweep V1 0..65535:1 R 1..65536:1 temp 0..65535:1 S 1..65536:1\n";
  run = RunLimited(kSmallLimitKib, "$KNEE check " + file);
  EXPECT_EQ(run.status, 2) << run.err;
  EXPECT_NE(run.err.find("the most a sweep can count"), std::string::npos) << run.err;
}

// The ranges of one command line, or of one netlist's sweeps, hold at most 10,000,000
// values together: four ranges of 10,000,000 values (80 MB each) are refused after the
// second instead of being expanded into 320 MB first.
TEST_F(BoundedResources, SweepRangesAreBoundedTogether) {
  LimitedRun run = RunLimited(kSmallLimitKib, "$KNEE sweep " + Clamp() +
                                                  " Vfield=0..9999999:1 Vrail=0..9999999:1 "
                                                  "Rlimit=1..10000000:1 temp=0..9999999:1");
  EXPECT_EQ(run.status, 2) << run.err;
  EXPECT_NE(run.err.find("the sweep ranges of this command line hold at least 20000000 values "
                         "together; the limit is 10000000"),
            std::string::npos)
      << run.err;
  const std::string file = folder_ + "/many-sweeps.knee";
  std::ofstream(file) << "vsource V1 a -> gnd 5\nresistor R1 a -> gnd 1k\n"
                         "sweep V1 0..5999999:1\nsweep V1 0..5999999:1\nsweep V1 0..5999999:1\n";
  run = RunLimited(kSmallLimitKib, "$KNEE check " + file);
  EXPECT_EQ(run.status, 2) << run.err;
  EXPECT_NE(run.err.find(":4:10: error: the sweep ranges of this netlist hold at least "
                         "12000000 values together"),
            std::string::npos)
      << run.err;
  // Silent at the limit: one range of 10,000,000 values is accepted.
  run = RunLimited(kSmallLimitKib, "$KNEE sweep " + Clamp() +
                                       " Vfield=0..9999999:1 --format csv --quiet | head -c 10;"
                                       " exit ${PIPESTATUS[0]}");
  EXPECT_EQ(run.status, 2) << run.err;  // the closed pipe, after the first rows
  EXPECT_NE(run.err.find("Broken pipe"), std::string::npos) << run.err;
  EXPECT_EQ(run.out, "Vfield [V]");
}

// A report that must hold every row (table, JSON, a chart) is refused before anything
// is solved or allocated when it is beyond the limit; 1e9 points used to abort with
// std::bad_alloc.
TEST_F(BoundedResources, HeldReportBeyondTheLimitIsRefusedBeforeSolving) {
  const std::string sweep = "$KNEE sweep " + Clamp() + " Vfield=0..99999:1 Vrail=0..9999:1 ";
  const std::string plot = folder_ + "/huge.svg";
  const std::pair<std::string, std::string> cases[] = {
      {"--format table", "values a table holds in memory"},
      {"--format json", "values a JSON report holds in memory"},
  };
  for (const auto& [options, message] : cases) {
    LimitedRun run = RunLimited(kSmallLimitKib, sweep + options);
    EXPECT_EQ(run.status, 2) << options << ": " << run.err;
    EXPECT_EQ(run.out, "") << options;
    EXPECT_NE(run.err.find("this sweep has 1000000000 points of 13 values each"), std::string::npos)
        << run.err;
    EXPECT_NE(run.err.find(message), std::string::npos) << run.err;
    EXPECT_NE(run.err.find("write CSV without --plot"), std::string::npos) << run.err;
  }
  // CSV with a chart streams and samples the rows for the chart, but 10,000 outer values
  // would make a sample beyond the limit: refused before solving.
  LimitedRun run = RunLimited(kSmallLimitKib, sweep + "--format csv --plot " + plot);
  EXPECT_EQ(run.status, 2) << run.err;
  EXPECT_EQ(run.out, "");
  EXPECT_NE(run.err.find("--plot: a chart of this sweep would keep up to"), std::string::npos)
      << run.err;
  EXPECT_NE(run.err.find("(10000 combinations of outer values)"), std::string::npos) << run.err;
  EXPECT_FALSE(fs::exists(plot));

  // knee run holds the reports of all its sweeps at once: two sweeps of 6,000,000 values
  // each are refused together, before either is solved, though each alone is within the
  // limit.
  const std::string file = folder_ + "/two-sweeps.knee";
  std::ofstream(file) << "vsource V1 a -> gnd 5\nresistor R1 a -> gnd 1k\n"
                         "sweep V1 0..2999999:1\nsweep V1 0..2999999:1\nshow a.v\n";
  run = RunLimited(kSmallLimitKib, "$KNEE run " + file);
  EXPECT_EQ(run.status, 2) << run.err;
  EXPECT_EQ(run.out, "");
  EXPECT_NE(run.err.find("the 2 sweeps of this run hold 12000000 values together"),
            std::string::npos)
      << run.err;
}

// CSV is streamed: the first rows of a 1e9-point sweep arrive at once and in a quarter
// of a GiB of address space; the reader closing the pipe ends knee with the documented
// message and exit 2.
TEST_F(BoundedResources, CsvOfAHugeSweepIsStreamed) {
  LimitedRun run = RunLimited(
      kSmallLimitKib, "$KNEE sweep " + Clamp() +
                          " Vfield=0..99999:1 Vrail=0..9999:1 --format csv --quiet --jobs 2 |"
                          " head -c 200000; exit ${PIPESTATUS[0]}");
  EXPECT_EQ(run.status, 2) << run.err;
  EXPECT_NE(run.err.find("cannot write to standard output: Broken pipe"), std::string::npos)
      << run.err;
  ASSERT_EQ(run.out.size(), 200000u);
  const std::vector<std::string> lines = Lines(run.out);
  ASSERT_GT(lines.size(), 500u);
  EXPECT_EQ(lines[0].rfind("Vfield [V],Vrail [V],pin.v [V]", 0), 0u) << lines[0];
  // Every complete row has the header's 13 fields, and the inner axis counts up.
  for (size_t r = 1; r + 1 < lines.size(); ++r) {
    ASSERT_EQ(Fields(lines[r]), 13u) << lines[r];
    ASSERT_EQ(lines[r].rfind(std::to_string(r - 1) + ",0,", 0), 0u) << lines[r];
  }
}

// The streamed CSV (a window of blocks at a time, here several windows) is byte for byte
// the CSV of the held report (with --plot), on standard output and through --out, for
// one and two threads.
TEST_F(BoundedResources, StreamedCsvIsTheHeldCsv) {
  const std::string sweep =
      "$KNEE sweep " + Clamp() + " Vfield=-20..20:0.001 --format csv --quiet ";
  LimitedRun held = RunLimited(kSmallLimitKib, sweep + "--jobs 2 --plot " + folder_ + "/held.svg");
  ASSERT_TRUE(held.status == 0 || held.status == 3) << held.err;  // 3: a rating exceeded
  EXPECT_EQ(Lines(held.out).size(), 40002u);
  for (const char* jobs : {"1", "2"}) {
    LimitedRun streamed = RunLimited(kSmallLimitKib, sweep + "--jobs " + jobs);
    EXPECT_EQ(streamed.status, held.status) << streamed.err;
    EXPECT_TRUE(streamed.out == held.out) << "--jobs " << jobs;
    const std::string out = folder_ + "/streamed-" + jobs + ".csv";
    LimitedRun to_file = RunLimited(kSmallLimitKib, sweep + "--jobs " + jobs + " --out " + out);
    EXPECT_EQ(to_file.status, held.status) << to_file.err;
    EXPECT_EQ(to_file.out, "");
    EXPECT_TRUE(ReadWhole(out) == held.out) << "--jobs " << jobs;
  }
}

// CSV with --plot beyond the held limit is streamed too, and its chart drawn from a
// sample of the rows: 1,000,001 points of 13 values (more than 10,000,000) in a quarter
// GiB, the CSV whole and the chart small.
TEST_F(BoundedResources, CsvWithAChartBeyondTheLimitIsStreamed) {
  const std::string csv = folder_ + "/big.csv";
  const std::string svg = folder_ + "/big.svg";
  LimitedRun run = RunLimited(kSmallLimitKib, "$KNEE sweep " + Clamp() +
                                                  " Vfield=-5..5:0.00001 --format csv --quiet "
                                                  "--out " +
                                                  csv + " --plot " + svg);
  EXPECT_EQ(run.status, 0) << run.err;
  const std::vector<std::string> lines = Lines(ReadWhole(csv));
  ASSERT_EQ(lines.size(), 1'000'002u);
  EXPECT_EQ(lines[1].rfind("-5,", 0), 0u) << lines[1];
  EXPECT_EQ(lines.back().rfind("5,", 0), 0u) << lines.back();
  const std::string chart = ReadWhole(svg);
  EXPECT_NE(chart.find("class=\"trace\""), std::string::npos);
  EXPECT_LT(chart.size(), 300'000u);
}

// Standard input and pipes have no size to check first: the 1 GiB limit is kept while
// reading, so an endless generator ends with exit 2 at the limit (not at the memory
// limit, which is well above 1 GiB but far below what an unbounded read would take).
TEST_F(BoundedResources, EndlessStandardInputStopsAtTheLimit) {
  LimitedRun run = RunLimited(kLargeLimitKib,
                              "yes '# a comment line of the netlist' | $KNEE check -;"
                              " exit ${PIPESTATUS[1]}");
  EXPECT_EQ(run.status, 2) << run.err;
  EXPECT_NE(run.err.find("cannot read '<stdin>': standard input is more than the limit of "
                         "1073741824 bytes (1 GiB)"),
            std::string::npos)
      << run.err;
}

// /dev/zero, given as the file or as standard input, ends at once: reading stops after
// the first chunk (1 MiB) that holds a NUL byte, and the lexer refuses that text.
TEST_F(BoundedResources, DevZeroIsRefusedAtOnce) {
  for (const std::string command : {"$KNEE check /dev/zero", "$KNEE check - </dev/zero"}) {
    LimitedRun run = RunLimited(kSmallLimitKib, command);
    EXPECT_EQ(run.status, 2) << command << ": " << run.err;
    EXPECT_NE(run.err.find(":1:10001: error: line is too long (1048576 bytes)"), std::string::npos)
        << command << ": " << run.err;
  }
}

// A 50 MB line costs memory in proportion to itself: its error display used to hold one
// std::string per character (over 1.6 GB here), far beyond this limit.
TEST_F(BoundedResources, LongLineIsReportedInProportionToItsLength) {
  const std::string file = folder_ + "/long-line.knee";
  {
    std::ofstream out(file);
    out << "vsource V1 a -> gnd 5\nresistor R1 a -> gnd " << std::string(50'000'000, 'x') << "\n";
  }
  LimitedRun run = RunLimited(kSmallLimitKib, "$KNEE check " + file);
  EXPECT_EQ(run.status, 2) << run.err.substr(0, 500);
  EXPECT_NE(run.err.find(":2:10001: error: line is too long (50000021 bytes)"), std::string::npos)
      << run.err.substr(0, 500);
  EXPECT_LT(run.err.size(), 1000u);  // a window of the line is quoted, not the line
}

// knee hand on a chain of 20,000 diodes: sparse state sets, well within a quarter GiB
// (the dense search took 3.1 GB).
TEST_F(BoundedResources, HandOnALargeChain) {
  const std::string file = folder_ + "/chain.knee";
  {
    std::ofstream out(file);
    out << "part P diode sat_current=1n ideality=1.8\nvsource V1 n0 -> gnd 20000\n";
    for (int k = 0; k < 20000; ++k)
      out << "diode D" << k + 1 << " n" << k << " -> n" << k + 1 << " P\n";
    out << "resistor RL n20000 -> gnd 1k\n";
  }
  LimitedRun run = RunLimited(kSmallLimitKib, "$KNEE hand " + file + " --quiet --show RL.i");
  EXPECT_EQ(run.status, 0) << run.err;
  EXPECT_NE(run.out.find("drop   found"), std::string::npos) << run.out.substr(0, 2000);
}

// Small items of the option and value checks: each refused with exit 2 and a message
// naming the option, before any work.
TEST_F(BoundedResources, OptionsThatWouldWrapOrMeanNothingAreRefused) {
  struct Case {
    std::string args;
    std::string message;
  };
  const Case cases[] = {
      {"sweep " + Clamp() + " Vfield=0..6:1 --shard 4294967297/2", "--shard: '4294967297/2'"},
      {"sweep " + Clamp() + " Vfield=0..6:1 --shard 1/4294967296", "--shard: '1/4294967296'"},
      {"bias " + Clamp() + " --temp inf", "--temp: inf is not a temperature"},
      {"bias " + Clamp() + " --temp nan", "--temp: nan is not a temperature"},
      {"bias " + Clamp() + " --temp -300", "--temp: -300 is not a temperature"},
      {"bias " + Clamp() + " --temp -273.15", "--temp: -273.15 is not a temperature"},
      {"sweep " + Clamp() + " Vfield=0..6:1 --jobs 257", "--jobs: 257 is outside 0..256"},
      {"sweep " + Clamp() + " Vfield=0..6:1 --jobs -1", "--jobs: -1 is outside 0..256"},
      {"bias " + Clamp() + " --set Rlimit=1e-310", "a normal number"},
  };
  for (const Case& c : cases) {
    LimitedRun run = RunLimited(kSmallLimitKib, "$KNEE " + c.args);
    EXPECT_EQ(run.status, 2) << c.args << ": " << run.err;
    EXPECT_EQ(run.out, "") << c.args;
    EXPECT_NE(run.err.find(c.message), std::string::npos) << c.args << ": " << run.err;
  }
  // Swept to a subnormal value, that point has no solution and says why (exit 1).
  LimitedRun run = RunLimited(kSmallLimitKib, "$KNEE sweep " + Clamp() + " Rlimit=1e-310,1k");
  EXPECT_EQ(run.status, 1) << run.err;
  EXPECT_NE(run.err.find("a normal number"), std::string::npos) << run.err;
  // A subnormal resistance in the netlist, and a subnormal series resistance.
  run = RunLimited(kSmallLimitKib,
                   "printf 'vsource V1 a -> gnd 5\\nresistor R1 a -> gnd 1e-310\\n' | $KNEE "
                   "check -");
  EXPECT_EQ(run.status, 2);
  EXPECT_NE(run.err.find("<stdin>:2:22: error: resistor 'R1' has resistance 1e-310 Ohm"),
            std::string::npos)
      << run.err;
  run = RunLimited(kSmallLimitKib,
                   "printf 'part P diode series_res=1e-310\\nvsource V1 a -> gnd 5\\n"
                   "resistor R1 a -> b 1k\\ndiode D1 b -> gnd P\\n' | $KNEE check -");
  EXPECT_EQ(run.status, 2);
  EXPECT_NE(run.err.find("series_res = 1e-310 is out of range"), std::string::npos) << run.err;
  // ... and silent where the values are ordinary: the smallest normal resistance and a
  // zero series resistance are accepted.
  run = RunLimited(kSmallLimitKib,
                   "printf 'part P diode series_res=0\\nvsource V1 a -> gnd 5\\n"
                   "resistor R1 a -> b 2.3e-308\\ndiode D1 b -> gnd P\\n' | $KNEE check -");
  EXPECT_EQ(run.status, 0) << run.err;
}

// --jobs 0 means one thread per core, as when --jobs is not given; the output does not
// depend on it.
TEST_F(BoundedResources, JobsZeroIsOnePerCore) {
  const std::string sweep = "$KNEE sweep " + Clamp() + " Vfield=-5..5:0.01 --format csv ";
  LimitedRun zero = RunLimited(kSmallLimitKib, sweep + "--jobs 0");
  LimitedRun one = RunLimited(kSmallLimitKib, sweep + "--jobs 1");
  LimitedRun unset = RunLimited(kSmallLimitKib, sweep);
  EXPECT_EQ(zero.status, 0) << zero.err;
  EXPECT_EQ(zero.out, one.out);
  EXPECT_EQ(zero.out, unset.out);
}

// Slices of a one-axis sweep hold equal shares of its points, wherever the block
// boundaries fall, and still concatenate to the whole sweep byte for byte: a 7-point
// sweep (one block) splits 3 + 4, a 1100-point sweep (3 blocks) into 4 slices that each
// start inside a block.
TEST_F(BoundedResources, ShardsOfOneBlockAreBalancedAndConcatenate) {
  struct Case {
    std::string range;
    int shards;
  };
  for (const Case& c : {Case{"Vfield=0..6:1", 2}, Case{"Vfield=0..10.99:0.01", 4}}) {
    const std::string sweep = "$KNEE sweep " + Clamp() + " " + c.range + " --format csv ";
    LimitedRun whole = RunLimited(kSmallLimitKib, sweep);
    ASSERT_EQ(whole.status, 0) << whole.err;
    const size_t points = Lines(whole.out).size() - 1;
    std::string joined;
    for (int k = 1; k <= c.shards; ++k) {
      LimitedRun slice = RunLimited(
          kSmallLimitKib, sweep + "--shard " + std::to_string(k) + "/" + std::to_string(c.shards));
      ASSERT_EQ(slice.status, 0) << slice.err;
      const size_t rows = Lines(slice.out).size() - (k == 1 ? 1 : 0);
      EXPECT_GE(rows, points / static_cast<size_t>(c.shards)) << c.range << " slice " << k;
      EXPECT_LE(rows, points / static_cast<size_t>(c.shards) + 1) << c.range << " slice " << k;
      joined += slice.out;
    }
    EXPECT_TRUE(joined == whole.out) << c.range;
  }
}

// --out over an existing file keeps its permission bits; a new file gets 0666 less the
// umask.
TEST_F(BoundedResources, OutKeepsTheExistingFilesPermissions) {
  const std::string out = folder_ + "/report.csv";
  std::ofstream(out) << "old\n";
  ASSERT_EQ(::chmod(out.c_str(), 0640), 0);
  LimitedRun run =
      RunLimited(kSmallLimitKib, "$KNEE bias " + Clamp() + " --format csv --out " + out);
  EXPECT_EQ(run.status, 0) << run.err;
  struct stat info;
  ASSERT_EQ(::stat(out.c_str(), &info), 0);
  EXPECT_EQ(info.st_mode & 07777, 0640u);
  EXPECT_NE(ReadWhole(out).find("pin.v [V]"), std::string::npos);

  const std::string fresh = folder_ + "/fresh.csv";
  run = RunLimited(kSmallLimitKib,
                   "umask 027; $KNEE bias " + Clamp() + " --format csv --out " + fresh);
  EXPECT_EQ(run.status, 0) << run.err;
  ASSERT_EQ(::stat(fresh.c_str(), &info), 0);
  EXPECT_EQ(info.st_mode & 07777, 0640u);
}

// A file the user may not write is refused before any work, as `>` would refuse it, and
// left as it was. Tests may run as root, whom file modes do not stop: then the run is
// made as the unprivileged user 65534 (setpriv), in a folder it may write.
TEST_F(BoundedResources, OutRefusesAFileTheUserCannotWrite) {
  ASSERT_EQ(::chmod(folder_.c_str(), 0777), 0);
  const std::string out = folder_ + "/locked.csv";
  std::ofstream(out) << "keep me\n";
  ASSERT_EQ(::chmod(out.c_str(), 0444), 0);
  std::string as_user;
  if (::geteuid() == 0) {
    if (std::system("command -v setpriv >/dev/null") != 0) GTEST_SKIP() << "no setpriv";
    as_user = "setpriv --reuid=65534 --regid=65534 --clear-groups ";
  }
  LimitedRun run =
      RunLimited(kSmallLimitKib, as_user + "$KNEE bias " + Clamp() + " --format csv --out " + out);
  EXPECT_EQ(run.status, 2) << run.err;
  EXPECT_NE(run.err.find("--out: cannot write '" + out + "': Permission denied"), std::string::npos)
      << run.err;
  EXPECT_EQ(ReadWhole(out), "keep me\n");
  // The unprivileged user may write the folder, so only the file's own mode refused it.
  run = RunLimited(kSmallLimitKib, as_user + "$KNEE bias " + Clamp() + " --format csv --out " +
                                       folder_ + "/allowed.csv");
  EXPECT_EQ(run.status, 0) << run.err;
}

// A chart of 100,001 points is thinned to what it can show (at most four points per
// pixel column of each trace): a few hundred kB instead of 135 bytes per point per trace.
TEST_F(BoundedResources, ChartOfManyPointsIsThinned) {
  const std::string svg = folder_ + "/many.svg";
  LimitedRun run = RunLimited(kSmallLimitKib, "$KNEE sweep " + Clamp() +
                                                  " Vfield=-5..5:0.0001 --quiet --show pin.v "
                                                  "--format csv --out /dev/null --plot " +
                                                  svg);
  EXPECT_EQ(run.status, 0) << run.err;
  const std::string chart = ReadWhole(svg);
  ASSERT_NE(chart.find("class=\"trace\""), std::string::npos);
  EXPECT_LT(chart.size(), 200'000u);
  // The trace's path: one M and then L segments, at most 4 per pixel column of the
  // 654-pixel plot area.
  const size_t d = chart.find("d=\"", chart.find("class=\"trace\""));
  const std::string path = chart.substr(d, chart.find('"', d + 3) - d);
  const auto segments = std::count(path.begin(), path.end(), 'L');
  EXPECT_GT(segments, 600);
  EXPECT_LE(segments, 4 * 660);
}

}  // namespace
}  // namespace knee::testing
