// Modified nodal analysis: the unknown layout, the sparsity pattern (built once) and the
// assembly pass that refills the Jacobian values and the residual F(x) for Newton's
// J dx = -F(x). Layout: [circuit nodes 1..N-1][vsource currents].
#pragma once

#include <algorithm>
#include <array>
#include <cmath>
#include <memory>
#include <span>
#include <string>
#include <vector>

#include "devices.h"
#include "knee/circuit.h"

namespace knee::internal {

// Convergence aids and the limiting switch for one assembly pass.
struct AssemblyAids {
  double gmin = 0.0;          // S from every node row to gnd
  double source_scale = 1.0;  // multiplies every independent source
  bool limit_junctions = false;
  bool want_potential = false;  // also evaluate the network's co-content (potential method)
  double stiff_junction = 0.0;  // S; > 0: junctions stamp this conductance (see devices.h)
  bool junction_floor = false;  // junctions stamp at least Is/(n*Vt) (see devices.h)
};

struct AssemblyOutcome {
  bool finite = true;
  int bad_element = -1;              // first element with a non-finite value
  bool limited = false;              // some junction's evaluation point was limited
  int unresolved_element = -1;       // a diode whose junction voltage rounding hides
  double potential = 0.0;            // W, co-content at x (when want_potential)
  double potential_magnitude = 0.0;  // W, sum of the magnitudes of its terms
  double max_log_current = -1e300;   // ln A, largest junction-law term (want_potential)
};

class MnaSystem {
 public:
  // `circuit` must outlive the system: names of unknowns and elements are read from it
  // when a message needs them (a million-node circuit would otherwise keep a second copy
  // of every name here).
  // node_weight (empty, or one value per node unknown): each island's root is then the
  // member with the largest weight (the largest current at a solution), not the one the
  // elements suggest before solving.
  explicit MnaSystem(const Circuit& circuit, std::span<const double> node_weight = {});
  MnaSystem(MnaSystem&&) = default;
  MnaSystem& operator=(MnaSystem&&) = default;

  int size() const { return size_; }
  // Rows [0, kcl_rows()) are KCL rows (the circuit's nodes); the rest are vsource
  // branch equations whose unknowns are currents.
  int kcl_rows() const { return kcl_rows_; }
  bool IsCurrentUnknown(int u) const { return u >= kcl_rows_; }
  // "node" or "V1:current"; built on demand (messages only).
  std::string UnknownName(int u) const;
  // The unknown of voltage source `element`'s branch current; -1 for other elements.
  int BranchUnknown(int element) const;

  std::span<const int> col_ptr() const { return col_ptr_; }
  std::span<const int> row_index() const { return row_index_; }
  std::span<const double> values() const { return values_; }
  std::span<const double> residual() const { return residual_; }
  std::span<const double> flow() const { return flow_; }
  std::span<const double> magnitude() const { return magnitude_; }
  // Value slot of the diagonal entry of each KCL row.
  std::span<const int> diagonal_slots() const { return diagonal_slot_; }
  // The part of a residual bound that allows for floating-point evaluation of F_r.
  double RoundOffAllowance(int row) const {
    return kRoundOffFactor * magnitude_[static_cast<size_t>(row)];
  }
  static constexpr double kRoundOffFactor = 16 * 2.220446049250313e-16;  // 16 eps

  // Refills values, residual and flow at x. No allocation.
  AssemblyOutcome Assemble(std::span<const double> x, const AssemblyAids& aids);
  // out = J v for the Jacobian of the last assembly, summed device by device. The
  // assembled matrix rounds a node's diagonal 1/R + g to 1/R when g < eps/R, and so
  // loses the only thing that holds a group of nodes joined by small resistors to the
  // rest (reverse junctions); this product keeps each device's term, so that a group's
  // common mode meets exactly g, not the rounding of 1/R - 1/R (linear_refine.cc).
  void MultiplyJacobian(std::span<const double> v, std::span<double> out) const;
  // Unknowns and rows are in island coordinates (IslandMap, devices.h): a solve of
  // J d = -F gives d in them; this maps it to node voltages in place.
  void ToNodeSpace(std::span<double> d) const { islands_.ToNodeSpace(d); }
  const IslandMap& islands() const { return islands_; }
  // Whether some island root's row holds its island's sum (else every KCL row is its
  // node's own KCL).
  bool has_islands() const { return !roots_.empty(); }
  // Every node's own KCL residual of the last assembly (the rows of island roots hold
  // their island's sum), its round-off allowance and a bound of its largest current;
  // KCL rows only.
  void NodeResidual(std::span<double> residual, std::span<double> allowance,
                    std::span<double> flow) const;
  // For every island root: fn(root, its own KCL residual, its own largest current, its
  // round-off allowance), from the last assembly.
  template <typename Fn>
  void ForEachRootBalance(Fn&& fn) const {
    for (size_t k = 0; k < roots_.size(); ++k) {
      const auto i = static_cast<size_t>(roots_[k]);
      // In island coordinates the root's own KCL is the island's sum less the members'
      // rows, so the members' round-off is its floor too (their tolerances are not).
      double members = 0.0;
      for (int m : island_members_[k]) members += RoundOffAllowance(m);
      fn(roots_[k], node_kcl_[i], node_flow_[i], kRoundOffFactor * node_magnitude_[i] + members);
    }
  }

  // dF_r/dx_r of the last assembly (a node's total conductance; an island root's, the
  // conductance that holds the island as a whole).
  double Diagonal(int r) const {
    return values_[static_cast<size_t>(diagonal_slot_[static_cast<size_t>(r)])];
  }
  // Row r meets a voltage source (its unknown is fixed by the source, not by KCL).
  bool IsSourceRow(int r) const { return source_row_[static_cast<size_t>(r)] != 0; }
  // Assemble(x, AssemblyAids{}), skipped when the last assembly was exactly that (the
  // verification after a polishing step that was kept). The same numbers either way.
  AssemblyOutcome AssembleExact(std::span<const double> x);
  // Start of a Newton run from x (forgets the junctions' previous evaluation points).
  void BeginRun(std::span<const double> x);
  // Frees the arrays that an assembly fills (the Jacobian's values, the residual and its
  // sums) once nothing reads them again; the pattern and the devices stay, so the
  // devices still measure a solution. RestoreBuffers() sizes them again before the next
  // assembly.
  void ReleaseBuffers();
  bool buffers_released() const { return values_.size() != row_index_.size(); }
  void RestoreBuffers() { SizeBuffers(); }

  // True when `circuit` has the same unknowns and pattern as the one built from.
  bool StructureMatches(const Circuit& circuit) const;
  // Names are read from `circuit` from now on: it must outlive the system too.
  void UpdateValues(const Circuit& circuit);

  const DeviceStore& devices() const { return devices_; }
  std::string_view ElementName(int e) const {
    return circuit_->elements[static_cast<size_t>(e)].name;
  }

 private:
  // The constructor's steps, in order.
  void AddDevices(const Circuit& c);
  void BuildPattern();
  std::vector<int> OrderEntries(const EntryCollector& collector);
  void IndexIslands(const Circuit& c);
  void SizeBuffers();

  const Circuit* circuit_ = nullptr;
  size_t node_count_ = 0;
  int size_ = 0;
  int kcl_rows_ = 0;
  std::vector<int> element_of_extra_;    // element of each unknown after the circuit nodes
  std::vector<DiodeModel> part_models_;  // the models of the last build or update
  std::vector<char> part_changed_;       // per part, during UpdateValues
  IslandMap islands_;
  DeviceStore devices_;
  double last_gmin_ = 0.0;  // S, the gmin of the last assembly
  // The gmin shunt of an island member u also has entries (u, root), (root, u) and
  // (root, root).
  struct MemberShunt {
    int member;
    int root;
    std::array<int, 3> slots;
  };
  std::vector<MemberShunt> member_shunts_;
  std::vector<char> source_row_;        // per KCL row, see IsSourceRow
  std::vector<double> node_flow_;       // per node unknown, see StampContext::node_flow
  std::vector<double> node_magnitude_;  // per node unknown, see StampContext::node_magnitude
  std::vector<double> node_kcl_;        // per node unknown, see StampContext::node_kcl
  std::vector<int> roots_;              // the islands' roots
  std::vector<std::vector<int>> island_members_;  // per root (roots_ order), its members
  std::vector<int> col_ptr_, row_index_;
  std::vector<int> diagonal_slot_;  // per KCL row
  std::vector<double> values_, residual_, flow_, magnitude_;
  // Whether the arrays hold Assemble(exact_x_, AssemblyAids{}), and its outcome.
  bool exact_valid_ = false;
  std::vector<double> exact_x_;
  AssemblyOutcome exact_outcome_;
};

}  // namespace knee::internal
