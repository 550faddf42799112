// The steps every front end shares (parser/src/design_steps.cc): reading a file,
// elaborating with the topology check, quantity lists, the default quantities, and how
// a sweep point is applied.
#include "knee/design_steps.h"

#include <gtest/gtest.h>
#include <unistd.h>

#include <cstdio>
#include <filesystem>
#include <fstream>

#include "parser_test_util.h"

namespace knee {
namespace {

using testing::kFile;

constexpr const char* kDivider =
    "param Rtop = 1k\n"
    "vsource V1 in -> gnd 10\n"
    "resistor R1 in -> mid Rtop\n"
    "resistor R2 mid -> gnd 1k\n";

Netlist MustParse(std::string_view text) {
  Result<Netlist> n = ParseNetlist(text, kFile);
  EXPECT_TRUE(n.ok());
  return std::move(n).value();
}

TEST(ReadNetlistFileTest, ReadsAFileWholeAndRefusesFoldersAndMissingFiles) {
  const std::filesystem::path dir = std::filesystem::temp_directory_path();
  // One name per process: the ordinary and the sanitizer suites may run at once.
  const std::filesystem::path file =
      dir / ("knee_design_steps_test_" + std::to_string(::getpid()) + ".knee");
  {
    std::ofstream out(file, std::ios::binary);
    out << kDivider;
  }
  Result<std::string> text = ReadNetlistFile(file.string());
  ASSERT_TRUE(text.ok());
  EXPECT_EQ(*text, kDivider);
  std::filesystem::remove(file);

  Result<std::string> missing = ReadNetlistFile(file.string());
  ASSERT_FALSE(missing.ok());
  EXPECT_NE(missing.errors().front().message.find("cannot read"), std::string::npos);
  EXPECT_EQ(missing.errors().front().where.line, 0);

  Result<std::string> folder = ReadNetlistFile(dir.string());
  ASSERT_FALSE(folder.ok());
  EXPECT_NE(folder.errors().front().message.find("folder"), std::string::npos);
}

TEST(ElaborateCheckedTest, PassesAGoodCircuitAndPlacesTopologyProblemsInTheFile) {
  EXPECT_TRUE(ElaborateChecked(MustParse(kDivider), {}).ok());
  // An empty circuit: the topology check's diagnostic has no place of its own.
  Result<Design> empty = ElaborateChecked(MustParse("title \"nothing\"\n"), {});
  ASSERT_FALSE(empty.ok());
  EXPECT_EQ(empty.errors().front().where.file, kFile);
  // A node without a DC path to gnd.
  Result<Design> floating =
      ElaborateChecked(MustParse("vsource V1 a -> gnd 1\nresistor R1 b -> c 1k\n"), {});
  EXPECT_FALSE(floating.ok());
}

TEST(QuantityListTest, SplitsAtTopLevelCommasAndCollectsEveryError) {
  EXPECT_EQ(SplitTopLevel(" a.v, (max(b.v, c.v)) ,d.i", ','),
            (std::vector<std::string>{"a.v", "(max(b.v, c.v))", "d.i"}));
  Result<Design> d = ElaborateChecked(MustParse(kDivider), {});
  ASSERT_TRUE(d.ok());
  SourceLocation where;
  where.file = "--show";
  Result<std::vector<QuantityExpr>> good =
      ParseQuantityList("mid.v,(in.v - mid.v),R1.i", d->circuit, where);
  ASSERT_TRUE(good.ok());
  EXPECT_EQ(good->size(), 3u);
  Result<std::vector<QuantityExpr>> bad = ParseQuantityList("mdi.v,mid.v,R9.i", d->circuit, where);
  ASSERT_FALSE(bad.ok());
  EXPECT_EQ(bad.errors().size(), 2u);  // both unknown names, not only the first
}

TEST(DefaultShowTest, ShowStatementsElseEveryNodeVoltageThenEveryCurrent) {
  Result<Design> plain = ElaborateChecked(MustParse(kDivider), {});
  ASSERT_TRUE(plain.ok());
  std::vector<std::string> texts;
  for (const QuantityExpr& q : DefaultShow(*plain)) texts.push_back(q.text());
  EXPECT_EQ(texts, (std::vector<std::string>{"in.v", "mid.v", "V1.i", "R1.i", "R2.i"}));

  Result<Design> shown = ElaborateChecked(MustParse(std::string(kDivider) + "show mid.v\n"), {});
  ASSERT_TRUE(shown.ok());
  ASSERT_EQ(DefaultShow(*shown).size(), 1u);
  EXPECT_EQ(DefaultShow(*shown).front().text(), "mid.v");
}

TEST(PointApplierTest, SetsElementsDirectlyAndParamsByReElaborating) {
  const Netlist netlist = MustParse(kDivider);
  Result<Design> d = ElaborateChecked(netlist, {});
  ASSERT_TRUE(d.ok());
  SourceLocation where;
  Result<SweepAxis> source = ResolveSweepAxis("V1", "1,2", netlist, d->circuit, where, where);
  Result<SweepAxis> param = ResolveSweepAxis("Rtop", "2k,3k", netlist, d->circuit, where, where);
  ASSERT_TRUE(source.ok() && param.ok());
  const std::vector<SweepAxis> axes{*source, *param};
  EXPECT_EQ(MakeSweepGrid(axes).PointCount(), 4);

  Overrides overrides;
  overrides.sets.push_back({"R2", "500"});  // the base overrides stay in force
  const ApplyPoint apply = MakePointApplier(netlist, overrides, axes);
  Circuit circuit = d->circuit;
  const double values[] = {7.0, 2500.0};
  EXPECT_EQ(apply(values, &circuit), "");
  EXPECT_EQ(circuit.elements[circuit.FindElement("V1")].value, 7.0);
  EXPECT_EQ(circuit.elements[circuit.FindElement("R1")].value, 2500.0);
  EXPECT_EQ(circuit.elements[circuit.FindElement("R2")].value, 500.0);

  const double bad[] = {7.0, -1.0};  // a negative resistance is refused, not applied
  EXPECT_NE(apply(bad, &circuit), "");
}

TEST(DescribeFailureTest, StatusThenDetail) {
  SolveSummary s;
  s.status = SolveStatus::kNoConvergence;
  s.detail = "200 steps";
  EXPECT_EQ(DescribeFailure(s), std::string(ToString(s.status)) + ": 200 steps");
}

// A proven absence of a solution says so once: its detail without a repeated lead.
TEST(DescribeFailureTest, NoSolutionSaysSoOnce) {
  SolveSummary s;
  s.status = SolveStatus::kNoSolution;
  s.detail = "no DC solution: Ipush pushes 1 mA into a";
  EXPECT_EQ(DescribeFailure(s), "Ipush pushes 1 mA into a");
}

}  // namespace
}  // namespace knee
