#pragma once
// Shared by the libFuzzer targets in this folder: molecules to bind a fuzzed potential
// to, and the evaluations that a bound potential must survive. A fuzz input may make
// the code throw overtone::Error (bad input, the documented route); any other
// exception, a crash or a sanitizer report is a finding.
#include <openbabel/elements.h>

#include <Eigen/Dense>
#include <cmath>
#include <string>
#include <vector>

#include "core/molecule.hpp"
#include "potential/potential.hpp"

namespace overtone::fuzz {

// Larger inputs describe nothing the checks below do not already see, and cost time.
constexpr std::size_t largest_atom_count = 24;

// Atoms on a helix, 1.5 Å apart along the chain and never collinear or coplanar, so
// that every internal coordinate a file can name is defined.
inline Molecule molecule_on_helix(const std::vector<int>& atomic_numbers) {
  constexpr double radius_angstrom = 1.0;
  constexpr double rise_angstrom = 0.8;
  constexpr double turn_radian = 1.745;  // about 100°, a tetrahedral-like turn
  Molecule molecule;
  molecule.title = "fuzz helix";
  for (std::size_t i = 0; i < atomic_numbers.size(); ++i) {
    Atom atom;
    atom.atomic_number = atomic_numbers[i];
    atom.mass_da = OpenBabel::OBElements::GetMass(static_cast<unsigned>(atomic_numbers[i]));
    const double angle = turn_radian * static_cast<double>(i);
    atom.position_angstrom =
        Eigen::Vector3d(radius_angstrom * std::cos(angle), radius_angstrom * std::sin(angle),
                        rise_angstrom * static_cast<double>(i));
    molecule.atoms.push_back(atom);
  }
  return molecule;
}

// Energy, gradient and Hessian at the molecule's geometry and at a displaced one; the
// results are summed so the optimizer cannot drop the calls.
inline double evaluate_everything(const Potential& potential, const Molecule& molecule) {
  constexpr double displacement_angstrom = 0.05;
  Eigen::VectorXd x = molecule.coordinates();
  double sum = 0.0;
  for (int pass = 0; pass < 2; ++pass) {
    Eigen::VectorXd gradient;
    sum += potential.energy(x);
    sum += potential.energy_and_gradient(x, gradient);
    sum += gradient.sum();
    if (potential.has_analytic_hessian()) sum += potential.hessian(x).sum();
    for (Eigen::Index i = 0; i < x.size(); ++i)
      x[i] += displacement_angstrom * std::sin(static_cast<double>(i + 1));
  }
  return sum;
}

}  // namespace overtone::fuzz
