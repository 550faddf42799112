#include "torture/network_generator.h"

#include <fmt/format.h>

#include <cmath>
#include <random>
#include <string>
#include <vector>

namespace knee::torture {
namespace {

constexpr double kTortureBandgap = 1.11;  // eV

class Builder {
 public:
  Builder(uint64_t seed, const GeneratorOptions& options) : rng_(seed), o_(options) {}

  // Uniform in [0, 1) from the top 53 bits.
  double Unit() { return static_cast<double>(rng_() >> 11) * 0x1.0p-53; }
  double Uniform(double lo, double hi) { return lo + (hi - lo) * Unit(); }
  double LogUniform(double lo, double hi) { return std::exp(Uniform(std::log(lo), std::log(hi))); }
  int Int(int lo, int hi) {  // inclusive
    return lo + static_cast<int>(rng_() % static_cast<uint64_t>(hi - lo + 1));
  }
  bool Chance(double p) { return Unit() < p; }
  double Sign() { return Chance(0.5) ? 1.0 : -1.0; }

  int NewNode(const char* stem) {
    return c_.AddNode(std::string(stem) + std::to_string(c_.nodes.size()));
  }
  // A node that blocks may attach to (never a source's own terminal).
  int AnyNetNode() {
    return net_nodes_[static_cast<size_t>(Int(0, static_cast<int>(net_nodes_.size()) - 1))];
  }
  std::pair<int, int> TwoNetNodes() {
    const int a = AnyNetNode();
    int b = AnyNetNode();
    for (int tries = 0; b == a && tries < 8; ++tries) b = AnyNetNode();
    if (b == a) b = a == kGroundNode ? net_nodes_.back() : kGroundNode;
    return {a, b};
  }

  void Add(ElementKind kind, const char* stem, int a, int b, double value, int part = -1,
           double area = 1.0) {
    Element e;
    e.kind = kind;
    e.name = c_.Keep(std::string(stem) + std::to_string(c_.elements.size() + 1));
    e.node_a = a;
    e.node_b = b;
    e.value = value;
    e.part = part;
    e.area = area;
    e.where.file = "generated";
    e.where.line = static_cast<int>(c_.elements.size()) + 1;
    e.where.column = 1;
    c_.elements.push_back(std::move(e));
  }
  double Res() { return LogUniform(o_.min_res, o_.max_res); }
  void Resistor(int a, int b) { Add(ElementKind::kResistor, "R", a, b, Res()); }

  int NewPart() {
    Part p;
    p.name = "P" + std::to_string(c_.parts.size() + 1);
    p.model.sat_current = LogUniform(o_.min_sat_current, o_.max_sat_current);
    p.model.ideality = Uniform(o_.min_ideality, o_.max_ideality);
    p.model.series_res = Chance(1.0 / 3.0) ? 0.0 : LogUniform(1e-3, o_.max_series_res);
    // Fixed rather than the default, so that a seed stays the same network whatever the
    // default (docs/solver.md quotes seeds).
    p.model.bandgap = kTortureBandgap;
    if (Chance(0.5)) {
      p.model.breakdown_v = LogUniform(o_.min_breakdown_v, o_.max_breakdown_v);
      p.model.breakdown_i = LogUniform(1e-6, 1e-2);
      p.model.breakdown_ideality = Uniform(1.0, 3.0);
    }
    if (o_.max_bandgap > 0.0) {
      p.model.bandgap = Uniform(o_.min_bandgap, o_.max_bandgap);
      p.model.sat_temp_exp = 3.0;
      p.model.ref_temp = 25.0;
    }
    c_.parts.push_back(std::move(p));
    return static_cast<int>(c_.parts.size()) - 1;
  }
  // An existing part most of the time (real boards reuse parts), else a new one.
  int SomePart() {
    if (c_.parts.empty() || Chance(0.3)) return NewPart();
    return Int(0, static_cast<int>(c_.parts.size()) - 1);
  }
  void Diode(int anode, int cathode, int part) {
    const double area = Chance(0.8) ? 1.0 : LogUniform(0.1, 10.0);
    Add(ElementKind::kDiode, "D", anode, cathode, 0.0, part, area);
  }

  // A voltage source on a new node, reaching the network through a resistor.
  void Source() {
    const int plus = NewNode("s");
    const int minus = Chance(0.75) ? kGroundNode : AnyNetNode();
    Add(ElementKind::kVoltageSource, "V", plus, minus,
        Sign() * LogUniform(1e-2, o_.max_source_volts));
    const int terminal = NewNode("n");
    Resistor(plus, terminal);
    net_nodes_.push_back(terminal);
  }
  void CurrentSource() {
    auto [a, b] = TwoNetNodes();
    Add(ElementKind::kCurrentSource, "I", a, b, Sign() * LogUniform(1e-9, o_.max_source_amps));
    Resistor(a, b);
  }
  void SeriesString(int a, int b) {
    const int count = Int(2, 6);
    const int part = SomePart();
    const bool forward = Chance(0.5);
    int from = a;
    for (int k = 0; k < count; ++k) {
      const int to = k + 1 == count ? b : NewNode("x");
      if (forward) {
        Diode(from, to, Chance(0.8) ? part : SomePart());
      } else {
        Diode(to, from, Chance(0.8) ? part : SomePart());
      }
      if (to != b) net_nodes_.push_back(to);
      from = to;
    }
  }
  void ParallelBank(int a, int b) {
    const int count = Int(2, 5);
    const int part = SomePart();
    for (int k = 0; k < count; ++k) Diode(a, b, Chance(0.7) ? part : SomePart());
  }
  void AntiParallel(int a, int b) {
    Diode(a, b, SomePart());
    Diode(b, a, SomePart());
  }
  // A full-wave bridge from the "ac" pair (a, b) to a new dc pair with a load.
  void Bridge(int a, int b) {
    const int part = SomePart();
    const int plus = NewNode("p");
    const int minus = NewNode("m");
    Diode(a, plus, part);
    Diode(b, plus, part);
    Diode(minus, a, part);
    Diode(minus, b, part);
    Resistor(plus, minus);
    if (Chance(0.5)) Resistor(minus, kGroundNode);  // a reference for the dc side
    net_nodes_.push_back(plus);
    net_nodes_.push_back(minus);
  }
  // A rows x cols grid of new nodes, each edge a resistor or a diode either way, with
  // two opposite corners tied to a and b.
  void Mesh(int a, int b) {
    const int rows = Int(2, 3);
    const int cols = Int(2, 3);
    std::vector<int> grid(static_cast<size_t>(rows * cols));
    for (int& n : grid) n = NewNode("g");
    auto at = [&](int r, int col) { return grid[static_cast<size_t>(r * cols + col)]; };
    auto edge = [&](int u, int v) {
      if (Chance(0.4)) {
        Resistor(u, v);
      } else if (Chance(0.5)) {
        Diode(u, v, SomePart());
      } else {
        Diode(v, u, SomePart());
      }
    };
    for (int r = 0; r < rows; ++r) {
      for (int col = 0; col < cols; ++col) {
        if (col + 1 < cols) edge(at(r, col), at(r, col + 1));
        if (r + 1 < rows) edge(at(r, col), at(r + 1, col));
      }
    }
    edge(a, at(0, 0));
    edge(at(rows - 1, cols - 1), b);
    for (int n : grid) net_nodes_.push_back(n);
  }

  Circuit Build() {
    c_.title = "torture network";
    c_.temp = Uniform(o_.min_temp, o_.max_temp);
    net_nodes_.push_back(kGroundNode);
    const int sources = Int(1, std::max(1, o_.max_sources));
    for (int s = 0; s < sources; ++s) Source();
    const int blocks = Int(o_.min_blocks, std::max(o_.min_blocks, o_.max_blocks));
    for (int k = 0; k < blocks; ++k) {
      auto [a, b] = TwoNetNodes();
      switch (Int(0, 6)) {
        case 0:
          Resistor(a, b);
          break;
        case 1:
          SeriesString(a, b);
          break;
        case 2:
          ParallelBank(a, b);
          break;
        case 3:
          AntiParallel(a, b);
          break;
        case 4:
          Bridge(a, b);
          break;
        case 5:
          Mesh(a, b);
          break;
        default:
          if (o_.current_sources) {
            CurrentSource();
          } else {
            Resistor(a, b);
          }
          break;
      }
    }
    return std::move(c_);
  }

 private:
  std::mt19937_64 rng_;
  const GeneratorOptions& o_;
  Circuit c_;
  std::vector<int> net_nodes_;
};

}  // namespace

GeneratorOptions ColdFamily() {
  GeneratorOptions o;
  o.min_temp = -269.0;
  o.max_temp = -100.0;
  o.min_bandgap = 0.66;
  o.max_bandgap = 1.42;
  return o;
}

GeneratorOptions WideBandgapFamily() {
  GeneratorOptions o;
  o.min_temp = -60.0;
  o.max_temp = 400.0;
  o.min_sat_current = 1e-45;
  o.max_sat_current = 1e-30;
  o.min_ideality = 1.0;
  o.max_ideality = 2.5;
  o.min_bandgap = 2.3;
  o.max_bandgap = 3.4;
  return o;
}

GeneratorOptions ExtremeFamily() {
  GeneratorOptions o;
  o.min_temp = -269.0;
  o.max_temp = 400.0;
  o.min_sat_current = 1e-45;
  o.max_sat_current = 1e-6;
  o.min_bandgap = 0.66;
  o.max_bandgap = 3.4;
  return o;
}

bool FamilyNamed(const std::string& name, GeneratorOptions* options) {
  if (name == "default") {
    *options = GeneratorOptions{};
  } else if (name == "cold") {
    *options = ColdFamily();
  } else if (name == "wide-bandgap") {
    *options = WideBandgapFamily();
  } else if (name == "extreme") {
    *options = ExtremeFamily();
  } else {
    return false;
  }
  return true;
}

Circuit GenerateNetwork(uint64_t seed, const GeneratorOptions& options) {
  return Builder(seed, options).Build();
}

std::string ToNetlist(const Circuit& c) {
  std::string text = fmt::format("title \"{}\"\ntemp {:.17g}\n", c.title, c.temp);
  for (const Part& p : c.parts) {
    const DiodeModel& m = p.model;
    text += fmt::format("part {} diode sat_current={:.17g} ideality={:.17g} series_res={:.17g}",
                        p.name, m.sat_current, m.ideality, m.series_res);
    if (m.breakdown_v) {
      text += fmt::format(" breakdown_v={:.17g} breakdown_i={:.17g} breakdown_ideality={:.17g}",
                          *m.breakdown_v, m.breakdown_i, m.breakdown_ideality);
    }
    // The temperature law's constants, so that the text does not depend on the defaults.
    text += fmt::format(" bandgap={:.17g} sat_temp_exp={:.17g} ref_temp={:.17g}", m.bandgap,
                        m.sat_temp_exp, m.ref_temp);
    text += "\n";
  }
  for (const Element& e : c.elements) {
    const std::string& a = c.nodes[static_cast<size_t>(e.node_a)];
    const std::string& b = c.nodes[static_cast<size_t>(e.node_b)];
    if (e.kind == ElementKind::kDiode) {
      text += fmt::format("diode {} {} -> {} {}", e.name, a, b,
                          c.parts[static_cast<size_t>(e.part)].name);
      if (e.area != 1.0) text += fmt::format(" area={:.17g}", e.area);
      text += "\n";
    } else {
      text +=
          fmt::format("{} {} {} -> {} {:.17g}\n", ElementKindName(e.kind), e.name, a, b, e.value);
    }
  }
  return text + "bias\n";
}

}  // namespace knee::torture
