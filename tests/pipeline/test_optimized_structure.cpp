// The analysed structure is the minimum the optimizer found: a symmetric start that
// stops near a saddle leaves it, and symmetrization does not carry a minimum back onto
// a more symmetric saddle point.
#include <gtest/gtest.h>

#include <cmath>
#include <filesystem>
#include <fstream>
#include <sstream>
#include <string>

#include "core/error.hpp"
#include "molecule/read_molecule.hpp"
#include "pipeline/analysis.hpp"
#include "potential/make_potential.hpp"

namespace overtone {
namespace {

// Debian's chemical-structures-data package (tools/setup installs it).
const std::string structures_dir = "/usr/share/chemical-structures/";

// A bent triatomic O–H₂ whose two bond lengths r1, r2 prefer to differ: harmonic bonds
// (k/2)(r_i − r0)², a harmonic H···H distance, and a double well b((r1 − r2)² − d²)².
// With s = r1 − r2 the energy along s is k s²/4 + b(s² − d²)² (closed form), so the
// minimum lies at |s| = sqrt(d² − k/(8b)) and s = 0 (C2v) is a saddle point when
// k/2 < 4bd². With the constants below |s| = 0.02 Å: each atom sits about 0.01 Å from
// the C2v saddle, inside the default symmetry tolerance of 0.02 Å.
class AsymmetricStretchDoubleWell : public Potential {
 public:
  static constexpr double bond_force_constant = 500.0;  // k, kcal/mol/Å²
  static constexpr double bond_length = 0.96;           // r0, Å
  static constexpr double hh_force_constant = 100.0;    // kcal/mol/Å²
  static constexpr double hh_length = 1.52;             // Å
  static constexpr double well_height = 125000.0;       // b, kcal/mol/Å⁴
  static constexpr double well_half_width = 0.03;       // d, Å
  static double minimum_bond_difference() {
    return std::sqrt(well_half_width * well_half_width - bond_force_constant / (8.0 * well_height));
  }

  std::string description() const override { return "asymmetric-stretch double well"; }
  std::size_t atom_count() const override { return 3; }

 protected:
  double compute_energy(const Eigen::VectorXd& x) const override {
    Eigen::VectorXd unused(9);
    return compute_energy_and_gradient(x, unused);
  }
  double compute_energy_and_gradient(const Eigen::VectorXd& x, Eigen::VectorXd& gradient) const override {
    gradient.setZero(9);
    const auto distance = [&](int a, int b, Eigen::Vector3d& unit) {
      const Eigen::Vector3d d = x.segment<3>(3 * a) - x.segment<3>(3 * b);
      unit = d.normalized();
      return d.norm();
    };
    Eigen::Vector3d u1, u2, u12;
    const double r1 = distance(1, 0, u1), r2 = distance(2, 0, u2), r12 = distance(1, 2, u12);
    const double s = r1 - r2;
    const double well = s * s - well_half_width * well_half_width;
    const double energy =
        0.5 * bond_force_constant *
            ((r1 - bond_length) * (r1 - bond_length) + (r2 - bond_length) * (r2 - bond_length)) +
        0.5 * hh_force_constant * (r12 - hh_length) * (r12 - hh_length) + well_height * well * well;
    const double dr1 = bond_force_constant * (r1 - bond_length) + 4.0 * well_height * well * s;
    const double dr2 = bond_force_constant * (r2 - bond_length) - 4.0 * well_height * well * s;
    const double dr12 = hh_force_constant * (r12 - hh_length);
    gradient.segment<3>(3) += dr1 * u1 + dr12 * u12;
    gradient.segment<3>(0) -= dr1 * u1 + dr2 * u2;
    gradient.segment<3>(6) += dr2 * u2 - dr12 * u12;
    return energy;
  }
};

Molecule bent_triatomic(double r1, double r2) {
  Molecule molecule;
  molecule.title = "double well";
  const double half_angle =
      std::asin(0.5 * AsymmetricStretchDoubleWell::hh_length / AsymmetricStretchDoubleWell::bond_length);
  for (const auto& [element, mass, position] :
       {std::tuple{8, 15.9949146, Eigen::Vector3d::Zero().eval()},
        std::tuple{1, 1.00782503, Eigen::Vector3d(r1 * std::sin(half_angle), r1 * std::cos(half_angle), 0.0)},
        std::tuple{1, 1.00782503,
                   Eigen::Vector3d(-r2 * std::sin(half_angle), r2 * std::cos(half_angle), 0.0)}}) {
    Atom atom;
    atom.atomic_number = element;
    atom.mass_da = mass;  // 16O and 1H (AME2016, from memory)
    atom.position_angstrom = position;
    molecule.atoms.push_back(atom);
  }
  return molecule;
}

// Optimized to an rms gradient of 1e-6 kcal/mol/Å on curvatures of ~100 kcal/mol/Å².
constexpr double bond_difference_tolerance_angstrom = 1e-6;

TEST(OptimizedStructure, SymmetrizationDoesNotCarryAMinimumOntoASaddle) {
  const AsymmetricStretchDoubleWell potential;
  const Molecule start = bent_triatomic(0.99, 0.93);
  const AnalysisResult analysis = analyze_molecule(start, potential);
  ASSERT_TRUE(analysis.optimization.converged()) << analysis.optimization.message;
  // Cs (the plane of the molecule), not the C2v of the saddle between the two wells.
  EXPECT_EQ(analysis.point_group.group.name, "Cs");
  EXPECT_GT(analysis.harmonic.frequencies_cm1.minCoeff(), 0.0);
  const Eigen::VectorXd x = analysis.molecule.coordinates();
  const double r1 = (x.segment<3>(3) - x.segment<3>(0)).norm();
  const double r2 = (x.segment<3>(6) - x.segment<3>(0)).norm();
  EXPECT_NEAR(std::abs(r1 - r2), AsymmetricStretchDoubleWell::minimum_bond_difference(),
              bond_difference_tolerance_angstrom);
  bool warned = false;
  for (const auto& warning : analysis.warnings)
    warned |= warning.find("onto a saddle point") != std::string::npos;
  EXPECT_TRUE(warned);
}

TEST(OptimizedStructure, SymmetricSaddleOfTheDoubleWellIsLeftDownhill) {
  const AsymmetricStretchDoubleWell potential;
  const AnalysisResult analysis = analyze_molecule(bent_triatomic(0.96, 0.96), potential);
  ASSERT_TRUE(analysis.optimization.converged()) << analysis.optimization.message;
  EXPECT_GE(analysis.optimization.saddle_escapes, 1);
  EXPECT_EQ(analysis.point_group.group.name, "Cs");
  EXPECT_GT(analysis.harmonic.frequencies_cm1.minCoeff(), 0.0);
}

TEST(OptimizedStructure, ButynediolFromItsCentrosymmetricStartIsAMinimum) {
  const std::string path = structures_dir + "alcohols/but-2-yne-1_4-diol.cml";
  if (!std::filesystem::exists(path))
    GTEST_SKIP() << path << " is missing (Debian package chemical-structures-data; tools/setup installs it)";
  const Molecule molecule = read_molecule(path).molecule;
  const auto potential = make_potential("MMFF94", molecule);
  const AnalysisResult analysis = analyze_molecule(molecule, *potential);
  EXPECT_TRUE(analysis.optimization.converged()) << analysis.optimization.message;
  EXPECT_EQ(analysis.optimization.negative_curvature_directions, 0);
  EXPECT_GT(analysis.harmonic.frequencies_cm1.minCoeff(), 0.0);
  // HOCH2–C≡C–CH2OH with its two ends anti: the inversion centre of the start survives.
  EXPECT_EQ(analysis.point_group.group.name, "Ci");
}

TEST(OptimizedStructure, DivergedOptimizationIsAnErrorNotAResult) {
  // Water's valence force field with the stretch quartic constant 306 aJ/Å⁴ replaced by
  // −5000 aJ/Å⁴ (inside the loader's bounds): the surface has no minimum beyond a tiny
  // stretch and the energy falls without limit. No frequency computed from there may be
  // reported.
  const std::string source_dir = OVERTONE_SOURCE_DIR;
  const Molecule molecule = read_molecule(source_dir + "/molecules/water.xyz").molecule;
  std::ifstream in(source_dir + "/potentials/water.toml");
  std::stringstream text;
  text << in.rdbuf();
  std::string file = text.str();
  for (std::size_t at = file.find("f4 = 306.0"); at != std::string::npos; at = file.find("f4 = 306.0"))
    file.replace(at, 10, "f4 = -5000");
  const std::string path = ::testing::TempDir() + "water-unbounded-quartic.toml";
  std::ofstream(path) << file;
  const auto potential = make_potential(path, molecule);
  Molecule stretched = molecule;
  stretched.atoms[1].position_angstrom.x() += 0.3;  // past the barrier (about 0.1 Å)
  try {
    analyze_molecule(stretched, *potential);
    FAIL() << "expected an error for a diverged optimization";
  } catch (const Error& error) {
    EXPECT_NE(std::string(error.what()).find("the optimization diverged"), std::string::npos) << error.what();
  }
}

}  // namespace
}  // namespace overtone
