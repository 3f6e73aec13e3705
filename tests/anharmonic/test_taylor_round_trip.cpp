// Writing the quartic force field of a shipped valence force field into the
// Taylor-expansion format and reading it back as a potential reproduces the harmonic
// wavenumbers and the anharmonicity constants.
#include <gtest/gtest.h>

#include <cmath>

#include "anharmonic/force_constants.hpp"
#include "anharmonic/taylor_export.hpp"
#include "anharmonic/vpt2.hpp"
#include "potential/taylor_expansion_potential.hpp"
#include "support/molecule_helpers.hpp"

namespace overtone {
namespace {

using testing::prepare;

// The exported field is an exact quartic: its harmonic analysis reproduces ω up to the
// round-off of the 17-digit file (1e-12 relative).
constexpr double frequency_tolerance_cm1 = 1e-6;
// Central differences on an exact quartic are exact (the error terms are fifth and sixth
// derivatives), so the re-computed constants match the exported ones to round-off
// amplified by 1/h²: 1e-12·4000/4e-4 ≈ 1e-5 cm⁻¹ at most.
constexpr double constant_tolerance_cm1 = 1e-4;

void expect_round_trip(const std::string& molecule, const std::string& field,
                       const std::vector<IsotopeChoice>& isotopes, ExpansionCoordinates coordinates) {
  const auto original = prepare(molecule, field, isotopes);
  ForceConstantOptions full;
  full.full_quartic_max_modes = 100;
  const auto fc = compute_force_constants(*original.potential, original.harmonic, full);
  const auto vpt2 = run_vpt2(fc, original.harmonic);

  TaylorExportOptions export_options;
  export_options.coordinates = coordinates;
  const std::string text =
      export_taylor_expansion(*original.potential, original.harmonic, original.molecule, export_options);
  const TaylorExpansionPotential reread(parse_taylor_expansion(text, "exported " + field), original.molecule);

  const HarmonicResult harmonic =
      analyze_normal_modes(original.harmonic.coordinates_angstrom, original.harmonic.masses_da,
                           reread.hessian(original.harmonic.coordinates_angstrom));
  ASSERT_EQ(harmonic.mode_count(), original.harmonic.mode_count());
  for (Eigen::Index k = 0; k < harmonic.frequencies_cm1.size(); ++k)
    EXPECT_NEAR(harmonic.frequencies_cm1[k], original.harmonic.frequencies_cm1[k], frequency_tolerance_cm1);
  const auto fc_back = compute_force_constants(reread, harmonic, full);
  const auto vpt2_back = run_vpt2(fc_back, harmonic);
  EXPECT_LT((vpt2.x_cm1 - vpt2_back.x_cm1).cwiseAbs().maxCoeff(), constant_tolerance_cm1) << field;
  for (std::size_t k = 0; k < vpt2.levels.size(); ++k)
    EXPECT_NEAR(vpt2.levels[k].anharmonic_cm1, vpt2_back.levels[k].anharmonic_cm1, constant_tolerance_cm1);
}

TEST(TaylorRoundTrip, WaterInNormalCoordinates) {
  expect_round_trip("water.xyz", "water.toml", {{1, 16}, {2, 1}, {3, 1}}, ExpansionCoordinates::normal);
}

TEST(TaylorRoundTrip, WaterInCartesians) {
  expect_round_trip("water.xyz", "water.toml", {{1, 16}, {2, 1}, {3, 1}}, ExpansionCoordinates::cartesian);
}

TEST(TaylorRoundTrip, CarbonDioxideInNormalCoordinates) {
  expect_round_trip("carbon-dioxide.xyz", "carbon-dioxide.toml", {{1, 16}, {2, 12}, {3, 16}},
                    ExpansionCoordinates::normal);
}

}  // namespace
}  // namespace overtone
