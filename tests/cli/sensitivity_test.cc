// knee sensitivity: the adjoint derivatives of every demo circuit's shown quantities with
// respect to every number of the circuit and every param, against central finite
// differences with Richardson extrapolation (Ridders' tables, tests/finite_difference.h);
// closed forms of a divider and of a diode behind a resistor (Lambert W); and the
// command's formats and errors.
#include "sensitivity.h"

#include <fmt/format.h>
#include <gtest/gtest.h>

#include <boost/math/special_functions/lambert_w.hpp>
#include <cmath>
#include <cstdio>
#include <filesystem>
#include <nlohmann/json.hpp>
#include <sstream>

#include "finite_difference.h"
#include "knee/netlist.h"
#include "knee/quantity.h"
#include "run_knee.h"
#include "test_util.h"

namespace knee::cli {
namespace {

using knee::testing::IsClose;
using knee::testing::RiddersDerivative;
using knee::testing::SourcePath;

SolverOptions Tight() {
  SolverOptions o;
  o.abs_voltage_tol = 1e-15;
  o.abs_current_tol = 1e-21;
  o.rel_tol = 1e-14;
  return o;
}

std::optional<Solution> SolveCircuit(const Circuit& c, const SolverOptions& o) {
  auto solver = BiasSolver::Create(c, o);
  if (!solver) return std::nullopt;
  Solution s;
  if ((*solver)->Solve(&s).status != SolveStatus::kConverged) return std::nullopt;
  return s;
}

struct Loaded {
  std::optional<Netlist> netlist;
  std::optional<Design> design;
};

// `file` places the netlist, so that a part's fit="FILE" is found beside it.
Loaded Load(const std::string& text, const Overrides& overrides = {},
            const std::string& file = "test.knee") {
  Loaded l;
  auto netlist = ParseNetlist(text, file);
  EXPECT_TRUE(netlist.ok());
  if (!netlist.ok()) return l;
  l.netlist = *netlist;
  auto design = Elaborate(*l.netlist, overrides);
  EXPECT_TRUE(design.ok()) << (design.ok() ? "" : design.errors().front().message);
  if (design.ok()) l.design = std::move(*design);
  return l;
}

// Q at the target's value `v`: an engine target set in a copy of the circuit, a param
// given again through an override (elaboration follows it through every value).
double QuantityAt(const Netlist& netlist, const Design& design, const QuantityExpr& q,
                  const NamedTarget& t, double v) {
  Circuit c;
  if (t.is_param) {
    Overrides o;
    o.sets.push_back({t.name, fmt::format("{:.17g}", v)});
    auto moved = ElaborateCircuit(netlist, o);
    EXPECT_TRUE(moved.ok());
    if (!moved.ok()) return std::nan("");
    c = std::move(*moved);
  } else {
    c = design.circuit;
    SetTargetValue(&c, t.target, v);
  }
  const auto s = SolveCircuit(c, Tight());
  EXPECT_TRUE(s.has_value()) << t.name << " = " << v;
  return s ? q.Evaluate(*s) : std::nan("");
}

std::string ReadFile(const std::string& path) { return knee::testing::ReadWhole(path); }

// Acceptance: on every demo circuit, every shown quantity against every number of the
// circuit and every param agrees with the finite differences to 1e-6 relative or 1e-12
// absolute; where the differences are themselves noisier than that (a derivative that
// vanishes beside the solution's rounding), to their own error estimate, which must stay
// below 1e-9 absolute or 1e-9 in normalized terms.
TEST(Sensitivity, EveryDemoAgainstFiniteDifferences) {
  int pairs = 0, by_absolute = 0, by_estimate = 0;
  double worst_relative = 0.0;
  for (const auto& entry : std::filesystem::directory_iterator(SourcePath("netlists"))) {
    if (entry.path().extension() != ".knee") continue;
    SCOPED_TRACE(entry.path().filename().string());
    Loaded l = Load(ReadFile(entry.path().string()), {}, entry.path().string());
    ASSERT_TRUE(l.design.has_value());
    const Design& design = *l.design;
    auto solver = BiasSolver::Create(design.circuit, SolverOptions{});
    ASSERT_TRUE(solver.ok());
    Solution solution;
    ASSERT_EQ((*solver)->Solve(&solution).status, SolveStatus::kConverged);
    ASSERT_FALSE(design.show.empty());
    // A self-heated demo: its sensitivities are refused, not computed (docs/thermal.md,
    // "Limits"), and that is what is checked for it.
    bool heated = false;
    for (size_t e = 0; e < design.circuit.elements.size(); ++e) {
      heated = heated || design.circuit.SelfHeated(static_cast<int>(e));
    }
    if (heated) {
      CircuitGradient g;
      const Status refused = (*solver)->Sensitivity(WeightsOf(design.show[0], solution), &g);
      ASSERT_FALSE(refused.ok());
      EXPECT_NE(refused.errors().front().message.find("self-heating"), std::string::npos);
      continue;
    }
    const std::vector<NamedTarget> targets = NamedTargets(design);
    for (const QuantityExpr& q : design.show) {
      CircuitGradient g;
      const std::vector<WeightedQuantity> w = WeightsOf(q, solution);
      ASSERT_TRUE((*solver)->Sensitivity(w, &g).ok());
      for (const NamedTarget& t : targets) {
        const double adjoint = DerivativeOf(t, design, g);
        // Two tables, from 1 % and from 10 % of the value: the one that agrees with itself
        // better (a derivative near the solution's rounding needs the longer steps).
        const double scale = t.value != 0.0 ? std::fabs(t.value) : 1.0;
        const auto at = [&](double v) { return QuantityAt(*l.netlist, design, q, t, v); };
        auto fd = RiddersDerivative(at, t.value, 1e-2 * scale);
        if (const auto longer = RiddersDerivative(at, t.value, 0.1 * scale);
            longer.error < fd.error) {
          fd = longer;
        }
        // "Vanishing" in normalized terms: (x/Q) dQ/dx below 1e-9 (1e-9 A per A of a
        // 1 pA saturation current is not 1e-9 of anything that matters).
        const double q_value = q.Evaluate(solution);
        const double vanishing = 1e-9 * (t.value != 0.0 ? std::fabs(q_value / t.value) : 1.0);
        EXPECT_LE(fd.error, std::max(1e-9, vanishing) + 1e-6 * std::fabs(fd.derivative))
            << q.text() << " / " << t.name;
        EXPECT_TRUE(IsClose(adjoint, fd.derivative, 1e-6, std::max(1e-12, 4.0 * fd.error)))
            << "d " << q.text() << " / d " << t.name;
        ++pairs;
        const double error = std::fabs(adjoint - fd.derivative);
        if (error <= 1e-6 * std::fabs(fd.derivative)) {
          worst_relative = std::max(worst_relative, error / std::fabs(fd.derivative));
        } else if (error <= 1e-12) {
          ++by_absolute;
        } else {
          ++by_estimate;
        }
      }
    }
  }
  std::printf(
      "sensitivity pairs checked: %d; worst relative disagreement %.3g; %d pairs "
      "within 1e-12 absolute only, %d within the differences' own error estimate "
      "only\n",
      pairs, worst_relative, by_absolute, by_estimate);
  EXPECT_GT(pairs, 100);
}

// Closed form of a divider V1 - R1 - out - R2 - gnd: Vout = V R2/(R1 + R2), so
// dVout/dR1 = -V R2/(R1 + R2)^2 and dVout/dR2 = V R1/(R1 + R2)^2.
TEST(Sensitivity, DividerClosedForm) {
  Loaded l = Load(
      "vsource V1 in -> gnd 10\nresistor R1 in -> out 1k\n"
      "resistor R2 out -> gnd 3k3\nshow out.v\n");
  ASSERT_TRUE(l.design.has_value());
  auto solver = BiasSolver::Create(l.design->circuit, SolverOptions{});
  Solution s;
  ASSERT_EQ((*solver)->Solve(&s).status, SolveStatus::kConverged);
  CircuitGradient g;
  ASSERT_TRUE((*solver)->Sensitivity(WeightsOf(l.design->show.front(), s), &g).ok());
  const double v = 10, r1 = 1e3, r2 = 3.3e3;
  EXPECT_CLOSE(g.value[1], -v * r2 / ((r1 + r2) * (r1 + r2)), 1e-12, 0.0);
  EXPECT_CLOSE(g.value[2], v * r1 / ((r1 + r2) * (r1 + r2)), 1e-12, 0.0);
  EXPECT_CLOSE(g.value[0], r2 / (r1 + r2), 1e-12, 0.0);
}

// A diode (Is, n, no series resistance, no breakdown) fed from V through R: the current
// is I = (n Vt/R) W(a e^b) - Is with a = Is R/(n Vt), b = (V + Is R)/(n Vt) (Banwell &
// Jayakumar, Electronics Letters 36(4), 2000), and the diode voltage Vd = V - I R. With
// u = a e^b and w = W(u), dW/du = w/(u (1 + w)), so
//   dI/dIs = (n Vt/R) w/(1 + w) (1/Is + R/(n Vt)) - 1,
//   dI/dn  = I/n - (n Vt/R) w/(1 + w) (ln a... ) written via du/dn = -u (1 + b)/n,
// i.e. dI/dn = (Vt/R) w - (n Vt/R) w/(1 + w) (1 + b)/n, and dVd/dp = -R dI/dp. W from
// Boost.Math (lambert_w0).
TEST(Sensitivity, DiodeBehindResistorLambertW) {
  const double v = 5.0, r = 1e3, is = 1e-14, n = 1.0;
  const double vt = 1.380649e-23 * 298.15 / 1.602176634e-19;  // CODATA 2018 exact k, q
  Loaded l = Load(
      "part d1 diode sat_current=1e-14 ideality=1 ref_temp=25\nvsource V1 a -> gnd 5\n"
      "resistor R1 a -> k 1k\ndiode D1 k -> gnd d1\ntemp 25\nshow k.v\n");
  ASSERT_TRUE(l.design.has_value());
  auto solver = BiasSolver::Create(l.design->circuit, SolverOptions{});
  Solution s;
  ASSERT_EQ((*solver)->Solve(&s).status, SolveStatus::kConverged);
  CircuitGradient g;
  ASSERT_TRUE((*solver)->Sensitivity(WeightsOf(l.design->show.front(), s), &g).ok());
  const double nvt = n * vt;
  const double a = is * r / nvt, b = (v + is * r) / nvt;
  // W(a e^b) through log-space: a e^b overflows; lambert_w0 of a huge argument is fine
  // in double here (a e^b = 3.9e72).
  const double u = a * std::exp(b);
  const double w = boost::math::lambert_w0(u);
  const double q = w / (1.0 + w);
  const double di_dis = (nvt / r) * q * (1.0 / is + r / nvt) - 1.0;
  const double di_dn = (vt / r) * w - (nvt / r) * q * (1.0 + b) / n;
  EXPECT_CLOSE(g.part[0][static_cast<size_t>(ModelKey::kSatCurrent)], -r * di_dis, 1e-9, 0.0);
  EXPECT_CLOSE(g.part[0][static_cast<size_t>(ModelKey::kIdeality)], -r * di_dn, 1e-9, 0.0);
}

TEST(Sensitivity, CommandFormatsAndErrors) {
  using knee::testing::RunKnee;
  const std::string file = SourcePath("netlists/reference-regulator.knee");
  auto csv = RunKnee("sensitivity " + file + " --of ref.v --format csv");
  EXPECT_EQ(csv.status, 0) << csv.err;
  std::istringstream lines(csv.out);
  std::string header, first;
  std::getline(lines, header);
  std::getline(lines, first);
  EXPECT_EQ(header, "quantity,target,value,derivative,normalized");
  EXPECT_EQ(first.rfind("ref.v,ref_5v1.breakdown_v,", 0), 0u) << first;  // ranked first
  auto json = RunKnee("sensitivity " + file + " --format json");
  ASSERT_EQ(json.status, 0) << json.err;
  const auto j = nlohmann::json::parse(json.out);
  EXPECT_EQ(j["format"], "knee-sensitivity/1");
  EXPECT_EQ(j["quantities"].size(), 4u);  // the file's show list
  EXPECT_TRUE(j["quantities"][0]["budget"].is_null());
  // A param reaches the resistor: the same derivative under both names.
  double rs = 0, rser = 0;
  for (const auto& line : j["quantities"][0]["sensitivities"]) {
    if (line["target"] == "Rs") rs = line["derivative"];
    if (line["target"] == "Rser") rser = line["derivative"];
  }
  EXPECT_NE(rs, 0.0);
  EXPECT_EQ(rs, rser);
  auto bad = RunKnee("sensitivity " + file + " --of ref.q");
  EXPECT_EQ(bad.status, 2);
  EXPECT_NE(bad.err.find("--of"), std::string::npos) << bad.err;
  EXPECT_TRUE(bad.out.empty());
  const std::string svg = knee::testing::TempPath("sens.svg");
  auto plot = RunKnee("sensitivity " + file + " --plot " + svg);
  EXPECT_EQ(plot.status, 0);
  EXPECT_NE(knee::testing::ReadWhole(svg).find("<rect"), std::string::npos);
  std::remove(svg.c_str());
}

// knee sweep --sensitivity Q: at each point the columns equal knee sensitivity's
// derivatives at that point (the file's Vraw is 12 V, the sweep's middle point).
TEST(Sensitivity, SweepColumnsMatchTheBiasPointCommand) {
  using knee::testing::RunKnee;
  const std::string file = SourcePath("netlists/reference-regulator.knee");
  auto sweep = RunKnee("sweep " + file + " Vraw=9..15:3 --sensitivity ref.v --format json --quiet");
  ASSERT_EQ(sweep.status, 0) << sweep.err;
  const auto s = nlohmann::json::parse(sweep.out);
  auto bias = RunKnee("sensitivity " + file + " --of ref.v --format json");
  ASSERT_EQ(bias.status, 0) << bias.err;
  const auto b = nlohmann::json::parse(bias.out);
  int matched = 0;
  for (const auto& line : b["quantities"][0]["sensitivities"]) {
    const std::string name = "d(ref.v)/d(" + line["target"].get<std::string>() + ")";
    for (size_t c = 0; c < s["columns"].size(); ++c) {
      if (s["columns"][c]["name"] != name) continue;
      EXPECT_TRUE(
          IsClose(s["rows"][1][c].get<double>(), line["derivative"].get<double>(), 1e-9, 1e-300))
          << name;
      ++matched;
    }
  }
  EXPECT_GT(matched, 10);
  auto bad = RunKnee("sweep " + file + " Vraw=9..15:3 --sensitivity ref.x --quiet");
  EXPECT_EQ(bad.status, 2);
  EXPECT_NE(bad.err.find("--sensitivity"), std::string::npos) << bad.err;
}

}  // namespace
}  // namespace knee::cli
