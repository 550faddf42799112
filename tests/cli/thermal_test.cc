// Self-heating end to end (docs/thermal.md, issue 18): bad input, --isothermal, the
// max_junction_temp stress check both ways, sweeps over the ambient with warm starts, and
// the default report. The numbers themselves are checked against SciPy in
// tests/reference/thermal_scipy_check.py.
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "run_knee.h"

namespace knee::testing {
namespace {

using nlohmann::json;

bool Has(const std::string& text, const std::string& part) {
  return text.find(part) != std::string::npos;
}

// A rectifier part at a forced 1 A; `keys` are appended to the part line.
std::string Forced(const std::string& keys, const std::string& diode_options = "") {
  return "part rect diode sat_current=10n ideality=1.75 series_res=0.05 " + keys +
         "\nisource I1 gnd -> a 1\ndiode D1 a -> gnd rect " + diode_options + "\n";
}

struct BadInput {
  const char* name;
  std::string text;
  const char* place;    // "<stdin>:LINE:COLUMN: error"
  const char* message;  // a piece of the message
};

TEST(Thermal, BadInputIsExitTwoWithLineAndColumn) {
  const std::vector<BadInput> cases = {
      {"negative thermal_res", Forced("thermal_res=-5"), "<stdin>:1:", "must be >= 0"},
      {"negative heatsink thermal_res", Forced("") + "heatsink HS thermal_res=-1\n", "<stdin>:4:25",
       "must be >= 0"},
      {"heatsink without thermal_res", Forced("") + "heatsink HS\n",
       "<stdin>:4:", "needs thermal_res"},
      {"unknown sink", "heatsink HS1 thermal_res=4\n" + Forced("thermal_res=10", "sink=HS2"),
       "<stdin>:4:29", "unknown heatsink 'HS2'"},
      {"sink names a part", Forced("thermal_res=10", "sink=rect"), "<stdin>:3:29",
       "not a heatsink"},
      {"temp= with sink=",
       "heatsink HS thermal_res=4\n" + Forced("thermal_res=10", "temp=50 sink=HS"),
       "<stdin>:4:", "both temp= and sink="},
      {"sink given twice", "heatsink HS thermal_res=4\n" + Forced("", "sink=HS sink=HS"),
       "<stdin>:4:", "given twice"},
      {"heatsink name taken", Forced("") + "heatsink D1 thermal_res=4\n", "<stdin>:4:10",
       "already the name"},
      {"tj of a resistor", Forced("") + "resistor R1 a -> gnd 1k\nshow R1.tj\n", "<stdin>:5:6",
       ".tj exist for diodes only"},
      {"field of a heatsink", Forced("") + "heatsink HS thermal_res=1\nshow HS.v\n", "<stdin>:5:6",
       "a heatsink has only .t"},
  };
  for (const BadInput& c : cases) {
    KneeRun run = RunKnee("bias -", c.text);
    EXPECT_EQ(run.status, 2) << c.name << "\n" << run.err;
    EXPECT_TRUE(Has(run.err, c.place)) << c.name << "\n" << run.err;
    EXPECT_TRUE(Has(run.err, c.message)) << c.name << "\n" << run.err;
    EXPECT_TRUE(run.out.empty()) << c.name;
  }
  // The suggestion of the nearest heatsink name.
  KneeRun run = RunKnee("bias -", "heatsink HS1 thermal_res=4\n" + Forced("", "sink=HS2"));
  EXPECT_TRUE(Has(run.err, "did you mean 'HS1'?")) << run.err;
  // 0 K/W is allowed: the junction is at its sink's (here the ambient's) temperature.
  run = RunKnee("bias - --format json --show D1.tj", Forced("thermal_res=0"));
  ASSERT_EQ(run.status, 0) << run.err;
  EXPECT_EQ(json::parse(run.out)["rows"][0][0].get<double>(), 25.0);
}

double Tj(const KneeRun& run) { return json::parse(run.out)["rows"][0][0].get<double>(); }

TEST(Thermal, IsothermalIgnoresSelfHeating) {
  const std::string heated = Forced("thermal_res=60");
  KneeRun hot = RunKnee("bias - --format json --show D1.tj,a.v", heated);
  KneeRun iso = RunKnee("bias - --format json --show D1.tj,a.v --isothermal", heated);
  KneeRun plain = RunKnee("bias - --format json --show D1.tj,a.v", Forced(""));
  ASSERT_EQ(hot.status, 0) << hot.err;
  ASSERT_EQ(iso.status, 0) << iso.err;
  ASSERT_EQ(plain.status, 0) << plain.err;
  // 1 A at about 0.82 V through 60 K/W: about 49 K above the ambient.
  EXPECT_GT(Tj(hot), 70.0);
  EXPECT_EQ(Tj(iso), 25.0);
  // --isothermal is the circuit without thermal_res, number for number.
  EXPECT_EQ(json::parse(iso.out)["rows"], json::parse(plain.out)["rows"]);
  EXPECT_TRUE(json::parse(hot.out)["solver"].contains("max_thermal_residual_k"));
  EXPECT_FALSE(json::parse(plain.out)["solver"].contains("max_thermal_residual_k"));
}

// Acceptance 4: a demo sweep without self-heating is byte for byte the same with
// --isothermal.
TEST(Thermal, DemoSweepIdenticalWithIsothermal) {
  for (const char* demo : {"temp-sensor.knee", "bridge-rectifier.knee"}) {
    KneeRun a = RunKnee("run " + Netlist(demo) + " --format csv --jobs 1");
    KneeRun b = RunKnee("run " + Netlist(demo) + " --format csv --jobs 1 --isothermal");
    EXPECT_EQ(a.status, b.status) << demo;
    EXPECT_FALSE(a.out.empty()) << demo << a.err;
    EXPECT_EQ(a.out, b.out) << demo;
  }
}

TEST(Thermal, MaxJunctionTempFiresAndStaysSilent) {
  // About 74 C at 25 C ambient: over a 70 C rating, within a 150 C one.
  KneeRun over = RunKnee("bias -", Forced("thermal_res=60 max_junction_temp=70"));
  EXPECT_EQ(over.status, 3) << over.err;
  EXPECT_TRUE(Has(over.out, "EXCEEDED D1  junction temperature")) << over.out;
  KneeRun within = RunKnee("bias -", Forced("thermal_res=60 max_junction_temp=150"));
  EXPECT_EQ(within.status, 0) << within.err;
  EXPECT_TRUE(Has(within.out, "ok       D1  junction temperature")) << within.out;
  // Judged on the junction temperature, not the ambient: isothermal it passes.
  KneeRun iso = RunKnee("bias - --isothermal", Forced("thermal_res=60 max_junction_temp=70"));
  EXPECT_EQ(iso.status, 0) << iso.err;
}

TEST(Thermal, DefaultReportShowsEachHeatedDiodeAndSink) {
  KneeRun run = RunKnee("bias - --format json", "heatsink HS thermal_res=3\n" +
                                                    Forced("thermal_res=20", "sink=HS") +
                                                    "diode D2 a -> gnd rect temp=30\n");
  ASSERT_EQ(run.status, 0) << run.err;
  std::vector<std::string> names;
  const json doc = json::parse(run.out);
  for (const json& c : doc["columns"]) names.push_back(c["name"].get<std::string>());
  auto has = [&](const char* n) { return std::find(names.begin(), names.end(), n) != names.end(); };
  EXPECT_TRUE(has("D1.tj"));
  EXPECT_TRUE(has("D1.p"));
  EXPECT_TRUE(has("HS.t"));
  EXPECT_FALSE(has("D2.tj"));  // its temp= holds it: not heated
  // Without self-heating the default report keeps its columns.
  run = RunKnee("bias - --format json", Forced(""));
  const json plain = json::parse(run.out);
  for (const json& c : plain["columns"]) {
    EXPECT_FALSE(Has(c["name"].get<std::string>(), ".tj")) << c["name"];
  }
}

// A sweep over the ambient, warm-started point to point, gives each point's own bias
// answer.
TEST(Thermal, AmbientSweepMatchesBiasPoints) {
  const std::string net = Forced("thermal_res=60");
  KneeRun sweep = RunKnee("sweep - temp=-40..85:25 --format json --show D1.tj --jobs 1", net);
  ASSERT_EQ(sweep.status, 0) << sweep.err;
  const json rows = json::parse(sweep.out)["rows"];
  ASSERT_EQ(rows.size(), 6u);
  double previous = -1e9;
  for (const json& row : rows) {
    const double ambient = row[0].get<double>();
    const double tj = row[1].get<double>();
    KneeRun bias = RunKnee("bias - --format json --show D1.tj --temp " + row[0].dump(), net);
    ASSERT_EQ(bias.status, 0) << bias.err;
    EXPECT_NEAR(tj, Tj(bias), 1e-9 * (tj + 273.15)) << ambient;
    EXPECT_GT(tj, ambient + 40.0) << ambient;
    EXPECT_GT(tj, previous);
    previous = tj;
  }
}

TEST(Thermal, RunawayIsExitOne) {
  // An invented leaky part reverse-biased by 40 V (tests/reference/thermal_scipy_check.py
  // finds its critical thermal_res near 99.8 K/W).
  const std::string part =
      "part leaky diode sat_current=1m ideality=1.05 bandgap=0.69 thermal_res=";
  const std::string rest = "\nvsource V1 k -> gnd 40\ndiode D1 gnd -> k leaky\n";
  KneeRun hot = RunKnee("bias -", part + "150" + rest);
  EXPECT_EQ(hot.status, 1) << hot.out << hot.err;
  EXPECT_TRUE(Has(hot.err, "thermal runaway: D1 loses its thermal balance at Tj = ")) << hot.err;
  EXPECT_TRUE(Has(hot.err, "critical thermal_res is 99.8")) << hot.err;
  KneeRun fine = RunKnee("bias -", part + "50" + rest);
  EXPECT_EQ(fine.status, 0) << fine.err;
  EXPECT_FALSE(Has(fine.err + fine.out, "runaway"));
}

// A reverse-biased diode heated by its own leakage, below its critical thermal_res
// (99.8 K/W, tests/reference/thermal_scipy_check.py).
constexpr const char* kLeakyAt80 =
    "part leaky diode sat_current=1m ideality=1.05 bandgap=0.69 thermal_res=80\n"
    "vsource V1 k -> gnd 40\ndiode D1 gnd -> k leaky\n";

TEST(Thermal, AnotherBalanceIsNotedWhereItExistsOnly) {
  // Leakage heating below the critical value: a stable balance near 30 C and an unstable
  // one above the fold (36.2 C, tests/reference/thermal_scipy_check.py).
  KneeRun leaky = RunKnee("bias - --format json", kLeakyAt80);
  ASSERT_EQ(leaky.status, 0) << leaky.err;
  const json notes = json::parse(leaky.out)["solver"]["thermal_notes"];
  ASSERT_EQ(notes.size(), 1u) << leaky.out;
  EXPECT_TRUE(Has(notes[0].get<std::string>(), "D1 has another thermal balance near Tj = "));
  // A rectifier at a forced current: its drop falls with temperature, one balance only.
  KneeRun forced = RunKnee("bias - --format json", Forced("thermal_res=60"));
  ASSERT_EQ(forced.status, 0) << forced.err;
  EXPECT_TRUE(json::parse(forced.out)["solver"]["thermal_notes"].empty()) << forced.out;
  KneeRun table = RunKnee("bias -", Forced("thermal_res=60"));
  EXPECT_FALSE(Has(table.out, "another thermal balance")) << table.out;
}

// A sweep of PART.thermal_res reaches the thermal balance at every point: the junction
// warms with the thermal resistance, and beyond the critical value (99.8 K/W,
// tests/reference/thermal_scipy_check.py) the points are thermal runaway.
TEST(Thermal, ThermalResSweepTakesEachValue) {
  KneeRun run = RunKnee("sweep - leaky.thermal_res=50..130:20 --format json --show D1.tj --jobs 1",
                        kLeakyAt80);
  EXPECT_EQ(run.status, 1) << run.err;
  const json doc = json::parse(run.out);
  const json& rows = doc["rows"];
  ASSERT_EQ(rows.size(), 5u);
  double previous = 25.0;
  for (size_t i = 0; i < 3; ++i) {
    const double tj = rows[i][1].get<double>();
    EXPECT_GT(tj, previous) << i;
    previous = tj;
  }
  EXPECT_TRUE(rows[3][1].is_null());
  EXPECT_TRUE(rows[4][1].is_null());
  EXPECT_TRUE(Has(run.err, "the circuit has 130 K/W")) << run.err;
}

TEST(Thermal, UnusedHeatsinkWarnsAndAUsedOneDoesNot) {
  KneeRun unused = RunKnee("bias -", Forced("thermal_res=5") + "heatsink HS thermal_res=2\n");
  EXPECT_EQ(unused.status, 0) << unused.err;
  EXPECT_TRUE(Has(unused.err, "<stdin>:4:10: warning: heatsink 'HS' has no diode mounted on it"))
      << unused.err;
  KneeRun used =
      RunKnee("bias -", "heatsink HS thermal_res=2\n" + Forced("thermal_res=5", "sink=HS"));
  EXPECT_EQ(used.status, 0) << used.err;
  EXPECT_FALSE(Has(used.err, "warning")) << used.err;
  KneeRun demo = RunKnee("bias " + Netlist("bridge-module-heat.knee"));
  EXPECT_FALSE(Has(demo.err, "warning")) << demo.err;
}

// A heatsink's thermal_res is not a sweep, --set or vary target: each is refused with a
// message that says so (exit 2), not as an unknown part.
TEST(Thermal, HeatsinkValueIsNoTargetAndSaysSo) {
  const std::string net = "heatsink HS thermal_res=2\n" + Forced("thermal_res=5", "sink=HS");
  KneeRun sweep = RunKnee("sweep - HS.thermal_res=1..3:1", net);
  EXPECT_EQ(sweep.status, 2);
  EXPECT_TRUE(Has(sweep.err, "'HS' is a heatsink")) << sweep.err;
  KneeRun set = RunKnee("bias - --set HS.thermal_res=3", net);
  EXPECT_EQ(set.status, 2);
  EXPECT_TRUE(Has(set.err, "'HS' is a heatsink")) << set.err;
  KneeRun vary = RunKnee("bias -", net + "vary HS.thermal_res 1..3\n");
  EXPECT_EQ(vary.status, 2);
  EXPECT_TRUE(Has(vary.err, "<stdin>:5:6: error: 'HS' is a heatsink")) << vary.err;
  // A part's thermal_res is one.
  KneeRun part = RunKnee("sweep - rect.thermal_res=1..3:1 --format csv", net);
  EXPECT_EQ(part.status, 0) << part.err;
}

}  // namespace
}  // namespace knee::testing
