// Issue 20, "What a practising engineer trips over in the first hour": one test per item,
// end to end through the knee binary.
#include <gtest/gtest.h>

#include <cmath>
#include <nlohmann/json.hpp>
#include <sstream>
#include <string>

#include "run_knee.h"

namespace knee::testing {
namespace {

using nlohmann::json;

bool Has(const std::string& text, const std::string& part) {
  return text.find(part) != std::string::npos;
}

const char* kDemos[] = {"bridge-rectifier.knee", "diode-or.knee", "input-clamp.knee",
                        "reference-regulator.knee", "temp-sensor.knee"};

// Item 1: knee check --parts prints every key of every part, defaults marked.
TEST(FirstHour, Item1PartsPrintsEveryKeyWithDefaultsMarked) {
  const char* net =
      "part SW200 diode sat_current=2n ideality=1.85\n"
      "vsource V1 a -> gnd 5\nresistor R1 a -> k 1k\ndiode D1 k -> gnd SW200\n";
  KneeRun run = RunKnee("check - --parts", net);
  ASSERT_EQ(run.status, 0) << run.err;
  EXPECT_TRUE(Has(run.out, "part SW200 diode")) << run.out;
  for (const char* key : {"sat_current", "ideality", "series_res", "breakdown_v", "breakdown_i",
                          "breakdown_ideality", "breakdown_tc", "bandgap", "sat_temp_exp",
                          "ref_temp", "max_current", "max_reverse_v", "max_power"}) {
    EXPECT_TRUE(Has(run.out, std::string("  ") + key + " ")) << key << "\n" << run.out;
  }
  EXPECT_TRUE(Has(run.out, "2 nA")) << run.out;
  EXPECT_FALSE(Has(run.out.substr(run.out.find("sat_current")).substr(0, 40), "(default)"));
  EXPECT_TRUE(Has(run.out, "1.12 eV         (default)")) << run.out;
  // The docs carry the table of every key (docs must be complete on their own).
  const std::string doc = ReadWhole(SourcePath("docs/netlist-format.md"));
  for (const char* key :
       {"sat_temp_exp", "breakdown_ideality", "thermal_res", "max_junction_temp", "max_power="}) {
    EXPECT_TRUE(Has(doc, key)) << key;
  }
  EXPECT_FALSE(Has(ReadWhole(SourcePath("docs/errors.md")), "\"Diode parameters\""));
}

// Item 2: warnings fire on a mistyped ground, a dangling node and a bare tolerance, keep
// the exit status, survive --quiet, are silenced by --no-warn, and stay silent on demos.
TEST(FirstHour, Item2WarningsFireAndStaySilent) {
  const char* net =
      "part SW200 diode sat_current=2n\nvsource V1 in -> gnd 5\n"
      "resistor Rin in -> out 1k\ndiode D1 out -> GND SW200\n"
      "resistor Rpin out -> Gnd 10k\nexpect out.v = 5 within 5\n";
  KneeRun run = RunKnee("bias - --quiet", net);
  EXPECT_EQ(run.status, 0) << run.err;
  EXPECT_TRUE(Has(run.err, "<stdin>:4:17: warning: node 'GND' is not the reference node"))
      << run.err;
  EXPECT_TRUE(Has(run.err, "<stdin>:5:22: warning: node 'Gnd'")) << run.err;
  EXPECT_TRUE(Has(run.err, "node 'GND' is touched by one element only (diode 'D1')")) << run.err;
  EXPECT_TRUE(Has(run.err, "<stdin>:6:25: warning: tolerance '5' has no unit and no %")) << run.err;
  EXPECT_FALSE(run.out.empty());
  KneeRun silent = RunKnee("bias - --no-warn", net);
  EXPECT_EQ(silent.status, 0);
  EXPECT_FALSE(Has(silent.err, "warning")) << silent.err;
  for (const char* demo : kDemos) {
    KneeRun d = RunKnee("check " + Netlist(demo));
    EXPECT_EQ(d.status, 0) << demo;
    EXPECT_FALSE(Has(d.err, "warning")) << demo << "\n" << d.err;
  }
  KneeRun fine = RunKnee("check -",
                         "vsource V1 a -> gnd 5\nresistor R1 a -> gnd 1k\n"
                         "expect R1.i = 5m within 5%\nexpect a.v = 5 within 50m\n");
  EXPECT_FALSE(Has(fine.err, "warning")) << fine.err;
}

// Item 3: an unknown key names the key it most likely means, or lists every key.
TEST(FirstHour, Item3UnknownPartKeyNamesTheLikelyKey) {
  const std::string tail = "vsource V1 a -> gnd 5\nresistor R1 a -> k 1k\ndiode D1 k -> gnd P\n";
  KneeRun caps = RunKnee("check -", "part P diode IS=3n N=1.85 RS=0.7\n" + tail);
  EXPECT_EQ(caps.status, 2);
  EXPECT_TRUE(Has(caps.err, "did you mean 'sat_current'?")) << caps.err;
  EXPECT_TRUE(Has(caps.err, "did you mean 'ideality'?")) << caps.err;
  EXPECT_TRUE(Has(caps.err, "did you mean 'series_res'?")) << caps.err;
  KneeRun long_name = RunKnee("check -", "part P diode series_resistance=0.7\n" + tail);
  EXPECT_TRUE(Has(long_name.err, "did you mean 'series_res'?")) << long_name.err;
  KneeRun set = RunKnee("check - --set P.Is=1n", "part P diode\n" + tail);
  EXPECT_EQ(set.status, 2);
  EXPECT_TRUE(Has(set.err, "did you mean 'P.sat_current'?")) << set.err;
  KneeRun none = RunKnee("check -", "part P diode wibble=1\n" + tail);
  EXPECT_TRUE(Has(none.err, "the part keys are sat_current, ideality")) << none.err;
}

// Item 4: a resistor's max_power is checked like a diode rating (exit 3, --derate).
// Rin dissipates V^2/R = 10^2/470 = 212.8 mW (Ohm's and Joule's laws).
TEST(FirstHour, Item4ResistorMaxPower) {
  const char* net = "vsource V1 a -> gnd 10\nresistor Rin a -> gnd 470 max_power=250m\n";
  KneeRun ok = RunKnee("bias - --format json", net);
  EXPECT_EQ(ok.status, 0) << ok.err;
  const json line = json::parse(ok.out)["stress"][0];
  EXPECT_EQ(line["element"], "Rin");
  EXPECT_EQ(line["element_kind"], "resistor");
  EXPECT_NEAR(line["worst"].get<double>(), 100.0 / 470.0, 1e-12);
  EXPECT_EQ(RunKnee("bias - --derate 80", net).status, 3);  // 212.8 > 200 mW
  EXPECT_EQ(RunKnee("bias - --derate 90", net).status, 0);  // 212.8 < 225 mW
  EXPECT_EQ(RunKnee("bias - --set V1=12", net).status, 3);  // 306 mW
  EXPECT_EQ(RunKnee("check -", "vsource V1 a -> gnd 1\nresistor R a -> gnd 1 max_power=0\n").status,
            2);
}

// Item 5: a temperature sweep says so in the table, the chart and JSON.
TEST(FirstHour, Item5TemperatureSweptInHeaders) {
  const char* net = "part P diode\nisource I1 gnd -> k 1m\ndiode D1 k -> gnd P\n";
  KneeRun table = RunKnee("sweep - temp=-40,25,85", net);
  ASSERT_EQ(table.status, 0) << table.err;
  EXPECT_TRUE(Has(table.out, "sweep, temperature swept")) << table.out;
  EXPECT_FALSE(Has(table.out, "at 25 °C")) << table.out;
  KneeRun j = RunKnee("sweep - temp=-40,25,85 --format json", net);
  const json r = json::parse(j.out);
  EXPECT_TRUE(r["temp_c"].is_null());
  EXPECT_TRUE(r["temp_swept"].get<bool>());
  EXPECT_EQ(r["rows"][0][0].get<double>(), -40);
  const std::string svg = TempPath("t.svg");
  KneeRun chart = RunKnee("sweep - temp=-40,25,85 --plot " + svg, net);
  EXPECT_TRUE(Has(ReadWhole(svg), "temperature swept"));
  std::remove(svg.c_str());
}

// Item 6: params and temp inside show/expect expressions, at every sweep point.
TEST(FirstHour, Item6ParamsAndTempInExpressions) {
  const char* net =
      "param I2 = 10m\nparam I1 = 1m\npart P diode\n"
      "isource Ia gnd -> a I1\nisource Ib gnd -> b I2\n"
      "diode Da a -> gnd P\ndiode Db b -> gnd P\n"
      "show ((b.v - a.v) / ln(I2 / I1)) (temp + 273.15)\n";
  KneeRun run = RunKnee("sweep - temp=-40,25,85 --format json", net);
  ASSERT_EQ(run.status, 0) << run.err;
  const json r = json::parse(run.out);
  // Two identical ideal diodes: (Vb - Va) / ln(I2/I1) = n k T / q with n = 1 (Shockley
  // 1949; k and q CODATA 2018 exact), nearly exactly since Is << I1.
  for (const auto& row : r["rows"]) {
    const double t = row[0].get<double>() + 273.15;
    EXPECT_NEAR(row[1].get<double>(), 1.380649e-23 * t / 1.602176634e-19, 1e-9);
    EXPECT_DOUBLE_EQ(row[2].get<double>(), t);
  }
  KneeRun hint = RunKnee("check - --show '(b.v/I3)'", net);
  EXPECT_EQ(hint.status, 2);
  EXPECT_FALSE(Has(hint.err, "I3.v")) << hint.err;
  EXPECT_TRUE(Has(hint.err, "did you mean 'I2'?") || Has(hint.err, "did you mean 'I1'?"))
      << hint.err;
}

// Item 7: a regulator diode in breakdown: no negative forward current, its reverse current
// on its own line, voltages as magnitudes with the direction named.
TEST(FirstHour, Item7BreakdownDiodeStressReadsRightly) {
  const char* net =
      "part Z62 diode sat_current=1f breakdown_v=6.2 breakdown_i=5m "
      "max_current=100m max_reverse_v=30 max_power=500m\n"
      "vsource V1 in -> gnd 12\nresistor R1 in -> k 200\ndiode Dz gnd -> k Z62\n";
  KneeRun run = RunKnee("bias -", net);
  ASSERT_EQ(run.status, 0) << run.err;
  const std::string stress = run.out.substr(run.out.find("stress"));
  EXPECT_TRUE(Has(stress, "forward current  never forward-biased")) << stress;
  EXPECT_TRUE(Has(stress, "reverse current  worst")) << stress;
  EXPECT_TRUE(Has(stress, "(cathode above anode)")) << stress;
  EXPECT_FALSE(Has(stress, "worst  -")) << stress;
  EXPECT_FALSE(Has(stress, "worst -")) << stress;
}

// Item 8: no prefix on plain numbers, a unit cell on every CSV column, tiny currents as 0
// in tables only.
// Item 8, voltages and powers: at 0 V on the bridge every node sits within round-off of 0
// (CSV keeps those digits), and the table shows 0 V / 0 W there, never a number like 8e-76 V;
// the driven rows keep their real values (a millivolt-level drop is never zeroed).
TEST(FirstHour, Item8VoltagesAndPowersBelowResolution) {
  const std::string file = SourcePath("tests/cli/first_hour/mains-bridge.knee");
  const std::string args = " Vline=-25,0,25 --show l.v,n.v,Rl.p --quiet";
  KneeRun table = RunKnee("sweep " + file + args);
  KneeRun csv = RunKnee("sweep " + file + args + " --format csv");
  ASSERT_EQ(table.status, 0) << table.err;
  ASSERT_EQ(csv.status, 0) << csv.err;
  std::istringstream rows(csv.out);
  std::string header, negative, zero;
  std::getline(rows, header);
  std::getline(rows, negative);
  std::getline(rows, zero);
  EXPECT_EQ(zero.rfind("0,", 0), 0u) << zero;
  EXPECT_NE(zero.find("e-"), std::string::npos) << "CSV keeps the round-off digits: " << zero;
  EXPECT_FALSE(Has(table.out, "e-7")) << table.out;
  EXPECT_TRUE(Has(table.out, "0 V")) << table.out;
  EXPECT_TRUE(Has(table.out, "0 W")) << table.out;
  EXPECT_TRUE(Has(table.out, "-713.1 mV")) << table.out;  // a real drop stays
  EXPECT_TRUE(Has(table.out, "voltages and powers within round-off")) << table.out;
}

TEST(FirstHour, Item8FormattingSlips) {
  const char* net =
      "param k = 1\npart P diode\nvsource V1 a -> gnd 1\n"
      "resistor R1 a -> m (k * 1k)\ndiode D1 m -> gnd P\n";
  KneeRun table = RunKnee("sweep - k=0.5,1 --show m.v", net);
  ASSERT_EQ(table.status, 0) << table.err;
  EXPECT_FALSE(Has(table.out, "500 m ")) << table.out;
  EXPECT_TRUE(Has(table.out, "0.5")) << table.out;
  KneeRun csv = RunKnee("sweep - k=0.5,1 --show m.v --format csv", net);
  EXPECT_EQ(csv.out.substr(0, csv.out.find('\n')), "k [],m.v [V]");
  // A reverse diode fed by nothing carries a current far below the KCL residual.
  const char* tiny =
      "part P diode sat_current=1e-30\nvsource V1 a -> gnd 1\n"
      "resistor R1 a -> b 1k\ndiode D1 gnd -> b P\nresistor R2 b -> gnd 1k\n";
  KneeRun t = RunKnee("bias - --show D1.i", tiny);
  KneeRun c = RunKnee("bias - --show D1.i --format csv", tiny);
  const double exact = std::stod(c.out.substr(c.out.find('\n') + 1));
  EXPECT_LT(exact, 0);  // CSV keeps every digit
  const double residual =
      json::parse(RunKnee("bias - --format json", tiny).out)["solver"]["max_kcl_residual_a"];
  EXPECT_EQ(Has(t.out, "are shown as 0"), std::fabs(exact) < residual) << t.out << exact;
}

// Item 9: one error prefix, no repeated "no solution", check --help without solver options.
TEST(FirstHour, Item9SmallOddities) {
  KneeRun usage = RunKnee("bias x.knee --frobnicate");
  EXPECT_EQ(usage.status, 2);
  EXPECT_EQ(usage.err.rfind("knee: error: ", 0), 0u) << usage.err;
  KneeRun set = RunKnee("bias - --set nothing", "vsource V a -> gnd 1\nresistor R a -> gnd 1\n");
  EXPECT_EQ(set.err.rfind("knee: error: --set", 0), 0u) << set.err;
  KneeRun show = RunKnee("bias - --show x.v", "vsource V a -> gnd 1\nresistor R a -> gnd 1\n");
  EXPECT_EQ(show.err.rfind("knee: error: --show", 0), 0u) << show.err;
  KneeRun sweep = RunKnee("sweep - Vx=0..1:1", "vsource V a -> gnd 1\nresistor R a -> gnd 1\n");
  EXPECT_EQ(sweep.err.rfind("knee: error: ", 0), 0u) << sweep.err;
  const char* pushed = "part Pd diode\nisource Ipush gnd -> k 1m\ndiode Dblock gnd -> k Pd\n";
  KneeRun none = RunKnee("bias -", pushed);
  EXPECT_EQ(none.status, 1);
  EXPECT_FALSE(Has(none.out + none.err, "no solution: no")) << none.out << none.err;
  KneeRun help = RunKnee("check --help");
  for (const char* option : {"--method", "--plot", "--jobs", "--shard", "--voltage-tol"}) {
    EXPECT_FALSE(Has(help.out, option)) << option;
  }
  EXPECT_FALSE(Has(RunKnee("bias --help").out, "->0")) << "method map shown";
}

// Item 10: bandgap defaults to 1.12 eV (Sze & Ng, Physics of Semiconductor Devices, 3rd
// ed., 2007); at 85 degC an ideal diode's Is follows the contract's law with that value.
TEST(FirstHour, Item10BandgapDefault) {
  KneeRun parts = RunKnee("check - --parts",
                          "part P diode\nvsource V a -> gnd 1\n"
                          "resistor R a -> k 1k\ndiode D k -> gnd P\n");
  EXPECT_TRUE(Has(parts.out, "bandgap             1.12 eV")) << parts.out;
  KneeRun rev = RunKnee("bias - --temp 85 --show D.i --format json",
                        "part P diode\nvsource V a -> gnd 5\ndiode D gnd -> a P\n");
  ASSERT_EQ(rev.status, 0) << rev.err;
  const double t = 358.15, t0 = 298.15, vt0 = 1.380649e-23 * t0 / 1.602176634e-19;
  const double is = 1e-14 * std::pow(t / t0, 3.0) * std::exp(1.12 / vt0 * (1 - t0 / t));
  EXPECT_NEAR(-json::parse(rev.out)["rows"][0][0].get<double>(), is, 1e-9 * is);
}

}  // namespace
}  // namespace knee::testing

namespace knee::testing {
namespace {

// The five designs (our own invented versions in tests/cli/first_hour/) run with no
// warning, no negative "worst" in their stress reports, and the mains one with its caution.
TEST(FirstHour, FiveDesignsRunWithoutMisleadingOutput) {
  struct Design {
    const char* file;
    int status;  // 3 where an invented rating is deliberately too small
  };
  for (const Design d :
       {Design{"clamp-5v.knee", 3}, Design{"shunt-6v2.knee", 3}, Design{"diode-or.knee", 0},
        Design{"two-current-sensor.knee", 0}, Design{"mains-bridge.knee", 3}}) {
    KneeRun run = RunKnee("run " + SourcePath(std::string("tests/cli/first_hour/") + d.file));
    EXPECT_EQ(run.status, d.status) << d.file << "\n" << run.err;
    EXPECT_FALSE(Has(run.err, "warning")) << d.file << "\n" << run.err;
    EXPECT_FALSE(Has(run.out, "worst -")) << d.file;
    EXPECT_FALSE(Has(run.out, " µ1/K")) << d.file;
    if (std::string(d.file) == "mains-bridge.knee") {
      EXPECT_TRUE(Has(run.out, "CAUTION")) << run.out;
    }
  }
}

}  // namespace
}  // namespace knee::testing
