// Hand-built circuits for engine tests (no parser).
#pragma once

#include <string>

#include "knee/circuit.h"

namespace knee::testing {

class CircuitBuilder {
 public:
  CircuitBuilder() = default;
  explicit CircuitBuilder(double temp) { circuit_.temp = temp; }

  int Node(const std::string& name) {
    const int found = circuit_.FindNode(name);
    if (found >= 0) return found;
    return circuit_.AddNode(name);
  }
  int Part(const std::string& name, const DiodeModel& model) {
    circuit_.parts.push_back({name, model, {}});
    return static_cast<int>(circuit_.parts.size()) - 1;
  }
  // A part with only a saturation current and an ideality (no series resistance, no
  // breakdown).
  int Part(const std::string& name, double sat_current, double ideality) {
    DiodeModel model;
    model.sat_current = sat_current;
    model.ideality = ideality;
    return Part(name, model);
  }
  int Add(ElementKind kind, const std::string& name, const std::string& a, const std::string& b,
          double value, int part = -1, double area = 1.0) {
    Element e;
    e.kind = kind;
    e.name = circuit_.Keep(name);
    e.node_a = Node(a);
    e.node_b = Node(b);
    e.value = value;
    e.part = part;
    e.area = area;
    e.where.file = "test.knee";
    e.where.line = static_cast<int>(circuit_.elements.size()) + 1;
    e.where.column = 1;
    circuit_.elements.push_back(e);
    return static_cast<int>(circuit_.elements.size()) - 1;
  }
  int R(const std::string& name, const std::string& a, const std::string& b, double ohms) {
    return Add(ElementKind::kResistor, name, a, b, ohms);
  }
  int V(const std::string& name, const std::string& p, const std::string& n, double volts) {
    return Add(ElementKind::kVoltageSource, name, p, n, volts);
  }
  int I(const std::string& name, const std::string& a, const std::string& b, double amps) {
    return Add(ElementKind::kCurrentSource, name, a, b, amps);
  }
  int D(const std::string& name, const std::string& anode, const std::string& cathode, int part,
        double area = 1.0) {
    return Add(ElementKind::kDiode, name, anode, cathode, 0.0, part, area);
  }
  Circuit& circuit() { return circuit_; }

 private:
  Circuit circuit_;
};

}  // namespace knee::testing
