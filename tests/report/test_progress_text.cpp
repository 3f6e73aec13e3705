// The progress line of a long stage: the linear estimate of the time left and the text.
#include <gtest/gtest.h>

#include <cmath>

#include "report/progress_text.hpp"

namespace overtone {
namespace {

// Exact in binary for these values: quarters and tenths of small numbers of seconds.
constexpr double estimate_tolerance_s = 1e-12;

TEST(ProgressText, RemainingTimeIsTheLinearExtrapolation) {
  // A quarter done in 10 s leaves three quarters: 30 s at the same rate (closed form).
  EXPECT_NEAR(remaining_seconds({"families", 25, 100, "", 10.0}), 30.0, estimate_tolerance_s);
  EXPECT_EQ(remaining_seconds({"families", 100, 100, "", 10.0}), 0.0);
  EXPECT_TRUE(std::isnan(remaining_seconds({"optimize", 0, 0, "", 1.0})));
  EXPECT_TRUE(std::isnan(remaining_seconds({"families", 0, 40, "", 1.0})));
}

TEST(ProgressText, LineShowsCountsDetailTimeAndEstimate) {
  const std::string line = stage_progress_line({"families", 3, 40, "family 3 of 40: ν4", 6.0}, 9.0);
  EXPECT_EQ(line,
            "families 3/40 (8%): family 3 of 40: ν4; 6.0 s, about 1 min 14 s left; 9.0 s since the start");
  EXPECT_EQ(stage_progress_line({"optimize", 0, 0, "", 0.25}, 0.25), "optimize; 0.2 s");
  EXPECT_EQ(elapsed_text(3725.0), "1 h 02 min");
  EXPECT_EQ(elapsed_text(42.0), "42 s");
}

}  // namespace
}  // namespace overtone
