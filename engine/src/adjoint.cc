// The adjoint method on the MNA system (adjoint.h; docs/sensitivity.md).
#include "adjoint.h"

#include <algorithm>
#include <cmath>
#include <limits>

#if defined(__SSE2__)
#include <xmmintrin.h>
#endif

#include "check.h"
#include "diode_sensitivity.h"

namespace knee::internal {
namespace {

constexpr double kEps = std::numeric_limits<double>::epsilon();
// A refined lambda is accepted when its last correction is at most this fraction of it.
constexpr double kAcceptCorrection = 1e-10;
// A correction this small (relative to lambda) leaves an error of about its square: the
// factors' contraction is the correction's own relative size, so refinement stops there.
constexpr double kQuadraticCorrection = 1e-8;

double MaxAbs(std::span<const double> v) {
  double m = 0.0;
  for (double a : v) m = std::max(m, std::fabs(a));
  return m;
}

double X(std::span<const double> x, int u) { return u < 0 ? 0.0 : x[static_cast<size_t>(u)]; }

void AddIncidence(const Incidence& w, double weight, std::span<double> b) {
  for (int k = 0; k < w.count; ++k) {
    b[static_cast<size_t>(w.index[static_cast<size_t>(k)])] +=
        weight * w.coef[static_cast<size_t>(k)];
  }
}

// One element's terminals in the solver's coordinates and its voltage at x.
struct Terminals {
  Incidence w;
  double v = 0.0;
};
Terminals TerminalsOf(const Circuit& c, const MnaSystem& mna, std::span<const double> x,
                      int element) {
  const Element& e = c.elements[static_cast<size_t>(element)];
  const int a = UnknownOfNode(e.node_a), b = UnknownOfNode(e.node_b);
  return Terminals{mna.islands().Between(a, b), X(x, a) - X(x, b)};
}

// A diode's local slopes and the chain of its constants, for a quantity that reads it.
struct DiodeAt {
  DiodeConstants d;
  DiodeLocalSlopes local;
};
DiodeAt DiodeOf(const Circuit& c, int element, double v) {
  const Element& e = c.elements[static_cast<size_t>(element)];
  DiodeAt at;
  at.d = ComputeDiodeConstants(c.parts[static_cast<size_t>(e.part)].model, e.area, c.DeviceTemp(e));
  at.local = LocalSlopes(at.d, v, v);
  return at;
}
void AddDiodeExplicit(const Circuit& c, int element, const DiodeAt& at, const ConstantSlopes& dq,
                      double weight, CircuitGradient* g) {
  const Element& e = c.elements[static_cast<size_t>(element)];
  ConstantSlopes s{};
  for (size_t k = 0; k < s.size(); ++k) s[k] = weight * dq[k];
  AddConstantSlopes(
      c, element,
      ComputeConstantJacobian(c.parts[static_cast<size_t>(e.part)].model, e.area, c.DeviceTemp(e)),
      ConstantsAreaSlopes(at.d, e.area), s, g);
}

double ElementCurrent(const Circuit& c, const MnaSystem& mna, std::span<const double> x,
                      int element, double v) {
  const Element& e = c.elements[static_cast<size_t>(element)];
  switch (e.kind) {
    case ElementKind::kResistor:
      return v / e.value;
    case ElementKind::kVoltageSource:
      return X(x, mna.BranchUnknown(element));
    case ElementKind::kCurrentSource:
      return e.value;
    case ElementKind::kDiode:
      return DiodeOf(c, element, v).local.current;
  }
  return 0.0;
}

// weight * dq/dx into b (solver coordinates) and weight * dq/dp|explicit into *g.
void AddQuantity(const Circuit& c, const MnaSystem& mna, std::span<const double> x,
                 const QuantityRef& ref, double weight, std::span<double> b, CircuitGradient* g) {
  if (ref.kind == QuantityKind::kNodeVoltage) {
    AddIncidence(mna.islands().Between(UnknownOfNode(ref.index), -1), weight, b);
    return;
  }
  const int element = ref.index;
  const Element& e = c.elements[static_cast<size_t>(element)];
  const Terminals t = TerminalsOf(c, mna, x, element);
  switch (ref.kind) {
    case QuantityKind::kNodeVoltage:
      break;
    case QuantityKind::kElementVoltage:
      AddIncidence(t.w, weight, b);
      break;
    case QuantityKind::kElementPower: {
      // p = v i: dp = i dv + v di.
      const double i = ElementCurrent(c, mna, x, element, t.v);
      AddQuantity(c, mna, x, {QuantityKind::kElementVoltage, element}, weight * i, b, g);
      AddQuantity(c, mna, x, {QuantityKind::kElementCurrent, element}, weight * t.v, b, g);
      break;
    }
    case QuantityKind::kElementCurrent:
      switch (e.kind) {
        case ElementKind::kResistor:  // i = v/R
          AddIncidence(t.w, weight / e.value, b);
          g->value[static_cast<size_t>(element)] -= weight * t.v / (e.value * e.value);
          break;
        case ElementKind::kVoltageSource:
          b[static_cast<size_t>(mna.BranchUnknown(element))] += weight;
          break;
        case ElementKind::kCurrentSource:
          g->value[static_cast<size_t>(element)] += weight;
          break;
        case ElementKind::kDiode: {
          const DiodeAt at = DiodeOf(c, element, t.v);
          AddIncidence(t.w, weight * at.local.di_dv, b);
          AddDiodeExplicit(c, element, at, at.local.di, weight, g);
          break;
        }
      }
      break;
    case QuantityKind::kJunctionVoltage: {
      const DiodeAt at = DiodeOf(c, element, t.v);
      AddIncidence(t.w, weight * at.local.dvj_dv, b);
      AddDiodeExplicit(c, element, at, at.local.dvj, weight, g);
      break;
    }
    case QuantityKind::kSmallSignalRes: {
      const DiodeAt at = DiodeOf(c, element, t.v);
      AddIncidence(t.w, weight * at.local.drd_dv, b);
      AddDiodeExplicit(c, element, at, at.local.drd, weight, g);
      break;
    }
    case QuantityKind::kJunctionTemp:
    case QuantityKind::kSinkTemp:
      break;  // refused by ComputeSensitivity
  }
}

enum class Refined { kConverged, kStalled, kFailed };

// Iterative refinement of J^T lambda = b against the device-by-device product of the
// exact Jacobian of the last assembly, with factors of (an approximation of) it. Every
// device stamps a symmetric block (g w w^T, or a source's incidence in its column and
// the same in its row), so J^T v = J v = MultiplyJacobian(v).
Refined Refine(const MnaSystem& mna, KluSolver& factors, std::span<const double> b,
               AdjointWorkspace& ws) {
  double previous = std::numeric_limits<double>::infinity();
  for (int k = 0; k < kAdjointRefinements; ++k) {
    mna.MultiplyJacobian(ws.lambda, ws.residual);
    for (size_t i = 0; i < b.size(); ++i) ws.correction[i] = b[i] - ws.residual[i];
    if (factors.SolveTransposed(ws.correction) != LinearStatus::kOk) return Refined::kFailed;
    for (size_t i = 0; i < b.size(); ++i) ws.lambda[i] += ws.correction[i];
    const double size = MaxAbs(ws.correction);
    const double scale = MaxAbs(ws.lambda);
    if (!std::isfinite(size) || !std::isfinite(scale)) return Refined::kFailed;
    if (size <= 4.0 * kEps * scale) return Refined::kConverged;
    if (k == 0 && size <= kQuadraticCorrection * scale) return Refined::kConverged;
    // Rounding stops the corrections somewhere; when they stop shrinking there, lambda is
    // as good as these factors make it.
    if (size > 0.5 * previous) {
      return size <= kAcceptCorrection * scale ? Refined::kConverged : Refined::kStalled;
    }
    previous = size;
  }
  return previous <= kAcceptCorrection * MaxAbs(ws.lambda) ? Refined::kConverged
                                                           : Refined::kStalled;
}

// lambda = J^-T b with `factors`, refined. False when the solve fails.
Refined SolveWith(const MnaSystem& mna, KluSolver& factors, std::span<const double> b,
                  AdjointWorkspace& ws) {
  std::copy(b.begin(), b.end(), ws.lambda.begin());
  if (factors.SolveTransposed(ws.lambda) != LinearStatus::kOk) return Refined::kFailed;
  return Refine(mna, factors, b, ws);
}

// Fresh factors of the exact Jacobian in ws.own ("" or a message).
std::string FactorOwn(const MnaSystem& mna, AdjointWorkspace& ws) {
  // The pattern can change between calls (a solve may root islands anew).
  const bool same = ws.own && std::ranges::equal(ws.col_ptr, mna.col_ptr()) &&
                    std::ranges::equal(ws.row_index, mna.row_index());
  if (!same) {
    ws.own.emplace();
    ws.col_ptr.assign(mna.col_ptr().begin(), mna.col_ptr().end());
    ws.row_index.assign(mna.row_index().begin(), mna.row_index().end());
    if (ws.own->Analyze(mna.size(), mna.col_ptr(), mna.row_index()) != LinearStatus::kOk) {
      std::string problem = ws.own->message();
      ws.own.reset();
      return problem;
    }
  }
  // Its own pivots from the last call (a sweep's previous point), else fresh ones.
  if (ws.own->Refactor(mna.values()) != LinearStatus::kOk) return ws.own->message();
  return "";
}

// Subnormal numbers flushed to zero while it lives (x86: the MXCSR FTZ and DAZ bits),
// restored after. An adjoint vector decays geometrically away from its quantity (along a
// ladder of 1e5 stages, past 1e-308 within a few hundred), and arithmetic on subnormals
// is about a hundred times slower on common processors (a transposed solve took 9 ms
// instead of 1.5 ms). What is flushed is below 2.2e-308 of the quantity's unit per
// residual unit: no derivative the report can show.
class FlushSubnormals {
 public:
#if defined(__SSE2__)
  FlushSubnormals() : saved_(_mm_getcsr()) { _mm_setcsr(saved_ | kFtz | kDaz); }
  ~FlushSubnormals() { _mm_setcsr(saved_); }

 private:
  static constexpr unsigned kFtz = 0x8000, kDaz = 0x0040;
  unsigned saved_;
#endif
};

}  // namespace

std::string ComputeSensitivity(const Circuit& circuit, MnaSystem& mna, KluSolver& klu,
                               bool factors_exact, std::span<const double> x,
                               std::span<const WeightedQuantity> quantity, AdjointWorkspace& ws,
                               CircuitGradient* gradient) {
  KNEE_CHECK(static_cast<int>(x.size()) == mna.size());
  gradient->Reset(circuit);
  const FlushSubnormals flush;
  const auto n = x.size();
  ws.rhs.assign(n, 0.0);
  ws.lambda.resize(n);  // the others are written before they are read
  ws.residual.resize(n);
  ws.correction.resize(n);
  for (const WeightedQuantity& q : quantity) {
    if (q.weight != 0.0 &&
        (q.ref.kind == QuantityKind::kJunctionTemp || q.ref.kind == QuantityKind::kSinkTemp)) {
      return "the sensitivity of a temperature (.tj, .t) is not computed (docs/thermal.md)";
    }
  }
  for (const WeightedQuantity& q : quantity) {
    if (q.weight != 0.0) AddQuantity(circuit, mna, x, q.ref, q.weight, ws.rhs, gradient);
  }
  // The exact Jacobian at x (skipped when the verification left it assembled).
  const AssemblyOutcome exact = mna.AssembleExact(x);
  if (!exact.finite) return "the circuit's equations are not finite at the solution";
  // The solve's factors are of the Jacobian one step before x when factors_exact, else of
  // a matrix near it (the potential method's last step): refinement against the exact
  // product tells whether they serve.
  static_cast<void>(factors_exact);
  Refined r = klu.has_factors() ? SolveWith(mna, klu, ws.rhs, ws) : Refined::kFailed;
  if (r != Refined::kConverged) {
    if (std::string problem = FactorOwn(mna, ws); !problem.empty()) {
      return "the adjoint system cannot be solved: " + problem;
    }
    r = SolveWith(mna, *ws.own, ws.rhs, ws);
    if (r == Refined::kFailed) {
      return "the adjoint system cannot be solved: " + ws.own->message();
    }
  }
  mna.devices().AddSensitivity(circuit, x, ws.lambda, gradient);
  return "";
}

}  // namespace knee::internal
