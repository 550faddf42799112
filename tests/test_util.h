// Shared helpers for tests: close comparison with a relative tolerance and an
// absolute floor, and the source-tree paths.
#pragma once

#include <gtest/gtest.h>

#include <cmath>
#include <string>

namespace knee::testing {

inline std::string SourcePath(const std::string& relative) {
  return std::string(KNEE_SOURCE_DIR) + "/" + relative;
}

// |actual - expected| <= rel * |expected| + abs_floor
inline ::testing::AssertionResult IsClose(double actual, double expected, double rel,
                                          double abs_floor = 0.0) {
  const double err = std::fabs(actual - expected);
  const double bound = rel * std::fabs(expected) + abs_floor;
  if (std::isfinite(actual) && err <= bound) return ::testing::AssertionSuccess();
  return ::testing::AssertionFailure()
         << "actual " << actual << " vs expected " << expected << ": |error| " << err << " > bound "
         << bound << " (rel " << rel << ", floor " << abs_floor << ")";
}

}  // namespace knee::testing

#define EXPECT_CLOSE(actual, expected, rel, floor) \
  EXPECT_TRUE(::knee::testing::IsClose((actual), (expected), (rel), (floor)))
#define ASSERT_CLOSE(actual, expected, rel, floor) \
  ASSERT_TRUE(::knee::testing::IsClose((actual), (expected), (rel), (floor)))
