#include "spread_plan.h"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>

#include "eng_format.h"
#include "knee/spread_stats.h"

namespace knee::cli {
namespace {

// Normal draws are cut at 3 sigma: the limits are ±3 sigma (netlist-format.md).
constexpr double kNormalCut = 3.0;

}  // namespace

DrawMap::DrawMap(const VaryLine& line)
    : normal_(line.distribution == VaryLine::Distribution::kNormal),
      factor_(line.form == VaryLine::Form::kFactor),
      negative_(line.nominal < 0),
      truncated_(kNormalCut),
      low_(line.low),
      high_(line.high) {
  if (factor_) {
    centre_ = 0.5 * (std::log(std::fabs(line.low)) + std::log(std::fabs(line.high)));
    half_ = 0.5 * (std::log(std::fabs(line.high)) - std::log(std::fabs(line.low)));
  } else {
    centre_ = line.form == VaryLine::Form::kTolerance ? line.nominal : 0.5 * (line.low + line.high);
    half_ = 0.5 * (line.high - line.low);
  }
}

double DrawMap::operator()(double u) const {
  // t in [-1, 1]: the position between the limits, uniform or a truncated normal.
  const double t = normal_ ? truncated_(u) / kNormalCut : 2 * u - 1;
  if (factor_) {
    const double magnitude = std::exp(centre_ + t * half_);
    return negative_ ? -magnitude : magnitude;
  }
  return std::clamp(centre_ + t * half_, low_, high_);
}

std::vector<std::vector<std::pair<int, int>>> SpreadPlan::SplitParts(const std::vector<char>& split,
                                                                     Circuit* circuit) {
  const size_t parts = split.size();
  std::vector<std::vector<std::pair<int, int>>> instances(parts);
  for (size_t p = 0; p < parts; ++p) {
    if (!split[p]) instances[p].push_back({static_cast<int>(p), -1});
  }
  for (size_t e = 0; e < circuit->elements.size(); ++e) {
    Element& el = circuit->elements[e];
    if (el.kind != ElementKind::kDiode || !split[static_cast<size_t>(el.part)]) continue;
    const int original = el.part;
    circuit->parts.push_back(circuit->parts[static_cast<size_t>(original)]);
    el.part = static_cast<int>(circuit->parts.size()) - 1;
    instances[static_cast<size_t>(original)].push_back({el.part, static_cast<int>(e)});
  }
  return instances;
}

std::string SpreadPlan::Build(const Design& design, const Netlist& netlist,
                              const Overrides& overrides) {
  design_ = &design;
  netlist_ = &netlist;
  overrides_ = &overrides;
  circuit_ = design.circuit;
  const auto& varies = design.varies;
  split_.assign(circuit_.parts.size(), 0);
  for (const VaryLine& v : varies) {
    if (v.each) split_[static_cast<size_t>(v.target.index)] = 1;
  }
  const auto instances = SplitParts(split_, &circuit_);
  // Columns: one per shared line, one per diode of an `each` line, in file order.
  for (size_t i = 0; i < varies.size(); ++i) {
    const VaryLine& v = varies[i];
    const std::string unit = SweepTargetUnit(v.target, design.circuit);
    has_param_ |= v.target.kind == SweepTarget::Kind::kParam;
    if (!v.each) {
      columns_.push_back({static_cast<int>(i), -1, v.target.name, unit, v.low, v.high, v.nominal});
      continue;
    }
    for (const auto& [part, element] : instances[static_cast<size_t>(v.target.index)]) {
      (void)part;
      const std::string name =
          fmt::format("{}:{}", circuit_.elements[static_cast<size_t>(element)].name, v.target.name);
      columns_.push_back({static_cast<int>(i), element, name, unit, v.low, v.high, v.nominal});
    }
  }
  maps_.clear();
  for (const DrawColumn& c : columns_) maps_.emplace_back(varies[static_cast<size_t>(c.vary)]);
  // Slots: a PART.key gets one per instance of the part, fed by the shared column and the
  // instance's own `each` column; every other target one slot of its own.
  for (size_t c = 0; c < columns_.size(); ++c) {
    const VaryLine& v = varies[static_cast<size_t>(columns_[c].vary)];
    if (v.target.kind != SweepTarget::Kind::kPartKey) {
      slots_.push_back({v.target, v.nominal, {static_cast<int>(c)}});
      continue;
    }
    for (const auto& [part, element] : instances[static_cast<size_t>(v.target.index)]) {
      if (columns_[c].element >= 0 && columns_[c].element != element) continue;
      DrawSlot* slot = nullptr;
      for (DrawSlot& s : slots_) {
        if (s.target.kind == SweepTarget::Kind::kPartKey && s.target.index == part &&
            s.target.key == v.target.key) {
          slot = &s;
        }
      }
      if (slot == nullptr) {
        SweepTarget t = v.target;
        t.index = part;
        slots_.push_back({t, v.nominal, {}});
        slot = &slots_.back();
      }
      slot->columns.push_back(static_cast<int>(c));
    }
  }
  for (const DrawSlot& s : slots_) {
    if (s.columns.size() > 1 && s.nominal == 0) {
      return fmt::format(
          "vary: the lot and device spreads of '{}' multiply as factors of its nominal value, "
          "which is 0; give it a nonzero value or keep one of the two lines",
          s.target.name);
    }
  }
  return "";
}

void SpreadPlan::Draw(std::uint64_t seed, long long sample, std::span<double> out) const {
  for (size_t j = 0; j < columns_.size(); ++j) {
    const double u = CounterUniform(seed, static_cast<std::uint64_t>(sample), j);
    out[j] = maps_[j](u);
  }
}

void SpreadPlan::Corner(long long corner, std::span<double> out) const {
  for (size_t j = 0; j < columns_.size(); ++j) {
    out[j] = (corner >> j) & 1 ? columns_[j].high : columns_[j].low;
  }
}

void SpreadPlan::Nominal(std::span<double> out) const {
  for (size_t j = 0; j < columns_.size(); ++j) out[j] = columns_[j].nominal;
}

std::string SpreadPlan::Apply(std::span<const double> draws, const std::vector<Override>& extra,
                              Circuit* circuit) const {
  if (has_param_ || !extra.empty()) {
    Overrides overrides = *overrides_;
    for (const Override& o : extra) overrides.sets.push_back(o);
    for (const DrawSlot& s : slots_) {
      if (s.target.kind == SweepTarget::Kind::kParam) {
        overrides.sets.push_back({s.target.name, FormatRoundTrip(draws[s.columns.front()])});
      }
    }
    Result<Circuit> fresh = ElaborateCircuit(*netlist_, overrides);
    if (!fresh) return fresh.errors().front().message;
    *circuit = std::move(fresh).value();
    SplitParts(split_, circuit);
  }
  for (const DrawSlot& s : slots_) {
    double value = draws[static_cast<size_t>(s.columns.front())];
    for (size_t k = 1; k < s.columns.size(); ++k) {
      value *= draws[static_cast<size_t>(s.columns[k])] / s.nominal;
    }
    std::string problem = ApplySweepValue(s.target, value, circuit);
    if (!problem.empty()) return problem;
  }
  return "";
}

}  // namespace knee::cli
