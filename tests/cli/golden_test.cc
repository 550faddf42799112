// Golden outputs of check and bias in the three formats, on a linear divider whose
// numbers have a closed form (nodal analysis by hand, common practice, no source):
//   v(mid) = (10 V / 1k + 1 mA) / (1/1k + 1/4k) = 8.8 V, I(Rtop) = 1.2 mA,
//   I(Rbot) = 2.2 mA, P(Rbot) = 19.36 mW.
// The table's solver footer line is compared by shape, since step counts and the last
// bits of the residual belong to the solver, not to the format.
#include <gtest/gtest.h>

#include <algorithm>
#include <nlohmann/json.hpp>

#include "run_knee.h"

namespace knee::testing {
namespace {

const std::string kFile = "tests/cli/golden/divider.knee";

TEST(Golden, Check) {
  KneeRun run = RunKnee("check " + SourcePath(kFile));
  ASSERT_EQ(run.status, 0) << run.err;
  const std::string expected = ReadWhole(SourcePath("tests/cli/golden/divider.check"));
  EXPECT_EQ(run.out, SourcePath("tests/cli/golden/") + expected);
}

TEST(Golden, Table) {
  KneeRun run = RunKnee("bias " + SourcePath(kFile));
  ASSERT_EQ(run.status, 0) << run.err;
  // The last line is the solver's account; its numbers belong to the solver.
  const size_t footer = run.out.rfind("\nsolver: ");
  ASSERT_NE(footer, std::string::npos) << run.out;
  const std::string account = run.out.substr(footer + 1);
  EXPECT_EQ(account.rfind("solver: Newton-Raphson", 0), 0u) << account;
  EXPECT_NE(account.find(" Newton steps, no aids; largest KCL residual "), std::string::npos)
      << account;
  EXPECT_NE(account.find(" A at "), std::string::npos) << account;
  EXPECT_EQ(std::count(account.begin(), account.end(), '\n'), 1) << account;
  EXPECT_EQ(run.out.substr(0, footer + 1) + "solver: <account>\n",
            ReadWhole(SourcePath("tests/cli/golden/divider.table")));
}

TEST(Golden, Csv) {
  KneeRun run = RunKnee("bias " + SourcePath(kFile) + " --format csv");
  ASSERT_EQ(run.status, 0) << run.err;
  const size_t eol = run.out.find('\n');
  EXPECT_EQ(run.out.substr(0, eol + 1), "mid.v [V],Rtop.i [A],Rbot.i [A],Rbot.p [W]\n");
  double v = 0, i1 = 0, i2 = 0, p = 0;
  ASSERT_EQ(std::sscanf(run.out.c_str() + eol + 1, "%lf,%lf,%lf,%lf", &v, &i1, &i2, &p), 4);
  EXPECT_CLOSE(v, 8.8, 1e-12, 0);
  EXPECT_CLOSE(i1, 1.2e-3, 1e-12, 0);
  EXPECT_CLOSE(i2, 2.2e-3, 1e-12, 0);
  EXPECT_CLOSE(p, 19.36e-3, 1e-12, 0);
  EXPECT_EQ(std::count(run.out.begin(), run.out.end(), '\n'), 2);
}

TEST(Golden, Json) {
  KneeRun run = RunKnee("bias " + SourcePath(kFile) + " --format json");
  ASSERT_EQ(run.status, 0) << run.err;
  const auto j = nlohmann::json::parse(run.out);
  EXPECT_EQ(j["format"], "knee-result/1");
  EXPECT_EQ(j["title"], "divider");
  EXPECT_EQ(j["analysis"], "bias");
  EXPECT_EQ(j["temp_c"], 25.0);
  EXPECT_EQ(j["sweep_columns"], 0);
  ASSERT_EQ(j["columns"].size(), 4u);
  EXPECT_EQ(j["columns"][3]["name"], "Rbot.p");
  EXPECT_EQ(j["columns"][3]["unit"], "W");
  EXPECT_CLOSE(j["rows"][0][0].get<double>(), 8.8, 1e-12, 0);
  EXPECT_CLOSE(j["rows"][0][3].get<double>(), 19.36e-3, 1e-12, 0);
  EXPECT_TRUE(j["failures"].empty());
  EXPECT_TRUE(j["expectations"].empty());
  EXPECT_TRUE(j["stress"].empty());
  EXPECT_TRUE(j["cautions"].empty());
  EXPECT_LT(j["solver"]["max_kcl_residual_a"].get<double>(), 1e-12);
  EXPECT_EQ(j["solver"]["points"], 1);
}

}  // namespace
}  // namespace knee::testing
