// The harmonic stage keeps the stage contract: its Options validate, and HarmonicResult
// carries a status and a message (a non-minimum is a status, not an exception).
#include <gtest/gtest.h>

#include <string>

#include "../support/option_refusal.hpp"
#include "harmonic/harmonic.hpp"
#include "molecule/read_molecule.hpp"
#include "potential/make_potential.hpp"

namespace overtone {
namespace {

using testing_support::expect_refused_naming;
using testing_support::refusal_of;

const std::string source_dir = OVERTONE_SOURCE_DIR;

TEST(HarmonicOptions, DefaultsAreValid) {
  EXPECT_EQ(refusal_of(HessianOptions{}), "");
  EXPECT_EQ(refusal_of(NormalModeOptions{}), "");
}

TEST(HarmonicOptions, OutOfRangeValuesAreRefusedByName) {
  HessianOptions zero_step;
  zero_step.finite_difference_step_angstrom = 0.0;
  expect_refused_naming(zero_step, "finite_difference_step_angstrom");
  HessianOptions negative_linearity;
  negative_linearity.linearity_tolerance = -1e-8;
  expect_refused_naming(negative_linearity, "linearity_tolerance");
  NormalModeOptions no_limit;
  no_limit.max_wavenumber_cm1 = -1.0;
  expect_refused_naming(no_limit, "max_wavenumber_cm1");
}

TEST(HarmonicResult, MinimumAndNonMinimumAreStatuses) {
  // HCl on its Morse curve (molecules/hcl.xyz at the minimum): one real stretch. The
  // same Hessian negated is a maximum along the bond: the stretch becomes imaginary
  // (closed form: the eigenvalue changes sign), which is a status, not an error.
  const Molecule molecule = read_molecule(source_dir + "/molecules/hcl.xyz").molecule;
  const auto potential = make_potential(source_dir + "/potentials/hcl-morse.toml", molecule);
  const Eigen::VectorXd x = molecule.coordinates();
  const Eigen::MatrixXd hessian = compute_hessian(*potential, x).hessian;

  const HarmonicResult minimum = analyze_normal_modes(x, molecule.masses(), hessian);
  EXPECT_EQ(minimum.status, HarmonicStatus::ok) << minimum.message;
  EXPECT_TRUE(minimum.ok());
  EXPECT_FALSE(minimum.message.empty());

  const HarmonicResult maximum = analyze_normal_modes(x, molecule.masses(), -hessian);
  EXPECT_EQ(maximum.status, HarmonicStatus::not_a_minimum);
  EXPECT_FALSE(maximum.ok());
  EXPECT_NE(maximum.message.find("imaginary"), std::string::npos) << maximum.message;
  EXPECT_LT(maximum.frequencies_cm1[0], 0.0);
  EXPECT_EQ(to_string(maximum.status), "not_a_minimum");
}

}  // namespace
}  // namespace overtone
