#pragma once
// Shipped molecules on shipped potentials, brought to the minimum and analysed
// harmonically, for the suites that start from them (anharmonic, families).
#include <Eigen/Dense>
#include <memory>
#include <string>
#include <vector>

#include "harmonic/harmonic.hpp"
#include "molecule/read_molecule.hpp"
#include "potential/potential.hpp"
#include "potential/valence_force_field.hpp"
#include "symmetry/detect_point_group.hpp"
#include "symmetry/mode_symmetry.hpp"

namespace overtone::testing {

inline std::string source_path(const std::string& relative) {
  return std::string(OVERTONE_SOURCE_DIR) + "/" + relative;
}

struct PreparedMolecule {
  Molecule molecule;
  std::unique_ptr<Potential> potential;
  HarmonicResult harmonic;
};

// Newton steps on the analytic Hessian (pseudo-inverse without the rigid-body null space)
// from a geometry already near the minimum, until the largest gradient component is below
// 1e-10 kcal/mol/Å, then the harmonic analysis there.
inline HarmonicResult harmonic_at_minimum(const Potential& potential, Eigen::VectorXd x,
                                          const Eigen::VectorXd& masses) {
  for (int step = 0; step < 20; ++step) {
    Eigen::VectorXd g;
    potential.energy_and_gradient(x, g);
    if (g.cwiseAbs().maxCoeff() < 1e-10) break;
    const Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> solver(potential.hessian(x));
    const double largest = solver.eigenvalues().cwiseAbs().maxCoeff();
    Eigen::VectorXd shift = Eigen::VectorXd::Zero(x.size());
    for (Eigen::Index k = 0; k < x.size(); ++k)
      if (std::abs(solver.eigenvalues()[k]) > 1e-8 * largest)
        shift +=
            solver.eigenvectors().col(k) * (solver.eigenvectors().col(k).dot(g) / solver.eigenvalues()[k]);
    x -= shift;
  }
  return analyze_normal_modes(x, masses, potential.hessian(x));
}

inline PreparedMolecule prepare(const std::string& molecule_file, const std::string& potential_file,
                                const std::vector<IsotopeChoice>& isotopes) {
  ReadOptions options;
  options.isotopes = isotopes;
  PreparedMolecule p;
  p.molecule = read_molecule(source_path("molecules/" + molecule_file), options).molecule;
  p.potential = load_valence_force_field(source_path("potentials/" + potential_file), p.molecule);
  p.harmonic = harmonic_at_minimum(*p.potential, p.molecule.coordinates(), p.molecule.masses());
  p.molecule.set_coordinates(p.harmonic.coordinates_angstrom);
  return p;
}

// The same with the point group: the geometry symmetrized by the symmetry stage, polished
// by Newton steps (which keep an exact symmetry of the potential), the Hessian averaged
// over the group, species assigned and the degenerate modes rotated into symmetry-adapted
// partners.
struct PreparedSymmetricMolecule {
  Molecule molecule;
  std::unique_ptr<Potential> potential;
  PointGroupResult group;
  ModeSymmetryResult species;
  SymmetryAdaptedHarmonic adapted;
};

inline PreparedSymmetricMolecule prepare_symmetric(const std::string& molecule_file,
                                                   const std::string& potential_file,
                                                   const std::vector<IsotopeChoice>& isotopes) {
  ReadOptions options;
  options.isotopes = isotopes;
  PreparedSymmetricMolecule p;
  p.molecule = read_molecule(source_path("molecules/" + molecule_file), options).molecule;
  p.potential = load_valence_force_field(source_path("potentials/" + potential_file), p.molecule);
  p.group = detect_point_group(p.molecule);
  HarmonicResult h =
      harmonic_at_minimum(*p.potential, p.group.symmetrized_coordinates_angstrom, p.molecule.masses());
  h = analyze_normal_modes(h.coordinates_angstrom, h.masses_da,
                           symmetrize_cartesian_hessian(h.cartesian_hessian, p.group));
  p.species = assign_mode_species(p.group, h);
  p.adapted = adapt_to_point_group(h, p.group, p.species);
  p.molecule.set_coordinates(h.coordinates_angstrom);
  return p;
}

}  // namespace overtone::testing
