// knee hand and --expect end to end: the report, the exit statuses, the messages.
#include <gtest/gtest.h>

#include <nlohmann/json.hpp>
#include <string>

#include "run_knee.h"
#include "test_util.h"

namespace knee::testing {
namespace {

// Column `name` of the row of `model` in the JSON rows.
double Cell(const nlohmann::json& j, const std::string& model, const std::string& name) {
  size_t col = 0;
  for (; col < j["columns"].size(); ++col) {
    if (j["columns"][col]["name"] == name) break;
  }
  EXPECT_LT(col, j["columns"].size()) << name;
  for (const auto& row : j["rows"]) {
    if (row[0] == model && col < row.size() && row[col].is_number()) return row[col].get<double>();
  }
  ADD_FAILURE() << "no number for " << model << " " << name;
  return 0;
}

std::string CellText(const nlohmann::json& j, const std::string& model, const std::string& name) {
  for (size_t col = 0; col < j["columns"].size(); ++col) {
    if (j["columns"][col]["name"] != name) continue;
    for (const auto& row : j["rows"]) {
      if (row[0] == model && row[col].is_string()) return row[col].get<std::string>();
    }
  }
  return "";
}

// Acceptance: every diode's state under each model, errors, states matching the exact set.
TEST(Hand, InputClampTable) {
  KneeRun r = RunKnee("hand " + Netlist("input-clamp.knee"));
  ASSERT_EQ(r.status, 0) << r.err;
  EXPECT_NE(r.out.find("hand models beside the exact bias point at 25 °C"), std::string::npos);
  EXPECT_NE(r.out.find("diode state"), std::string::npos);
  EXPECT_NE(r.out.find("error"), std::string::npos);
  EXPECT_NE(r.out.find("every model's states match the exact conducting set"), std::string::npos)
      << r.out;
  EXPECT_NE(r.out.find("solver (exact model):"), std::string::npos);
  EXPECT_NE(r.out.find("largest KCL residual"), std::string::npos);
}

// The drop model of the clamp by KCL at pin (closed form): pin = 3.3 + 0.7 V, so
// I(Dhi) = (12 - 4)/2k2 - 4/100k; the exact current lies below the ideal one.
TEST(Hand, InputClampJsonNumbers) {
  KneeRun r = RunKnee("hand " + Netlist("input-clamp.knee") + " --format json");
  ASSERT_EQ(r.status, 0) << r.err;
  const nlohmann::json j = nlohmann::json::parse(r.out);
  EXPECT_EQ(j["format"], "knee-result/1");
  EXPECT_EQ(j["analysis"], "hand");
  ASSERT_EQ(j["models"].size(), 4u);
  EXPECT_CLOSE(Cell(j, "drop", "pin.v"), 4.0, 1e-12, 0.0);
  EXPECT_CLOSE(Cell(j, "drop", "Dhi.i"), 8.0 / 2200 - 4.0 / 100e3, 1e-12, 0.0);
  EXPECT_CLOSE(Cell(j, "drop", "Dhi.i_error"), Cell(j, "drop", "Dhi.i") - Cell(j, "exact", "Dhi.i"),
               1e-12, 1e-18);
  EXPECT_LT(Cell(j, "exact", "Dhi.i"), Cell(j, "ideal", "Dhi.i"));
  for (const char* model : {"exact", "ideal", "drop", "pwl"}) {
    EXPECT_EQ(CellText(j, model, "Dhi.state"), "on") << model;
    EXPECT_EQ(CellText(j, model, "Dlo.state"), "off") << model;
  }
  // n Vt / I at the exact current (docs/hand-models.md): positive and finite for Dhi.
  EXPECT_GT(Cell(j, "exact", "Dhi.rd_exact"), 0.0);
}

TEST(Hand, CsvIsPureData) {
  KneeRun r = RunKnee("hand " + Netlist("input-clamp.knee") + " --format csv");
  ASSERT_EQ(r.status, 0) << r.err;
  EXPECT_EQ(r.out.rfind("model,Dhi.state,Dhi.v [V],Dhi.i [A]", 0), 0u) << r.out;
  int lines = 0;
  for (char c : r.out) lines += c == '\n';
  EXPECT_EQ(lines, 5);  // header + exact, ideal, drop, pwl
}

TEST(Hand, PlotIsAnSvgWithOneBarPerDiodeAndModel) {
  const std::string svg = TempPath("hand.svg");
  KneeRun r = RunKnee("hand " + Netlist("input-clamp.knee") + " --quiet --plot " + svg);
  ASSERT_EQ(r.status, 0) << r.err;
  const std::string text = ReadWhole(svg);
  std::remove(svg.c_str());
  EXPECT_EQ(text.rfind("<svg", 0), 0u);
  size_t bars = 0;
  for (size_t at = text.find("<title>"); at != std::string::npos;
       at = text.find("<title>", at + 1)) {
    ++bars;
  }
  EXPECT_EQ(bars, 8u);  // 2 diodes x 4 models
}

// An ideal diode forward across a 1 V source: no consistent state set under the ideal
// and drop models; the analysis says so and exits 1.
TEST(Hand, NoConsistentSetIsAClearMessage) {
  const std::string netlist =
      "part P diode sat_current=1f\n"
      "vsource V1 a -> gnd 1\n"
      "diode D1 a -> gnd P\n";
  KneeRun r = RunKnee("hand -", netlist);
  EXPECT_EQ(r.status, 1) << r.out << r.err;
  EXPECT_NE(r.err.find("ideal model: no answer: none of the 2 state sets is consistent"),
            std::string::npos)
      << r.err;
  EXPECT_NE(r.out.find("no consistent set"), std::string::npos) << r.out;
}

const char* kDivider =
    "title \"expect demo\"\n"
    "part P diode sat_current=1f\n"
    "vsource V1 in -> gnd 10\n"
    "resistor R1 in -> a 1k\n"
    "resistor R2 a -> gnd 1k\n";

// Divider: a.v = 5 V exactly (closed form).
TEST(Expect, MetAndMissedAbsoluteAndRelative) {
  KneeRun met = RunKnee("run -", std::string(kDivider) + "expect a.v = 5.1 within 150m\n" +
                                     "expect a.v = 4.9 within 3%\n");
  EXPECT_EQ(met.status, 0) << met.err;
  KneeRun abs_missed = RunKnee("run -", std::string(kDivider) + "expect a.v = 5.1 within 50m\n");
  EXPECT_EQ(abs_missed.status, 4);
  EXPECT_NE(abs_missed.err.find("expectation missed: a.v expected 5.1 V, exact 5 V"),
            std::string::npos)
      << abs_missed.err;
  KneeRun rel_missed = RunKnee("run -", std::string(kDivider) + "expect a.v = 4.9 within 1%\n");
  EXPECT_EQ(rel_missed.status, 4);
  // Default tolerance 5 %: 5.2 is 4 % off (met), 5.3 is 6 % off (missed).
  EXPECT_EQ(RunKnee("run -", std::string(kDivider) + "expect a.v = 5.2\n").status, 0);
  EXPECT_EQ(RunKnee("run -", std::string(kDivider) + "expect a.v = 5.3\n").status, 4);
}

TEST(Expect, CommandLine) {
  EXPECT_EQ(RunKnee("bias - --expect a.v=5.1~150m", kDivider).status, 0);
  EXPECT_EQ(RunKnee("bias - --expect a.v=5.1~50m", kDivider).status, 4);
  EXPECT_EQ(RunKnee("bias - --expect a.v=5.2", kDivider).status, 0);        // 4 % < 5 %
  EXPECT_EQ(RunKnee("bias - --expect a.v=5.3", kDivider).status, 4);        // 6 % > 5 %
  EXPECT_EQ(RunKnee("bias - --expect 'a.v=4.9V~3%'", kDivider).status, 0);  // unit written
  EXPECT_EQ(RunKnee("bias - --expect R1.i=5mA~1%", kDivider).status, 0);
  // run does a bias point for a command-line expectation even when the file asks nothing.
  KneeRun run = RunKnee("run - --expect R1.i=4m", kDivider);
  EXPECT_EQ(run.status, 4);
  EXPECT_NE(run.err.find("R1.i expected 4 mA, exact 5 mA"), std::string::npos) << run.err;
  // knee hand reports them too.
  KneeRun hand = RunKnee("hand - --expect a.v=4", kDivider);
  EXPECT_EQ(hand.status, 4);
  EXPECT_NE(hand.out.find("MISSED expect a.v = 4 V"), std::string::npos) << hand.out;
}

TEST(Expect, BadCommandLineIsExit2WithoutReport) {
  for (const char* bad : {"a.v=5x", "a.v", "nowhere.v=1", "a.v=5~", "a.v=5~-1", "a.v=5A"}) {
    KneeRun r = RunKnee(std::string("bias - --expect '") + bad + "'", kDivider);
    EXPECT_EQ(r.status, 2) << bad;
    EXPECT_TRUE(r.out.empty()) << bad;
    EXPECT_NE(r.err.find("--expect"), std::string::npos) << bad << ": " << r.err;
  }
  EXPECT_EQ(RunKnee("hand - --fit-at -1m", kDivider).status, 2);
  EXPECT_EQ(RunKnee("hand - --drop 7x", kDivider).status, 2);
  EXPECT_EQ(RunKnee("hand - --on-res 10 --fit-at 1m", kDivider).status, 2);
}

TEST(Hand, FitAtGivesTangentModel) {
  KneeRun r = RunKnee("hand " + Netlist("input-clamp.knee") + " --fit-at 3.6m --format json");
  ASSERT_EQ(r.status, 0) << r.err;
  const nlohmann::json j = nlohmann::json::parse(r.out);
  // Fitted near the exact current of Dhi (3.61 mA), the tangent model lands far closer to
  // the exact pin voltage than the constant drop does (first-order agreement).
  const double exact = Cell(j, "exact", "pin.v");
  EXPECT_LT(std::fabs(Cell(j, "pwl", "pin.v") - exact),
            0.01 * std::fabs(Cell(j, "drop", "pin.v") - exact));
}

// One account for every command: `knee hand` and `knee bias` on the same file say the same
// about the solver (method, uniqueness, steps, residual).
TEST(Hand, SolverAccountMatchesBias) {
  for (const char* file : {"diode-or.knee", "input-clamp.knee", "bridge-rectifier.knee"}) {
    KneeRun hand = RunKnee("hand " + Netlist(file) + " --format json");
    KneeRun bias = RunKnee("bias " + Netlist(file) + " --format json");
    ASSERT_EQ(hand.status, 0) << hand.err;
    ASSERT_EQ(bias.status, 0) << bias.err;
    const nlohmann::json h = nlohmann::json::parse(hand.out)["solver"];
    const nlohmann::json b = nlohmann::json::parse(bias.out)["solver"];
    EXPECT_EQ(h, b) << file << "\nhand: " << h.dump() << "\nbias: " << b.dump();
  }
}

}  // namespace
}  // namespace knee::testing
