// Harmonic analysis checked against a handbook constant, the Teller–Redlich product
// rule, a published force field's own harmonic wavenumbers, and invariance properties.
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <fstream>
#include <numeric>
#include <random>
#include <sstream>
#include <string>
#include <vector>

#include "core/error.hpp"
#include "core/units.hpp"
#include "harmonic/harmonic.hpp"
#include "molecule/read_molecule.hpp"
#include "optimize/minimize.hpp"
#include "potential/make_potential.hpp"

namespace overtone {
namespace {

const std::string source_dir = OVERTONE_SOURCE_DIR;

// ω_e of H35Cl: K. P. Huber and G. Herzberg, Constants of Diatomic Molecules (1979),
// 2990.946 cm⁻¹; the issue asks for agreement to 0.01 cm⁻¹.
constexpr double hcl_omega_e_cm1 = 2990.946;
constexpr double hcl_tolerance_cm1 = 0.01;
// The product rule is exact for harmonic frequencies of one potential; 1e-6 relative
// is what the issue asks, well above round-off of the eigensolver.
constexpr double product_rule_relative_tolerance = 1e-6;
// Same molecule, rotated/translated/reordered: only optimizer and round-off noise.
constexpr double invariance_tolerance_cm1 = 0.01;
// Published harmonic wavenumbers of the water force field (Hoy, Mills and Strey,
// Mol. Phys. 24, 1265 (1972), as recorded in potentials/water.toml, from memory):
// the file's constants have 3-4 significant figures, which moves wavenumbers by up to
// about 1 cm⁻¹.
constexpr double water_source_omega1_cm1 = 3832.2;
constexpr double water_source_omega2_cm1 = 1648.5;
constexpr double water_source_omega3_cm1 = 3942.5;
constexpr double water_source_tolerance_cm1 = 1.0;
// Rigid-body eigenvalues of the unprojected mass-weighted Hessian (finite differences,
// default step, no invariance projection) at a minimum: zero up to truncation error,
// measured 1.0 cm⁻¹ for MMFF94 acetaldehyde (common practice, no source).
constexpr double rigid_body_tolerance_cm1 = 2.0;

struct Analysed {
  Molecule molecule;
  HarmonicResult harmonic;
};

Analysed analyse(const std::string& molecule_file, const std::string& potential_name,
                 const std::vector<IsotopeChoice>& isotopes = {}, bool optimize = true) {
  ReadOptions options;
  options.isotopes = isotopes;
  Analysed result;
  result.molecule = read_molecule(source_dir + "/" + molecule_file, options).molecule;
  const std::string potential_path =
      potential_name.find(".toml") != std::string::npos ? source_dir + "/" + potential_name : potential_name;
  const auto potential = make_potential(potential_path, result.molecule);
  if (optimize) {
    const MinimizeResult minimum = minimize(*potential, result.molecule.coordinates());
    EXPECT_TRUE(minimum.converged()) << minimum.message;
    result.molecule.set_coordinates(minimum.coordinates_angstrom);
  }
  const Eigen::VectorXd x = result.molecule.coordinates();
  result.harmonic = analyze_normal_modes(x, result.molecule.masses(), compute_hessian(*potential, x).hessian);
  return result;
}

Eigen::Vector3d principal_moments(const Molecule& molecule) {
  const Eigen::VectorXd m = molecule.masses();
  Eigen::Vector3d center = Eigen::Vector3d::Zero();
  for (std::size_t i = 0; i < molecule.atom_count(); ++i)
    center += m[i] * molecule.atoms[i].position_angstrom;
  center /= m.sum();
  Eigen::Matrix3d inertia = Eigen::Matrix3d::Zero();
  for (std::size_t i = 0; i < molecule.atom_count(); ++i) {
    const Eigen::Vector3d r = molecule.atoms[i].position_angstrom - center;
    inertia += m[i] * (r.squaredNorm() * Eigen::Matrix3d::Identity() - r * r.transpose());
  }
  return Eigen::SelfAdjointEigenSolver<Eigen::Matrix3d>(inertia).eigenvalues();
}

// Teller–Redlich product rule for a non-linear molecule, all species together
// (E. B. Wilson, J. C. Decius and P. C. Cross, Molecular Vibrations (1955), ch. 8):
//   Π ω'_i/ω_i = [ Π_a (m_a/m'_a)³ · (M'/M)³ · I'_A I'_B I'_C / (I_A I_B I_C) ]^½
void expect_product_rule(const Analysed& light, const Analysed& heavy) {
  ASSERT_EQ(light.harmonic.mode_count(), heavy.harmonic.mode_count());
  double frequency_ratio = 1.0;
  for (std::size_t k = 0; k < light.harmonic.mode_count(); ++k)
    frequency_ratio *= heavy.harmonic.frequencies_cm1[k] / light.harmonic.frequencies_cm1[k];
  const Eigen::VectorXd m = light.molecule.masses(), m_heavy = heavy.molecule.masses();
  double mass_factor = std::pow(m_heavy.sum() / m.sum(), 3);
  for (Eigen::Index a = 0; a < m.size(); ++a) mass_factor *= std::pow(m[a] / m_heavy[a], 3);
  const Eigen::Vector3d inertia = principal_moments(light.molecule),
                        inertia_heavy = principal_moments(heavy.molecule);
  const double inertia_factor = inertia_heavy.prod() / inertia.prod();
  const double expected = std::sqrt(mass_factor * inertia_factor);
  EXPECT_NEAR(frequency_ratio / expected, 1.0, product_rule_relative_tolerance)
      << "product of ratios " << frequency_ratio << ", rule " << expected;
}

TEST(Harmonic, HydrogenChlorideMorseGivesTheHandbookOmegaE) {
  // Default masses are those of 1H and 35Cl, the isotopologue ω_e refers to.
  const Analysed hcl = analyse("molecules/hcl.xyz", "potentials/hcl-morse.toml");
  ASSERT_EQ(hcl.harmonic.mode_count(), 1u);
  EXPECT_TRUE(hcl.harmonic.linear);
  EXPECT_NEAR(hcl.harmonic.frequencies_cm1[0], hcl_omega_e_cm1, hcl_tolerance_cm1);
}

TEST(Harmonic, TellerRedlichProductRuleForWaterAndHeavyWater) {
  const Analysed water = analyse("molecules/water.xyz", "potentials/water.toml");
  const Analysed heavy = analyse("molecules/water.xyz", "potentials/water.toml", {{2, 2}, {3, 2}});
  expect_product_rule(water, heavy);
}

TEST(Harmonic, TellerRedlichProductRuleForMethaneAndPerdeuteromethane) {
  const Analysed methane = analyse("molecules/methane.xyz", "potentials/methane.toml");
  const Analysed heavy =
      analyse("molecules/methane.xyz", "potentials/methane.toml", {{2, 2}, {3, 2}, {4, 2}, {5, 2}});
  expect_product_rule(methane, heavy);
}

TEST(Harmonic, TellerRedlichProductRuleHoldsForAnOpenBabelForceField) {
  const Analysed light = analyse("tests/data/formats/acetaldehyde.xyz", "MMFF94");
  const Analysed heavy = analyse("tests/data/formats/acetaldehyde.xyz", "MMFF94", {{1, 13}, {3, 18}, {5, 2}});
  expect_product_rule(light, heavy);
}

TEST(Harmonic, WaterForceFieldReproducesItsSourcesHarmonicWavenumbers) {
  const Analysed water = analyse("molecules/water.xyz", "potentials/water.toml");
  ASSERT_EQ(water.harmonic.mode_count(), 3u);
  // Ascending order: bend, symmetric stretch, antisymmetric stretch.
  EXPECT_NEAR(water.harmonic.frequencies_cm1[0], water_source_omega2_cm1, water_source_tolerance_cm1);
  EXPECT_NEAR(water.harmonic.frequencies_cm1[1], water_source_omega1_cm1, water_source_tolerance_cm1);
  EXPECT_NEAR(water.harmonic.frequencies_cm1[2], water_source_omega3_cm1, water_source_tolerance_cm1);
}

TEST(Harmonic, RotatedTranslatedReorderedCopyGivesTheSameFrequencies) {
  const Analysed reference = analyse("tests/data/formats/acetaldehyde.xyz", "MMFF94");
  Molecule copy = read_molecule(source_dir + "/tests/data/formats/acetaldehyde.xyz").molecule;
  std::mt19937 generator(20261202);
  const Eigen::Matrix3d rotation = Eigen::Quaterniond(Eigen::Vector4d::NullaryExpr([&](Eigen::Index) {
                                                        return std::normal_distribution<double>()(generator);
                                                      }).normalized())
                                       .toRotationMatrix();
  const Eigen::Vector3d shift(3.1, -7.4, 12.9);
  std::vector<int> order(copy.atom_count());
  std::iota(order.begin(), order.end(), 0);
  std::shuffle(order.begin(), order.end(), generator);
  Molecule moved = copy;
  moved.bonds.clear();  // perceived again from the geometry
  for (std::size_t i = 0; i < order.size(); ++i) {
    moved.atoms[i] = copy.atoms[static_cast<std::size_t>(order[i])];
    moved.atoms[i].position_angstrom = rotation * moved.atoms[i].position_angstrom + shift;
  }
  const auto potential = make_potential("MMFF94", moved);
  const MinimizeResult minimum = minimize(*potential, moved.coordinates());
  ASSERT_TRUE(minimum.converged()) << minimum.message;
  const HarmonicResult harmonic =
      analyze_normal_modes(minimum.coordinates_angstrom, moved.masses(),
                           compute_hessian(*potential, minimum.coordinates_angstrom).hessian);
  ASSERT_EQ(harmonic.mode_count(), reference.harmonic.mode_count());
  for (std::size_t k = 0; k < harmonic.mode_count(); ++k)
    EXPECT_NEAR(harmonic.frequencies_cm1[k], reference.harmonic.frequencies_cm1[k], invariance_tolerance_cm1);
}

TEST(Harmonic, RigidBodyEigenvaluesVanishAndModesAreOrthonormalEigenvectors) {
  Analysed analysed = analyse("tests/data/formats/acetaldehyde.xyz", "MMFF94");
  const auto potential = make_potential("MMFF94", analysed.molecule);
  HessianOptions raw;
  raw.enforce_rigid_body_invariance = false;
  const Eigen::VectorXd x = analysed.molecule.coordinates();
  analysed.harmonic =
      analyze_normal_modes(x, analysed.molecule.masses(), compute_hessian(*potential, x, raw).hessian);
  const HarmonicResult& h = analysed.harmonic;
  EXPECT_EQ(h.rigid_body_count, 6);
  for (Eigen::Index k = 0; k < h.rigid_body_eigenvalues.size(); ++k)
    EXPECT_LT(std::abs(units::wavenumber_cm1_from_eigenvalue(h.rigid_body_eigenvalues[k])),
              rigid_body_tolerance_cm1);
  const Eigen::Index n = h.mass_weighted_modes.rows();
  const Eigen::Index vib = h.mass_weighted_modes.cols();
  EXPECT_EQ(vib, n - 6);
  EXPECT_LT((h.mass_weighted_modes.transpose() * h.mass_weighted_modes - Eigen::MatrixXd::Identity(vib, vib))
                .cwiseAbs()
                .maxCoeff(),
            1e-10);
  EXPECT_LT((h.rigid_body_basis.transpose() * h.mass_weighted_modes).cwiseAbs().maxCoeff(), 1e-10);
  // (PFP)L = LΛ with P the rigid-body projector.
  Eigen::VectorXd inverse_sqrt_mass(n);
  for (Eigen::Index i = 0; i < n; ++i) inverse_sqrt_mass[i] = 1.0 / std::sqrt(h.masses_da[i / 3]);
  const Eigen::MatrixXd f =
      inverse_sqrt_mass.asDiagonal() * h.cartesian_hessian * inverse_sqrt_mass.asDiagonal();
  const Eigen::MatrixXd p =
      Eigen::MatrixXd::Identity(n, n) - h.rigid_body_basis * h.rigid_body_basis.transpose();
  const Eigen::MatrixXd residual =
      p * f * p * h.mass_weighted_modes - h.mass_weighted_modes * h.eigenvalues.asDiagonal();
  EXPECT_LT(residual.cwiseAbs().maxCoeff(), 1e-9 * h.eigenvalues.cwiseAbs().maxCoeff());
}

TEST(Harmonic, LinearMoleculeHasFiveRigidBodyMotions) {
  const Analysed co2 = analyse("molecules/carbon-dioxide.xyz", "potentials/carbon-dioxide.toml");
  EXPECT_TRUE(co2.harmonic.linear);
  EXPECT_EQ(co2.harmonic.rigid_body_count, 5);
  EXPECT_EQ(co2.harmonic.mode_count(), 4u);
}

TEST(Harmonic, ImaginaryFrequenciesAreNegativeAndWarned) {
  const Analysed planar = analyse("tests/data/molecules/ammonia-planar.xyz", "MMFF94", {}, false);
  EXPECT_LT(planar.harmonic.frequencies_cm1[0], 0.0);
  ASSERT_FALSE(planar.harmonic.warnings.empty());
  EXPECT_NE(planar.harmonic.warnings.front().find("imaginary"), std::string::npos);
}

TEST(Harmonic, InconsistentInputIsAnError) {
  EXPECT_THROW(
      analyze_normal_modes(Eigen::VectorXd::Zero(6), Eigen::VectorXd::Ones(2), Eigen::MatrixXd::Zero(5, 5)),
      Error);
  EXPECT_THROW(
      analyze_normal_modes(Eigen::VectorXd::Zero(6), Eigen::Vector2d(1.0, -1.0), Eigen::MatrixXd::Zero(6, 6)),
      Error);
}

TEST(Harmonic, AbsurdForceConstantsAreAnErrorNotANumber) {
  // HCl's Morse Hessian scaled by 1e60 (a stiffness the potential loaders refuse, so it is
  // built here directly): the harmonic wavenumber scales with the square root, to about
  // 3e33 cm⁻¹.
  const Molecule molecule = read_molecule(source_dir + "/molecules/hcl.xyz").molecule;
  const auto potential = make_potential(source_dir + "/potentials/hcl-morse.toml", molecule);
  const Eigen::VectorXd x = molecule.coordinates();
  const Eigen::MatrixXd hessian = compute_hessian(*potential, x).hessian;
  constexpr double absurd_stiffness_factor = 1e60;
  try {
    analyze_normal_modes(x, molecule.masses(), hessian * absurd_stiffness_factor);
    FAIL() << "expected an error for a wavenumber of ~3e33 cm-1";
  } catch (const Error& error) {
    EXPECT_NE(std::string(error.what()).find("far above any molecular vibration"), std::string::npos)
        << error.what();
  }
  // Entries whose row sums overflow cannot be diagonalized at all.
  EXPECT_THROW(analyze_normal_modes(x, molecule.masses(), hessian * 1e160), Error);
}

}  // namespace
}  // namespace overtone
