// The intensity stage's Options keep the stage contract: the defaults are valid, and a
// value out of range is refused with a message naming the field.
#include <gtest/gtest.h>

#include "../support/option_refusal.hpp"
#include "intensity/dipole_source.hpp"

namespace overtone {
namespace {

using testing_support::expect_refused_naming;
using testing_support::refusal_of;

TEST(IntensityOptions, DefaultsAreValid) { EXPECT_EQ(refusal_of(PolarTensorOptions{}), ""); }

TEST(IntensityOptions, OutOfRangeValuesAreRefusedByName) {
  PolarTensorOptions no_warning;
  no_warning.geometry_warning_angstrom = 0.0;
  expect_refused_naming(no_warning, "geometry_warning_angstrom");
  // The limit beyond which a file is refused cannot lie below the one that only warns.
  PolarTensorOptions limit_below_warning;
  limit_below_warning.geometry_limit_angstrom = 0.5 * limit_below_warning.geometry_warning_angstrom;
  expect_refused_naming(limit_below_warning, "geometry_limit_angstrom");
}

}  // namespace
}  // namespace overtone
