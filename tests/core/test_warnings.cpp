// merge_repeated_warnings: each warning once, in the order of first appearance, with the
// number of times it occurred when more than once (the rule is the program's own; the
// expected lists are worked out by hand).
#include <gtest/gtest.h>

#include <string>
#include <vector>

#include "core/warnings.hpp"

namespace overtone {
namespace {

TEST(MergeRepeatedWarnings, ARepeatedWarningIsSaidOnceWithItsCount) {
  const std::vector<std::string> gathered = {"mode 3 is soft", "atom 2 has no charge", "mode 3 is soft",
                                             "mode 3 is soft", "the group was not used"};
  const std::vector<std::string> expected = {"mode 3 is soft (3 times)", "atom 2 has no charge",
                                             "the group was not used"};
  EXPECT_EQ(merge_repeated_warnings(gathered), expected);
}

TEST(MergeRepeatedWarnings, DistinctWarningsPassUnchangedInOrder) {
  const std::vector<std::string> gathered = {"b", "a", "c"};
  EXPECT_EQ(merge_repeated_warnings(gathered), gathered);
  EXPECT_TRUE(merge_repeated_warnings({}).empty());
}

TEST(MergeRepeatedWarnings, OrderIsThatOfFirstAppearance) {
  const std::vector<std::string> expected = {"late (2 times)", "early (2 times)"};
  EXPECT_EQ(merge_repeated_warnings({"late", "early", "early", "late"}), expected);
}

}  // namespace
}  // namespace overtone
