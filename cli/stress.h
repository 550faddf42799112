// Stress checks (docs/stress.md): each rated diode's forward current, reverse voltage
// and dissipation against its part's ratings, each rated resistor's dissipation, with a
// design margin (--derate), the reverse (breakdown) current of rated breakdown diodes, and
// the extra-low-voltage caution.
#pragma once

#include <functional>
#include <string>
#include <vector>

#include "knee/circuit.h"
#include "knee/solver.h"
#include "report.h"

namespace knee::cli {

// kReverseCurrent has no rating of its own (max_current rates the forward current; a
// breakdown diode's reverse current is covered by max_power): it is reported, never checked.
// kJunctionTemp (max_junction_temp, docs/thermal.md) is checked as written: --derate
// scales currents, voltages and powers, not temperatures.
enum class StressQuantity {
  kForwardCurrent,
  kReverseVoltage,
  kPower,
  kReverseCurrent,
  kJunctionTemp
};

struct StressCheck {
  int element = 0;  // diode or resistor element index
  StressQuantity quantity = StressQuantity::kForwardCurrent;
  double rating = 0;  // the part's (or resistor's) rating; NaN for kReverseCurrent
  double limit = 0;   // rating * derate
  bool rated() const { return quantity != StressQuantity::kReverseCurrent; }
};

// Every rated quantity of every diode and resistor of `circuit`, in element order, with the
// reverse current of each rated diode whose part has breakdown_v.
std::vector<StressCheck> CollectStressChecks(const Circuit& circuit, double derate_fraction);

// The stressed value of one check at a solution: forward current i (A), reverse voltage
// -v (V), dissipation v*i (W), reverse current -i (A).
double StressValue(const StressCheck& check, const Solution& solution);

// Per point values, gathered by index from any thread a window of points at a time, then
// reduced in point order so the result does not depend on thread timing. Memory is one
// window, whatever the length of the sweep.
class StressRecorder {
 public:
  explicit StressRecorder(std::vector<StressCheck> checks);
  bool empty() const { return checks_.empty(); }
  // Starts a window of `points` points, the first of them point `first` of the analysis.
  void BeginWindow(long long first, long long points);
  // Thread-safe for distinct points of the current window.
  void Record(long long point, const Solution& solution);
  // Folds the window into the worst values, in point order; appends for each of its
  // points whether some rating is exceeded there to *over_rating (when not null).
  void EndWindow(std::vector<char>* over_rating);
  // Fills report->stress; describe(point) names a point.
  void Finish(const Circuit& circuit, double derate_fraction,
              const std::function<std::string(long long)>& describe, Report* report) const;

 private:
  std::vector<StressCheck> checks_;
  long long first_ = 0;
  long long points_ = 0;
  std::vector<double> values_;        // window points x checks, NaN where a point failed
  std::vector<double> worst_;         // per check, -inf until a point is solved
  std::vector<long long> worst_row_;  // per check, -1 until a point is solved
};

// A rated check's name in reports and CSV headers: "Dhi.i/max_current", "Rload.p/max_power".
std::string RatedCheckName(const StressCheck& check, const Circuit& circuit);
// The unit of a check's value: "A", "V" or "W".
const char* StressUnit(StressQuantity quantity);
// What a value <= 0 of the quantity means, named for people ("never reverse-biased"), or
// "" when it has no rated direction (dissipation).
const char* StressNeverText(StressQuantity quantity);

// Appends the CSV-only columns "Dhi.i/max_current [%]" (use of each rating per row; the
// unrated reverse current has none).
void AddStressColumns(const std::vector<StressCheck>& checks, const Circuit& circuit,
                      Report* report);
// Writes those columns' values of one solved point into `tail` (one per rated check).
void FillStressColumns(const std::vector<StressCheck>& checks, const Solution& solution,
                       double* tail);

// The caution text when any node-to-node voltage or source value exceeds the
// extra-low-voltage limit, else "".
inline constexpr double kExtraLowVoltageLimitDc = 60.0;  // V, IEC 61140 / IEC 61201 DC band
std::string HighVoltageCaution(double largest_voltage);

// Largest voltage of a solution: max over node pairs (including gnd) and vsource values.
double LargestVoltage(const Circuit& circuit, const Solution& solution);

}  // namespace knee::cli
