// Family 2 of the reference checks: equivalences that must hold exactly (metamorphic
// checks). Each one follows from the model equations of the format contract by algebra
// alone (the derivation is beside each check), so two solves that must agree are compared
// with each other, or with a closed form, through the parser and the solver or through
// the knee binary. See docs/validation.md.
#include <gtest/gtest.h>

#include <cmath>
#include <functional>
#include <nlohmann/json.hpp>
#include <string>

#include "cli/run_knee.h"
#include "reference_util.h"
#include "test_util.h"

namespace knee {
namespace {

using testing::SolveText;

// Two converged solves agree to the solver's tolerances; both sides carry errors far below
// this (Newton converges quadratically, its stop test is 1e-6 on the last update).
constexpr double kRel = 1e-8;
constexpr double kVoltFloor = 1e-12;  // V
constexpr double kAmpFloor = 1e-15;   // A

std::string Num(double x) {
  char buffer[40];
  std::snprintf(buffer, sizeof buffer, "%.17g", x);
  return buffer;
}

// m identical diodes in series behave as one diode with ideality m*n. Derivation: with the
// current I common, each junction carries Vj = V/m; the contract's law
//   I = Is (exp(Vj/(n Vt)) - 1) - Ibr exp(-(Vj + Vbr)/(nbr Vt))
// is unchanged by Vj -> m Vj, n -> m n, Vbr -> m Vbr, nbr -> m nbr, and the series
// resistances add (m Rs). The Is(T) law depends on n only through temp_exp/n and Eg/n, so away
// from ref_temp the equivalent part also has m*temp_exp and m*Eg; Vbr(T) scales with m.
TEST(Equivalences, SeriesStringIsOneDiodeWithIdealityTimesM) {
  const int m = 3;
  for (const double temp : {25.0, 70.0, -20.0}) {
    for (const double v : {-30.0, -16.0, -1.0, 0.4, 1.2, 2.5, 8.0}) {
      std::string string_text = "temp " + Num(temp) +
                                "\npart P diode sat_current=2n ideality=1.3 series_res=0.7 "
                                "breakdown_v=5.6 breakdown_i=2m breakdown_ideality=1.2 "
                                "breakdown_tc=5e-4 bandgap=1.11 sat_temp_exp=3\n"
                                "vsource V1 in -> gnd " +
                                Num(v) +
                                "\nresistor R1 in -> a 220\n"
                                "diode D1 a -> n1 P\ndiode D2 n1 -> n2 P\ndiode D3 n2 -> gnd P\n";
      std::string one_text = "temp " + Num(temp) +
                             "\npart P diode sat_current=2n ideality=3.9 series_res=2.1 "
                             "breakdown_v=16.8 breakdown_i=2m breakdown_ideality=3.6 "
                             "breakdown_tc=5e-4 bandgap=3.33 sat_temp_exp=9\n"
                             "vsource V1 in -> gnd " +
                             Num(v) + "\nresistor R1 in -> a 220\ndiode D a -> gnd P\n";
      const auto chain = SolveText(string_text);
      const auto one = SolveText(one_text);
      ASSERT_TRUE(chain.ok) << chain.error;
      ASSERT_TRUE(one.ok) << one.error;
      EXPECT_CLOSE(chain.at("a.v"), one.at("a.v"), kRel, kVoltFloor) << v << " V, " << temp;
      EXPECT_CLOSE(chain.at("D2.i"), one.at("D.i"), kRel, kAmpFloor) << v << " V, " << temp;
      // Each diode of the string carries a third of the voltage.
      EXPECT_CLOSE(chain.at("D2.v"), one.at("D.v") / m, kRel, kVoltFloor) << v << " V";
    }
  }
}

// k identical diodes in parallel behave as one diode with area k. Derivation: the same
// voltage across each; area multiplies Is and Ibr and divides series_res (contract), so
// the area-k diode carries k times the current of one at every voltage.
TEST(Equivalences, ParallelDiodesAreOneDiodeWithAreaK) {
  for (const double v : {-25.0, -9.5, 0.0, 0.62, 1.0, 4.0}) {
    const std::string parts =
        "temp 45\npart P diode sat_current=0.5n ideality=1.7 series_res=1.2 breakdown_v=9.1 "
        "breakdown_i=1m breakdown_ideality=1.4 breakdown_tc=-2e-4\n"
        "vsource V1 in -> gnd " +
        Num(v) + "\nresistor R1 in -> a 33\n";
    const auto four = SolveText(parts +
                                "diode D1 a -> gnd P\ndiode D2 a -> gnd P\n"
                                "diode D3 a -> gnd P\ndiode D4 a -> gnd P\n");
    const auto one = SolveText(parts + "diode D a -> gnd P area=4\n");
    ASSERT_TRUE(four.ok) << four.error;
    ASSERT_TRUE(one.ok) << one.error;
    EXPECT_CLOSE(four.at("a.v"), one.at("a.v"), kRel, kVoltFloor) << v;
    EXPECT_CLOSE(4.0 * four.at("D3.i"), one.at("D.i"), kRel, kAmpFloor) << v;
    EXPECT_CLOSE(four.at("R1.i"), one.at("R1.i"), kRel, kAmpFloor) << v;
  }
}

// Two anti-parallel diodes straight across a voltage source (no resistance):
//   I = Is (exp(V/(n Vt)) - 1) - Is (exp(-V/(n Vt)) - 1) = 2 Is sinh(V/(n Vt)),
// by the definition of sinh, with Vt = k T / q (CODATA 2018: k = 1.380649e-23 J/K,
// q = 1.602176634e-19 C). Through the knee binary, a JSON sweep.
TEST(Equivalences, AntiParallelPairIsTwoIsSinh) {
  const auto run =
      testing::RunKnee("sweep - V1=-0.7..0.7:0.05 --format json --show V1.i,D1.i,D2.i",
                       "temp 25\npart P diode sat_current=6f ideality=1.25\n"
                       "vsource V1 a -> gnd 0\ndiode D1 a -> gnd P\ndiode D2 gnd -> a P\n");
  ASSERT_EQ(run.status, 0) << run.err;
  const auto rows = nlohmann::json::parse(run.out)["rows"];
  ASSERT_EQ(rows.size(), 29u);
  const double n_vt = 1.25 * 1.380649e-23 * 298.15 / 1.602176634e-19;
  for (const auto& row : rows) {
    const double v = row[0].get<double>();
    const double expected = 2.0 * 6e-15 * std::sinh(v / n_vt);
    // The source delivers the pair's current: its own current (P to N through it) is minus.
    EXPECT_CLOSE(-row[1].get<double>(), expected, 1e-9, 1e-27) << "V = " << v;
    EXPECT_CLOSE(row[2].get<double>() - row[3].get<double>(), expected, 1e-9, 1e-27) << "V = " << v;
  }
}

// A circuit exercising every element kind, breakdown, series_res, area and a device temp,
// written with its node and value choices open so that one text serves several checks.
struct Variant {
  bool mirrored = false;     // every source negated, every diode reversed
  double scale = 1.0;        // resistances x s, current sources / s, diode areas / s
  std::string ground = "g";  // which of the circuit's nodes is the reference node
};

std::string Mixed(const Variant& x) {
  const auto node = [&](const std::string& name) { return name == x.ground ? "gnd" : name; };
  const auto r = [&](const std::string& name, const std::string& a, const std::string& b,
                     double ohms) {
    return "resistor " + name + " " + node(a) + " -> " + node(b) + " " + Num(ohms * x.scale) + "\n";
  };
  const auto v = [&](const std::string& name, const std::string& p, const std::string& n,
                     double volts) {
    return "vsource " + name + " " + node(p) + " -> " + node(n) + " " +
           Num(x.mirrored ? -volts : volts) + "\n";
  };
  const auto i = [&](const std::string& name, const std::string& a, const std::string& b,
                     double amps) {
    return "isource " + name + " " + node(a) + " -> " + node(b) + " " +
           Num((x.mirrored ? -amps : amps) / x.scale) + "\n";
  };
  const auto d = [&](const std::string& name, const std::string& a, const std::string& c,
                     const std::string& part, double area, const std::string& extra = "") {
    const std::string& anode = x.mirrored ? c : a;
    const std::string& cathode = x.mirrored ? a : c;
    return "diode " + name + " " + node(anode) + " -> " + node(cathode) + " " + part +
           " area=" + Num(area / x.scale) + extra + "\n";
  };
  return "temp 40\n"
         "part S diode sat_current=3n ideality=1.8 series_res=0.4 breakdown_v=60 "
         "breakdown_i=10u\n"
         "part Z diode sat_current=1p ideality=1.1 series_res=4 breakdown_v=4.7 breakdown_i=5m "
         "breakdown_ideality=1.3 breakdown_tc=3e-4\n" +
         v("Vs", "in", "g", 9.0) + r("R1", "in", "a", 180.0) + d("D1", "a", "b", "S", 1.0) +
         d("Z1", "g", "b", "Z", 2.0) + r("R2", "b", "g", 2200.0) +
         d("D2", "b", "c", "S", 1.5, " temp=85") + r("R3", "c", "g", 1000.0) +
         i("I1", "c", "a", 2e-3) + r("R4", "a", "e", 470.0) + v("Ve", "e", "c", 1.5) +
         d("D3", "g", "a", "S", 0.5) + r("R5", "e", "g", 10e3);
}

const char* const kNodes[] = {"in", "a", "b", "c", "e", "g"};
const char* const kElements[] = {"Vs", "R1", "D1", "Z1", "R2", "D2",
                                 "R3", "I1", "R4", "Ve", "D3", "R5"};

double NodeV(const testing::SolvedPoint& p, const std::string& node, const std::string& ground) {
  return p.at((node == ground ? std::string("gnd") : node) + ".v");
}

// Swapping every source's polarity and every diode's direction mirrors the solution:
// v -> -v solves the mirrored KCL, since a reversed diode at -v carries the same current in
// its own reference direction, resistors and sources change sign with v (linearity).
TEST(Equivalences, PolarityMirror) {
  const auto plain = SolveText(Mixed({}));
  const auto mirror = SolveText(Mixed({.mirrored = true}));
  ASSERT_TRUE(plain.ok) << plain.error;
  ASSERT_TRUE(mirror.ok) << mirror.error;
  for (const std::string node : kNodes) {
    EXPECT_CLOSE(NodeV(mirror, node, "g"), -NodeV(plain, node, "g"), kRel, kVoltFloor) << node;
  }
  for (const std::string e : kElements) {
    const bool diode = e[0] == 'D' || e[0] == 'Z';
    const double sign = diode ? 1.0 : -1.0;
    EXPECT_CLOSE(mirror.at(e + ".i"), sign * plain.at(e + ".i"), kRel, kAmpFloor) << e;
  }
  // The breakdown diode is in breakdown here, and D3 reverse biased: the check covers both.
  EXPECT_LT(plain.at("Z1.vj"), -4.0);
  EXPECT_LT(plain.at("D3.vj"), 0.0);
}

// Impedance scaling: every resistance x s, every current source / s and every diode area
// / s (area divides series_res, so series resistances also scale by s, and multiplies the
// junction currents by 1/s) leaves every node voltage unchanged and scales every current
// by 1/s: each KCL equation is multiplied by 1/s. (Without the area scaling the relation
// does not hold for a diode network: the junction law fixes current against voltage.)
TEST(Equivalences, ImpedanceScaling) {
  const auto plain = SolveText(Mixed({}));
  ASSERT_TRUE(plain.ok) << plain.error;
  for (const double s : {7.5, 1.0 / 3.0, 1e3}) {
    const auto scaled = SolveText(Mixed({.scale = s}));
    ASSERT_TRUE(scaled.ok) << scaled.error;
    for (const std::string node : kNodes) {
      EXPECT_CLOSE(NodeV(scaled, node, "g"), NodeV(plain, node, "g"), kRel, kVoltFloor)
          << node << ", s = " << s;
    }
    for (const std::string e : kElements) {
      EXPECT_CLOSE(scaled.at(e + ".i"), plain.at(e + ".i") / s, kRel, kAmpFloor)
          << e << ", s = " << s;
    }
  }
}

// Moving the reference node to another node shifts every node voltage by the same
// constant (KCL involves voltage differences only) and leaves every current unchanged.
TEST(Equivalences, MovingTheGround) {
  const auto plain = SolveText(Mixed({}));
  ASSERT_TRUE(plain.ok) << plain.error;
  for (const std::string ground : {"b", "in", "e"}) {
    const auto moved = SolveText(Mixed({.ground = ground}));
    ASSERT_TRUE(moved.ok) << moved.error;
    const double shift = NodeV(plain, ground, "g");
    for (const std::string node : kNodes) {
      EXPECT_CLOSE(NodeV(moved, node, ground), NodeV(plain, node, "g") - shift, kRel, 1e-9)
          << node << ", ground at " << ground;
    }
    for (const std::string e : kElements) {
      EXPECT_CLOSE(moved.at(e + ".i"), plain.at(e + ".i"), kRel, kAmpFloor)
          << e << ", ground at " << ground;
    }
  }
}

}  // namespace
}  // namespace knee
