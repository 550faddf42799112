// FileName: one stored copy of each file name, shared by every location that names it.
#include <gtest/gtest.h>

#include <string>
#include <thread>
#include <type_traits>
#include <vector>

#include "knee/result.h"

namespace knee {
namespace {

TEST(FileName, EqualNamesShareOneStoredString) {
  const std::string spelled = "shared/ladder.knee";
  const FileName a(spelled);
  const FileName b("shared/ladder.knee");
  EXPECT_EQ(&a.str(), &b.str());
  EXPECT_TRUE(a == b);
  EXPECT_EQ(a.str(), spelled);
  const FileName other("shared/bridge.knee");
  EXPECT_NE(&a.str(), &other.str());
  EXPECT_FALSE(a == other);
}

TEST(FileName, EmptyNameReadsAsEmptyString) {
  const FileName none;
  EXPECT_TRUE(none.empty());
  EXPECT_EQ(none.str(), "");
  EXPECT_TRUE(FileName("") == none);
  EXPECT_FALSE(FileName("x.knee").empty());
}

TEST(FileName, ComparesWithStrings) {
  const FileName f("--set");
  EXPECT_TRUE(f == "--set");
  EXPECT_TRUE(f == std::string("--set"));
  EXPECT_FALSE(f == "--show");
}

// A location is copied into every element and diagnostic; a plain value keeps that a
// copy of a few words with no allocation.
TEST(FileName, SourceLocationIsTriviallyCopyable) {
  EXPECT_TRUE(std::is_trivially_copyable_v<SourceLocation>);
  SourceLocation where;
  where.file = "t.knee";
  where.line = 3;
  const SourceLocation copy = where;
  EXPECT_EQ(&copy.file.str(), &where.file.str());
  EXPECT_EQ(copy.line, 3);
}

TEST(FileName, ThreadsStoringOneNameGetTheSameString) {
  std::vector<const std::string*> seen(8, nullptr);
  std::vector<std::thread> threads;
  for (std::size_t t = 0; t < seen.size(); ++t) {
    threads.emplace_back([&seen, t] {
      for (int i = 0; i < 1000; ++i) seen[t] = &FileName("threads/one-name.knee").str();
    });
  }
  for (std::thread& thread : threads) thread.join();
  for (const std::string* s : seen) EXPECT_EQ(s, seen[0]);
}

}  // namespace
}  // namespace knee
