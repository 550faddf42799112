// knee spread end to end: statistics against closed forms, corners and sweeps against
// separate runs, reproducibility across threads and shards, and bad vary lines.
#include <fmt/format.h>
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <fstream>
#include <nlohmann/json.hpp>
#include <sstream>
#include <string>
#include <vector>

#include "run_knee.h"
#include "test_util.h"

namespace knee::testing {
namespace {

using nlohmann::json;

struct Csv {
  std::vector<std::string> header;
  std::vector<std::vector<double>> rows;
  size_t Column(const std::string& name) const {
    for (size_t i = 0; i < header.size(); ++i) {
      if (header[i] == name) return i;
    }
    ADD_FAILURE() << "no column " << name;
    return 0;
  }
};

std::vector<std::string> SplitLine(const std::string& line) {
  std::vector<std::string> cells;
  std::string cell;
  bool quoted = false;
  for (char c : line) {
    if (c == '"') {
      quoted = !quoted;
    } else if (c == ',' && !quoted) {
      cells.push_back(cell);
      cell.clear();
    } else {
      cell += c;
    }
  }
  cells.push_back(cell);
  return cells;
}

Csv ParseCsv(const std::string& text) {
  Csv csv;
  std::istringstream in(text);
  std::string line;
  std::getline(in, line);
  csv.header = SplitLine(line);
  while (std::getline(in, line)) {
    std::vector<double> row;
    for (const std::string& cell : SplitLine(line)) row.push_back(std::stod(cell));
    csv.rows.push_back(std::move(row));
  }
  return csv;
}

struct Stats {
  double mean = 0, var = 0, m4 = 0;  // sample mean, variance (n - 1), 4th central moment
  size_t n = 0;
};
Stats Describe(const std::vector<double>& v) {
  Stats s;
  s.n = v.size();
  for (double x : v) s.mean += x;
  s.mean /= static_cast<double>(s.n);
  for (double x : v) {
    s.var += (x - s.mean) * (x - s.mean);
    s.m4 += std::pow(x - s.mean, 4);
  }
  s.var /= static_cast<double>(s.n - 1);
  s.m4 /= static_cast<double>(s.n);
  return s;
}

// Divider: out = V R2 / (R1 + R2) with R1 = R2 = R nominal, each its own spread.
constexpr double kV = 10, kR = 1000;
std::string Divider(const std::string& spread_r1, const std::string& spread_r2,
                    const std::string& extra = "") {
  return "title \"spread divider\"\nvsource V1 in -> gnd 10\nresistor R1 in -> out 1k\n"
         "resistor R2 out -> gnd 1k\nshow out.v\nvary R1 " +
         spread_r1 + "\nvary R2 " + spread_r2 + "\n" + extra;
}

// First-order propagation of the two resistors' variances (common practice, no source:
// the delta method): d out/d R1 = -V R2/(R1+R2)^2, d out/d R2 = V R1/(R1+R2)^2, both
// V/(4R) in size at R1 = R2 = R; the second-order terms of the mean cancel (d2/dR1^2 =
// -d2/dR2^2), so the mean is V/2 to second order.
void CheckDivider(const std::string& text, double resistor_variance) {
  KneeRun run = RunKnee("spread - --samples 100000 --jobs 2 --format csv", text);
  ASSERT_EQ(run.status, 0) << run.err;
  const Csv csv = ParseCsv(run.out);
  ASSERT_EQ(csv.rows.size(), 100000u);
  std::vector<double> out;
  for (const auto& row : csv.rows) out.push_back(row[csv.Column("out.v [V]")]);
  const Stats s = Describe(out);
  const double slope = kV / (4 * kR);
  const double var = 2 * slope * slope * resistor_variance;
  const double n = static_cast<double>(s.n);
  // Standard errors: of the mean sigma/sqrt(n); of the variance sqrt((m4 - var^2 (n-3)/(n-1))/n)
  // (the variance of the sample variance, e.g. A. Stuart, J. K. Ord, Kendall's Advanced
  // Theory of Statistics, vol. 1, recalled from memory).
  const double se_mean = std::sqrt(var / n);
  const double se_var = std::sqrt((s.m4 - s.var * s.var * (n - 3) / (n - 1)) / n);
  EXPECT_NEAR(s.mean, kV / 2, 4 * se_mean);
  EXPECT_NEAR(s.var, var, 4 * se_var) << "std " << std::sqrt(s.var) << " vs " << std::sqrt(var);
  // The table's figures are the same statistics.
  KneeRun table = RunKnee("spread - --samples 100000 --format json", text);
  ASSERT_EQ(table.status, 0) << table.err;
  const json j = json::parse(table.out);
  EXPECT_NEAR(j["quantities"][0]["mean"].get<double>(), s.mean, 1e-12);
  EXPECT_NEAR(j["quantities"][0]["std_dev"].get<double>(), std::sqrt(s.var), 1e-12);
}

TEST(Spread, UniformDividerMatchesPropagatedVariance) {
  // Uniform on ±a: variance a^2 / 3.
  const double a = 0.01 * kR;
  CheckDivider(Divider("±1%", "+-1%"), a * a / 3);
}

TEST(Spread, NormalDividerMatchesTruncatedNormalVariance) {
  // A normal of sigma s cut at ±3 s: variance s^2 (1 - 2 * 3 phi(3) / (Phi(3) - Phi(-3)))
  // (N. L. Johnson, S. Kotz, Continuous Univariate Distributions, vol. 1, the truncated
  // normal; recalled from memory).
  const double s = 0.01 * kR / 3;
  const double phi3 = std::exp(-4.5) / std::sqrt(2 * M_PI);
  const double mass = std::erf(3 / std::sqrt(2.0));
  CheckDivider(Divider("±1% normal", "±10 normal"), s * s * (1 - 6 * phi3 / mass));
}

TEST(Spread, CornersEqualBiasRunsAtEachCorner) {
  const std::string net =
      "part sig diode sat_current=3n ideality=1.7 series_res=0.4\n"
      "vsource V1 in -> gnd 5\nresistor R1 in -> a 1k\ndiode D1 a -> gnd sig\n"
      "show a.v D1.i\nexpect a.v <= 0.9\nvary V1 ±5%\nvary R1 ±10%\nvary sig.sat_current x3\n";
  KneeRun run = RunKnee("spread - --corners --format csv", net);
  ASSERT_EQ(run.status, 0) << run.err;
  const Csv csv = ParseCsv(run.out);
  ASSERT_EQ(csv.rows.size(), 8u);
  for (const auto& row : csv.rows) {
    const std::string sets =
        fmt::format("--set V1={} --set R1={} --set sig.sat_current={}", row[csv.Column("V1 [V]")],
                    row[csv.Column("R1 [Ohm]")], row[csv.Column("sig.sat_current [A]")]);
    KneeRun bias = RunKnee("bias - --format json --show a.v,D1.i " + sets, net);
    ASSERT_EQ(bias.status, 0) << bias.err;
    const json j = json::parse(bias.out);
    EXPECT_CLOSE(row[csv.Column("a.v [V]")], j["rows"][0][0].get<double>(), 1e-12, 0) << sets;
    EXPECT_CLOSE(row[csv.Column("D1.i [A]")], j["rows"][0][1].get<double>(), 1e-12, 0) << sets;
  }
  // The worst corner for the bound is the one with the largest a.v: low Is, high V1, low R1.
  size_t worst = 0;
  for (size_t i = 1; i < csv.rows.size(); ++i) {
    if (csv.rows[i][csv.Column("a.v [V]")] > csv.rows[worst][csv.Column("a.v [V]")]) worst = i;
  }
  KneeRun table = RunKnee("spread - --corners", net);
  EXPECT_NE(table.out.find(fmt::format("worst: corner {},", worst + 1)), std::string::npos)
      << table.out;
  EXPECT_EQ(csv.rows[worst][csv.Column("V1 [V]")], 5.25);
  EXPECT_EQ(csv.rows[worst][csv.Column("R1 [Ohm]")], 900);
  EXPECT_CLOSE(csv.rows[worst][csv.Column("sig.sat_current [A]")], 1e-9, 1e-15, 0);
}

// P(V R2/(R1+R2) <= c) for R1, R2 independent uniform on [lo, hi]: the share of the square
// below the line r2 = k r1, k = c / (V - c); the integrand clamp(k r1 - lo, 0, hi - lo) is
// piecewise linear with breaks at lo/k and hi/k, so the trapezoid rule on its pieces is exact.
double DividerYield(double c, double lo, double hi) {
  const double k = c / (kV - c);
  auto f = [&](double r1) { return std::clamp(k * r1 - lo, 0.0, hi - lo); };
  std::vector<double> x = {lo, hi};
  for (double b : {lo / k, hi / k}) {
    if (b > lo && b < hi) x.push_back(b);
  }
  std::sort(x.begin(), x.end());
  double area = 0;
  for (size_t i = 1; i < x.size(); ++i) area += 0.5 * (f(x[i - 1]) + f(x[i])) * (x[i] - x[i - 1]);
  return area / ((hi - lo) * (hi - lo));
}

TEST(Spread, WilsonIntervalCoversAKnownYield) {
  const double c = 5.02;
  const double truth = DividerYield(c, 990, 1010);
  ASSERT_GT(truth, 0.7);
  ASSERT_LT(truth, 0.95);
  const std::string net = Divider("±1%", "±1%", "expect out.v <= 5.02\n");
  int covered = 0;
  const int seeds = 200;
  for (int seed = 1; seed <= seeds; ++seed) {
    KneeRun run = RunKnee(fmt::format("spread - --samples 500 --seed {} --format json", seed), net);
    ASSERT_EQ(run.status, 4) << run.err;  // not every sample passes
    const json j = json::parse(run.out);
    const auto& check = j["checks"][0];
    const double low = check["interval"][0].get<double>(),
                 high = check["interval"][1].get<double>();
    if (low <= truth && truth <= high) ++covered;
  }
  EXPECT_GE(covered, 186) << "true yield " << truth;  // 93 % of 200
  EXPECT_LE(covered, 194) << "true yield " << truth;  // 97 % of 200
}

TEST(Spread, SameOutputForAnyJobsAndShardsConcatenate) {
  const std::string net =
      "part sig diode sat_current=3n ideality=1.7 series_res=0.4\n"
      "vsource V1 in -> gnd 5\nresistor R1 in -> a 1k\ndiode D1 a -> gnd sig\n"
      "diode D2 a -> gnd sig\nshow a.v D1.i\nexpect a.v <= 0.6\n"
      "vary V1 4.5..5.5 normal\nvary sig.sat_current x2 each\nvary sig.ideality ±2%\n";
  const std::string args = "spread - --samples 1000 --seed 7 ";
  KneeRun one = RunKnee(args + "--jobs 1 --format csv", net);
  KneeRun two = RunKnee(args + "--jobs 2 --format csv", net);
  ASSERT_EQ(one.status, 4) << one.err;
  EXPECT_EQ(one.out, two.out);
  EXPECT_NE(one.out.find("D1:sig.sat_current [A]"), std::string::npos);
  EXPECT_NE(one.out.find("D2:sig.sat_current [A]"), std::string::npos);
  EXPECT_EQ(RunKnee(args + "--jobs 1", net).out, RunKnee(args + "--jobs 2", net).out);
  EXPECT_EQ(RunKnee(args + "--jobs 1 --format json", net).out,
            RunKnee(args + "--jobs 2 --format json", net).out);
  std::string joined;
  for (int k = 1; k <= 4; ++k) {
    joined += RunKnee(args + fmt::format("--jobs 2 --format csv --shard {}/4", k), net).out;
  }
  EXPECT_EQ(joined, one.out);
}

TEST(Spread, EachDrawsPerDiodeAndLotMultiplies) {
  // Two diodes of one part: the shared (lot) and own (device) factors multiply.
  const std::string net =
      "part sig diode sat_current=1n ideality=1.5\nvsource V1 in -> gnd 5\n"
      "resistor R1 in -> a 1k\ndiode D1 a -> gnd sig\nresistor R2 in -> b 1k\n"
      "diode D2 b -> gnd sig\nshow a.v b.v\nvary sig.sat_current x2\n"
      "vary sig.sat_current x1.5 each\n";
  KneeRun run = RunKnee("spread - --samples 5 --format csv", net);
  ASSERT_EQ(run.status, 0) << run.err;
  const Csv csv = ParseCsv(run.out);
  for (const auto& row : csv.rows) {
    const double lot = row[csv.Column("sig.sat_current [A]")];
    for (const char* d : {"D1", "D2"}) {
      const double own = row[csv.Column(std::string(d) + ":sig.sat_current [A]")];
      const double is = lot * own / 1e-9;
      const std::string node = std::string(d) == "D1" ? "a.v" : "b.v";
      KneeRun bias = RunKnee(
          fmt::format("bias - --format json --show {} --set sig.sat_current={}", node, is), net);
      ASSERT_EQ(bias.status, 0) << bias.err;
      EXPECT_CLOSE(row[csv.Column(node + " [V]")],
                   json::parse(bias.out)["rows"][0][0].get<double>(), 1e-9, 0);
    }
  }
}

TEST(Spread, SweepSamplesMatchSeparateSweeps) {
  const std::string net =
      "part sig diode sat_current=3n ideality=1.7 series_res=0.4 breakdown_v=6\n"
      "vsource V1 in -> gnd 5\nresistor R1 in -> a 1k\ndiode D1 gnd -> a sig\n"
      "show a.v D1.i\nsweep V1 -8..8:0.5\nvary R1 ±5%\nvary sig.breakdown_v ±3%\n";
  KneeRun run = RunKnee("spread - --samples 20 --format csv", net);
  ASSERT_EQ(run.status, 0) << run.err;
  const Csv csv = ParseCsv(run.out);
  ASSERT_EQ(csv.rows.size(), 20u);
  for (size_t k : {0u, 7u, 19u}) {
    const auto& row = csv.rows[k];
    KneeRun sweep =
        RunKnee(fmt::format("sweep - V1=-8..8:0.5 --format json --show a.v,D1.i "
                            "--set R1={} --set sig.breakdown_v={}",
                            row[csv.Column("R1 [Ohm]")], row[csv.Column("sig.breakdown_v [V]")]),
                net);
    ASSERT_EQ(sweep.status, 0) << sweep.err;
    const json j = json::parse(sweep.out);
    for (int q = 0; q < 2; ++q) {
      double lo = INFINITY, hi = -INFINITY;
      for (const auto& r : j["rows"]) {
        lo = std::min(lo, r[1 + q].get<double>());
        hi = std::max(hi, r[1 + q].get<double>());
      }
      const std::string name = q == 0 ? "a.v" : "D1.i";
      const std::string unit = q == 0 ? "V" : "A";
      EXPECT_CLOSE(row[csv.Column("min(" + name + ") [" + unit + "]")], lo, 1e-12, 0) << k;
      EXPECT_CLOSE(row[csv.Column("max(" + name + ") [" + unit + "]")], hi, 1e-12, 0) << k;
    }
  }
}

TEST(Spread, YieldOptionDecidesTheExitStatus) {
  const std::string net = Divider("±1%", "±1%", "expect out.v <= 5.03\n");
  // About 4 % of samples break the bound: every-sample rule fails, a 90 % target passes.
  EXPECT_EQ(RunKnee("spread - --samples 2000", net).status, 4);
  EXPECT_EQ(RunKnee("spread - --samples 2000 --yield 90%", net).status, 0);
  EXPECT_EQ(RunKnee("spread - --samples 2000 --yield 99.9%", net).status, 4);
  EXPECT_EQ(RunKnee("spread - --yield 150%", net).status, 2);
}

TEST(Spread, RatingYieldGivesExitThree) {
  const std::string net =
      "part sig diode sat_current=3n ideality=1.7 max_current=4.3m\n"
      "vsource V1 in -> gnd 5\nresistor R1 in -> a 1k\ndiode D1 a -> gnd sig\nshow D1.i\n"
      "vary R1 ±10%\n";
  KneeRun run = RunKnee("spread - --samples 500", net);
  EXPECT_EQ(run.status, 3) << run.out;
  EXPECT_NE(run.out.find("rating D1.i/max_current"), std::string::npos) << run.out;
}

TEST(Spread, UnsolvedSampleIsReportedWithItsDraws) {
  // A current source into a reverse diode has no DC solution once the source exceeds what
  // the diode can carry in reverse (its saturation current): the samples above fail.
  const std::string net =
      "part sig diode sat_current=1n\nisource I1 gnd -> a 1n\ndiode D1 gnd -> a sig\n"
      "show a.v\nvary I1 0.5n..1.5n\n";
  KneeRun run = RunKnee("spread - --samples 50 --format csv", net);
  ASSERT_EQ(run.status, 1) << run.err;
  const Csv csv = ParseCsv(run.out);
  ASSERT_EQ(csv.rows.size(), 50u);
  int unsolved = 0;
  for (const auto& row : csv.rows) unsolved += std::isnan(row[csv.Column("a.v [V]")]) ? 1 : 0;
  EXPECT_GT(unsolved, 0);
  EXPECT_NE(run.err.find("no solution at sample"), std::string::npos) << run.err;
}

TEST(Spread, CornersRefusedBeyondTheLimit) {
  std::string net = "vsource V1 in -> gnd 5\nresistor R0 in -> gnd 1k\n";
  for (int i = 1; i <= 17; ++i) {
    net += fmt::format("resistor R{} in -> gnd 1k\nvary R{} ±1%\n", i, i);
  }
  KneeRun run = RunKnee("spread - --corners", net);
  EXPECT_EQ(run.status, 2);
  EXPECT_NE(run.err.find("2^17"), std::string::npos) << run.err;
  EXPECT_NE(run.err.find("--samples"), std::string::npos) << run.err;
  EXPECT_EQ(run.out, "");
}

TEST(Spread, NoVaryLineIsBadInput) {
  KneeRun run = RunKnee("spread -", "vsource V1 a -> gnd 1\nresistor R1 a -> gnd 1k\n");
  EXPECT_EQ(run.status, 2);
  EXPECT_NE(run.err.find("no vary line"), std::string::npos) << run.err;
}

TEST(Spread, VaryLinesAreIgnoredByOtherCommands) {
  const std::string net = Divider("±10%", "±10%");
  KneeRun run = RunKnee("bias - --format csv", net);
  ASSERT_EQ(run.status, 0) << run.err;
  EXPECT_EQ(run.out, "out.v [V]\n5\n");
}

TEST(Spread, HistogramChartMarksTheBound) {
  const std::string chart = TempPath("spread.svg");
  KneeRun run = RunKnee("spread - --samples 200 --plot " + chart,
                        Divider("±1%", "±1%", "expect out.v <= 5.02\n"));
  EXPECT_EQ(run.status, 4) << run.err;
  const std::string svg = ReadWhole(chart);
  EXPECT_NE(svg.find("<svg"), std::string::npos);
  EXPECT_NE(svg.find("bound ≤ 5.02 V"), std::string::npos);
  std::remove(chart.c_str());
}

// --- bad vary lines: exit 2, with line and column ------------------------------------

void ExpectBadVary(const std::string& line, const std::string& where, const std::string& words) {
  const std::string net = "vsource V1 a -> gnd 5\nresistor R1 a -> gnd 1k\n" + line + "\n";
  for (const char* command : {"spread -", "bias -", "check -"}) {
    KneeRun run = RunKnee(command, net);
    EXPECT_EQ(run.status, 2) << line << " / " << command;
    EXPECT_NE(run.err.find("<stdin>:" + where + ": error:"), std::string::npos) << line << "\n"
                                                                                << run.err;
    EXPECT_NE(run.err.find(words), std::string::npos) << line << "\n" << run.err;
    EXPECT_EQ(run.out, "");
  }
}

TEST(SpreadBadInput, FactorBelowOne) { ExpectBadVary("vary R1 x0.5", "3:10", "below 1"); }
TEST(SpreadBadInput, NegativeTolerance) {
  ExpectBadVary("vary R1 ±-1%", "3:10", "negative tolerance");
  ExpectBadVary("vary V1 +--50m", "3:11", "negative tolerance");
}
TEST(SpreadBadInput, EachOnATargetThatIsNoPartKey) {
  ExpectBadVary("vary R1 ±1% each", "3:13", "not a part key");
}
TEST(SpreadBadInput, UnknownTarget) {
  ExpectBadVary("vary R2 ±1%", "3:6", "unknown vary target 'R2'");
  ExpectBadVary("vary X.sat_current x2", "3:6", "unknown part 'X'");
}
TEST(SpreadBadInput, MalformedSpreads) {
  ExpectBadVary("vary R1 1%", "3:9", "expected a spread");
  ExpectBadVary("vary R1 2k..1k", "3:9", "runs downward");
  ExpectBadVary("vary R1 ±5V", "3:11", "unit");
  ExpectBadVary("vary R1 ±200%", "3:9", "must be > 0");
  ExpectBadVary("vary R1 ±1% sometimes", "3:13", "expected 'uniform', 'normal' or 'each'");
  ExpectBadVary("vary R1 ±1% normal normal", "3:20", "given twice");
  ExpectBadVary("vary R1 ±1%\nvary R1 ±2%", "4:6", "twice");
}

TEST(SpreadBadInput, RangeWithoutTheNominalIsAllowedWithAWarning) {
  const std::string base = "vsource V1 a -> gnd 5\nresistor R1 a -> gnd 1k\n";
  KneeRun off = RunKnee("spread - --samples 10", base + "vary V1 20..28\n");
  EXPECT_EQ(off.status, 0) << off.err;
  EXPECT_NE(off.err.find("<stdin>:3:9: warning:"), std::string::npos) << off.err;
  EXPECT_NE(off.err.find("does not contain its nominal"), std::string::npos) << off.err;
  KneeRun on = RunKnee("spread - --samples 10", base + "vary V1 4..6\nvary R1 ±1%\n");
  EXPECT_EQ(on.status, 0) << on.err;
  EXPECT_EQ(on.err.find("warning"), std::string::npos) << on.err;
}

// --- bounds in bias and sweep --------------------------------------------------------

TEST(Bounds, SweepNamesTheFirstBreakAndTheWorstValue) {
  const std::string net = Divider("±1%", "±1%", "expect out.v <= 5.5\nexpect out.v >= -1\n");
  KneeRun run = RunKnee("sweep - V1=0..12:1", net);
  EXPECT_EQ(run.status, 4) << run.err;
  EXPECT_NE(run.out.find("MISSED expect out.v <= 5.5 V at 13 points: worst 6 V at V1 = 12 V"),
            std::string::npos)
      << run.out;
  EXPECT_NE(run.out.find("first at V1 = 12 V"), std::string::npos) << run.out;
  EXPECT_NE(run.out.find("met    expect out.v >= -1 V"), std::string::npos) << run.out;
  KneeRun ok = RunKnee("sweep - V1=0..11:1", net);
  EXPECT_EQ(ok.status, 0) << ok.out;
}

TEST(Bounds, BiasPointAndBoundsReadingQuantities) {
  const std::string net = Divider("±1%", "±1%", "expect out.v >= (in.v * 0.6)\n");
  KneeRun run = RunKnee("bias - --format json", net);
  EXPECT_EQ(run.status, 4) << run.err;
  const json j = json::parse(run.out);
  const auto& e = j["expectations"][0];
  EXPECT_EQ(e["relation"], ">=");
  EXPECT_EQ(e["bound"], "(in.v * 0.6)");
  EXPECT_DOUBLE_EQ(e["worst"]["bound"].get<double>(), 6);
  EXPECT_FALSE(e["met"].get<bool>());
  EXPECT_EQ(RunKnee("bias -", Divider("±1%", "±1%", "expect out.v >= (in.v * 0.4)\n")).status, 0);
}

TEST(Bounds, RunChecksBoundsOnTheSweepWithoutAnExtraBiasPoint) {
  const std::string net = Divider("±1%", "±1%", "sweep V1 0..4:1\nexpect out.v <= 3\n");
  KneeRun run = RunKnee("run - --format csv", net);
  EXPECT_EQ(run.status, 0) << run.err;
  EXPECT_EQ(run.out.find("\n\n"), std::string::npos) << run.out;  // one block: the sweep
}

TEST(Bounds, MalformedBounds) {
  const std::string base = "vsource V1 a -> gnd 5\nresistor R1 a -> gnd 1k\n";
  KneeRun within = RunKnee("check -", base + "expect a.v <= 5 within 1%\n");
  EXPECT_EQ(within.status, 2);
  EXPECT_NE(within.err.find("<stdin>:3:17: error: a bound"), std::string::npos) << within.err;
  KneeRun relation = RunKnee("check -", base + "expect a.v < 5\n");
  EXPECT_EQ(relation.status, 2);
  EXPECT_NE(relation.err.find("<stdin>:3:12: error: expected '=', '<=' or '>='"), std::string::npos)
      << relation.err;
  KneeRun unit = RunKnee("check -", base + "expect a.v <= 5mA\n");
  EXPECT_EQ(unit.status, 2) << unit.err;
}

// A rated part with breakdown_v has an unrated reverse-current line in bias and sweep
// reports; a spread judges only the three ratings (the unrated line used to index past
// the rating names and crash).
TEST(Spread, RatedBreakdownDiodeJudgesItsRatingsOnly) {
  const std::string net =
      "part z diode sat_current=2n ideality=1.6 breakdown_v=5.6 max_current=0.2 "
      "max_reverse_v=30 max_power=0.5\nvsource V1 in -> gnd 12\nresistor R1 in -> k 1k\n"
      "diode D1 gnd -> k z\nshow k.v\nvary R1 ±5%\n";
  KneeRun run = RunKnee("spread - --samples 50 --format csv", net);
  ASSERT_EQ(run.status, 0) << run.err;
  const Csv csv = ParseCsv(run.out);
  ASSERT_EQ(csv.rows.size(), 50u);
  for (const char* name :
       {"pass(D1.i/max_current)", "pass(D1.v/max_reverse_v)", "pass(D1.p/max_power)"}) {
    EXPECT_EQ(csv.rows[0][csv.Column(name)], 1) << name;
  }
  const auto judged = std::count_if(csv.header.begin(), csv.header.end(),
                                    [](const std::string& h) { return h.rfind("pass(", 0) == 0; });
  EXPECT_EQ(judged, 3);
}

// A bias sample starts from the nominal solution moved by its draws along each column's
// secant (docs/spread.md): on the bridge demo with its diodes and load varied, the mean
// Newton steps per sample stay near those of a nearby sweep point. From the nominal alone
// they are 5.0 here; the bound is loose, what it guards is the first-order start.
TEST(Spread, FirstOrderStartSavesNewtonSteps) {
  std::string text;
  {
    std::ifstream in(Netlist("bridge-rectifier.knee"));
    for (std::string line; std::getline(in, line);) {
      if (line.rfind("sweep", 0) != 0) text += line + "\n";
    }
  }
  text += "vary rect_1a.sat_current x2 each\nvary rect_1a.ideality ±3% each\nvary Rload ±5%\n";
  KneeRun run = RunKnee("spread - --samples 400 --format json", text);
  ASSERT_EQ(run.status, 0) << run.err;
  const json solver = json::parse(run.out)["solver"];
  const double mean = solver["newton_steps"].get<double>() / solver["points"].get<double>();
  EXPECT_EQ(solver["points"].get<int>(), 400);
  EXPECT_LT(mean, 4.0);
}

// A rated diode that is forward-biased in every sample is never reverse-biased: the spread
// says so for its reverse-voltage rating, as the bias report does, instead of a negative
// "worst reverse voltage"; the diode that does take reverse voltage gets its value.
TEST(Spread, RatingNeverTakenTheRatedWaySaysSo) {
  const std::string net =
      "part r diode sat_current=10n ideality=1.75 max_reverse_v=50\n"
      "vsource V1 in -> gnd 5\nresistor R1 in -> a 1k\ndiode Dfwd a -> gnd r\n"
      "diode Drev gnd -> in r\nshow a.v\nvary R1 ±5%\n";
  KneeRun table = RunKnee("spread - --samples 20", net);
  ASSERT_EQ(table.status, 0) << table.err;
  const auto line_after = [&](const std::string& name) {
    const size_t at = table.out.find(name);
    EXPECT_NE(at, std::string::npos) << name;
    const size_t begin = table.out.find('\n', at) + 1;
    return table.out.substr(begin, table.out.find('\n', begin) - begin);
  };
  EXPECT_NE(line_after("Dfwd.v/max_reverse_v").find("never reverse-biased in any sample"),
            std::string::npos);
  const std::string rev = line_after("Drev.v/max_reverse_v");
  EXPECT_EQ(rev.find("never"), std::string::npos) << rev;
  EXPECT_NE(rev.find("value 5 V"), std::string::npos) << rev;

  KneeRun run = RunKnee("spread - --samples 20 --format json", net);
  ASSERT_EQ(run.status, 0) << run.err;
  const json checks = json::parse(run.out)["checks"];
  ASSERT_EQ(checks.size(), 2u);
  EXPECT_EQ(checks[0]["name"], "Dfwd.v/max_reverse_v");
  EXPECT_EQ(checks[0]["worst"]["never"], "never reverse-biased");
  EXPECT_LT(checks[0]["worst"]["value"].get<double>(), 0);  // JSON keeps the signed value
  EXPECT_TRUE(checks[1]["worst"]["never"].is_null());
}

}  // namespace
}  // namespace knee::testing
