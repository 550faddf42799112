// Family 1 of the reference checks: closed forms and published values. Every check goes
// through the parser and the solver (or the knee binary) and compares with a formula or a
// value written out here, independently of the engine's code. The source of each formula
// is named beside the check. See docs/validation.md.
#include <gtest/gtest.h>

#include <boost/math/special_functions/lambert_w.hpp>
#include <cmath>
#include <limits>
#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "cli/run_knee.h"
#include "knee/diode_law.h"
#include "reference_util.h"
#include "test_util.h"

namespace knee {
namespace {

// The bandgap of a part that gives none: silicon at 300 K, 1.12 eV (S. M. Sze, K. K. Ng,
// Physics of Semiconductor Devices, 3rd ed., 2007; the netlist contract's default).
constexpr double kDefaultBandgap = 1.12;

using testing::SolveText;

// CODATA 2018 recommended values, exact since the 2019 revision of the SI (BIPM, "The
// International System of Units", 9th edition, 2019): written here, not taken from knee.
constexpr double kK = 1.380649e-23;      // J/K
constexpr double kQ = 1.602176634e-19;   // C
constexpr double kCelsiusZero = 273.15;  // K, SI definition of the degree Celsius

double Vt(double temp_c) { return kK * (temp_c + kCelsiusZero) / kQ; }

// The contract's saturation-current law (netlist-format.md, "Diode parameters"), written
// out term by term from the published form:
//   Is(T) = Is(T0) (T/T0)^(temp_exp/n) exp((Eg/(n Vt0)) (1 - T0/T)),  Vt0 = k T0 / q.
double SatCurrentLaw(double is0, double n, double eg, double temp_exp, double t0_c, double t_c) {
  const double t = t_c + kCelsiusZero;
  const double t0 = t0_c + kCelsiusZero;
  const double vt0 = kK * t0 / kQ;
  return is0 * std::pow(t / t0, temp_exp / n) * std::exp(eg / (n * vt0) * (1.0 - t0 / t));
}

// W0(exp(y)), also where exp(y) overflows (Newton on w + ln w = y there).
double LambertW0OfExp(double y) {
  if (y < 700.0) return boost::math::lambert_w0(std::exp(y));
  double w = y - std::log(y);
  for (int k = 0; k < 100; ++k) {
    const double step = (w + std::log(w) - y) / (1.0 + 1.0 / w);
    w -= step;
    if (std::fabs(step) <= 1e-16 * w) break;
  }
  return w;
}

// Current of a diode (saturation current is, n*Vt = n_vt) in series with r_total, driven
// by v: T. C. Banwell and A. Jayakumar, "Exact analytical solution for current flow
// through diode with series resistance", Electronics Letters 36(4), 2000:
//   I = (n Vt / R) W((Is R / (n Vt)) exp((V + Is R) / (n Vt))) - Is.
double BanwellJayakumar(double v, double r_total, double is, double n_vt) {
  const double y = std::log(is * r_total / n_vt) + (v + is * r_total) / n_vt;
  return n_vt / r_total * LambertW0OfExp(y) - is;
}

std::string Num(double x) {
  char buffer[40];
  std::snprintf(buffer, sizeof buffer, "%.17g", x);
  return buffer;
}

// --- Lambert W --------------------------------------------------------------------------

constexpr char kLambertNetlist[] = R"(title "diode with series resistance"
temp 60
part P diode sat_current=3f ideality=1.4 series_res=2.5 bandgap=1.11 sat_temp_exp=3
vsource V1 in -> gnd 0.7
resistor R1 in -> a 470
diode D1 a -> gnd P area=2
)";

// Banwell & Jayakumar (Electronics Letters 36(4), 2000), through the knee binary: a JSON
// sweep of the source from reverse to strong forward bias, at a temperature away from the
// part's ref_temp and with area 2, so that the junction law, series_res/area, area*Is and
// the Is(T) law all enter the reference.
TEST(ClosedForms, LambertWSweepThroughBinary) {
  const auto run =
      testing::RunKnee("sweep - V1=-5..20:0.25 --format json --show D1.i,D1.v", kLambertNetlist);
  ASSERT_EQ(run.status, 0) << run.err;
  const auto json = nlohmann::json::parse(run.out);
  const double temp = 60.0, area = 2.0, n = 1.4;
  const double is = area * SatCurrentLaw(3e-15, n, 1.11, 3.0, 25.0, temp);
  const double r_total = 470.0 + 2.5 / area;
  ASSERT_EQ(json["rows"].size(), 101u);
  for (const auto& row : json["rows"]) {
    const double v = row[0].get<double>();
    const double expected = BanwellJayakumar(v, r_total, is, n * Vt(temp));
    EXPECT_CLOSE(row[1].get<double>(), expected, 1e-8, 1e-20) << "V1 = " << v;
    EXPECT_CLOSE(row[2].get<double>(), v - 470.0 * expected, 1e-8, 1e-12) << "V1 = " << v;
  }
}

// Banwell & Jayakumar again, through the library, across ideality, series_res, area and
// temperature (the reference diode is a voltage source and one resistor away).
TEST(ClosedForms, LambertWAcrossParameters) {
  struct Case {
    double n, rs, area, temp;
  };
  for (const Case c :
       {Case{1.0, 0.0, 1.0, 25.0}, Case{1.9, 10.0, 0.5, -40.0}, Case{1.1, 0.3, 8.0, 125.0}}) {
    for (const double v : {-3.0, 0.0, 0.3, 0.6, 0.75, 1.5, 12.0}) {
      const std::string text =
          "temp " + Num(c.temp) + "\npart P diode sat_current=20n ideality=" + Num(c.n) +
          " series_res=" + Num(c.rs) + "\nvsource V1 in -> gnd " + Num(v) +
          "\nresistor R1 in -> a 100\ndiode D1 a -> gnd P area=" + Num(c.area) + "\n";
      const auto p = SolveText(text);
      ASSERT_TRUE(p.ok) << p.error;
      const double is = c.area * SatCurrentLaw(20e-9, c.n, kDefaultBandgap, 3.0, 25.0, c.temp);
      const double expected = BanwellJayakumar(v, 100.0 + c.rs / c.area, is, c.n * Vt(c.temp));
      // The closed form ends in "... - Is": near zero bias it cancels to a few ulps of Is,
      // which bounds the reference's own absolute error there.
      const double reference_roundoff = 8 * std::numeric_limits<double>::epsilon() * is;
      EXPECT_CLOSE(p.at("D1.i"), expected, 1e-9, std::max(1e-20, reference_roundoff)) << text;
    }
  }
}

// --- Constants and value codes ----------------------------------------------------------

// CODATA 2018 (exact in the 2019 SI): the expression constants of the format and the
// engine's constants carry the exact defining values.
TEST(ClosedForms, CodataConstants) {
  const auto p = SolveText(
      "vsource V1 a -> gnd 1\n"
      "resistor Rk a -> gnd (k_boltzmann * 1e23)\n"
      "resistor Rq a -> gnd (q_electron * 1e19)\n");
  ASSERT_TRUE(p.ok) << p.error;
  const auto& e = p.circuit.elements;
  EXPECT_CLOSE(e[static_cast<size_t>(p.circuit.FindElement("Rk"))].value, 1.380649, 1e-15, 0);
  EXPECT_CLOSE(e[static_cast<size_t>(p.circuit.FindElement("Rq"))].value, 1.602176634, 1e-15, 0);
  EXPECT_EQ(kBoltzmann, 1.380649e-23);            // CODATA 2018, exact
  EXPECT_EQ(kElementaryCharge, 1.602176634e-19);  // CODATA 2018, exact
}

// IEC 60062 (marking codes for resistors and capacitors), the letter-as-decimal-point
// code, through the parser: 4k7, 2R2, 1M5, 0R1, 3m3 (the values as the standard defines
// the letters; edition cited from memory).
TEST(ClosedForms, Iec60062ValueCodes) {
  const auto p = SolveText(
      "vsource V1 a -> gnd 1\n"
      "resistor R4k7 a -> gnd 4k7\n"
      "resistor R2R2 a -> gnd 2R2\n"
      "resistor R1M5 a -> gnd 1M5\n"
      "resistor R0R1 a -> gnd 0R1\n"
      "isource I3m3 a -> gnd 3m3\n");
  ASSERT_TRUE(p.ok) << p.error;
  const struct {
    const char* name;
    double value;
  } expected[] = {{"R4k7", 4.7e3}, {"R2R2", 2.2}, {"R1M5", 1.5e6}, {"R0R1", 0.1}, {"I3m3", 3.3e-3}};
  for (const auto& x : expected) {
    const int index = p.circuit.FindElement(x.name);
    ASSERT_GE(index, 0) << x.name;
    EXPECT_CLOSE(p.circuit.elements[static_cast<size_t>(index)].value, x.value, 1e-15, 0) << x.name;
  }
  // And the solved currents follow Ohm's law with those values.
  EXPECT_CLOSE(p.at("R4k7.i"), 1.0 / 4.7e3, 1e-12, 0);
  EXPECT_CLOSE(p.at("R0R1.i"), 1.0 / 0.1, 1e-12, 0);
}

// --- Junction law, series resistance, area ----------------------------------------------

// Shockley's law (W. Shockley, Bell System Technical Journal 28, 1949) with the ideality
// generalisation, inverted at a forced current, plus Ohm's law on series_res/area:
//   V = n Vt ln(I/(A Is) + 1) + I Rs / A,  Vt from CODATA 2018.
TEST(ClosedForms, JunctionLawSeriesResistanceAndArea) {
  for (const double area : {1.0, 3.0, 0.25}) {
    for (const double current : {1e-9, 1e-6, 1e-3, 0.2}) {
      const std::string text =
          "temp 26.85\n"  // 300 K
          "part P diode sat_current=4p ideality=1.6 series_res=1.5 ref_temp=26.85\n"
          "isource I1 gnd -> a " +
          Num(current) +
          "\n"
          "diode D1 a -> gnd P area=" +
          Num(area) + "\n";
      const auto p = SolveText(text);
      ASSERT_TRUE(p.ok) << p.error;
      const double n_vt = 1.6 * kK * 300.0 / kQ;
      const double vj = n_vt * std::log1p(current / (area * 4e-12));
      EXPECT_CLOSE(p.at("D1.i"), current, 1e-12, 0);
      EXPECT_CLOSE(p.at("D1.vj"), vj, 1e-9, 0) << "I = " << current << ", area " << area;
      EXPECT_CLOSE(p.at("D1.v"), vj + current * 1.5 / area, 1e-9, 0)
          << "I = " << current << ", area " << area;
      // Small-signal resistance: d/dI of the same closed form.
      EXPECT_CLOSE(p.at("D1.rd"), n_vt / (current + area * 4e-12) + 1.5 / area, 1e-6, 0);
    }
  }
}

// --- Temperature laws -------------------------------------------------------------------

// The saturation-current temperature law (netlist-format.md; published form, see
// docs/model.md: Sze & Ng, Physics of Semiconductor Devices, cited from memory), written
// out above in SatCurrentLaw: once directly against the engine's function, once through a
// solved circuit (diode at a forced current, junction voltage from the inverted law).
TEST(ClosedForms, SaturationCurrentTemperatureLaw) {
  struct Case {
    double n, eg, temp_exp, t0;
  };
  for (const Case c :
       {Case{1.0, 1.11, 3.0, 25.0}, Case{1.8, 0.69, 2.0, 27.0}, Case{1.2, 1.42, 4.5, 0.0}}) {
    for (const double t : {-55.0, -10.0, 25.0, 85.0, 150.0}) {
      DiodeModel model;
      model.sat_current = 7e-13;
      model.ideality = c.n;
      model.bandgap = c.eg;
      model.sat_temp_exp = c.temp_exp;
      model.ref_temp = c.t0;
      const double expected = SatCurrentLaw(7e-13, c.n, c.eg, c.temp_exp, c.t0, t);
      EXPECT_CLOSE(SatCurrentAt(model, t), expected, 1e-12, 0) << "T = " << t;

      const std::string text =
          "temp " + Num(t) + "\npart P diode sat_current=0.7p ideality=" + Num(c.n) +
          " bandgap=" + Num(c.eg) + " sat_temp_exp=" + Num(c.temp_exp) + " ref_temp=" + Num(c.t0) +
          "\nisource I1 gnd -> a 250u\ndiode D1 a -> gnd P\n";
      const auto p = SolveText(text);
      ASSERT_TRUE(p.ok) << p.error;
      EXPECT_CLOSE(p.at("D1.vj"), c.n * Vt(t) * std::log1p(250e-6 / expected), 1e-9, 0) << text;
    }
  }
}

// The breakdown law and its temperature law (netlist-format.md: the breakdown term
// -A Ibr exp(-(Vj + Vbr(T))/(nbr Vt)) with Vbr(T) = breakdown_v (1 + breakdown_tc (T - T0)),
// the contract's published form). At a forced reverse current Ir the junction voltage is
//   Vj = -Vbr(T) - nbr Vt ln((Ir - A Is(T) (1 - exp(Vj/(n Vt)))) / (A Ibr)),
// solved here by fixed-point iteration (the forward term is below 1e-30 of Ir).
TEST(ClosedForms, BreakdownAndItsTemperatureLaw) {
  struct Case {
    double bv, ibr, nbr, tc, area, rs;
  };
  for (const Case c : {Case{5.1, 5e-3, 1.1, 3e-4, 1.0, 8.0}, Case{12.0, 1e-4, 2.0, -8e-4, 3.0, 0.0},
                       Case{3.3, 1e-2, 1.0, 0.0, 0.5, 2.0}}) {
    for (const double t : {-40.0, 25.0, 110.0}) {
      for (const double ir : {1e-6, 1e-3, 40e-3}) {
        const std::string text =
            "temp " + Num(t) +
            "\npart Z diode sat_current=1p ideality=1.05 series_res=" + Num(c.rs) +
            " breakdown_v=" + Num(c.bv) + " breakdown_i=" + Num(c.ibr) +
            " breakdown_ideality=" + Num(c.nbr) + " breakdown_tc=" + Num(c.tc) +
            "\nisource I1 a -> gnd " + Num(ir) + "\ndiode D1 a -> gnd Z area=" + Num(c.area) + "\n";
        const auto p = SolveText(text);
        ASSERT_TRUE(p.ok) << p.error;
        const double vbr = c.bv * (1.0 + c.tc * (t - 25.0));
        const double is = c.area * SatCurrentLaw(1e-12, 1.05, kDefaultBandgap, 3.0, 25.0, t);
        double vj = -vbr;
        for (int k = 0; k < 5; ++k) {
          vj = -vbr - c.nbr * Vt(t) *
                          std::log((ir + is * std::expm1(vj / (1.05 * Vt(t)))) / (c.area * c.ibr));
        }
        EXPECT_CLOSE(p.at("D1.i"), -ir, 1e-12, 0);
        EXPECT_CLOSE(p.at("D1.vj"), vj, 1e-9, 0) << text;
        EXPECT_CLOSE(p.at("D1.v"), vj - ir * c.rs / c.area, 1e-9, 0) << text;
      }
    }
  }
}

// --- Rules of thumb (common practice, no source) ----------------------------------------

// "About 60 mV per decade of current for n = 1 at room temperature" (common practice, no
// source). Exactly: ln(10) k T / q = 59.16 mV at 25 degC (CODATA 2018 constants).
TEST(ClosedForms, SixtyMillivoltsPerDecade) {
  const auto run = testing::RunKnee("sweep - I1=1u..10m:dec1 --format json --show D1.vj",
                                    "part P diode sat_current=10f\n"
                                    "isource I1 gnd -> a 1m\n"
                                    "diode D1 a -> gnd P\n");
  ASSERT_EQ(run.status, 0) << run.err;
  const auto rows = nlohmann::json::parse(run.out)["rows"];
  ASSERT_EQ(rows.size(), 5u);
  for (size_t k = 1; k < rows.size(); ++k) {
    const double per_decade = rows[k][1].get<double>() - rows[k - 1][1].get<double>();
    EXPECT_NEAR(per_decade, 60e-3, 2e-3);                          // common practice, no source
    EXPECT_CLOSE(per_decade, std::log(10.0) * Vt(25.0), 1e-6, 0);  // CODATA 2018
  }
}

// "About -2 mV/K forward-voltage drift of a silicon diode at constant current" (common
// practice, no source), for the default part (a silicon-like diode) at 1 mA.
TEST(ClosedForms, MinusTwoMillivoltsPerKelvin) {
  const auto run = testing::RunKnee("sweep - temp=24,26 --format json --show D1.v",
                                    "part P diode\n"
                                    "isource I1 gnd -> a 1m\n"
                                    "diode D1 a -> gnd P\n");
  ASSERT_EQ(run.status, 0) << run.err;
  const auto rows = nlohmann::json::parse(run.out)["rows"];
  ASSERT_EQ(rows.size(), 2u);
  const double drift = (rows[1][1].get<double>() - rows[0][1].get<double>()) / 2.0;
  EXPECT_GT(drift, -2.5e-3);  // common practice, no source: about -2 mV/K
  EXPECT_LT(drift, -1.5e-3);
}

}  // namespace
}  // namespace knee
