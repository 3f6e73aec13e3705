// Writing the quartic force field of a shipped valence force field into the
// Taylor-expansion format and reading it back as a potential reproduces the harmonic
// wavenumbers and the anharmonicity constants; the amplitude scan finds where a quartic
// surface turns over.
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>

#include "anharmonic/amplitude_scan.hpp"
#include "anharmonic/force_constants.hpp"
#include "anharmonic/taylor_export.hpp"
#include "anharmonic/vpt2.hpp"
#include "molecule_helpers.hpp"
#include "potential/taylor_expansion_potential.hpp"

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

TEST(AmplitudeScan, CubicExpansionOfAMorseOscillatorTurnsOverWhereExpected) {
  // The H³⁵Cl Morse oscillator expanded to third order only: V(q) = ½ωq² + φ₃q³/6 has its
  // barrier at q = −2ω/φ₃ with height (2/3)ω³/φ₃² and falls into a hole beyond q = −3ω/φ₃;
  // the other side rises for ever. The Morse potential itself never turns over.
  const auto hcl = prepare("hcl.xyz", "hcl-morse.toml", {{1, 1}, {2, 35}});
  const auto fc = compute_force_constants(*hcl.potential, hcl.harmonic);
  TaylorExpansionData data =
      taylor_expansion_from_force_constants(fc, hcl.harmonic, hcl.molecule, ExpansionCoordinates::normal);
  data.derivatives.erase(std::remove_if(data.derivatives.begin(), data.derivatives.end(),
                                        [](const ExpansionDerivative& d) { return d.indices.size() == 4; }),
                         data.derivatives.end());
  const TaylorExpansionPotential cubic(data, hcl.molecule);
  AmplitudeScanOptions options;
  options.max_quanta = 40.0;
  options.points = 400;
  const auto scan = scan_normal_coordinates(cubic, hcl.harmonic, options);
  ASSERT_TRUE(scan.turns_over);
  ASSERT_EQ(scan.findings.size(), 1u);
  const double omega = fc.frequencies_cm1[0], phi3 = fc.constants.cubic(0, 0, 0);
  const double q_turn = -2.0 * omega / phi3, barrier = 2.0 / 3.0 * std::pow(omega, 3) / (phi3 * phi3);
  const double spacing = std::sqrt(2 * options.max_quanta + 1) / options.points;
  EXPECT_NEAR(scan.findings[0].turning_q, q_turn, spacing);
  EXPECT_NEAR(scan.lowest_barrier_cm1, barrier, 1e-3 * barrier);
  EXPECT_TRUE(scan.findings[0].hole);  // the guard of the expansion refused the points beyond
  EXPECT_GT(scan.energy_evaluations, 0u);
  const auto morse_scan = scan_normal_coordinates(*hcl.potential, hcl.harmonic, options);
  EXPECT_FALSE(morse_scan.turns_over) << morse_scan.message;
}

}  // namespace
}  // namespace overtone
