// Elaborate with command-line overrides (--set, --temp), as cli.md describes them.
#include <gtest/gtest.h>

#include "parser_test_util.h"
#include "test_util.h"

namespace knee {
namespace {

using testing::AllErrors;
using testing::ElementValue;
using testing::MustBuild;
using testing::OnlyError;

constexpr const char* kCircuit =
    "temp 50\n"
    "param Rprot = 4k7\n"
    "param Rbig = 10 * Rprot\n"
    "part SIG diode sat_current=2.5n ideality=1.8\n"
    "vsource V a -> 0 24\n"
    "resistor Rin a -> b Rprot\n"
    "resistor Rpin b -> 0 Rbig\n"
    "diode D b -> 0 SIG\n";

Overrides Set(std::vector<Override> sets) {
  Overrides o;
  o.sets = std::move(sets);
  return o;
}

TEST(OverridesTest, ParamChangesItsDependents) {
  const Design d = MustBuild(kCircuit, Set({{"Rprot", "1k"}}));
  EXPECT_EQ(ElementValue(d, "Rin"), 1000.0);
  EXPECT_EQ(ElementValue(d, "Rpin"), 10000.0);
  const Design e = MustBuild(kCircuit, Set({{"Rprot", "(2 * 500)"}}));
  EXPECT_EQ(ElementValue(e, "Rpin"), 10000.0);
  // The last --set of a name wins.
  const Design f = MustBuild(kCircuit, Set({{"Rprot", "1k"}, {"Rprot", "2k"}}));
  EXPECT_EQ(ElementValue(f, "Rin"), 2000.0);
}

TEST(OverridesTest, ElementValue) {
  const Design d = MustBuild(kCircuit, Set({{"V", "-5"}, {"Rpin", "(Rprot / 2)"}}));
  EXPECT_EQ(ElementValue(d, "V"), -5.0);
  EXPECT_EQ(ElementValue(d, "Rpin"), 2350.0);
  EXPECT_EQ(ElementValue(d, "Rin"), 4700.0);
}

TEST(OverridesTest, PartKey) {
  const Design d = MustBuild(kCircuit, Set({{"SIG.sat_current", "1p"}, {"SIG.breakdown_v", "75"}}));
  EXPECT_EQ(d.circuit.parts[0].model.sat_current, 1e-12);
  EXPECT_EQ(d.circuit.parts[0].model.breakdown_v, 75.0);  // not in the file: added
  EXPECT_EQ(d.circuit.parts[0].model.ideality, 1.8);      // untouched
}

TEST(OverridesTest, Temperatures) {
  EXPECT_EQ(MustBuild(kCircuit).circuit.temp, 50.0);
  Overrides o;
  o.temp = -40;
  EXPECT_EQ(MustBuild(kCircuit, o).circuit.temp, -40.0);
  EXPECT_EQ(MustBuild(kCircuit, Set({{"temp", "85"}})).circuit.temp, 85.0);
}

TEST(OverridesTest, ErrorsNameTheOption) {
  auto e = AllErrors(kCircuit, Set({{"Rprto", "1k"}}));
  EXPECT_EQ(OnlyError(e),
            "0:0: --set Rprto=1k: there is no param, element or part key named 'Rprto'");
  EXPECT_EQ(e[0].hint, "did you mean 'Rprot'?");
  EXPECT_EQ(e[0].where.line, 0);
  e = AllErrors(kCircuit, Set({{"SGI.sat_current", "1p"}}));
  EXPECT_EQ(OnlyError(e), "0:0: --set SGI.sat_current=1p: there is no part named 'SGI'");
  EXPECT_EQ(e[0].hint, "did you mean 'SIG'?");
  e = AllErrors(kCircuit, Set({{"SIG.sat", "1p"}}));
  EXPECT_EQ(OnlyError(e), "0:0: --set SIG.sat=1p: unknown part key 'sat'");
  EXPECT_EQ(OnlyError(AllErrors(kCircuit, Set({{"D", "1"}}))),
            "0:0: --set D=1: diode 'D' has no value to set; set a key of its part instead "
            "(SIG.KEY)");
  EXPECT_EQ(OnlyError(AllErrors(kCircuit, Set({{"b", "1"}}))),
            "0:0: --set b=1: 'b' is a node; --set takes a param, an element value or PART.key");
  EXPECT_EQ(OnlyError(AllErrors(kCircuit, Set({{"Rin", "1x"}}))),
            "0:0: --set Rin=1x: malformed number '1x': 'x' is not an SI prefix or a unit");
  EXPECT_EQ(OnlyError(AllErrors(kCircuit, Set({{"Rin", "-1"}}))),
            "0:0: --set Rin=-1: resistor 'Rin' has resistance -1 Ohm; it must be > 0");
  EXPECT_EQ(OnlyError(AllErrors(kCircuit, Set({{"Rin", "5V"}}))),
            "0:0: --set Rin=5V: unit 'V' does not fit a resistor value; expected ohms (Ohm, ohm "
            "or Ω) or no unit");
  EXPECT_EQ(OnlyError(AllErrors(kCircuit, Set({{"SIG.ideality", "0"}}))),
            "0:0: --set SIG.ideality=0: part 'SIG': ideality = 0 is out of range; it must be > 0");
  EXPECT_EQ(OnlyError(AllErrors(kCircuit, Set({{"Rprot", "(1/0)"}}))),
            "0:0: --set Rprot=(1/0): division by zero (1 / 0)");
}

TEST(OverridesTest, ElaborateCircuitMatchesElaborate) {
  Result<Netlist> n = ParseNetlist(kCircuit, "t.knee");
  ASSERT_TRUE(n.ok());
  Result<Circuit> c = ElaborateCircuit(*n, Set({{"Rprot", "2k"}}));
  ASSERT_TRUE(c.ok());
  EXPECT_EQ(c->elements[2].value, 20000.0);
  EXPECT_EQ(c->NodeNames(), (std::vector<std::string>{"gnd", "a", "b"}));
}

}  // namespace
}  // namespace knee

namespace knee {
namespace {

// Self-heating statements elaborate into the circuit (netlist-format.md, "Self-heating").
TEST(SelfHeatingTest, HeatsinksMountsAndKeys) {
  const Design d = testing::MustBuild(
      "part R diode thermal_res=60 max_junction_temp=423.15K\n"
      "heatsink HS1 thermal_res=8\nheatsink HS2 thermal_res=0\n"
      "vsource V a -> 0 1\nresistor R1 a -> b 10\n"
      "diode D1 b -> 0 R sink=HS2\ndiode D2 b -> 0 R temp=40\ndiode D3 b -> 0 R\n",
      Overrides{});
  const Circuit& c = d.circuit;
  EXPECT_EQ(c.parts[0].model.thermal_res, 60.0);
  EXPECT_NEAR(*c.parts[0].model.max_junction_temp, 150.0, 1e-12);  // kelvin converted
  ASSERT_EQ(c.heatsinks.size(), 2u);
  EXPECT_EQ(c.heatsinks[0].name, "HS1");
  EXPECT_EQ(c.heatsinks[0].thermal_res, 8.0);
  EXPECT_EQ(c.heatsinks[1].thermal_res, 0.0);  // 0 K/W is allowed
  ASSERT_EQ(c.sink_mounts.size(), 1u);
  EXPECT_EQ(c.sink_mounts[0].element, c.FindElement("D1"));
  EXPECT_EQ(c.sink_mounts[0].sink, 1);
  EXPECT_EQ(c.FindHeatsink("HS2"), 1);
  EXPECT_TRUE(c.SelfHeated(c.FindElement("D1")));
  EXPECT_FALSE(c.SelfHeated(c.FindElement("D2")));  // temp= holds it
  EXPECT_TRUE(c.SelfHeated(c.FindElement("D3")));
  // Without any of it, nothing is heated and no sink exists.
  const Design plain = testing::MustBuild("vsource V a -> 0 1\nresistor R1 a -> 0 1k\n", {});
  EXPECT_TRUE(plain.circuit.heatsinks.empty());
  EXPECT_TRUE(plain.circuit.sink_mounts.empty());
}

}  // namespace
}  // namespace knee
