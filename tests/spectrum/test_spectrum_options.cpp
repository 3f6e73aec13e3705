// SpectrumOptions keeps the stage contract: the defaults are valid, and a value out of
// range is refused with a message naming the field.
#include <gtest/gtest.h>

#include <limits>

#include "../support/option_refusal.hpp"
#include "spectrum/spectrum.hpp"

namespace overtone {
namespace {

using testing_support::expect_refused_naming;
using testing_support::refusal_of;

TEST(SpectrumOptions, DefaultsAreValid) { EXPECT_EQ(refusal_of(SpectrumOptions{}), ""); }

TEST(SpectrumOptions, OutOfRangeValuesAreRefusedByName) {
  SpectrumOptions zero_width;
  zero_width.fwhm_cm1 = 0.0;
  expect_refused_naming(zero_width, "fwhm_cm1");
  SpectrumOptions endless_range;
  endless_range.max_cm1 = std::numeric_limits<double>::infinity();
  expect_refused_naming(endless_range, "max_cm1");
}

}  // namespace
}  // namespace overtone
