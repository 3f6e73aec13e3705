// Harmonic-analysis benchmark: per molecule, the time of each stage and the ratio of
// (Hessian + normal-mode analysis) to its floor measured in the same process: the
// gradient evaluations a finite-difference Hessian needs plus one dense symmetric
// eigendecomposition of the same size; then the time of the symmetry work against
// the harmonic analysis for symmetric molecules up to C60. Prints tables; no pass/fail.
#include <fmt/format.h>

#include <algorithm>
#include <chrono>
#include <cstdio>
#include <string>
#include <vector>

#include "harmonic/harmonic.hpp"
#include "molecule/read_molecule.hpp"
#include "optimize/minimize.hpp"
#include "potential/make_potential.hpp"
#include "symmetry/detect_point_group.hpp"
#include "symmetry/mode_symmetry.hpp"

namespace {

using Clock = std::chrono::steady_clock;
double seconds(Clock::time_point start) {
  return std::chrono::duration<double>(Clock::now() - start).count();
}

struct Case {
  const char* name;
  const char* smiles;
};

}  // namespace

int main(int argc, char** argv) {
  using namespace overtone;
  const std::string force_field = argc > 1 ? argv[1] : "MMFF94";
  const std::vector<Case> cases = {
      {"water", "O"},
      {"acetaldehyde", "CC=O"},
      {"benzene", "c1ccccc1"},
      {"paracetamol", "CC(=O)Nc1ccc(O)cc1"},
      {"procaine", "CCN(CC)CCOC(=O)c1ccc(N)cc1"},
      {"triolein-fragment", "CCCCCCCCC=CCCCCCCCC(=O)OCC(O)CO"},
      {"cholesterol", "CC(C)CCCC(C)C1CCC2C1(CCC3C2CC=C4C3(CCC(C4)O)C)C"},
      {"tritriacontane", "CCCCCCCCCCCCCCCCCCCCCCCCCCCCCCCCC"},
  };
  std::printf("%s\n", fmt::format("{:<18} {:>5} {:>9} {:>9} {:>9} {:>10} {:>9} {:>7}", "molecule", "atoms",
                                  "optim/s", "hessian/s", "modes/s", "floor/s", "eigen/s", "ratio")
                          .c_str());
  for (const auto& c : cases) {
    ReadOptions options;
    options.input_is_smiles = true;
    Molecule molecule = read_molecule(c.smiles, options).molecule;
    const auto potential = make_potential(force_field, molecule);
    auto start = Clock::now();
    const MinimizeResult minimum = minimize(*potential, molecule.coordinates());
    const double optimize_s = seconds(start);
    const Eigen::VectorXd x = minimum.coordinates_angstrom;

    // Each timing is the best of several interleaved repetitions, so that load from
    // other processes inflates neither side of the ratio.
    const Eigen::Index n = x.size();
    double hessian_s = 1e300, modes_s = 1e300, gradients_s = 1e300, eigen_s = 1e300;
    for (int repetition = 0; repetition < 5; ++repetition) {
      start = Clock::now();
      const HessianResult hessian = compute_hessian(*potential, x);
      hessian_s = std::min(hessian_s, seconds(start));
      start = Clock::now();
      const HarmonicResult modes = analyze_normal_modes(x, molecule.masses(), hessian.hessian);
      modes_s = std::min(modes_s, seconds(start));

      // Floor: the same number of gradient evaluations at displaced geometries ...
      Eigen::VectorXd gradient, displaced = x;
      start = Clock::now();
      for (Eigen::Index k = 0; k < 2 * n; ++k) {
        displaced[k / 2] = x[k / 2] + (k % 2 ? -5e-4 : 5e-4);
        potential->energy_and_gradient(displaced, gradient);
        displaced[k / 2] = x[k / 2];
      }
      gradients_s = std::min(gradients_s, seconds(start));
      // ... plus one dense symmetric eigendecomposition of a 3N×3N matrix.
      start = Clock::now();
      const Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> eigen(hessian.hessian);
      eigen_s = std::min(eigen_s, seconds(start));
      if (modes.mode_count() == 0 || eigen.eigenvalues().size() != n) return 1;
    }
    const double floor_s = gradients_s + eigen_s;
    std::printf("%s\n", fmt::format("{:<18} {:>5} {:>9.3f} {:>9.3f} {:>9.4f} {:>10.3f} {:>9.4f} {:>7.3f}{}",
                                    c.name, molecule.atom_count(), optimize_s, hessian_s, modes_s, floor_s,
                                    eigen_s, (hessian_s + modes_s) / floor_s,
                                    minimum.converged() ? "" : "  (" + minimum.message + ")")
                            .c_str());
  }

  // Symmetry against the harmonic analysis it serves: detection, Hessian
  // symmetrization and mode species, relative to Hessian + normal modes.
  std::printf("\n%s\n", fmt::format("{:<22} {:>5} {:>6} {:>9} {:>9} {:>10} {:>7}", "molecule (file)", "atoms",
                                    "group", "hessian/s", "modes/s", "symmetry/s", "share")
                            .c_str());
  const std::string data = std::string(OVERTONE_SOURCE_DIR) + "/tests/data/symmetry/";
  // UFF here: with the Kekulé bond orders Open Babel perceives for C60, MMFF94's
  // potential itself is only Cs-symmetric.
  for (const char* file :
       {"benzene.D6h.xyz", "methane.Td.xyz", "dodecahedrane.Ih.xyz", "buckminsterfullerene.Ih.xyz"}) {
    Molecule molecule = read_molecule(data + file).molecule;
    const auto potential = make_potential("UFF", molecule);
    const MinimizeResult minimum = minimize(*potential, molecule.coordinates());
    molecule.set_coordinates(minimum.coordinates_angstrom);
    double hessian_s = 1e300, modes_s = 1e300, symmetry_s = 1e300;
    std::string group_name;
    for (int repetition = 0; repetition < 3; ++repetition) {
      auto start = Clock::now();
      const PointGroupResult group = detect_point_group(molecule);
      double symmetry_time = seconds(start);
      const Eigen::VectorXd x = group.symmetrized_coordinates_angstrom;
      start = Clock::now();
      HessianResult hessian = compute_hessian(*potential, x);
      hessian_s = std::min(hessian_s, seconds(start));
      start = Clock::now();
      hessian.hessian = symmetrize_cartesian_hessian(hessian.hessian, group);
      symmetry_time += seconds(start);
      start = Clock::now();
      const HarmonicResult modes = analyze_normal_modes(x, molecule.masses(), hessian.hessian);
      modes_s = std::min(modes_s, seconds(start));
      start = Clock::now();
      const ModeSymmetryResult species = assign_mode_species(group, modes);
      symmetry_time += seconds(start);
      symmetry_s = std::min(symmetry_s, symmetry_time);
      group_name = group.group.name;
      if (species.modes.size() != modes.mode_count()) return 1;
    }
    std::printf("%s\n", fmt::format("{:<22} {:>5} {:>6} {:>9.3f} {:>9.4f} {:>10.4f} {:>7.3f}", file,
                                    molecule.atom_count(), group_name, hessian_s, modes_s, symmetry_s,
                                    symmetry_s / (hessian_s + modes_s))
                            .c_str());
  }
  return 0;
}
