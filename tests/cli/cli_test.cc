// End-to-end checks of the knee command line: what a user types, what comes back.
#include <gtest/gtest.h>

#include <boost/math/special_functions/lambert_w.hpp>
#include <cmath>
#include <filesystem>
#include <fstream>
#include <nlohmann/json.hpp>

#include "run_knee.h"
#include "test_util.h"

namespace knee::testing {
namespace {

using nlohmann::json;

const char* kSingleDiode = R"(title "one diode"
part d1 diode sat_current=1e-14 ideality=1
vsource V1 a -> gnd 5
resistor R1 a -> k 1k
diode D1 k -> gnd d1
)";

// Thermal voltage at 25 degC from the CODATA 2018 exact values of k and q.
double ThermalVoltage25() { return 1.380649e-23 * 298.15 / 1.602176634e-19; }

// Current of a diode (Is, n, no series resistance) fed from V through R: the explicit
// solution with the Lambert W function (Banwell & Jayakumar, Electronics Letters 36(4),
// 2000), I = (n Vt / R) W((Is R / (n Vt)) exp((V + Is R) / (n Vt))) - Is.
double LambertCurrent(double v, double r, double is, double n_vt) {
  const double arg = (is * r / n_vt) * std::exp((v + is * r) / n_vt);
  return n_vt / r * boost::math::lambert_w0(arg) - is;
}

TEST(Cli, VersionAndHelpSucceed) {
  KneeRun v = RunKnee("--version");
  EXPECT_EQ(v.status, 0);
  EXPECT_NE(v.out.find("knee "), std::string::npos);
  EXPECT_EQ(RunKnee("--help").status, 0);
  EXPECT_EQ(RunKnee("bias --help").status, 0);
}

TEST(Cli, UsageErrorsExitTwo) {
  EXPECT_EQ(RunKnee("").status, 2);
  EXPECT_EQ(RunKnee("frobnicate x.knee").status, 2);
  EXPECT_EQ(RunKnee("bias").status, 2);
  EXPECT_EQ(RunKnee("bias - --format xml", kSingleDiode).status, 2);
  KneeRun derate = RunKnee("bias - --derate 0", kSingleDiode);
  EXPECT_EQ(derate.status, 2);
  EXPECT_NE(derate.err.find("--derate"), std::string::npos);
  KneeRun tol = RunKnee("bias - --rel-tol -1", kSingleDiode);
  EXPECT_EQ(tol.status, 2);
  EXPECT_NE(tol.err.find("rel_tol"), std::string::npos) << tol.err;
  KneeRun missing = RunKnee("bias /nonexistent/none.knee");
  EXPECT_EQ(missing.status, 2);
  EXPECT_NE(missing.err.find("cannot read '/nonexistent/none.knee'"), std::string::npos);
}

TEST(Cli, CheckAcceptsEveryDemo) {
  for (const auto& entry : std::filesystem::directory_iterator(SourcePath("netlists"))) {
    if (entry.path().extension() != ".knee") continue;
    KneeRun run = RunKnee("check " + entry.path().string());
    EXPECT_EQ(run.status, 0) << entry.path() << "\n" << run.err;
    EXPECT_NE(run.out.find(": ok: "), std::string::npos) << run.out;
  }
}

// The report names the solver as it ran: --no-limiting turns junction limiting off.
TEST(Cli, SolverNameSaysWhetherJunctionLimitingRan) {
  KneeRun on = RunKnee("bias - --method classic --format json", kSingleDiode);
  ASSERT_EQ(on.status, 0) << on.err;
  EXPECT_EQ(json::parse(on.out)["solver"]["method"], "Newton-Raphson with junction limiting");
  KneeRun off = RunKnee("bias - --method classic --no-limiting --format json", kSingleDiode);
  ASSERT_EQ(off.status, 0) << off.err;
  EXPECT_EQ(json::parse(off.out)["solver"]["method"], "Newton-Raphson without junction limiting");
}

// A current source into a node whose only other way is a reverse diode without breakdown
// has no DC solution (the diode carries at most its saturation current): by default knee
// says so and why, before any Newton step, with exit status 1, whichever method is asked.
TEST(Cli, NoSolutionIsFoundAndExplained) {
  const char* pushed = R"(title "pushed"
part Pd diode sat_current=1e-14
isource Ipush gnd -> k 1m
diode Dblock gnd -> k Pd
)";
  for (const char* method : {"", " --method classic", " --method potential"}) {
    KneeRun run = RunKnee(std::string("bias -") + method, pushed);
    EXPECT_EQ(run.status, 1) << method << "\n" << run.err;
    EXPECT_NE(run.err.find("knee: no solution: current source 'Ipush' pushes a "
                           "net 0.001 A into node 'k'"),
              std::string::npos)
        << method << "\n"
        << run.err;
    EXPECT_NE(run.err.find("'Dblock'"), std::string::npos) << run.err;
    EXPECT_NE(run.out.find("0 Newton steps"), std::string::npos) << run.out;
    EXPECT_NE(run.out.find("no solution to check"), std::string::npos) << run.out;
    EXPECT_EQ(run.out.find("unique"), std::string::npos) << run.out;
  }
  KneeRun json_run = RunKnee("bias - --format json", pushed);
  EXPECT_EQ(json_run.status, 1);
  EXPECT_FALSE(json::parse(json_run.out)["solver"]["unique"].get<bool>());
}

TEST(Cli, BiasJsonAgreesWithLambertW) {
  KneeRun run = RunKnee("bias - --format json --show D1.i,k.v", kSingleDiode);
  ASSERT_EQ(run.status, 0) << run.err;
  json j = json::parse(run.out);
  EXPECT_EQ(j["format"], "knee-result/1");
  EXPECT_EQ(j["title"], "one diode");
  EXPECT_EQ(j["analysis"], "bias");
  const double expected = LambertCurrent(5.0, 1e3, 1e-14, ThermalVoltage25());
  // Banwell & Jayakumar 2000 closed form, Boost.Math lambert_w0.
  EXPECT_CLOSE(j["rows"][0][0].get<double>(), expected, 1e-9, 0);
  EXPECT_CLOSE(j["rows"][0][1].get<double>(), 5.0 - 1e3 * expected, 1e-9, 0);
  EXPECT_LT(j["solver"]["max_kcl_residual_a"].get<double>(), 1e-12);
  EXPECT_GE(j["solver"]["newton_steps"].get<int>(), 1);
}

TEST(Cli, ReverseDiodeCarriesMinusIsWithoutLeftoverShunt) {
  KneeRun run = RunKnee("bias - --format json --show D1.i",
                        "part d1 diode sat_current=2e-12 ideality=1.3\nvsource V1 a -> gnd -5\n"
                        "diode D1 a -> gnd d1 area=3\n");
  ASSERT_EQ(run.status, 0) << run.err;
  // I = area * Is * (exp(-5 / (n Vt)) - 1) = -area * Is to far better than 1e-6.
  EXPECT_CLOSE(json::parse(run.out)["rows"][0][0].get<double>(), -6e-12, 1e-6, 0);
}

TEST(Cli, TableHasHeaderNumbersAndSolverFooter) {
  KneeRun run = RunKnee("bias " + Netlist("input-clamp.knee"));
  ASSERT_EQ(run.status, 0) << run.err;
  EXPECT_EQ(run.out.substr(0, run.out.find('\n')), "\"logic pin clamp\": bias point at 25 °C");
  EXPECT_NE(run.out.find("pin.v"), std::string::npos);
  EXPECT_NE(run.out.find(" V\n"), std::string::npos);
  EXPECT_NE(run.out.find("\nsolver: Newton-Raphson"), std::string::npos);
  EXPECT_NE(run.out.find("largest KCL residual"), std::string::npos);
}

TEST(Cli, CsvIsOnlyTheHeaderAndTheRows) {
  KneeRun run = RunKnee("bias - --format csv --show k.v,D1.i,D1.p,D1.rd", kSingleDiode);
  ASSERT_EQ(run.status, 0) << run.err;
  EXPECT_EQ(run.out.substr(0, run.out.find('\n')), "k.v [V],D1.i [A],D1.p [W],D1.rd [Ohm]");
  EXPECT_EQ(std::count(run.out.begin(), run.out.end(), '\n'), 2);
  EXPECT_TRUE(run.err.empty()) << run.err;
}

TEST(Cli, OutWritesTheFileWholeAndRefusesAnUnwritablePath) {
  const std::string path = TempPath("report.json");
  KneeRun run = RunKnee("bias - --format json --out " + path, kSingleDiode);
  ASSERT_EQ(run.status, 0) << run.err;
  EXPECT_TRUE(run.out.empty());
  EXPECT_EQ(json::parse(ReadWhole(path))["format"], "knee-result/1");
  std::filesystem::remove(path);

  KneeRun bad = RunKnee("bias - --out /nonexistent-folder/r.csv", kSingleDiode);
  EXPECT_EQ(bad.status, 2);
  EXPECT_NE(bad.err.find("--out"), std::string::npos);
  EXPECT_FALSE(std::filesystem::exists("/nonexistent-folder/r.csv"));
}

TEST(Cli, NetlistErrorExitsTwoWithFileLineColumn) {
  KneeRun run = RunKnee("bias -", "vsource V1 a -> gnd 5\nresistr R1 a -> gnd 1k\n");
  EXPECT_EQ(run.status, 2);
  EXPECT_NE(run.err.find("<stdin>:2:1:"), std::string::npos) << run.err;
  EXPECT_TRUE(run.out.empty());
}

// `knee bias` drops a file's text once parsed and reads it again for the elaboration's
// diagnostics (pipeline.h, SourceKept): its errors and warnings quote the same lines as
// those of `knee check`, which keeps the text.
TEST(Cli, BiasQuotesTheLinesOfElaborationDiagnosticsOfAFile) {
  const std::string path = TempPath("quoted.knee");
  {
    std::ofstream(path) << "part P diode\nvsource V1 a -> gnd 1\nresistor R1 a -> b 1kV\n"
                           "diode D1 b -> gnd Q\n";
  }
  KneeRun bias = RunKnee("bias " + path);
  KneeRun check = RunKnee("check " + path);
  EXPECT_EQ(bias.status, 2);
  EXPECT_EQ(bias.err, check.err);
  EXPECT_NE(bias.err.find("    3 | resistor R1 a -> b 1kV\n"), std::string::npos) << bias.err;
  EXPECT_NE(bias.err.find("    4 | diode D1 b -> gnd Q\n"), std::string::npos) << bias.err;
  // A warning (a node touched by one element) of a circuit that solves.
  {
    std::ofstream(path) << "vsource V1 a -> gnd 1\nresistor R1 a -> gnd 1k\n"
                           "resistor R2 a -> stub 1k\n";
  }
  bias = RunKnee("bias " + path);
  check = RunKnee("check " + path);
  EXPECT_EQ(bias.status, 0);
  EXPECT_EQ(bias.err, check.err);
  EXPECT_NE(bias.err.find("    3 | resistor R2 a -> stub 1k\n"), std::string::npos) << bias.err;
  std::remove(path.c_str());
}

TEST(Cli, FloatingNodeExitsTwoNamingTheElements) {
  KneeRun run = RunKnee("bias -",
                        "vsource V1 a -> gnd 5\nresistor R1 a -> gnd 1k\n"
                        "resistor R2 x -> y 1k\n");
  EXPECT_EQ(run.status, 2);
  EXPECT_NE(run.err.find("R2"), std::string::npos) << run.err;
}

TEST(Cli, ExpectationsMetAndMissed) {
  const double i = LambertCurrent(5.0, 1e3, 1e-14, ThermalVoltage25());
  const std::string base = kSingleDiode;
  KneeRun met = RunKnee("run - --format json",
                        base + "expect D1.i = " + std::to_string(i * 1.01) + " within 2%\n");
  ASSERT_EQ(met.status, 0) << met.err;
  EXPECT_TRUE(json::parse(met.out)["expectations"][0]["met"].get<bool>());

  KneeRun missed = RunKnee("run -", base + "expect k.v = 0.7 within 10m\n");
  EXPECT_EQ(missed.status, 4) << missed.err;
  EXPECT_NE(missed.out.find("MISSED"), std::string::npos);
  EXPECT_NE(missed.out.find("k.v"), std::string::npos);
}

TEST(Cli, StressExceededExitsThreeAndFailureDominates) {
  const std::string rated = R"(part d1 diode sat_current=1e-14 max_current=1m
vsource V1 a -> gnd 5
resistor R1 a -> k 1k
diode D1 k -> gnd d1
)";
  KneeRun over = RunKnee("bias -", rated);
  EXPECT_EQ(over.status, 3) << over.err;
  EXPECT_NE(over.out.find("EXCEEDED"), std::string::npos);
  KneeRun derated_ok = RunKnee("bias - --set V1=1.2", rated);
  EXPECT_EQ(derated_ok.status, 0) << derated_ok.err;
  // With one Newton step allowed and no aids, points fail: status 1 wins over 3.
  KneeRun failing = RunKnee("sweep - V1=0..5:1 --max-steps 1 --aids none --quiet", rated);
  EXPECT_EQ(failing.status, 1) << failing.out << failing.err;
}

TEST(Cli, CautionAboveSixtyVoltsOnly) {
  // 60 V DC: upper limit of extra-low voltage (IEC 61140 / IEC 61201 bands).
  const std::string net = "vsource V1 a -> gnd 1\nresistor R1 a -> gnd 1k\n";
  KneeRun low = RunKnee("sweep - V1=0..59:1", net);
  ASSERT_EQ(low.status, 0) << low.err;
  EXPECT_EQ(low.out.find("CAUTION"), std::string::npos);
  KneeRun high = RunKnee("sweep - V1=0..61:1", net);
  ASSERT_EQ(high.status, 0) << high.err;
  EXPECT_NE(high.out.find("CAUTION"), std::string::npos);
  EXPECT_NE(high.out.find("local codes and licensed practice"), std::string::npos);
}

TEST(Cli, SweepOutputDoesNotDependOnJobsOrShards) {
  const std::string file = Netlist("bridge-rectifier.knee");
  KneeRun one = RunKnee("sweep " + file + " Vin=-20..20:0.01 --format csv --jobs 1");
  ASSERT_EQ(one.status, 0) << one.err;
  KneeRun two = RunKnee("sweep " + file + " Vin=-20..20:0.01 --format csv --jobs 2");
  ASSERT_EQ(two.status, 0) << two.err;
  EXPECT_EQ(one.out, two.out);
  EXPECT_EQ(std::count(one.out.begin(), one.out.end(), '\n'), 4002);
  std::string joined;
  for (int k = 1; k <= 4; ++k) {
    KneeRun shard = RunKnee("sweep " + file + " Vin=-20..20:0.01 --format csv --shard " +
                            std::to_string(k) + "/4");
    ASSERT_EQ(shard.status, 0) << shard.err;
    joined += shard.out;
  }
  EXPECT_EQ(joined, one.out);
}

TEST(Cli, NestedSweepSharding) {
  const std::string file = Netlist("reference-regulator.knee");
  KneeRun whole = RunKnee("sweep " + file + " Vraw=9..15:0.5 temp=-40,0,25,85 --format csv");
  ASSERT_EQ(whole.status, 0) << whole.err;
  std::string joined;
  for (int k = 1; k <= 3; ++k) {
    joined += RunKnee("sweep " + file + " Vraw=9..15:0.5 temp=-40,0,25,85 --format csv --shard " +
                      std::to_string(k) + "/3")
                  .out;
  }
  EXPECT_EQ(joined, whole.out);
}

TEST(Cli, PlotIsWellFormedSvgWithOnePathPerTrace) {
  const std::string path = TempPath("chart.svg");
  KneeRun run = RunKnee("sweep " + Netlist("reference-regulator.knee") +
                        " Vraw=9..15:0.5 temp=-40,25,85 --show ref.v,Dref.i --plot " + path);
  ASSERT_EQ(run.status, 0) << run.err;
  const std::string svg = ReadWhole(path);
  size_t paths = 0;
  for (size_t at = svg.find("<path class=\"trace\""); at != std::string::npos;
       at = svg.find("<path class=\"trace\"", at + 1)) {
    ++paths;
  }
  EXPECT_EQ(paths, 6u);  // 2 quantities x 3 temperatures
  if (std::filesystem::exists("/usr/bin/python3")) {
    const std::string check =
        "/usr/bin/python3 -c \"import sys, xml.dom.minidom; "
        "xml.dom.minidom.parse(sys.argv[1])\" " +
        path;
    EXPECT_EQ(std::system(check.c_str()), 0) << "SVG does not parse as XML";
  }
  std::filesystem::remove(path);
}

}  // namespace
}  // namespace knee::testing

namespace knee::testing {
namespace {

TEST(Cli, OutToADeviceWritesThroughItAndKeepsTheDevice) {
  KneeRun run = RunKnee("bias - --out /dev/null", kSingleDiode);
  EXPECT_EQ(run.status, 0) << run.err;
  EXPECT_TRUE(std::filesystem::is_character_file("/dev/null"));
}

TEST(Cli, OutThroughASymlinkReplacesTheTargetNotTheLink) {
  const std::string target = TempPath("target.csv");
  const std::string link = TempPath("link.csv");
  { std::ofstream(target) << "old\n"; }
  std::filesystem::create_symlink(target, link);
  KneeRun run = RunKnee("bias - --format csv --out " + link, kSingleDiode);
  EXPECT_EQ(run.status, 0) << run.err;
  EXPECT_TRUE(std::filesystem::is_symlink(link));
  EXPECT_NE(ReadWhole(target).find("[A]"), std::string::npos);
  std::filesystem::remove(link);
  std::filesystem::remove(target);
}

}  // namespace
}  // namespace knee::testing

namespace knee::testing {
namespace {

// The README's sweep example, as written there (chart to a temporary path).
TEST(Cli, ReadmeSweepExampleRuns) {
  const std::string readme = ReadWhole(SourcePath("README.md"));
  const std::string command =
      "sweep netlists/input-clamp.knee Vfield=-24..24:0.25 \\\n"
      "    --show pin.v,Dhi.i,Dlo.i --plot docs/input-clamp-sweep.svg";
  ASSERT_NE(readme.find(command), std::string::npos) << "README example changed";
  const std::string chart = TempPath("readme.svg");
  KneeRun run = RunKnee("sweep " + Netlist("input-clamp.knee") +
                        " Vfield=-24..24:0.25 --show pin.v,Dhi.i,Dlo.i --plot " + chart);
  EXPECT_EQ(run.status, 0) << run.err;
  EXPECT_NE(ReadWhole(chart).find("<svg"), std::string::npos);
  EXPECT_TRUE(std::filesystem::exists(SourcePath("docs/input-clamp-sweep.svg")));
  std::filesystem::remove(chart);
}

}  // namespace
}  // namespace knee::testing

namespace knee::testing {
namespace {

// A point whose junction voltages are lost in the rounding of huge node voltages is never
// reported as a solution, whatever its KCL residual (regression: torture seed 8174).
TEST(Cli, UnresolvedJunctionsAreNeverASolution) {
  KneeRun run = RunKnee("bias " + SourcePath("tests/cli/regression/unresolved-junction.knee") +
                        " --format json --quiet");
  if (run.status == 0) {
    const auto j = nlohmann::json::parse(run.out);
    for (const auto& v : j["rows"][0]) {
      ASSERT_TRUE(v.is_number());
      EXPECT_LT(std::fabs(v.get<double>()), 1e6) << "absurd value reported as a solution";
    }
  } else {
    EXPECT_EQ(run.status, 1) << run.err;
    EXPECT_FALSE(nlohmann::json::parse(run.out)["failures"].empty());
  }
}

}  // namespace
}  // namespace knee::testing
