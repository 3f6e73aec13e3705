// Dipole surface terms of Taylor-expansion files: the electrical term against the operator
// algebra, the export and re-reading of first derivatives, the Cartesian form of second
// derivatives, and the file's mistakes.
#include <gtest/gtest.h>

#include "anharmonic/taylor_export.hpp"
#include "core/error.hpp"
#include "harmonic/normal_coordinates.hpp"
#include "intensity/anharmonic_intensities.hpp"
#include "intensity/harmonic_intensities.hpp"
#include "intensity/taylor_dipole.hpp"
#include "molecule/read_molecule.hpp"
#include "pipeline/analysis.hpp"
#include "pipeline/intensities.hpp"
#include "potential/make_potential.hpp"

namespace overtone {
namespace {

// Values written with 17 significant digits read back to round-off; transformations of
// matrices of order one add ~1e-14.
constexpr double round_trip_tolerance = 1e-9;

TEST(ElectricalMoment, MatchesTheOperatorAlgebra) {
  // ⟨0|½ Σ μ_kl q_k q_l|f⟩ with q = (a + a†)/√2 (closed form): 1/(2√2) μ_ii for 2_i and
  // μ_ij/2 for 1_i 1_j, here from 3 × 3 truncated matrices of two modes.
  Eigen::Matrix3d q = Eigen::Matrix3d::Zero();
  q(0, 1) = q(1, 0) = std::sqrt(0.5);
  q(1, 2) = q(2, 1) = 1.0;
  const Eigen::Matrix3d one = Eigen::Matrix3d::Identity();
  Eigen::MatrixXd q0(9, 9), q1(9, 9);
  for (int a = 0; a < 3; ++a)
    for (int b = 0; b < 3; ++b) {
      q0.block(3 * a, 3 * b, 3, 3) = q(a, b) * one;
      q1.block(3 * a, 3 * b, 3, 3) = one(a, b) * q;
    }
  std::array<Eigen::MatrixXd, 3> second;
  Eigen::Matrix2d values[3];
  values[0] << 0.4, -0.3, -0.3, 1.1;
  values[1] << -0.2, 0.7, 0.7, 0.05;
  values[2] << 0.0, 0.25, 0.25, -0.6;
  for (int c = 0; c < 3; ++c) second[static_cast<std::size_t>(c)] = values[c];
  for (const std::vector<int>& f : {std::vector<int>{2, 0}, {1, 1}, {0, 2}}) {
    const Eigen::Vector3d moment = detail::electrical_moment(second, f);
    for (int c = 0; c < 3; ++c) {
      const Eigen::MatrixXd op = 0.5 * (values[c](0, 0) * q0 * q0 + values[c](1, 1) * q1 * q1 +
                                        values[c](0, 1) * (q0 * q1 + q1 * q0));
      EXPECT_NEAR(moment[c], op(0, 3 * f[0] + f[1]), 1e-14);
    }
  }
}

struct WaterRun {
  Molecule molecule;
  std::unique_ptr<Potential> potential;
  AnalysisResult analysis;
  AnharmonicResult anharmonic;
};

WaterRun water() {
  const std::string dir = OVERTONE_SOURCE_DIR;
  WaterRun run;
  run.molecule = read_molecule(dir + "/molecules/water.xyz").molecule;
  run.potential = make_potential(dir + "/potentials/water.toml", run.molecule);
  run.analysis = analyze_molecule(run.molecule, *run.potential);
  run.anharmonic = analyze_anharmonic(run.analysis, *run.potential);
  return run;
}

// The quartic force field of the run as a Taylor-expansion file in normal coordinates.
std::string exported_text(const WaterRun& run) {
  return write_taylor_expansion(
      taylor_expansion_from_force_constants(run.anharmonic.force_constants, run.anharmonic.harmonic,
                                            run.analysis.molecule, ExpansionCoordinates::normal, "water"));
}

TEST(TaylorDipole, ExportedFirstDerivativesReadBackToTheSameIntensities) {
  const WaterRun run = water();
  const auto charges = dipole_source_for(*run.potential, "", run.analysis.molecule);
  ASSERT_TRUE(charges);
  const std::string text = exported_text(run) + dipole_surface_text(run.anharmonic.harmonic, *charges);
  const TaylorExpansionData data = parse_taylor_expansion(text, "exported.toml");
  const DipoleSurfaceTerms terms = parse_dipole_surface(text, "exported.toml", 3);
  ASSERT_EQ(terms.first.size(), 3u);
  const TaylorDipole surface(data, terms, run.analysis.molecule, "exported.toml");
  const auto expected = compute_harmonic_intensities(run.analysis.harmonic, *charges);
  const auto found = compute_harmonic_intensities(run.analysis.harmonic, surface);
  for (Eigen::Index k = 0; k < 3; ++k)
    EXPECT_NEAR(found.ir_km_per_mol[k] / expected.ir_km_per_mol[k], 1.0, round_trip_tolerance);
  EXPECT_FALSE(found.crawford.available);  // vibrations only: no rotational response
}

TEST(TaylorDipole, SecondDerivativesReturnInTheFileCoordinatesAndReachTheOvertones) {
  const WaterRun run = water();
  const auto charges = dipole_source_for(*run.potential, "", run.analysis.molecule);
  const std::string base = exported_text(run) + dipole_surface_text(run.anharmonic.harmonic, *charges);
  const std::string with_second = base + "second = [[1, 1, 0.0, 0.0, 0.02], [1, 3, 0.01, 0.0, -0.03]]\n";
  const TaylorExpansionData data = parse_taylor_expansion(with_second, "second.toml");
  const TaylorDipole surface(data, parse_dipole_surface(with_second, "second.toml", 3), run.analysis.molecule,
                             "second.toml");
  ASSERT_TRUE(surface.has_dipole_second_derivatives());
  // Back to the file's own normal coordinates: J-projection of the Cartesian tensor returns
  // the listed μ_kl (the file's modes are those of anharmonic.harmonic).
  const detail::NormalCoordinateFrame frame(run.anharmonic.harmonic);
  const auto cartesian = surface.dipole_second_derivatives(run.anharmonic.harmonic.coordinates_angstrom);
  const Eigen::MatrixXd z = frame.to_cartesian.transpose() * cartesian[2] * frame.to_cartesian;
  EXPECT_NEAR(z(0, 0), 0.02, round_trip_tolerance);
  EXPECT_NEAR(z(0, 2), -0.03, round_trip_tolerance);
  EXPECT_NEAR(z(1, 1), 0.0, round_trip_tolerance);
  // The electrical term changes the overtone 2ν of mode 1 (the bend, lowest) and not the
  // fundamentals.
  const TaylorDipole first_only(data, parse_dipole_surface(base, "base.toml", 3), run.analysis.molecule,
                                "base.toml");
  const auto with = compute_anharmonic_level_intensities(run.anharmonic.vpt2, run.anharmonic.force_constants,
                                                         run.anharmonic.harmonic, surface);
  const auto without = compute_anharmonic_level_intensities(
      run.anharmonic.vpt2, run.anharmonic.force_constants, run.anharmonic.harmonic, first_only);
  for (std::size_t i = 0; i < run.anharmonic.vpt2.levels.size(); ++i) {
    const VibrationalLevel& level = run.anharmonic.vpt2.levels[i];
    if (level.kind == LevelKind::fundamental) {
      EXPECT_NEAR(*with.ir_km_per_mol[i], *without.ir_km_per_mol[i],
                  round_trip_tolerance * *without.ir_km_per_mol[i]);
    }
    if (level.set_quanta == std::vector<int>{2, 0, 0}) {
      EXPECT_GT(std::abs(*with.ir_km_per_mol[i] - *without.ir_km_per_mol[i]), 0.0);
    }
  }
}

TEST(TaylorDipole, RefusesMalformedTables) {
  const std::string head = "format = \"overtone-taylor-expansion\"\n";
  EXPECT_THROW(parse_dipole_surface(head + "[dipole]\nfirst = [[4, 0.1, 0.0, 0.0]]\n", "x.toml", 3), Error);
  EXPECT_THROW(parse_dipole_surface(head + "[dipole]\nfirst = [[1, 0.1, 0.0]]\n", "x.toml", 3), Error);
  EXPECT_THROW(parse_dipole_surface(head + "[dipole]\nunits = \"coulomb\"\nfirst = [[1, 0.1, 0.0, 0.0]]\n",
                                    "x.toml", 3),
               Error);
  EXPECT_THROW(parse_dipole_surface(head + "[dipole]\nfirs = [[1, 0.1, 0.0, 0.0]]\n", "x.toml", 3), Error);
  EXPECT_THROW(parse_dipole_surface(head + "[dipole]\nthird = [[1, 1, 2, 0.1, 0.0, 0.0]]\n", "x.toml", 3),
               Error);
  EXPECT_TRUE(parse_dipole_surface(head, "x.toml", 3).empty());
}

}  // namespace
}  // namespace overtone
