// The minimizer reaches its stated gradient criterion, reports saddle points and
// non-convergence instead of hiding them, and leaves saddles downhill when asked.
#include <gtest/gtest.h>

#include <cmath>
#include <filesystem>
#include <fstream>
#include <sstream>
#include <string>

#include "core/error.hpp"
#include "molecule/read_molecule.hpp"
#include "optimize/minimize.hpp"
#include "potential/make_potential.hpp"

namespace overtone {
namespace {

const std::string source_dir = OVERTONE_SOURCE_DIR;

Molecule load(const std::string& relative) { return read_molecule(source_dir + "/" + relative).molecule; }

double pyramid_height(const Eigen::VectorXd& x) {
  // Distance of N (atom 1) from the plane of the three H atoms.
  const Eigen::Vector3d a = x.segment<3>(3), b = x.segment<3>(6), c = x.segment<3>(9);
  const Eigen::Vector3d normal = (b - a).cross(c - a).normalized();
  return std::abs(normal.dot(x.segment<3>(0) - a));
}

TEST(Minimize, ReachesTheStatedCriterionFromADistortedStart) {
  Molecule molecule = load("tests/data/formats/acetaldehyde.xyz");
  const auto potential = make_potential("MMFF94", molecule);
  Eigen::VectorXd start = molecule.coordinates();
  for (Eigen::Index k = 0; k < start.size(); ++k) start[k] += 0.05 * std::cos(2.3 * static_cast<double>(k));
  const double start_energy = potential->energy(start);
  const MinimizeResult result = minimize(*potential, start);
  EXPECT_TRUE(result.converged()) << result.message;
  EXPECT_LE(result.rms_gradient, MinimizeOptions{}.rms_gradient_tolerance);
  EXPECT_LT(result.energy_kcal_mol, start_energy);
  EXPECT_EQ(result.negative_curvature_directions, 0);
  // The reported gradient is the potential's gradient at the returned geometry.
  Eigen::VectorXd gradient;
  potential->energy_and_gradient(result.coordinates_angstrom, gradient);
  EXPECT_NEAR(gradient.norm() / std::sqrt(static_cast<double>(gradient.size())), result.rms_gradient, 1e-12);
}

TEST(Minimize, PlanarAmmoniaIsReportedAsASaddlePoint) {
  // Planar NH3 is the top of the inversion barrier (common practice, no source): a
  // symmetric start keeps the optimizer in the plane, where it must say so.
  const Molecule molecule = load("tests/data/molecules/ammonia-planar.xyz");
  const auto potential = make_potential("MMFF94", molecule);
  MinimizeOptions options;
  options.max_saddle_escapes = 0;
  const MinimizeResult result = minimize(*potential, molecule.coordinates(), options);
  EXPECT_EQ(result.status, MinimizeStatus::saddle_point) << result.message;
  EXPECT_EQ(result.negative_curvature_directions, 1);
  EXPECT_LT(pyramid_height(result.coordinates_angstrom), 1e-6);
}

TEST(Minimize, LeavesTheSaddleDownhillWhenAllowed) {
  const Molecule molecule = load("tests/data/molecules/ammonia-planar.xyz");
  const auto potential = make_potential("MMFF94", molecule);
  const MinimizeResult result = minimize(*potential, molecule.coordinates());
  EXPECT_TRUE(result.converged()) << result.message;
  EXPECT_GE(result.saddle_escapes, 1);
  EXPECT_GT(pyramid_height(result.coordinates_angstrom),
            0.2);  // a real pyramid (≈0.38 Å in NH3, from memory)
}

TEST(Minimize, NearlyFreeTorsionIsNotTakenForASaddle) {
  // HOCH2–C≡C–CH2OH: the torsion of the two ends about the C≡C axis has a curvature of
  // a few 1e-3 kcal/mol/Å², below the truncation error of a 0.005 Å difference step.
  const std::string path = "/usr/share/chemical-structures/alcohols/but-2-yne-1_4-diol.cml";
  if (!std::filesystem::exists(path))
    GTEST_SKIP() << path << " is missing (Debian package chemical-structures-data; tools/setup installs it)";
  const Molecule molecule = read_molecule(path).molecule;
  const auto potential = make_potential("MMFF94", molecule);
  const MinimizeResult result = minimize(*potential, molecule.coordinates());
  EXPECT_EQ(result.status, MinimizeStatus::converged) << result.message;
  EXPECT_EQ(result.negative_curvature_directions, 0);
  EXPECT_EQ(result.saddle_escapes, 0);
}

TEST(Minimize, LbfgsTakesOverAgainWhereNewtonStepsStall) {
  // Without Newton steps, L-BFGS alone must carry the optimization to the criterion in
  // its refinement rounds (hand-over gradient 1e-3, then 1e-5, then the criterion).
  const Molecule molecule = load("tests/data/formats/acetaldehyde.xyz");
  const auto potential = make_potential("MMFF94", molecule);
  Eigen::VectorXd start = molecule.coordinates();
  for (Eigen::Index k = 0; k < start.size(); ++k) start[k] += 0.05 * std::cos(2.3 * static_cast<double>(k));
  MinimizeOptions options;
  options.newton_max_steps = 0;
  const MinimizeResult refined = minimize(*potential, start, options);
  EXPECT_TRUE(refined.converged()) << refined.message;
  options.max_refinement_rounds = 0;
  const MinimizeResult stalled = minimize(*potential, start, options);
  EXPECT_EQ(stalled.status, MinimizeStatus::not_converged) << stalled.message;
}

TEST(Minimize, NonConvergenceIsReportedNotHidden) {
  const Molecule molecule = load("tests/data/formats/acetaldehyde.xyz");
  const auto potential = make_potential("MMFF94", molecule);
  MinimizeOptions options;
  options.lbfgs_max_iterations = 1;
  options.newton_max_steps = 0;
  Eigen::VectorXd start = molecule.coordinates();
  start[0] += 0.2;
  const MinimizeResult result = minimize(*potential, start, options);
  EXPECT_EQ(result.status, MinimizeStatus::not_converged);
  EXPECT_NE(result.message.find("above the criterion"), std::string::npos) << result.message;
}

TEST(Minimize, InvalidOptionsAreRejected) {
  const Molecule molecule = load("tests/data/formats/acetaldehyde.xyz");
  const auto potential = make_potential("MMFF94", molecule);
  MinimizeOptions options;
  options.rms_gradient_tolerance = -1.0;
  EXPECT_THROW(minimize(*potential, molecule.coordinates(), options), Error);
}

// Two atoms pushed apart with energy −c·ln r: there is no minimum, the energy stays
// moderate far out (−c·ln r), and the gradient c/r decays slowly, so only the distance
// the atoms travel tells that the optimization ran away.
class LogarithmicRepulsion : public Potential {
 public:
  static constexpr double strength_kcal_mol = 1e3;
  std::string description() const override { return "logarithmic repulsion"; }
  std::size_t atom_count() const override { return 2; }

 protected:
  double compute_energy(const Eigen::VectorXd& x) const override {
    return -strength_kcal_mol * std::log((x.tail<3>() - x.head<3>()).norm());
  }
  double compute_energy_and_gradient(const Eigen::VectorXd& x, Eigen::VectorXd& gradient) const override {
    const Eigen::Vector3d d = x.tail<3>() - x.head<3>();
    gradient.head<3>() = strength_kcal_mol * d / d.squaredNorm();
    gradient.tail<3>() = -strength_kcal_mol * d / d.squaredNorm();
    return compute_energy(x);
  }
};

TEST(Minimize, StructureThatFliesApartHasDiverged) {
  const LogarithmicRepulsion potential;
  Eigen::VectorXd start(6);
  start << 0.0, 0.0, 0.0, 1.0, 0.0, 0.0;
  const MinimizeResult result = minimize(potential, start);
  EXPECT_EQ(result.status, MinimizeStatus::diverged) << result.message;
  EXPECT_NE(result.message.find("from the centre of the molecule"), std::string::npos) << result.message;
}

TEST(Minimize, AbsurdConstantsGiveADivergedOptimization) {
  // Water's valence force field with its stretch quartic constant 306 aJ/Å⁴ replaced by
  // −5000 aJ/Å⁴ (inside the loader's bounds): beyond a stretch of about 0.1 Å the surface
  // falls without limit, so the atoms run away.
  const Molecule molecule = load("molecules/water.xyz");
  std::ifstream in(source_dir + "/potentials/water.toml");
  std::stringstream text;
  text << in.rdbuf();
  std::string file = text.str();
  for (std::size_t at = file.find("f4 = 306.0"); at != std::string::npos; at = file.find("f4 = 306.0"))
    file.replace(at, 10, "f4 = -5000");
  const std::string path = ::testing::TempDir() + "water-absurd-quartic.toml";
  std::ofstream(path) << file;
  const auto potential = make_potential(path, molecule);
  Eigen::VectorXd start = molecule.coordinates();
  start[3] += 0.3;  // stretch one bond past the barrier (about 0.1 Å)
  const MinimizeResult result = minimize(*potential, start);
  EXPECT_EQ(result.status, MinimizeStatus::diverged) << result.message;
  EXPECT_FALSE(result.converged());
}

}  // namespace
}  // namespace overtone
