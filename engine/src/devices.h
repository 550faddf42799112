// One small class per circuit element with a uniform interface: declare matrix entries
// once (each becomes a value slot of the CSC array), then stamp numbers into those slots
// and into the residual for a given unknown vector. Rows and columns are unknown
// indices; -1 is gnd and is never stamped.
#pragma once

#include <algorithm>
#include <array>
#include <cmath>
#include <functional>
#include <memory>
#include <span>
#include <utility>
#include <vector>

#include "knee/circuit.h"
#include "knee/diode_law.h"
#include "knee/sensitivity.h"

namespace knee::internal {

// A two-terminal element's incidence in the solver's coordinates: the rows (and
// columns) it touches, each with coefficient +1 or -1. In plain nodal coordinates that
// is {p: +1, q: -1}; see IslandMap for the others.
struct Incidence {
  std::array<int, 4> index{};
  std::array<double, 4> coef{};
  int count = 0;
};

// Island coordinates. A group of nodes joined to each other by resistors and voltage
// sources but not to gnd (a bridge's dc side, a mesh held only by junctions) is an
// island; its heaviest node (FindIslands, mna.cc) is its root. For every other member u
// the solver's unknown is the offset z_u = x_u - x_root, and the root's row is the sum of
// the island's KCL rows.
// A resistor inside an island then adds nothing to the root's row or column: its terms
// cancel exactly, by construction, instead of leaving 1/R + g - 1/R to rounding, which
// loses the junction conductances g that alone hold the island (a pA/V junction against
// milliohms is below eps/R). The change of coordinates is exact; x stays the solver's
// state and steps are mapped back with ToNodeSpace.
class IslandMap {
 public:
  IslandMap() = default;
  // root_of[u]: the root unknown of node unknown u when u is a non-root island member,
  // else -1. Node unknowns are [0, root_of.size()).
  explicit IslandMap(std::vector<int> root_of) : root_of_(std::move(root_of)) {}
  // e(p) - e(q) with e(u) = {u} plus {root(u)} for a member; gnd (-1) contributes
  // nothing; equal indices are merged and zero coefficients dropped.
  Incidence Between(int p, int q) const;
  int root_of(int u) const {
    return u >= 0 && u < static_cast<int>(root_of_.size()) ? root_of_[static_cast<size_t>(u)] : -1;
  }
  bool empty() const { return members_ == 0; }
  void set_members(int n) { members_ = n; }
  // dx_u += dx_root for every member: a step in island coordinates to node voltages.
  void ToNodeSpace(std::span<double> d) const;

 private:
  std::vector<int> root_of_;
  int members_ = 0;
};

// Collects (row, col) entries during setup; each Add returns a ticket that the
// assembler later turns into a slot of the CSC value array.
class EntryCollector {
 public:
  explicit EntryCollector(const IslandMap* islands) : islands_(islands) {}
  const IslandMap& islands() const { return *islands_; }
  // Ticket of entry (row, col), or -1 when either index is gnd.
  int Add(int row, int col) {
    if (row < 0 || col < 0) return -1;
    entries_.push_back({row, col});
    return static_cast<int>(entries_.size()) - 1;
  }
  struct Entry {
    int row;
    int col;
  };
  const std::vector<Entry>& entries() const { return entries_; }

 private:
  const IslandMap* islands_;
  std::vector<Entry> entries_;
};

// Everything a device writes during one assembly pass. F(x) is the residual: for a node
// row, the sum of currents leaving the node through devices (KCL); for a vsource branch
// row, the voltage error. `flow` is, per row, the largest current magnitude of a device
// at that node (the scale of the KCL tolerance). `magnitude` is, per row, the sum of the
// magnitudes of the terms that make up F_r (each current and each g*v product entering
// it): floating-point evaluation of F_r is uncertain by a few eps times this.
struct StampContext {
  std::span<const double> x;
  std::span<double> values;          // Jacobian dF/dx, in CSC slot order
  std::span<double> residual;        // F(x)
  std::span<double> flow;            // A
  std::span<double> magnitude;       // A (KCL rows) or V (branch rows)
  std::span<double> node_flow;       // A, per node unknown: its own largest device current
  std::span<double> node_magnitude;  // A, per node unknown: its own terms (as magnitude)
  std::span<double> node_kcl;        // A, per node unknown: its own KCL sum
  // (the three node_ spans are empty in a circuit without islands)
  double source_scale = 1.0;  // independent sources are multiplied by this
  bool limit_junctions = false;
  bool limited = false;  // out: some junction's evaluation point was limited
  // out: first diode whose junction voltage is lost in the rounding of its node voltages
  // (see Diode::Stamp); -1 when every junction is resolved.
  int unresolved_element = -1;
  // The potential method (docs/solver.md, "The potential method"): when want_potential is
  // set, every device adds its co-content at x (the integral of its current over its
  // voltage; sources: the linear term) to `potential`, and the magnitude of that term to
  // `potential_magnitude` (the round-off scale of the sum).
  bool want_potential = false;
  // > 0: every junction stamps this conductance into the Jacobian instead of its own
  // (the potential method's step onto the voltage sources' constraints; residual as usual).
  double stiff_junction = 0.0;  // S
  // The potential method's Hessian modification: every junction stamps at least its
  // zero-bias conductance Is/(n*Vt) into the Jacobian (residual and potential exact).
  bool junction_floor = false;
  // Out, when want_potential: the largest logarithm of a junction law's exponential term
  // at x (forward ln(is) + vj/(n*Vt), breakdown ln(ibr) - (vj+Vbr)/(nbr*Vt)), ln A; the
  // potential method keeps trial points below a cap on it. Otherwise left as it is.
  double max_log_current = -1e300;
  double potential = 0.0;            // W
  double potential_magnitude = 0.0;  // W
  void AddPotential(double c) {
    potential += c;
    potential_magnitude += c < 0.0 ? -c : c;
  }

  double X(int u) const { return u < 0 ? 0.0 : x[static_cast<size_t>(u)]; }
  void AddValue(int slot, double v) {
    if (slot >= 0) values[static_cast<size_t>(slot)] += v;
  }
  // Current `i` leaves row `row` (i.e. flows from that node into the device).
  void AddCurrent(int row, double i) {
    if (row < 0) return;
    const auto r = static_cast<size_t>(row);
    residual[r] += i;
    flow[r] = std::max(flow[r], std::fabs(i));
    magnitude[r] += std::fabs(i);
  }
  // Current `i` flows through a two-terminal element with incidence w (from its first
  // terminal to its second), and its rounding scale `terms` enters every row it touches.
  // a and b are the element's node unknowns (-1 for gnd): node_kcl, node_flow and
  // node_magnitude keep each node's own KCL sum, largest current and terms, which an
  // island root's row (the island's sum) does not show.
  void AddBranch(const Incidence& w, double i, double terms, int a, int b) {
    AddOwnSums(i, terms, a, b);
    for (int k = 0; k < w.count; ++k) {
      AddCurrent(w.index[static_cast<size_t>(k)], w.coef[static_cast<size_t>(k)] * i);
      AddMagnitude(w.index[static_cast<size_t>(k)], terms);
    }
  }
  // AddBranch for the incidence {a: +1, b: -1} of plain nodal coordinates (a != b; gnd,
  // -1, is skipped by AddCurrent and AddMagnitude): the same sums in the same order.
  void AddPlainBranch(double i, double terms, int a, int b) {
    AddOwnSums(i, terms, a, b);
    AddCurrent(a, i);
    AddMagnitude(a, terms);
    AddCurrent(b, -1.0 * i);
    AddMagnitude(b, terms);
  }
  // The node_ sums of AddBranch (kept only in circuits with islands).
  void AddOwnSums(double i, double terms, int a, int b) {
    if (node_kcl.empty()) return;  // no islands: nobody reads them
    const double magnitude_i = i < 0.0 ? -i : i;
    for (int n : {a, b}) {
      if (n < 0) continue;
      const auto k = static_cast<size_t>(n);
      node_kcl[k] += n == a ? i : -i;
      node_flow[k] = std::max(node_flow[k], magnitude_i);
      node_magnitude[k] += magnitude_i + terms;
    }
  }
  // Adds m to the round-off scale of row `row`.
  void AddMagnitude(int row, double m) {
    if (row >= 0) magnitude[static_cast<size_t>(row)] += m;
  }
};

// What a device reports at a solution.
struct DeviceReport {
  double voltage = 0;           // V, v(node_a) - v(node_b)
  double current = 0;           // A, node_a -> node_b through the element
  double junction_voltage = 0;  // diodes only
  double small_signal_res = 0;  // diodes only
};

// Unknown index of circuit node `node` (gnd -> -1).
inline int UnknownOfNode(int node) { return node - 1; }

// Every device of a circuit, kept by kind in flat arrays (one allocation per kind rather
// than one per device, no pointer or virtual call per device) and walked in element
// order. The Newton loop's assembly pass is a walk over these arrays.
class DeviceStore {
 public:
  DeviceStore();
  ~DeviceStore();
  DeviceStore(DeviceStore&&) noexcept;
  DeviceStore& operator=(DeviceStore&&) noexcept;

  // counts[k]: how many elements of ElementKind k will be added (reserves the arrays).
  void Reserve(const std::array<size_t, 4>& counts);
  // Devices are added in element order.
  void AddResistor(const Circuit& circuit, int element);
  // `branch` is the unknown index of the source current.
  void AddVoltageSource(const Circuit& circuit, int element, int branch);
  void AddCurrentSource(const Circuit& circuit, int element);
  void AddDiode(const Circuit& circuit, int element);
  // How many devices (one per element of the circuit).
  size_t size() const;

  // Setup: every device declares its entries; then each receives slot_of[ticket] for
  // every ticket it was handed.
  void DeclareEntries(EntryCollector& collector);
  void BindSlots(std::span<const int> slot_of);
  // New values (same topology). part_changed[p] != 0 when part p's model differs from
  // the one of the last call (devices whose inputs did not change skip work).
  void UpdateValues(const Circuit& circuit, std::span<const char> part_changed);
  // Start of a Newton run from x: the diodes forget their previous evaluation points.
  void BeginRun(std::span<const double> x);
  // Stamps every device; returns the element of the first one with a non-finite value,
  // or -1.
  int Stamp(StampContext& ctx);
  // out += J v over every device (out is not cleared): each device's part of the
  // Jacobian of the last Stamp times v, from its own conductances (no sums of other
  // devices' entries: see MnaSystem::MultiplyJacobian).
  void MultiplyAdd(std::span<const double> v, std::span<double> out) const;
  // fn(element, its report at x) for every device, in element order.
  void Measure(std::span<const double> x,
               const std::function<void(int, const DeviceReport&)>& fn) const;
  // Whether `circuit` has these devices' kinds and nodes, element by element.
  bool Matches(const Circuit& circuit) const;
  // The elements whose last Stamp limited their evaluation point, in element order.
  std::vector<int> LimitedElements() const;
  // The adjoint pass (knee/sensitivity.h, docs/sensitivity.md): adds -lambda^T dF/dp of
  // every device's own equations at x to *gradient, for every number p the device reads
  // (lambda in the solver's coordinates, as x). Off the Newton path: it may allocate.
  void AddSensitivity(const Circuit& circuit, std::span<const double> x,
                      std::span<const double> lambda, CircuitGradient* gradient) const;

 private:
  struct Arrays;
  std::unique_ptr<Arrays> arrays_;
};

// The junction-voltage limit for one Newton step: returns the voltage at which to
// evaluate the junction when the linearised step asked for `proposed` coming from
// `previous`. See docs/solver.md, "Junction limiting".
double LimitJunctionStep(const DiodeConstants& d, double previous, double proposed);

// The critical voltages of LimitJunctionStep (forward, and breakdown in u = -(vj + vbr)),
// which depend on the diode's constants only: computed once per diode, not per step.
struct JunctionLimits {
  double v_crit = 0;  // V
  double u_crit = 0;  // V, when d.has_breakdown
};
JunctionLimits ComputeJunctionLimits(const DiodeConstants& d);

// The two shortened steps (junction_limits.cc): along the exponential from `base` above
// the critical voltage, and a falling step to where the law carries Newton's prediction.
double LogStep(double base, double proposed, double n_vt);
double FallingStep(double previous, double proposed, double i_scale, double log_scale, double n_vt);

// In line: every diode's stamp calls it, and most steps are not limited.
inline double LimitJunctionStep(const DiodeConstants& d, const JunctionLimits& limits,
                                double previous, double proposed) {
  // Forward side: only rising steps overshoot (Newton on a convex increasing exponential
  // approached from above never passes the root).
  const double v_crit = limits.v_crit;
  if (proposed > v_crit && proposed - previous > 2.0 * d.n_vt) {
    const double base = std::max(previous, v_crit);
    if (proposed > base) return LogStep(base, proposed, d.n_vt);
  }
  // Only a step of at least half a thermal scale from a forward-biased junction: near
  // zero bias the law is nearly linear and Newton's step is right (and a step of 1e-17 V
  // must not count as limited, or a converged point never converges).
  if (previous > d.n_vt && proposed < previous - 0.5 * d.n_vt) {
    proposed = FallingStep(previous, proposed, d.is, d.log_is, d.n_vt);
  }
  if (d.has_breakdown) {
    // Breakdown side, mirrored: u = -(vj + vbr) plays the role of the forward voltage.
    const double u_crit = limits.u_crit;
    const double u_prev = -(previous + d.vbr);
    const double u_prop = -(proposed + d.vbr);
    if (u_prop > u_crit && u_prop - u_prev > 2.0 * d.nbr_vt) {
      const double base = std::max(u_prev, u_crit);
      if (u_prop > base) return -LogStep(base, u_prop, d.nbr_vt) - d.vbr;
    }
    if (u_prev > d.nbr_vt && u_prop < u_prev - 0.5 * d.nbr_vt) {
      return -FallingStep(u_prev, u_prop, d.ibr, d.log_ibr, d.nbr_vt) - d.vbr;
    }
  }
  return proposed;
}

}  // namespace knee::internal
