// The amplitude scan that guards the families: it finds where a Taylor-expanded surface
// turns over, and that a Morse potential does not.
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>

#include "anharmonic/force_constants.hpp"
#include "anharmonic/taylor_export.hpp"
#include "families/amplitude_scan.hpp"
#include "potential/taylor_expansion_potential.hpp"
#include "support/molecule_helpers.hpp"

namespace overtone {
namespace {

using testing::prepare;

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
