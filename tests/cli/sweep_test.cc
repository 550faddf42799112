// Sweeps checked against outside references and physical symmetry, end to end.
#include <gtest/gtest.h>

#include <boost/math/special_functions/lambert_w.hpp>
#include <cmath>
#include <nlohmann/json.hpp>

#include "run_knee.h"
#include "test_util.h"

namespace knee::testing {
namespace {

using nlohmann::json;

constexpr double kBoltzmann = 1.380649e-23;  // J/K, CODATA 2018 (exact)
constexpr double kCharge = 1.602176634e-19;  // C, CODATA 2018 (exact)

// W0(e^y) without overflow: Boost.Math's lambert_w0 while e^y is representable, else
// Newton on w + ln w = y (the defining equation of W, taken in logarithms).
double LambertW0OfExp(double y) {
  if (y < 700) return boost::math::lambert_w0(std::exp(y));
  double w = y - std::log(y);
  for (int i = 0; i < 50; ++i) w -= (w + std::log(w) - y) / (1 + 1 / w);
  return w;
}

// Saturation current at T by the format contract's law (netlist-format.md, "Model"),
// written out here independently of the engine.
double SatCurrent(double is0, double n, double eg, double temp_exp, double t_c, double t0_c) {
  const double t = t_c + 273.15, t0 = t0_c + 273.15;
  const double vt0 = kBoltzmann * t0 / kCharge;
  return is0 * std::pow(t / t0, temp_exp / n) * std::exp(eg / (n * vt0) * (1 - t0 / t));
}

// A diode (no series resistance) fed from V through R: Banwell & Jayakumar, Electronics
// Letters 36(4), 2000: I = (n Vt / R) W((Is R / (n Vt)) exp((V + Is R) / (n Vt))) - Is.
double LambertCurrent(double v, double r, double is, double n_vt) {
  const double y = std::log(is * r / n_vt) + (v + is * r) / n_vt;
  return n_vt / r * LambertW0OfExp(y) - is;
}

TEST(Sweep, DiodeOverVoltageAndTemperatureAgreesWithLambertW) {
  const std::string net =
      "part d diode sat_current=2n ideality=1.6 bandgap=1.11 sat_temp_exp=3\n"
      "vsource V1 a -> gnd 1\nresistor R1 a -> k 2k2\ndiode D1 k -> gnd d\n";
  KneeRun run =
      RunKnee("sweep - V1=-5..10:0.25 temp=-40,0,25,85,125 --format json --show D1.i", net);
  ASSERT_EQ(run.status, 0) << run.err;
  const json j = json::parse(run.out);
  ASSERT_EQ(j["rows"].size(), 61u * 5u);
  for (const auto& row : j["rows"]) {
    const double v = row[0].get<double>(), t = row[1].get<double>(), i = row[2].get<double>();
    const double is = SatCurrent(2e-9, 1.6, 1.11, 3, t, 25);
    const double n_vt = 1.6 * kBoltzmann * (t + 273.15) / kCharge;
    // Relative 1e-9; a floor of 1e-21 A for the reverse currents (-Is) where the closed
    // form itself loses digits to the subtraction W(.) * n Vt / R - Is.
    EXPECT_CLOSE(i, LambertCurrent(v, 2200, is, n_vt), 1e-9, 1e-21) << "V " << v << " T " << t;
  }
}

TEST(Sweep, BridgeOutputIsAnEvenFunctionOfTheInput) {
  // A bridge grounded symmetrically: swapping the input's polarity swaps the roles of
  // the two input nodes and of the diode pairs, so the output is even in Vin (symmetry of
  // the circuit; common practice, no source).
  const std::string net =
      "part r diode sat_current=10n ideality=1.7 series_res=0.05\n"
      "vsource Vin a -> b 1\nresistor Ra a -> gnd 1M\nresistor Rb b -> gnd 1M\n"
      "diode D1 a -> out r\ndiode D2 b -> out r\ndiode D3 ret -> a r\ndiode D4 ret -> b r\n"
      "resistor Rload out -> ret 47\n";
  KneeRun run =
      RunKnee("sweep - Vin=-20..20:0.5 --format json --show '(out.v-ret.v),Rload.i'", net);
  ASSERT_EQ(run.status, 0) << run.err;
  const json rows = json::parse(run.out)["rows"];
  ASSERT_EQ(rows.size(), 81u);
  for (size_t k = 0; k < rows.size(); ++k) {
    const auto& up = rows[k];
    const auto& down = rows[rows.size() - 1 - k];
    ASSERT_EQ(up[0].get<double>(), -down[0].get<double>());
    EXPECT_CLOSE(up[1].get<double>(), down[1].get<double>(), 1e-9, 1e-12) << up[0];
    EXPECT_CLOSE(up[2].get<double>(), down[2].get<double>(), 1e-9, 1e-15) << up[0];
  }
  // And it rectifies: at 20 V the output is 20 V less two forward drops of 0.5..1 V.
  const double out20 = rows.back()[1].get<double>();
  EXPECT_GT(out20, 18.0);
  EXPECT_LT(out20, 19.0);
}

TEST(Sweep, BridgeDemoConvergesEverywhere) {
  KneeRun run = RunKnee("sweep " + Netlist("bridge-rectifier.knee") +
                        " Vin=-20..20:0.01 --format json --quiet");
  ASSERT_EQ(run.status, 0) << run.err;
  const json j = json::parse(run.out);
  EXPECT_EQ(j["rows"].size(), 4001u);
  EXPECT_TRUE(j["failures"].empty());
  // Iteration counts are not asserted (they belong to the solver, not to correctness);
  // bench/run reports the mean Newton steps per point of this sweep.
}

// "step subdivision" is reported only when a sweep step was actually cut: an ordinary demo
// sweep names no aid, and a 0 -> 10 V step into a bare junction that plain Newton cannot
// take whole (no junction limiting, 10 steps per attempt) names it. The answer of the cut
// step is still the closed form (Banwell & Jayakumar, as above).
TEST(Sweep, StepSubdivisionIsNamedOnlyWhenAStepWasCut) {
  KneeRun plain =
      RunKnee("sweep " + Netlist("bridge-rectifier.knee") + " Vin=-20..20:1 --format json --quiet");
  ASSERT_EQ(plain.status, 0) << plain.err;
  EXPECT_TRUE(json::parse(plain.out)["solver"]["aids"].empty()) << plain.out;

  const std::string net =
      "part tiny diode sat_current=1e-14\n"
      "vsource V1 a -> gnd 0\nresistor R1 a -> k 1\ndiode D1 k -> gnd tiny\n";
  KneeRun cut = RunKnee(
      "sweep - V1=0,10 --method classic --no-limiting --max-steps 10 --format json --show D1.i",
      net);
  ASSERT_EQ(cut.status, 0) << cut.err;
  const json j = json::parse(cut.out);
  ASSERT_EQ(j["solver"]["aids"].size(), 1u) << cut.out;
  EXPECT_EQ(j["solver"]["aids"][0], "step subdivision");
  const double n_vt = kBoltzmann * 298.15 / kCharge;
  EXPECT_CLOSE(j["rows"][1][1].get<double>(), LambertCurrent(10.0, 1.0, 1e-14, n_vt), 1e-9, 0);
}

}  // namespace
}  // namespace knee::testing
