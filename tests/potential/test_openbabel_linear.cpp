// Open Babel force fields at and near exactly linear bonded triples (X–C≡N, C–C≡C, CO₂):
// energy, gradient and Hessian finite there and consistent with central differences of
// the energy, the energy continuous at 180°, and UFF's torsion term against Open Babel's
// own where Open Babel's is defined. References: Open Babel 3.1's energies (a general-
// purpose library) away from its degenerate window, central differences, closed forms.
#include <gtest/gtest.h>

#include <cmath>
#include <random>
#include <string>

#include "core/error.hpp"
#include "core/units.hpp"
#include "molecule/read_molecule.hpp"
#include "potential/detail_linear_limit.hpp"
#include "potential/openbabel_potential.hpp"

namespace overtone {
namespace {

const std::string source_dir = OVERTONE_SOURCE_DIR;

// Gradient against central differences of the energy with step 1e-5 Å: truncation
// h² E'''/6 ≲ 1e-7 kcal/mol/Å for stretch cubic constants of ~1e4 kcal/mol/Å³, round-off
// and the linear limit's remainder (≲ 1e-11 kcal/mol) over 2h ≲ 1e-6 kcal/mol/Å; the
// components reach 10–300 kcal/mol/Å at these unrelaxed geometries. Measured largest
// misfit 3e-9 relative (common practice, no source).
constexpr double gradient_step_angstrom = 1e-5;
constexpr double gradient_relative_tolerance = 1e-7;
// Hessian: central differences of the gradient with the harmonic stage's step (5e-4 Å)
// against second differences of the energy with step 1e-3 Å; both carry truncation
// errors ~h² E''''/12 ≈ 1e-3 kcal/mol/Å² against entries up to ~2e3 kcal/mol/Å²
// (measured up to 2e-6 relative).
constexpr double hessian_gradient_step_angstrom = 5e-4;
constexpr double hessian_energy_step_angstrom = 1e-3;
constexpr double hessian_relative_tolerance = 1e-5;
// Next to a cusp (GAFF, 0.1° from it) the curvature changes over the distance to the cusp,
// ~1e-3 Å: the fourth derivative reaches ~1e10 kcal/mol/Å⁴ and more where a second
// triple sits closer to its cusp (but-2-yne's other C–C≡C bent by only 0.06°), so both
// stencils shrink 100 times (truncation ~0.1–2 kcal/mol/Å² against entries of 3e3–8e3;
// measured up to 2e-4 relative) and the tolerance is 1e-3 relative.
constexpr double near_cusp_step_scale = 1e-2;
constexpr double near_cusp_hessian_relative_tolerance = 1e-3;

struct LinearCase {
  const char* file;
  // A linear triple (0-based) bent by moving its centre for the near-linear checks.
  int first, centre, second;
};

const LinearCase linear_cases[] = {
    {"tests/data/molecules/acetonitrile-linear.xyz", 0, 1, 2},
    {"tests/data/molecules/but-2-yne-linear.xyz", 0, 1, 2},
    {"molecules/carbon-dioxide.xyz", 0, 1, 2},
};

Molecule read_case(const LinearCase& c) { return read_molecule(source_dir + "/" + c.file).molecule; }

double angle_degrees(const Eigen::VectorXd& x, int a, int centre, int b) {
  const Eigen::Vector3d u = x.segment<3>(3 * a) - x.segment<3>(3 * centre);
  const Eigen::Vector3d v = x.segment<3>(3 * b) - x.segment<3>(3 * centre);
  return std::atan2(u.cross(v).norm(), u.dot(v)) * 180.0 / units::pi;
}

// x with the centre of the triple moved along +x until the angle is `degrees` (bisection).
Eigen::VectorXd bent(const Eigen::VectorXd& x, const LinearCase& c, double degrees) {
  double low = 0.0, high = 0.5;
  Eigen::VectorXd y = x;
  for (int i = 0; i < 200; ++i) {
    const double middle = 0.5 * (low + high);
    y = x;
    y[3 * c.centre] += middle;
    (angle_degrees(y, c.first, c.centre, c.second) > degrees ? low : high) = middle;
  }
  return y;
}

Eigen::VectorXd differenced_gradient(const Potential& potential, const Eigen::VectorXd& x) {
  Eigen::VectorXd gradient(x.size());
  Eigen::VectorXd y = x;
  for (Eigen::Index k = 0; k < x.size(); ++k) {
    y[k] = x[k] + gradient_step_angstrom;
    const double plus = potential.energy(y);
    y[k] = x[k] - gradient_step_angstrom;
    const double minus = potential.energy(y);
    y[k] = x[k];
    gradient[k] = (plus - minus) / (2.0 * gradient_step_angstrom);
  }
  return gradient;
}

Eigen::MatrixXd hessian_from_gradients(const Potential& potential, const Eigen::VectorXd& x, double scale) {
  const Eigen::Index n = x.size();
  const double h = scale * hessian_gradient_step_angstrom;
  Eigen::MatrixXd hessian(n, n);
  Eigen::VectorXd y = x, plus, minus;
  for (Eigen::Index k = 0; k < n; ++k) {
    y[k] = x[k] + h;
    potential.energy_and_gradient(y, plus);
    y[k] = x[k] - h;
    potential.energy_and_gradient(y, minus);
    y[k] = x[k];
    hessian.col(k) = (plus - minus) / (2.0 * h);
  }
  return 0.5 * (hessian + hessian.transpose());
}

Eigen::MatrixXd hessian_from_energies(const Potential& potential, const Eigen::VectorXd& x, double scale) {
  const Eigen::Index n = x.size();
  const double h = scale * hessian_energy_step_angstrom;
  Eigen::MatrixXd hessian(n, n);
  const double centre = potential.energy(x);
  auto at = [&](Eigen::Index i, double di, Eigen::Index j, double dj) {
    Eigen::VectorXd y = x;
    y[i] += di;
    y[j] += dj;
    return potential.energy(y);
  };
  for (Eigen::Index i = 0; i < n; ++i) {
    hessian(i, i) = (at(i, h, i, h) - 2.0 * centre + at(i, -h, i, -h)) / (4.0 * h * h);
    for (Eigen::Index j = 0; j < i; ++j) {
      hessian(i, j) = (at(i, h, j, h) - at(i, h, j, -h) - at(i, -h, j, h) + at(i, -h, j, -h)) / (4.0 * h * h);
      hessian(j, i) = hessian(i, j);
    }
  }
  return hessian;
}

bool mentions_cusp(const Potential& potential) {
  for (const auto& warning : potential.warnings())
    if (warning.find("cusp") != std::string::npos) return true;
  return false;
}

// GAFF's reference angles for c3–c1–n1 (178.5°) and c1–c1–c3 (178.46°) are not 180°
// (gaff.dat as shipped with Open Babel), so acetonitrile and but-2-yne have a cusp there;
// its o–c1–o is 180°. The other force fields treat these angles as linear.
bool has_cusp(const std::string& force_field, const LinearCase& c) {
  return force_field == "GAFF" && std::string(c.file).find("carbon-dioxide") == std::string::npos;
}

enum class HessianCheck { none, ordinary, near_cusp };

void expect_consistent(const Potential& potential, const Eigen::VectorXd& x, HessianCheck check) {
  Eigen::VectorXd gradient;
  const double energy = potential.energy_and_gradient(x, gradient);
  ASSERT_TRUE(std::isfinite(energy));
  ASSERT_TRUE(gradient.allFinite());
  EXPECT_EQ(potential.energy(x), energy);
  const Eigen::VectorXd reference = differenced_gradient(potential, x);
  EXPECT_LT((gradient - reference).cwiseAbs().maxCoeff(),
            gradient_relative_tolerance * reference.cwiseAbs().maxCoeff())
      << "largest gradient component " << reference.cwiseAbs().maxCoeff();
  if (check == HessianCheck::none) return;
  const bool near_cusp = check == HessianCheck::near_cusp;
  const double scale = near_cusp ? near_cusp_step_scale : 1.0;
  const Eigen::MatrixXd from_gradients = hessian_from_gradients(potential, x, scale);
  const Eigen::MatrixXd from_energies = hessian_from_energies(potential, x, scale);
  ASSERT_TRUE(from_gradients.allFinite());
  EXPECT_LT((from_gradients - from_energies).cwiseAbs().maxCoeff(),
            (near_cusp ? near_cusp_hessian_relative_tolerance : hessian_relative_tolerance) *
                from_energies.cwiseAbs().maxCoeff())
      << "largest hessian entry " << from_energies.cwiseAbs().maxCoeff();
}

class LinearTriples : public ::testing::TestWithParam<std::string> {};

TEST_P(LinearTriples, EnergyGradientAndHessianAtExactlyLinearAngles) {
  for (const LinearCase& c : linear_cases) {
    SCOPED_TRACE(std::string(c.file));
    const Molecule molecule = read_case(c);
    const OpenBabelPotential potential(GetParam(), molecule);
    const Eigen::VectorXd x = molecule.coordinates();
    ASSERT_EQ(angle_degrees(x, c.first, c.centre, c.second), 180.0);
    ASSERT_TRUE(potential.uses_linear_limit(x));
    // At a cusp the gradient is the symmetric one but the Hessian is unbounded
    // (∝ 1/step), so only energy and gradient are checked there, and the cusp is reported.
    expect_consistent(potential, x, has_cusp(GetParam(), c) ? HessianCheck::none : HessianCheck::ordinary);
    EXPECT_EQ(mentions_cusp(potential), has_cusp(GetParam(), c));
  }
}

TEST_P(LinearTriples, EnergyGradientAndHessianAt179Point9Degrees) {
  for (const LinearCase& c : linear_cases) {
    SCOPED_TRACE(std::string(c.file));
    const Molecule molecule = read_case(c);
    const OpenBabelPotential potential(GetParam(), molecule);
    const Eigen::VectorXd x = bent(molecule.coordinates(), c, 179.9);
    ASSERT_NEAR(angle_degrees(x, c.first, c.centre, c.second), 179.9, 1e-9);
    EXPECT_FALSE(potential.uses_linear_limit(x));
    expect_consistent(potential, x,
                      has_cusp(GetParam(), c) ? HessianCheck::near_cusp : HessianCheck::ordinary);
  }
}

INSTANTIATE_TEST_SUITE_P(OpenBabel, LinearTriples,
                         ::testing::Values("MMFF94", "MMFF94s", "UFF", "GAFF", "Ghemical"));

TEST(LinearTriplesGhemical, TripleFoldedToZeroDegreesIsNotReportedAsACusp) {
  // An angle term harmonic in θ has a cusp at 0° (θ = |bend| there; Ghemical's linear
  // reference is 180°, ghemical.prm), which optimizers meet only in wild trial steps; the
  // warning is about 180° and must stay quiet. Acetonitrile with the nitrogen folded back
  // onto the C–C bond (C–C–N = 0°).
  const Molecule molecule = read_case(linear_cases[0]);
  const OpenBabelPotential potential("Ghemical", molecule);
  Eigen::VectorXd x = molecule.coordinates();
  x[3 * 2 + 2] = x[3 * 1 + 2] - 1.157;
  ASSERT_EQ(angle_degrees(x, 0, 1, 2), 0.0);
  ASSERT_TRUE(potential.uses_linear_limit(x));
  Eigen::VectorXd gradient;
  EXPECT_TRUE(std::isfinite(potential.energy_and_gradient(x, gradient)));
  EXPECT_TRUE(gradient.allFinite());
  EXPECT_FALSE(mentions_cusp(potential));
}

// E(θ) − E(180°) ∝ (180° − θ)² near 180° for a smooth bend, so the value at 180° follows
// from 179.99° and 179.999° by eliminating the quadratic term: E₁₈₀ = (100 E(179.999°) −
// E(179.99°)) / 99, with a remainder ∝ (Δθ)⁴ ≈ 1e-13 rad⁴ times stiffnesses of 1e2
// kcal/mol: far below round-off ~1e-13 of the energies (closed form).
constexpr double continuity_tolerance_kcal_mol = 1e-9;

TEST(LinearTriplesMmff94, EnergyAtExactly180DegreesIsTheLimitFromBentAngles) {
  for (const LinearCase& c : linear_cases) {
    SCOPED_TRACE(std::string(c.file));
    const Molecule molecule = read_case(c);
    const OpenBabelPotential potential("MMFF94", molecule);
    const Eigen::VectorXd x = molecule.coordinates();
    const double at_180 = potential.energy(x);
    const double near = potential.energy(bent(x, c, 179.999));
    const double farther = potential.energy(bent(x, c, 179.99));
    EXPECT_NEAR(at_180, (100.0 * near - farther) / 99.0, continuity_tolerance_kcal_mol);
    // Both bent energies lie above the linear one and grow quadratically (ratio 100).
    EXPECT_GT(near, at_180);
    EXPECT_NEAR((farther - at_180) / (near - at_180), 100.0, 0.1);
    // Open Babel itself puts the angle at 0° there: 200.85 kcal/mol too much for CO₂,
    // i.e. 2 × 143.9325 k_a with MMFF94's linear bend (1 + cos θ) and k_a = 0.6977 —
    // the defect the limit removes.
    EXPECT_GT(potential.raw_openbabel_energy(x) - at_180, 50.0);
  }
}

TEST(LinearTriplesMmff94, CarbonDioxideSpuriousEnergyIsTheLinearBendAtZeroDegrees) {
  // MMFF94's linear bend is 143.9325 k_a (1 + cos θ) (Halgren, J. Comput. Chem. 17, 490
  // (1996)); at 0° instead of 180° it adds 2 · 143.9325 k_a. k_a is recovered from the
  // curvature of the bent energies, E − E₁₈₀ ≈ ½ 143.9325 k_a (π − θ)² for the one angle
  // (the stretches do not change when only the angle changes at fixed bond lengths).
  const LinearCase c = linear_cases[2];
  const Molecule molecule = read_case(c);
  const OpenBabelPotential potential("MMFF94", molecule);
  const Eigen::VectorXd x = molecule.coordinates();
  // Bend at fixed bond lengths: rotate the second oxygen about the carbon.
  const double bend = 1e-3;  // rad
  Eigen::VectorXd y = x;
  const double r = (x.segment<3>(6) - x.segment<3>(3)).norm();
  y.segment<3>(6) = x.segment<3>(3) + r * Eigen::Vector3d(std::sin(bend), 0.0, std::cos(bend));
  const double k_a = 2.0 * (potential.energy(y) - potential.energy(x)) / (143.9325 * bend * bend);
  EXPECT_NEAR(potential.raw_openbabel_energy(x) - potential.energy(x), 2.0 * 143.9325 * k_a, 1e-4);
}

TEST(LinearTriplesUff, TorsionTermEqualsOpenBabelsWhereOpenBabelDefinesIt) {
  // Central bonds between sp3 and sp2 atoms only (every case Open Babel sets up), among
  // them the oxygen- and sulfur-group exceptions and an amide: Open Babel's own torsion
  // energy is the reference, at random geometries.
  std::mt19937 generator(5);
  std::uniform_real_distribution<double> uniform(-0.1, 0.1);
  for (const char* smiles : {"CCCC", "CC(=O)Nc1ccccc1O", "CSSC", "C=CC=C", "COC", "OO", "C1CCC1"}) {
    SCOPED_TRACE(smiles);
    ReadOptions options;
    options.input_is_smiles = true;
    const Molecule molecule = read_molecule(smiles, options).molecule;
    const OpenBabelPotential potential("UFF", molecule);
    for (int i = 0; i < 4; ++i) {
      Eigen::VectorXd x = molecule.coordinates();
      for (Eigen::Index k = 0; k < x.size(); ++k) x[k] += uniform(generator);
      const double reference = potential.openbabel_torsion_energy(x);
      // Sums of tens of terms: rounding ~1e-14 relative.
      EXPECT_NEAR(potential.uff_torsion_energy(x), reference, 1e-12 * std::max(1.0, std::abs(reference)));
    }
  }
}

TEST(LinearTriplesUff, NoTorsionAboutBondsToSpAtoms) {
  // UFF has torsion terms only about sp3–sp3, sp2–sp2 and sp2–sp3 bonds (Rappé et al.,
  // J. Am. Chem. Soc. 114, 10024 (1992); from memory), so but-2-yne, whose every central
  // bond has an sp carbon, has none: turning one methyl changes the energy by exactly the
  // change of the van der Waals energy between the methyl groups.
  const Molecule molecule = read_molecule(source_dir + "/" + linear_cases[1].file).molecule;
  const OpenBabelPotential potential("UFF", molecule);
  const Eigen::VectorXd x = molecule.coordinates();
  EXPECT_EQ(potential.uff_torsion_energy(x), 0.0);
  const Eigen::VectorXd y = bent(x, linear_cases[1], 179.0);
  EXPECT_EQ(potential.uff_torsion_energy(y), 0.0);
  Eigen::VectorXd gradient;
  EXPECT_TRUE(std::isfinite(potential.energy_and_gradient(y, gradient)));
  EXPECT_TRUE(gradient.allFinite());
  EXPECT_LT(std::abs(potential.energy(y)), 100.0);  // Open Babel's stale barrier gave up to 1e216
}

// The limit itself on closed forms: f(x) = k (1 + cos θ) + c (π − θ) for one triple,
// evaluated like Open Babel (θ reported as 0 inside |sin θ| < 2e-6). The true value at
// 180° is 0; the one-sided slope along the displacement is c |dθ/dh|.
TEST(LinearLimit, RecoversValueGradientAndCuspOfAClosedForm) {
  const double k = 3.0;
  Eigen::VectorXd x(9);
  x << -1.2, 0.0, 0.0, 0.0, 0.0, 0.0, 1.5, 0.0, 0.0;
  for (const double c : {0.0, 0.7}) {
    SCOPED_TRACE(c);
    auto f = [&](const Eigen::VectorXd& y, Eigen::VectorXd* gradient) {
      const Eigen::Vector3d u = y.segment<3>(0) - y.segment<3>(3);
      const Eigen::Vector3d v = y.segment<3>(6) - y.segment<3>(3);
      const double sine = u.cross(v).norm() / (u.norm() * v.norm());
      const double theta = sine < 2e-6 ? 0.0 : std::atan2(u.cross(v).norm(), u.dot(v));
      if (gradient) {
        // dθ/dy by central differences of θ (smooth away from the window).
        gradient->resize(9);
        for (int i = 0; i < 9; ++i) {
          Eigen::VectorXd p = y, m = y;
          p[i] += 1e-7;
          m[i] -= 1e-7;
          auto angle = [](const Eigen::VectorXd& z) {
            const Eigen::Vector3d a = z.segment<3>(0) - z.segment<3>(3);
            const Eigen::Vector3d b = z.segment<3>(6) - z.segment<3>(3);
            return std::atan2(a.cross(b).norm(), a.dot(b));
          };
          (*gradient)[i] = (-k * std::sin(theta) - c) * (angle(p) - angle(m)) / 2e-7;
        }
      }
      return k * (1.0 + std::cos(theta)) + c * (units::pi - theta);
    };
    const detail::LinearLimit limit({{0, 1, 2}}, {});
    const std::vector<int> degenerate = limit.degenerate_triples(x);
    ASSERT_EQ(degenerate.size(), 1u);
    Eigen::VectorXd gradient;
    double slope = 0.0;
    const double value = limit.evaluate(x, degenerate, f, &gradient, &slope);
    // Remainder 6 a₃ h³ ≲ 1e-11 for the cusp (a₃ ~ c / r³), round-off ~1e-15.
    EXPECT_NEAR(value, 0.0, 1e-10);
    // By symmetry the gradient has no component across the axis; along the axis the
    // function does not change at all.
    EXPECT_LT(gradient.cwiseAbs().maxCoeff(), 1e-6);
    // One-sided slope: c |dθ/dh| with the centre moved by h across the axis:
    // |dθ/dh| = 1/1.2 + 1/1.5 at first order, whatever the direction across the axis, times
    // the sine of the random direction's angle to the axis, which the pattern returns.
    const Eigen::VectorXd p = limit.displacement_pattern(x, degenerate);
    const double across = p.segment<3>(3).tail<2>().norm();
    EXPECT_NEAR(slope, c * across * (1.0 / 1.2 + 1.0 / 1.5), 1e-6 + 1e-4 * c);
  }
}

}  // namespace
}  // namespace overtone
