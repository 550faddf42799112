// The settings of knee hand's models (engine/src/hand_models.cc): their validation, and
// which piecewise-linear model each setting selects.
#include <gtest/gtest.h>

#include "circuit_builder.h"
#include "knee/hand.h"

namespace knee {
namespace {

using testing::CircuitBuilder;

TEST(HandSettingsTest, DefaultsAndOrdinaryValuesPass) {
  EXPECT_FALSE(Validate(HandSettings{}));
  HandSettings s;
  s.drop = 0.0;
  s.on_res = 0.0;
  EXPECT_FALSE(Validate(s));
  s.on_res.reset();
  s.fit_at = 1e-3;
  s.drop = 100;
  EXPECT_FALSE(Validate(s));
}

TEST(HandSettingsTest, EachRuleFires) {
  HandSettings s;
  s.drop = -0.1;
  ASSERT_TRUE(Validate(s));
  EXPECT_NE(Validate(s)->find("drop"), std::string::npos);
  s = {};
  s.drop = 100.5;
  EXPECT_TRUE(Validate(s));
  s = {};
  s.on_res = -1;
  EXPECT_NE(Validate(s).value_or("").find("on_res"), std::string::npos);
  s = {};
  s.fit_at = 0;
  EXPECT_NE(Validate(s).value_or("").find("fit_at"), std::string::npos);
  s = {};
  s.on_res = 1;
  s.fit_at = 1e-3;
  EXPECT_NE(Validate(s).value_or("").find("both"), std::string::npos);
}

TEST(HandSettingsTest, PiecewiseModelFollowsTheSettings) {
  CircuitBuilder b;
  DiodeModel part;
  part.series_res = 2.0;
  const int p = b.Part("rs2", part);
  b.V("V1", "a", "gnd", 5);
  b.R("R1", "a", "k", 1e3);
  const int d = b.D("D1", "k", "gnd", p, 2.0);  // area 2: series resistance halves
  const Circuit& c = b.circuit();

  HandSettings s;
  s.drop = 0.65;
  Result<HandModel> own = MakePiecewiseModel(c, s);  // drop + each part's series_res / area
  ASSERT_TRUE(own.ok());
  EXPECT_EQ(own->lines[d].on_voltage, 0.65);
  EXPECT_EQ(own->lines[d].on_res, 1.0);

  s.on_res = 3.0;
  Result<HandModel> fixed = MakePiecewiseModel(c, s);
  ASSERT_TRUE(fixed.ok());
  EXPECT_EQ(fixed->lines[d].on_res, 3.0);

  s.on_res.reset();
  s.fit_at = 1e-3;
  Result<HandModel> tangent = MakePiecewiseModel(c, s);
  ASSERT_TRUE(tangent.ok());
  // The tangent's slope at 1 mA: n*Vt/I for the junction plus the series resistance
  // (common practice, no source); above the series resistance alone.
  EXPECT_GT(tangent->lines[d].on_res, 1.0);

  Result<std::vector<HandModel>> all = MakeHandModels(c, HandSettings{});
  ASSERT_TRUE(all.ok());
  ASSERT_EQ(all->size(), 3u);
  EXPECT_EQ((*all)[0].kind, HandModelKind::kIdeal);
  EXPECT_EQ((*all)[1].kind, HandModelKind::kConstantDrop);
  EXPECT_EQ((*all)[2].kind, HandModelKind::kPiecewiseLinear);
}

}  // namespace
}  // namespace knee
