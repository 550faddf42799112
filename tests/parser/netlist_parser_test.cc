// Statements of netlist-format.md: the complete example, each statement, and the
// exact diagnostics of malformed statements.
#include <gtest/gtest.h>

#include "knee/diode_law.h"
#include "parser_test_util.h"
#include "test_util.h"

namespace knee {
namespace {

using testing::AllErrors;
using testing::Brief;
using testing::ElementValue;
using testing::kFile;
using testing::MustBuild;
using testing::OnlyError;
using testing::ParseErrors;

// The complete example of netlist-format.md, verbatim.
constexpr const char* kExample =
    R"(# Input protection for a 3.3 V converter pin fed from a 24 V field sensor line
title "field input clamp"

temp 25                      # circuit temperature in degrees Celsius (default 25)
param Rprot = 4k7            # IEC 60062 style: 4k7 = 4.7 kOhm

part SIG diode  sat_current=2.5n ideality=1.8 series_res=0.6 breakdown_v=100 breakdown_i=100u
part Z36 diode  sat_current=1f ideality=1.1 series_res=3 breakdown_v=3.6 breakdown_i=5m \
                breakdown_tc=-0.0004

vsource  Vline  line -> gnd   24
vsource  Vdd    vdd  -> gnd   3.3
resistor Rin    line -> pin   Rprot
diode    Dhi    pin  -> vdd   SIG
diode    Dlo    gnd  -> pin   SIG
diode    Zp     gnd  -> pin   Z36
resistor Rpin   pin  -> gnd   (10 * Rprot)

sweep Vline -30..30:0.1
show  pin.v Dhi.i Dlo.i Zp.p
)";

TEST(NetlistParserTest, CompleteExampleElaboratesToTheWrittenValues) {
  const Design d = MustBuild(kExample);
  const Circuit& c = d.circuit;
  EXPECT_EQ(c.title, "field input clamp");
  EXPECT_EQ(c.temp, 25.0);
  // Nodes in order of first use, gnd first.
  EXPECT_EQ(c.NodeNames(), (std::vector<std::string>{"gnd", "line", "vdd", "pin"}));
  ASSERT_EQ(c.elements.size(), 7u);
  EXPECT_EQ(ElementValue(d, "Vline"), 24.0);
  EXPECT_EQ(ElementValue(d, "Vdd"), 3.3);
  EXPECT_EQ(ElementValue(d, "Rin"), 4700.0);
  EXPECT_EQ(ElementValue(d, "Rpin"), 47000.0);  // 10 * 4k7 = 47 kOhm
  const Element& rin = c.elements[static_cast<std::size_t>(c.FindElement("Rin"))];
  EXPECT_EQ(c.nodes[static_cast<std::size_t>(rin.node_a)], "line");
  EXPECT_EQ(c.nodes[static_cast<std::size_t>(rin.node_b)], "pin");
  const Element& dlo = c.elements[static_cast<std::size_t>(c.FindElement("Dlo"))];
  EXPECT_EQ(dlo.kind, ElementKind::kDiode);
  EXPECT_EQ(dlo.node_a, kGroundNode);
  EXPECT_EQ(c.parts[static_cast<std::size_t>(dlo.part)].name, "SIG");
  EXPECT_EQ(dlo.area, 1.0);
  EXPECT_FALSE(dlo.temp.has_value());
  EXPECT_EQ(dlo.where.line, 15);
  EXPECT_EQ(dlo.where.column, 10);

  ASSERT_EQ(c.parts.size(), 2u);
  const DiodeModel& sig = c.parts[0].model;
  EXPECT_EQ(sig.sat_current, 2.5e-9);
  EXPECT_EQ(sig.ideality, 1.8);
  EXPECT_EQ(sig.series_res, 0.6);
  EXPECT_EQ(sig.breakdown_v, 100.0);
  EXPECT_EQ(sig.breakdown_i, 100e-6);
  // The default: silicon at 300 K, S. M. Sze, K. K. Ng, Physics of Semiconductor Devices,
  // 3rd ed., 2007 (netlist-format contract, "Defaults with sources").
  EXPECT_EQ(sig.bandgap, 1.12);
  const DiodeModel& z = c.parts[1].model;
  EXPECT_EQ(z.sat_current, 1e-15);
  EXPECT_EQ(z.breakdown_v, 3.6);
  EXPECT_EQ(z.breakdown_i, 5e-3);
  EXPECT_EQ(z.breakdown_tc, -0.0004);  // from the continuation line

  EXPECT_FALSE(d.bias_requested);  // the file asks for a sweep only
  ASSERT_EQ(d.sweeps.size(), 1u);
  ASSERT_EQ(d.sweeps[0].size(), 1u);
  const SweepAxis& axis = d.sweeps[0][0];
  EXPECT_EQ(axis.target.kind, SweepTarget::Kind::kElement);
  EXPECT_EQ(axis.target.index, c.FindElement("Vline"));
  EXPECT_EQ(axis.values.size(), 601u);
  EXPECT_EQ(axis.values.front(), -30.0);
  EXPECT_EQ(axis.values.back(), 30.0);
  ASSERT_EQ(d.show.size(), 4u);
  EXPECT_EQ(d.show[0].text(), "pin.v");
  EXPECT_EQ(d.show[0].unit(), "V");
  EXPECT_EQ(d.show[3].unit(), "W");
}

TEST(NetlistParserTest, DefaultsWithoutRequests) {
  const Design d = MustBuild("vsource V1 a -> 0 1\nresistor R1 a -> gnd 1k\n");
  EXPECT_TRUE(d.bias_requested);
  EXPECT_TRUE(d.sweeps.empty());
  EXPECT_TRUE(d.show.empty());
  EXPECT_EQ(d.circuit.temp, 25.0);
  EXPECT_EQ(d.circuit.title, "");
  // '0' and 'gnd' are the same node.
  EXPECT_EQ(d.circuit.nodes.size(), 2u);
  EXPECT_EQ(d.circuit.elements[0].node_b, kGroundNode);
  EXPECT_EQ(d.circuit.elements[1].node_b, kGroundNode);
}

TEST(NetlistParserTest, BiasAndSweepTogether) {
  const Design d =
      MustBuild("vsource V1 a -> 0 1\nresistor R1 a -> 0 1k\nbias\nsweep V1 0..1:0.5\n");
  EXPECT_TRUE(d.bias_requested);
  ASSERT_EQ(d.sweeps.size(), 1u);
  EXPECT_EQ(d.sweeps[0][0].values, (std::vector<double>{0, 0.5, 1}));
}

TEST(NetlistParserTest, DiodeOptionsAreaAndTemp) {
  const Design d = MustBuild(
      "part P diode sat_current=1e-14\nvsource V a -> 0 1\n"
      "diode D1 a -> 0 P area=2 temp=85\ndiode D2 a -> 0 P temp=358.15K\n");
  EXPECT_EQ(d.circuit.elements[1].area, 2.0);
  EXPECT_EQ(d.circuit.elements[1].temp, 85.0);
  ASSERT_TRUE(d.circuit.elements[2].temp.has_value());
  EXPECT_CLOSE(*d.circuit.elements[2].temp, 85.0, 0, 1e-12);  // 358.15 K = 85 degC
}

TEST(NetlistParserTest, TempInKelvinIsConverted) {
  const Design d = MustBuild("temp 300K\nvsource V a -> 0 1\n");
  EXPECT_CLOSE(d.circuit.temp, 300.0 - 273.15, 0, 1e-12);
  const Design c = MustBuild("temp 85C\nvsource V a -> 0 1\n");
  EXPECT_EQ(c.circuit.temp, 85.0);
}

TEST(NetlistParserTest, ExpectStatements) {
  const Design d = MustBuild(
      "vsource V a -> 0 5\nresistor R a -> 0 1k\n"
      "expect a.v = 5 within 50m\nexpect R.i = 5mA\nexpect (a.v - 0) = 5V within 1%\n");
  ASSERT_EQ(d.expects.size(), 3u);
  EXPECT_EQ(d.expects[0].expected, 5.0);
  EXPECT_FALSE(d.expects[0].relative);
  EXPECT_EQ(d.expects[0].tolerance, 0.05);
  EXPECT_TRUE(d.expects[1].relative);  // default 5 %
  EXPECT_EQ(d.expects[1].tolerance, 0.05);
  EXPECT_EQ(d.expects[1].expected, 5e-3);
  EXPECT_TRUE(d.expects[2].relative);
  EXPECT_EQ(d.expects[2].tolerance, 0.01);
  EXPECT_EQ(d.expects[2].quantity.unit(), "V");
}

TEST(NetlistParserTest, ContinuationAndCommentsAndCrLf) {
  const Design d = MustBuild(
      "title \"a # not a comment\"  # a comment\r\n"
      "resistor R1 a \\   # continued\r\n"
      "   -> gnd 2R2\r\nvsource V a -> 0 1\n");
  EXPECT_EQ(d.circuit.title, "a # not a comment");
  EXPECT_EQ(ElementValue(d, "R1"), 2.2);
}

TEST(NetlistParserTest, ArrowWithoutBlanks) {
  const Design d = MustBuild("vsource V a->gnd 1\nresistor R a->0 1k\n");
  EXPECT_EQ(d.circuit.nodes.size(), 2u);
}

// Every element and part names the file through one shared stored name, not a copy each
// (a netlist of a million elements would otherwise hold a million copies of the name).
TEST(NetlistParserTest, ElementsAndPartsShareOneFileName) {
  const Design d =
      MustBuild("part P diode\nvsource V a -> gnd 1\nresistor R a -> b 1k\ndiode D b -> gnd P\n");
  ASSERT_EQ(d.circuit.elements.size(), 3u);
  const std::string* name = &d.circuit.parts[0].where.file.str();
  EXPECT_EQ(*name, kFile);
  for (const Element& e : d.circuit.elements) EXPECT_EQ(&e.where.file.str(), name) << e.name;
  EXPECT_EQ(d.circuit.elements[2].where.line, 4);
  EXPECT_EQ(d.circuit.elements[2].where.column, 7);
}

// --- errors, with their exact text ------------------------------------------------

TEST(NetlistParserErrorTest, UnknownKeywordSuggestsTheNearOne) {
  const auto e = ParseErrors("resistr R1 a -> b 1k\n");
  EXPECT_EQ(OnlyError(e),
            "1:1: unknown keyword 'resistr'; a statement starts with one of title, temp, param, "
            "part, resistor, vsource, isource, diode, bias, sweep, show, expect, vary, heatsink");
  EXPECT_EQ(e[0].hint, "did you mean 'resistor'?");
  EXPECT_EQ(e[0].where.file, "t.knee");
  EXPECT_EQ(e[0].where.length, 7);
}

TEST(NetlistParserErrorTest, MissingArrow) {
  const auto e = ParseErrors("resistor R1 a b 1k\n");
  EXPECT_EQ(OnlyError(e),
            "1:15: expected '->' between the two nodes of resistor 'R1' but found 'b'");
  EXPECT_EQ(e[0].hint, "write resistor R1 a -> NODE ...");
}

TEST(NetlistParserErrorTest, UnknownPartWithSuggestionAndNote) {
  const auto e = AllErrors("part SIG diode\nvsource V a -> 0 1\ndiode Dhi pin -> vdd SGI\n");
  EXPECT_EQ(OnlyError(e), "3:22: unknown part 'SGI'; expected the name of a 'part' statement");
  EXPECT_EQ(e[0].hint, "did you mean 'SIG'?");
  ASSERT_EQ(e[0].notes.size(), 1u);
  EXPECT_EQ(e[0].notes[0].first.line, 1);
  EXPECT_EQ(e[0].notes[0].first.column, 6);
  EXPECT_EQ(e[0].notes[0].second, "'SIG' is defined here");
}

TEST(NetlistParserErrorTest, UnknownPartKey) {
  const auto e = AllErrors("part P diode sat_curent=1n\n");
  EXPECT_EQ(OnlyError(e), "1:14: unknown part key 'sat_curent' in part 'P'");
  EXPECT_EQ(e[0].hint, "did you mean 'sat_current'?");
}

TEST(NetlistParserErrorTest, NodeNameThatIsAnElement) {
  const auto e = AllErrors("vsource V1 a -> 0 1\nresistor R1 V1 -> 0 1k\n");
  EXPECT_EQ(OnlyError(e),
            "2:13: 'V1' is used as a node of resistor 'R1' but is the name of a vsource (line 1)");
  ASSERT_EQ(e[0].notes.size(), 1u);
  EXPECT_EQ(e[0].notes[0].first.line, 1);
}

TEST(NetlistParserErrorTest, DuplicateNameNamesBothLines) {
  const auto e = AllErrors("param R1 = 5\nvsource V a -> 0 1\nresistor R1 a -> 0 1k\n");
  EXPECT_EQ(OnlyError(e),
            "3:10: 'R1' is already the name of a param (line 1); elements, nodes, parts and "
            "params share one namespace");
  ASSERT_EQ(e[0].notes.size(), 1u);
  EXPECT_EQ(e[0].notes[0].first.line, 1);
  EXPECT_EQ(e[0].notes[0].first.column, 7);
  EXPECT_EQ(e[0].notes[0].second, "'R1' is defined here as a param");
}

TEST(NetlistParserErrorTest, ZeroAndNegativeResistance) {
  EXPECT_EQ(OnlyError(AllErrors("resistor R1 a -> 0 0\n")),
            "1:20: resistor 'R1' has resistance 0 Ohm; it must be > 0");
  EXPECT_EQ(OnlyError(AllErrors("param r = -5\nresistor R1 a -> 0 (r*2)\n")),
            "2:20: resistor 'R1' has resistance -10 Ohm; it must be > 0");
}

TEST(NetlistParserErrorTest, OutOfRangePartValues) {
  EXPECT_EQ(OnlyError(AllErrors("part P diode sat_current=-1n\n")),
            "1:26: part 'P': sat_current = -1e-09 is out of range; it must be > 0");
  EXPECT_EQ(OnlyError(AllErrors("part P diode ideality=0\n")),
            "1:23: part 'P': ideality = 0 is out of range; it must be > 0");
  EXPECT_EQ(OnlyError(AllErrors("part P diode series_res=-1\n")),
            "1:25: part 'P': series_res = -1 is out of range; it must be >= 0");
  EXPECT_EQ(OnlyError(AllErrors("part P diode ref_temp=-300\n")),
            "1:23: part 'P': ref_temp = -300 is out of range; it must be above absolute zero "
            "(-273.15 C)");
  EXPECT_EQ(OnlyError(AllErrors("part P diode sat_current=1n\nvsource V a -> 0 1\n"
                                "diode D a -> 0 P area=0\n")),
            "3:23: diode 'D' has area 0; it must be > 0");
}

// Element statements are kept packed (syntax.h: names and values as text and a place);
// the places read back from them must be those of the text, also after a multi-byte
// prefix and on the continuation line of a statement. Columns counted by hand.
TEST(NetlistParserErrorTest, PlacesOfPackedStatementsOnContinuedLines) {
  // The unit span starts at the prefix: 'µ' is column 10 of line 3, two characters long.
  auto e = AllErrors("vsource V1 a -> gnd 1\nresistor R1 a -> \\\n    gnd 4µV\n");
  ASSERT_EQ(e.size(), 1u);
  EXPECT_EQ(e[0].where.line, 3);
  EXPECT_EQ(e[0].where.column, 10);
  EXPECT_EQ(e[0].where.length, 2);
  // A node name on the continuation line: 'V1' at line 3, column 3.
  e = AllErrors("vsource V1 a -> gnd 1\nresistor R1 a -> \\\n  V1 1k\n");
  EXPECT_EQ(OnlyError(e),
            "3:3: 'V1' is used as a node of resistor 'R1' but is the name of a vsource (line 1)");
  EXPECT_EQ(e[0].where.length, 2);
  // A diode's part on the continuation line: 'nopart' at line 3, column 3.
  e = AllErrors("part P diode\nvsource V1 a -> gnd 1\ndiode D1 a -> gnd \\\n  nopart\n");
  EXPECT_EQ(OnlyError(e), "4:3: unknown part 'nopart'; expected the name of a 'part' statement");
  EXPECT_EQ(e[0].where.length, 6);
  // A param name as a value, and the element's own place, after a continuation.
  e = AllErrors("vsource V1 a -> gnd 1\nresistor \\\n R1 a -> gnd \\\n   Rx\n");
  EXPECT_EQ(OnlyError(e).substr(0, 4), "4:4:");
  EXPECT_EQ(e[0].where.length, 2);
  const Design d = MustBuild("vsource V1 a -> gnd 1\nresistor \\\n R1 a -> gnd (2 * 1k)\n");
  ASSERT_EQ(d.circuit.elements.size(), 2u);
  EXPECT_EQ(d.circuit.elements[1].value, 2000.0);
  EXPECT_EQ(d.circuit.elements[1].where.line, 3);
  EXPECT_EQ(d.circuit.elements[1].where.column, 2);
  EXPECT_EQ(d.circuit.elements[1].where.length, 2);
}

TEST(NetlistParserErrorTest, MisplacedUnits) {
  const auto e = AllErrors("resistor R1 a -> 0 1K\n");
  EXPECT_EQ(OnlyError(e),
            "1:21: unit 'K' does not fit a resistor value; expected ohms (Ohm, ohm or Ω) or no "
            "unit");
  EXPECT_EQ(e[0].hint, "did you mean 1k (kilo)? K is kelvin");
  EXPECT_EQ(OnlyError(AllErrors("resistor R1 a -> 0 5mA\n")),
            "1:21: unit 'A' does not fit a resistor value; expected ohms (Ohm, ohm or Ω) or no "
            "unit");
  EXPECT_EQ(OnlyError(AllErrors("vsource V a -> 0 5A\n")),
            "1:19: unit 'A' does not fit a vsource value; expected volts (V) or no unit");
  EXPECT_EQ(OnlyError(AllErrors("part P diode breakdown_v=5A\n")),
            "1:27: unit 'A' does not fit breakdown_v; expected volts (V) or no unit");
  EXPECT_EQ(OnlyError(AllErrors("part P diode bandgap=1.1V\n")),
            "1:25: unit 'V' does not fit bandgap; expected a plain number (in eV)");
}

TEST(NetlistParserErrorTest, MalformedNumberPointsAtTheColumn) {
  EXPECT_EQ(OnlyError(ParseErrors("resistor R1 a -> 0 4k7k\n")),
            "1:23: malformed number '4k7k': 'k' after '4k7' is not a unit");
  EXPECT_EQ(OnlyError(ParseErrors("vsource V1 a -> 0 --3\n")),
            "1:20: malformed number '--3': expected a digit after '-'");
}

TEST(NetlistParserErrorTest, UnclosedParenthesis) {
  const auto e = ParseErrors("resistor R1 a -> 0 (2 * (3 + 4)\n");
  EXPECT_EQ(OnlyError(e), "1:20: unclosed '('; expected ')' before the end of the line");
}

TEST(NetlistParserErrorTest, UnclosedString) {
  EXPECT_EQ(OnlyError(ParseErrors("title \"half\n")),
            "1:7: unclosed string; expected '\"' before the end of the line");
}

TEST(NetlistParserErrorTest, TitleNeedsAString) {
  const auto e = ParseErrors("title clamp\n");
  EXPECT_EQ(OnlyError(e), "1:7: expected a quoted string after 'title' but found 'clamp'");
}

TEST(NetlistParserErrorTest, SecondTempNamesTheFirst) {
  const auto e = ParseErrors("temp 25\ntemp 30\n");
  EXPECT_EQ(OnlyError(e), "2:1: a second 'temp' statement; a netlist has at most one");
  ASSERT_EQ(e[0].notes.size(), 1u);
  EXPECT_EQ(e[0].notes[0].first.line, 1);
}

TEST(NetlistParserErrorTest, TrailingWords) {
  EXPECT_EQ(OnlyError(ParseErrors("resistor R1 a -> 0 1k 2k\n")),
            "1:23: unexpected '2k' at the end of the resistor statement");
}

TEST(NetlistParserErrorTest, BadNodeName) {
  EXPECT_EQ(OnlyError(ParseErrors("resistor R1 1 -> 0 1k\n")),
            "1:13: expected the first node but found '1'; a name is a letter or '_' followed by "
            "letters, digits or '_' (the reference node is 'gnd' or '0')");
}

TEST(NetlistParserErrorTest, UnknownDiodeOption) {
  const auto e = ParseErrors("diode D1 a -> 0 P are=2\n");
  EXPECT_EQ(OnlyError(e),
            "1:19: expected a diode option (area=VALUE, temp=VALUE or sink=HEATSINK) but found "
            "'are'");
  EXPECT_EQ(e[0].hint, "did you mean 'area'?");
}

TEST(NetlistParserErrorTest, PartKindMustBeDiode) {
  const auto e = ParseErrors("part P diod sat_current=1n\n");
  EXPECT_EQ(OnlyError(e),
            "1:8: expected the part kind 'diode' after the part name but found 'diod'");
  EXPECT_EQ(e[0].hint, "did you mean 'diode'?");
}

TEST(NetlistParserErrorTest, ReservedNames) {
  EXPECT_EQ(OnlyError(AllErrors("param pi = 3\n")),
            "1:7: 'pi' is a reserved name; choose another name for this param");
  EXPECT_EQ(OnlyError(AllErrors("resistor gnd a -> 0 1\n")),
            "1:10: 'gnd' is a reserved name; choose another name for this element");
}

TEST(NetlistParserErrorTest, SeveralErrorsAreAllReported) {
  const char* text =
      "resistr R1 a -> b 1k\n"      // unknown keyword
      "resistor R2 a b 1k\n"        // missing arrow
      "vsource V1 a -> 0 1x\n"      // malformed number
      "vsource V2 a -> 0 1\n"       // fine
      "isource I1 a -> 0 (1 + \n";  // unclosed expression
  const auto e = ParseErrors(text);
  ASSERT_EQ(e.size(), 4u);
  EXPECT_EQ(e[0].where.line, 1);
  EXPECT_EQ(e[1].where.line, 2);
  EXPECT_EQ(Brief(e[2]), "3:20: malformed number '1x': 'x' is not an SI prefix or a unit");
  EXPECT_EQ(Brief(e[3]), "5:24: expected a number, a name or '(' but found the end of the line");
}

TEST(NetlistParserErrorTest, ElaborationErrorsAreAllReported) {
  const auto e = AllErrors(
      "resistor R1 a -> 0 0\nresistor R2 a -> 0 -1\npart P diode ideality=-1\n"
      "diode D a -> 0 Q\n");
  ASSERT_EQ(e.size(), 4u);
  EXPECT_EQ(e[0].where.line, 3);  // parts are built before elements
  EXPECT_EQ(e[1].where.line, 1);
  EXPECT_EQ(e[2].where.line, 2);
  EXPECT_EQ(e[3].where.line, 4);
}

TEST(NetlistParserErrorTest, DiagnosticsStopAtTheLimit) {
  std::string text;
  for (int i = 0; i < 100; ++i) text += "nonsense\n";
  EXPECT_EQ(ParseErrors(text).size(), static_cast<std::size_t>(kMaxDiagnostics));
}

TEST(NetlistParserErrorTest, EmptyFileParsesToAnEmptyCircuit) {
  // Decision (docs/netlist-format.md): the parser accepts an empty file; the engine's
  // CheckTopology reports the empty circuit.
  const Design d = MustBuild("");
  EXPECT_TRUE(d.circuit.elements.empty());
  const Design c = MustBuild("# only a comment\n\n   \n");
  EXPECT_TRUE(c.circuit.elements.empty());
  const std::vector<Diagnostic> topology = CheckTopology(d.circuit);
  ASSERT_FALSE(topology.empty());
  EXPECT_NE(topology[0].message.find("no elements"), std::string::npos);  // engine wording
}

}  // namespace
}  // namespace knee
