// knee fit from the command line, and part ... fit= in a netlist (issue 16, acceptance 4, 5, 6).
#include <fmt/format.h>
#include <gtest/gtest.h>

#include <cmath>
#include <fstream>
#include <nlohmann/json.hpp>
#include <string>

#include "run_knee.h"

namespace knee::testing {
namespace {

std::string WriteTemp(const std::string& stem, const std::string& text) {
  const std::string path = TempPath(stem);
  std::ofstream(path, std::ios::binary) << text;
  return path;
}

struct BadCase {
  const char* name;
  const char* csv;
  const char* options;
  const char* place;    // ":LINE:COLUMN: error:"
  const char* message;  // part of the message
};

class BadData : public ::testing::TestWithParam<BadCase> {};

// Acceptance 6: every case of bad data exits 2 with the file's line and column.
TEST_P(BadData, ExitsTwoWithLineAndColumn) {
  const BadCase& c = GetParam();
  const std::string path = WriteTemp(std::string(c.name) + ".csv", c.csv);
  const KneeRun run = RunKnee("fit " + path + " " + c.options);
  EXPECT_EQ(run.status, 2) << run.err;
  EXPECT_NE(run.err.find(path + c.place), std::string::npos) << run.err;
  EXPECT_NE(run.err.find(c.message), std::string::npos) << run.err;
  EXPECT_EQ(run.out, "");
  std::remove(path.c_str());
}

INSTANTIATE_TEST_SUITE_P(
    Acceptance6, BadData,
    ::testing::Values(
        BadCase{"non_numeric", "v,i\n0.60,1m\n0.70,abc\n0.80,100m\n", "",
                ":3:6: error:", "'abc' in column 'i' is not a number"},
        BadCase{"missing_column", "v\n0.6\n0.7\n", "",
                ":1:2: error:", "the header has no 'i' column"},
        BadCase{"zero_current", "v,i\n0.6,0\n0.7,10m\n0.8,100m\n", "",
                ":2:5: error:", "a forward point (v = 0.6 V > 0) needs a positive current"},
        BadCase{"negative_current", "v,i\n0.6,1m\n0.7,-10m\n0.8,100m\n", "",
                ":3:5: error:", "needs a positive current, not -0.01 A"},
        BadCase{"not_monotone", "v,i\n0.60,1m\n0.70,100m\n0.80,10m\n", "",
                ":4:6: error:", "the points are not monotone at 25 C"},
        BadCase{"too_few_points", "v,i\n0.60,1m\n0.70,10m\n",
                "--fit sat_current,ideality,series_res",
                ":3:1: error:", "2 points determine at most 2 keys, but 3 are asked for"},
        BadCase{"temperatures_equal", "v,i,temp\n0.60,1m,25\n0.70,10m,25\n0.80,100m,25\n",
                "--fit sat_current,ideality,bandgap", ":1:5: error:",
                "every point is at 25 C, but bandgap needs points at two or more temperatures"},
        BadCase{"short_row", "v,i,temp\n0.60,1m\n", "",
                ":2:8: error:", "the row has 2 cells but the header has 3 columns"},
        BadCase{"unit_of_column", "v [mA],i\n0.6,1m\n", "",
                ":1:1: error:", "unit 'mA' does not fit column 'v'"},
        BadCase{"reverse_sign", "v,i\n0.60,1m\n0.70,10m\n-5,1u\n", "",
                ":4:4: error:", "a reverse point (v = -5 V < 0) needs a negative current"},
        BadCase{"header_only", "v,i\n", "", ":1:1: error:", "the file has a header but no points"}),
    [](const ::testing::TestParamInfo<BadCase>& p) { return std::string(p.param.name); });

// The same files with the fault removed: no message at all.
TEST(FitCommand, GoodDataIsQuiet) {
  const std::string path = WriteTemp("good.csv", "v,i\n0.60,1m\n0.70,10m\n0.80,100m\n");
  const KneeRun run = RunKnee("fit " + path);
  EXPECT_EQ(run.status, 0) << run.err;
  EXPECT_EQ(run.err, "");
  EXPECT_EQ(run.out.rfind("part ", 0), 0u) << run.out;  // the part line comes first
  std::remove(path.c_str());
}

// The trade's rule (common practice, no source): at n = 1 and 25 C a doubling of the
// current takes Vt*ln 2 = 17.8 mV more. Points read at 10 uV resolution, 17.81 mV apart.
TEST(FitCommand, DoublingCurrentsAt17_8mVGiveIdealityOne) {
  // CODATA 2018 exact constants.
  const double vt = 1.380649e-23 * 298.15 / 1.602176634e-19;
  const double step = vt * std::log(2.0);
  EXPECT_NEAR(step * 1e3, 17.8, 0.05);  // the rule itself, to its three digits
  std::string csv = "v [mV],i [uA]\n";
  for (int k = 0; k < 8; ++k) {
    csv += fmt::format("{:.2f},{}\n", (0.55 + k * step) * 1e3, 1 << k);
  }
  const std::string path = WriteTemp("doubling.csv", csv);
  const KneeRun run = RunKnee("fit " + path + " --fit sat_current,ideality --format json");
  ASSERT_EQ(run.status, 0) << run.err;
  const auto j = nlohmann::json::parse(run.out);
  const double n = j["keys"]["ideality"]["value"];
  EXPECT_EQ(fmt::format("{:.3f}", n), "1.000") << n;
  std::remove(path.c_str());
}

TEST(FitCommand, JsonHasTheContractMembers) {
  const KneeRun run = RunKnee("fit " + Netlist("rx1a60-iv.csv") + " --format json");
  ASSERT_EQ(run.status, 0) << run.err;
  const auto j = nlohmann::json::parse(run.out);
  EXPECT_EQ(j["format"], "knee-fit/1");
  EXPECT_EQ(j["part"].get<std::string>().rfind("part rx1a60_iv diode ", 0), 0u);
  for (const char* member : {"value", "std_error", "low", "high"}) {
    EXPECT_TRUE(j["keys"]["ideality"].contains(member)) << member;
  }
  EXPECT_EQ(j["points"].size(), 12u);
  // Two temperatures determine one temperature key: sat_temp_exp is named and held.
  EXPECT_TRUE(j["undetermined"].contains("sat_temp_exp"));
  EXPECT_FALSE(j["keys"].contains("sat_temp_exp"));
}

// series_res from points all below 1 mA, read to 0.1 mV: not determined, named and held.
TEST(FitCommand, SeriesResistanceBelowOneMilliampereIsNamedAndHeld) {
  std::string csv = "v,i\n";
  const double vt = 1.380649e-23 * 298.15 / 1.602176634e-19;
  for (double i : {1e-6, 3e-6, 1e-5, 3e-5, 1e-4, 3e-4, 9e-4}) {
    const double v = 1.8 * vt * std::log1p(i / 2e-9) + i * 0.05;
    csv += fmt::format("{:.4f},{}\n", v, i);
  }
  const std::string path = WriteTemp("low.csv", csv);
  const KneeRun run = RunKnee("fit " + path);
  ASSERT_EQ(run.status, 0) << run.err;
  EXPECT_NE(run.out.find("not determined by these points: series_res"), std::string::npos)
      << run.out;
  EXPECT_EQ(run.out.find("series_res="), std::string::npos) << run.out;
  // Asked for by name, the same key is an error that names it.
  const KneeRun asked = RunKnee("fit " + path + " --fit sat_current,ideality,series_res");
  EXPECT_EQ(asked.status, 2);
  EXPECT_NE(asked.err.find("the points cannot determine series_res"), std::string::npos)
      << asked.err;
  std::remove(path.c_str());
}

TEST(FitCommand, ExactlyDeterminedIsSaidSo) {
  const std::string path = WriteTemp("two.csv", "v,i\n0.60,1m\n0.70,10m\n");
  const KneeRun run = RunKnee("fit " + path);
  ASSERT_EQ(run.status, 0) << run.err;
  EXPECT_NE(run.out.find("exactly determined"), std::string::npos) << run.out;
  const KneeRun json = RunKnee("fit " + path + " --format json");
  const auto j = nlohmann::json::parse(json.out);
  EXPECT_TRUE(j["exact"].get<bool>());
  // No scatter to measure: the uncertainty is that of the voltages' two decimals (+-5 mV,
  // uniform): se(n) = sqrt(2) * 5 mV / sqrt(3) / (Vt ln 10) by the two-point rule.
  EXPECT_EQ(j["uncertainty_from"], "written_digits");
  const double vt0 = 1.380649e-23 * 298.15 / 1.602176634e-19;
  EXPECT_NEAR(j["keys"]["ideality"]["std_error"].get<double>(),
              std::sqrt(2.0) * 5e-3 / std::sqrt(3.0) / (vt0 * std::log(10.0)), 2e-3);
  // Two points 100 mV apart over a decade: n = 0.1 / (Vt ln 10) (the two-point rule).
  const double vt = 1.380649e-23 * 298.15 / 1.602176634e-19;
  EXPECT_NEAR(j["keys"]["ideality"]["value"].get<double>(), 0.1 / (vt * std::log(10.0)), 1e-6);
  std::remove(path.c_str());
}

// One forward point and a held ideality fix sat_current: I = Is*(exp(V/(n*Vt)) - 1).
TEST(FitCommand, OnePointWithIdealityHeld) {
  const std::string path = WriteTemp("one.csv", "v,i\n0.65,10m\n");
  const KneeRun run = RunKnee("fit " + path + " --set ideality=1.5 --format json");
  ASSERT_EQ(run.status, 0) << run.err;
  const auto j = nlohmann::json::parse(run.out);
  const double vt = 1.380649e-23 * 298.15 / 1.602176634e-19;
  EXPECT_NEAR(
      j["keys"]["sat_current"]["value"].get<double>() / (10e-3 / std::expm1(0.65 / (1.5 * vt))),
      1.0, 1e-7);
  EXPECT_TRUE(j["exact"].get<bool>());
  std::remove(path.c_str());
}

std::string Circuit() {
  return "vsource V1 in -> gnd 5\n"
         "resistor R1 in -> a 4R7\n"
         "diode D1 a -> gnd rx1a60\n"
         "vsource V2 rev -> gnd -80\n"
         "resistor R2 rev -> b 10k\n"
         "diode D2 gnd -> b rx1a60\n"
         "temp 85\n";
}

// Acceptance 5: fit= gives the bias point of the printed part line pasted in.
TEST(FitCommand, FitInNetlistEqualsPastedPartLine) {
  const KneeRun fit = RunKnee("fit " + Netlist("rx1a60-iv.csv") + " --name rx1a60 --format json");
  ASSERT_EQ(fit.status, 0) << fit.err;
  const std::string line = nlohmann::json::parse(fit.out)["part"];
  const std::string pasted = WriteTemp("pasted.knee", line + "\n" + Circuit());
  const std::string fitted = WriteTemp(
      "fitted.knee", "part rx1a60 diode fit=\"" + Netlist("rx1a60-iv.csv") + "\"\n" + Circuit());
  const KneeRun a = RunKnee("bias " + pasted + " --format json");
  const KneeRun b = RunKnee("bias " + fitted + " --format json");
  ASSERT_EQ(a.status, 0) << a.err;
  ASSERT_EQ(b.status, 0) << b.err;
  const auto ja = nlohmann::json::parse(a.out), jb = nlohmann::json::parse(b.out);
  EXPECT_EQ(ja["rows"], jb["rows"]);
  EXPECT_FALSE(ja["rows"].empty());
  std::remove(pasted.c_str());
  std::remove(fitted.c_str());
}

TEST(FitCommand, WrittenKeysBesideFitAreHeld) {
  const std::string held =
      WriteTemp("held.knee", "part rx1a60 diode fit=\"" + Netlist("rx1a60-iv.csv") +
                                 "\" series_res=0.1\n" + Circuit());
  const KneeRun fit =
      RunKnee("fit " + Netlist("rx1a60-iv.csv") +
              " --name rx1a60 --set series_res=0.1 --set max_current=1.5 --format json");
  ASSERT_EQ(fit.status, 0) << fit.err;
  const std::string line = nlohmann::json::parse(fit.out)["part"];
  EXPECT_NE(line.find("series_res=0.1 "), std::string::npos) << line;
  EXPECT_NE(line.find(" max_current=1.5"), std::string::npos) << line;  // as written
  const std::string pasted = WriteTemp("pasted2.knee", line + "\n" + Circuit());
  const KneeRun a = RunKnee("bias " + pasted + " --format json");
  const KneeRun b = RunKnee("bias " + held + " --format json");
  ASSERT_EQ(b.status, 0) << b.err;
  EXPECT_EQ(nlohmann::json::parse(a.out)["rows"], nlohmann::json::parse(b.out)["rows"]);
  std::remove(held.c_str());
  std::remove(pasted.c_str());
}

TEST(FitCommand, BadDataInNetlistPointsAtTheFitAndTheDataFile) {
  const std::string csv = WriteTemp("bad.csv", "v,i\n0.60,1m\n0.70,x\n");
  const std::string dir = csv.substr(0, csv.rfind('/'));
  const std::string base = csv.substr(csv.rfind('/') + 1);
  const std::string net =
      WriteTemp("bad.knee", "part rx1a60 diode fit=\"" + base + "\"\n" + Circuit());
  const KneeRun run = RunKnee("check " + net);
  EXPECT_EQ(run.status, 2);
  EXPECT_NE(run.err.find(net + ":1:19: error: part 'rx1a60'"), std::string::npos) << run.err;
  EXPECT_NE(run.err.find(dir + "/" + base + ":3:6: 'x' in column 'i' is not a number"),
            std::string::npos)
      << run.err;
  const KneeRun missing = RunKnee("check " + WriteTemp("missing.knee",
                                                       "part rx1a60 diode "
                                                       "fit=\"no-such.csv\"\n" +
                                                           Circuit()));
  EXPECT_EQ(missing.status, 2);
  EXPECT_NE(missing.err.find("cannot read"), std::string::npos) << missing.err;
  std::remove(csv.c_str());
  std::remove(net.c_str());
}

TEST(FitCommand, FitSyntaxInNetlist) {
  for (const auto& [text, message] :
       {std::pair{"part P diode fit=data.csv\n", "expected a quoted file name after fit="},
        std::pair{"part P diode fit=\"a.csv\" fit=\"b.csv\"\n", "fit= is given twice"},
        std::pair{"part P diode fit=\"/dev/null\"\n", "it is not a regular file"}}) {
    const KneeRun run =
        RunKnee("check -", std::string(text) + "vsource V a -> gnd 1\n" + "diode D a -> gnd P\n");
    EXPECT_EQ(run.status, 2) << text;
    EXPECT_NE(run.err.find(message), std::string::npos) << run.err;
  }
}

TEST(FitCommand, StandardInputAndChart) {
  const std::string svg = TempPath("fit.svg");
  const KneeRun run = RunKnee("fit - --name D9 --plot " + svg, ReadWhole(Netlist("rx1a60-iv.csv")));
  ASSERT_EQ(run.status, 0) << run.err;
  EXPECT_EQ(run.out.rfind("part D9 diode ", 0), 0u);
  const std::string chart = ReadWhole(svg);
  EXPECT_NE(chart.find("forward: v against |i|"), std::string::npos);
  EXPECT_NE(chart.find("reverse: |v| against |i|"), std::string::npos);
  EXPECT_NE(chart.find("error of the model's current"), std::string::npos);
  EXPECT_NE(chart.find("class=\"curve\""), std::string::npos);
  std::size_t circles = 0;
  for (std::size_t at = chart.find("class=\"point\""); at != std::string::npos;
       at = chart.find("class=\"point\"", at + 1)) {
    ++circles;
  }
  EXPECT_EQ(circles, 12u);  // every point drawn
  std::remove(svg.c_str());
  const KneeRun bad_name = RunKnee("fit - --name 9x", ReadWhole(Netlist("rx1a60-iv.csv")));
  EXPECT_EQ(bad_name.status, 2);
  EXPECT_NE(bad_name.err.find("--name: '9x' is not a part name"), std::string::npos);
}

}  // namespace
}  // namespace knee::testing
