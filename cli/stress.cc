#include "stress.h"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <limits>

namespace knee::cli {
namespace {

struct QuantityInfo {
  const char* key;
  const char* name;
  const char* unit;
  const char* direction;  // the sense in which the value counts, named for people
  const char* never;      // what it means that the value never goes that way
};

QuantityInfo Info(StressQuantity q) {
  switch (q) {
    case StressQuantity::kForwardCurrent:
      return {"max_current", "forward current", "A", "anode to cathode", "never forward-biased"};
    case StressQuantity::kReverseVoltage:
      return {"max_reverse_v", "reverse voltage", "V", "cathode above anode",
              "never reverse-biased"};
    case StressQuantity::kPower:
      return {"max_power", "dissipation", "W", "", ""};
    case StressQuantity::kReverseCurrent:
      return {"", "reverse current", "A", "cathode to anode", "never in reverse conduction"};
    case StressQuantity::kJunctionTemp:
      return {"max_junction_temp", "junction temperature", "C", "", ""};
  }
  return {"", "", "", "", ""};
}

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

}  // namespace

std::vector<StressCheck> CollectStressChecks(const Circuit& circuit, double derate_fraction) {
  std::vector<const ResistorRating*> resistor_rating(circuit.elements.size(), nullptr);
  for (const ResistorRating& r : circuit.resistor_ratings) {
    resistor_rating[static_cast<size_t>(r.element)] = &r;
  }
  std::vector<StressCheck> checks;
  for (size_t e = 0; e < circuit.elements.size(); ++e) {
    const Element& element = circuit.elements[e];
    auto add = [&](const std::optional<double>& rating, StressQuantity q) {
      if (rating) checks.push_back({static_cast<int>(e), q, *rating, *rating * derate_fraction});
    };
    if (element.kind == ElementKind::kResistor && resistor_rating[e]) {
      add(resistor_rating[e]->max_power, StressQuantity::kPower);
      continue;
    }
    if (element.kind != ElementKind::kDiode) continue;
    const DiodeModel& m = circuit.parts[element.part].model;
    add(m.max_current, StressQuantity::kForwardCurrent);
    const bool rated = m.max_current || m.max_reverse_v || m.max_power;
    if (rated && m.breakdown_v) {
      checks.push_back({static_cast<int>(e), StressQuantity::kReverseCurrent, kNaN, kNaN});
    }
    add(m.max_reverse_v, StressQuantity::kReverseVoltage);
    add(m.max_power, StressQuantity::kPower);
    if (m.max_junction_temp) {
      checks.push_back({static_cast<int>(e), StressQuantity::kJunctionTemp, *m.max_junction_temp,
                        *m.max_junction_temp});
    }
  }
  return checks;
}

double StressValue(const StressCheck& check, const Solution& solution) {
  const double v = solution.element_voltage[check.element];
  const double i = solution.element_current[check.element];
  switch (check.quantity) {
    case StressQuantity::kForwardCurrent:
      return i;
    case StressQuantity::kReverseVoltage:
      return -v;
    case StressQuantity::kPower:
      return v * i;
    case StressQuantity::kReverseCurrent:
      return -i;
    case StressQuantity::kJunctionTemp:
      return solution.junction_temp[check.element];
  }
  return 0;
}

StressRecorder::StressRecorder(std::vector<StressCheck> checks)
    : checks_(std::move(checks)),
      worst_(checks_.size(), -std::numeric_limits<double>::infinity()),
      worst_row_(checks_.size(), -1) {}

void StressRecorder::BeginWindow(long long first, long long points) {
  first_ = first;
  points_ = points;
  values_.assign(checks_.size() * static_cast<size_t>(points),
                 std::numeric_limits<double>::quiet_NaN());
}

void StressRecorder::Record(long long point, const Solution& solution) {
  double* row = values_.data() + static_cast<size_t>(point - first_) * checks_.size();
  for (size_t c = 0; c < checks_.size(); ++c) row[c] = StressValue(checks_[c], solution);
}

void StressRecorder::EndWindow(std::vector<char>* over_rating) {
  if (checks_.empty()) return;
  for (long long p = 0; p < points_; ++p) {
    char over = 0;
    for (size_t c = 0; c < checks_.size(); ++c) {
      const double value = values_[static_cast<size_t>(p) * checks_.size() + c];
      if (std::isnan(value)) continue;
      if (value > worst_[c]) {
        worst_[c] = value;
        worst_row_[c] = first_ + p;
      }
      if (checks_[c].rated() && value > checks_[c].limit) over = 1;
    }
    if (over_rating) over_rating->push_back(over);
  }
}

void StressRecorder::Finish(const Circuit& circuit, double derate_fraction,
                            const std::function<std::string(long long)>& describe,
                            Report* report) const {
  report->derate_percent = derate_fraction * 100;
  for (size_t c = 0; c < checks_.size(); ++c) {
    const StressCheck& check = checks_[c];
    const QuantityInfo info = Info(check.quantity);
    const Element& element = circuit.elements[check.element];
    StressLine line;
    line.diode = element.name;
    line.element_kind = ElementKindName(element.kind);
    line.key = info.key;
    line.quantity = info.name;
    line.unit = info.unit;
    line.direction = info.direction;
    line.rated = check.rated();
    line.rating = check.rating;
    line.limit = check.limit;
    line.worst = worst_[c];
    line.row = worst_row_[c];
    if (line.row < 0) {
      line.worst = kNaN;
    } else {
      line.where = describe(line.row);
      line.use_percent = check.rated() ? 100 * line.worst / line.rating : kNaN;
      line.exceeded = check.rated() && line.worst > line.limit;
      // A current or voltage that never goes the rated way: its signed worst is the least
      // of the other way, which reads as nonsense beside the rating ("forward current
      // worst -27.84 mA"); the report names the fact instead.
      if (line.worst <= 0 && *info.never != '\0') line.never = info.never;
    }
    report->stress.push_back(std::move(line));
  }
}

std::string RatedCheckName(const StressCheck& check, const Circuit& circuit) {
  static constexpr const char* kValue[] = {"i", "v", "p", "i", "tj"};
  const QuantityInfo info = Info(check.quantity);
  return fmt::format("{}.{}/{}", circuit.elements[static_cast<size_t>(check.element)].name,
                     kValue[static_cast<int>(check.quantity)], info.key);
}

const char* StressUnit(StressQuantity quantity) { return Info(quantity).unit; }

const char* StressNeverText(StressQuantity quantity) { return Info(quantity).never; }

void AddStressColumns(const std::vector<StressCheck>& checks, const Circuit& circuit,
                      Report* report) {
  int added = 0;
  for (const StressCheck& check : checks) {
    if (!check.rated()) continue;
    report->columns.push_back({RatedCheckName(check, circuit), "%"});
    ++added;
  }
  report->csv_only_columns = added;
}

void FillStressColumns(const std::vector<StressCheck>& checks, const Solution& solution,
                       double* tail) {
  for (const StressCheck& check : checks) {
    if (check.rated()) *tail++ = 100 * StressValue(check, solution) / check.rating;
  }
}

std::string HighVoltageCaution(double largest_voltage) {
  if (!(largest_voltage > kExtraLowVoltageLimitDc)) return "";
  return fmt::format(
      "this circuit works at up to {:.4g} V, above the {} V DC limit of extra-low voltage "
      "(IEC 61140, IEC 61201): hazardous voltages. A simulation is no substitute for the "
      "safety rules of the equipment; local codes and licensed practice govern.",
      largest_voltage, kExtraLowVoltageLimitDc);
}

double LargestVoltage(const Circuit& circuit, const Solution& solution) {
  double lo = 0, hi = 0;  // gnd is 0 V
  for (double v : solution.node_voltage) {
    lo = std::min(lo, v);
    hi = std::max(hi, v);
  }
  double largest = hi - lo;
  for (const Element& e : circuit.elements) {
    if (e.kind == ElementKind::kVoltageSource) largest = std::max(largest, std::fabs(e.value));
  }
  return largest;
}

}  // namespace knee::cli
