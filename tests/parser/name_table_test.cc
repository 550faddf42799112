// NameTable: every name is found after the table grew, a repeated name keeps its first
// value, and the entries stay in insertion order.
#include "name_table.h"

#include <gtest/gtest.h>

#include <deque>
#include <string>

namespace knee {
namespace {

TEST(NameTable, EmptyTableFindsNothing) {
  NameTable<int> table;
  EXPECT_EQ(table.find("a"), table.end());
  EXPECT_EQ(table.size(), 0u);
}

// From 16 slots to 2^16 without a reserve: each growth moves every slot.
TEST(NameTable, FindsEveryNameAfterGrowing) {
  std::deque<std::string> names;  // the table keeps views: the texts must stay put
  NameTable<int> table;
  constexpr int kCount = 20000;
  for (int i = 0; i < kCount; ++i) {
    names.push_back("n" + std::to_string(i));
    auto [it, inserted] = table.try_emplace(names.back(), i);
    ASSERT_TRUE(inserted) << names.back();
    EXPECT_EQ(it->second, i);
  }
  ASSERT_EQ(table.size(), static_cast<std::size_t>(kCount));
  for (int i = 0; i < kCount; ++i) {
    auto it = table.find("n" + std::to_string(i));
    ASSERT_NE(it, table.end()) << i;
    EXPECT_EQ(it->second, i);
    EXPECT_EQ(std::string_view(it->first), names[static_cast<std::size_t>(i)]);
  }
  EXPECT_EQ(table.find("n20000"), table.end());
  EXPECT_EQ(table.find("n"), table.end());
  EXPECT_EQ(table.find(""), table.end());
  int order = 0;  // entries in insertion order
  for (const auto& [name, value] : table) EXPECT_EQ(value, order++);
}

// A second definition of a name finds the first one's entry, and its value is not written,
// also when the table grew between the two.
TEST(NameTable, RepeatedNameKeepsTheFirstValue) {
  std::deque<std::string> names;
  NameTable<int> table;
  for (int i = 0; i < 300; ++i) {
    names.push_back("x" + std::to_string(i));
    table.try_emplace(names.back(), i);
  }
  for (int i = 0; i < 300; i += 7) {
    const std::string again = "x" + std::to_string(i);  // another copy of the text
    auto [it, inserted] = table.try_emplace(again, -1);
    EXPECT_FALSE(inserted) << again;
    EXPECT_EQ(it->second, i);
    EXPECT_EQ(std::string_view(it->first).data(), names[static_cast<std::size_t>(i)].data());
  }
  EXPECT_EQ(table.size(), 300u);
}

// The hash computed ahead and a prefetch give the same table as the plain insertion.
TEST(NameTable, InsertionWithAHashComputedAhead) {
  NameTable<int> table;
  table.reserve(4);
  const std::string a = "alpha", b = "beta";
  const std::size_t hash = NameTable<int>::Hash(a);
  table.Prefetch(hash);
  EXPECT_TRUE(table.try_emplace(a, hash, 1).second);
  EXPECT_TRUE(table.try_emplace(b, 2).second);
  EXPECT_FALSE(table.try_emplace(a, 3).second);
  EXPECT_EQ(table.find("alpha")->second, 1);
  EXPECT_EQ(table.find("beta")->second, 2);
}

}  // namespace
}  // namespace knee
