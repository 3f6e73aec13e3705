#pragma once
// How the stretch of a molecule's bonds shares out along a periodic orbit: the measure of
// the normal-to-local transition of equivalent bonds (M. S. Child and L. Halonen, Adv.
// Chem. Phys. 57, 1 (1984); citation from memory): equivalent X–H bonds that stretch
// equally on a normal-mode orbit, one of them alone on a local-mode orbit.
#include <Eigen/Dense>
#include <utility>
#include <vector>

#include "families/vibrational_system.hpp"

namespace overtone {

// The bonds of a geometry (3N, Å): each atom with the atoms within
// neighbour_ratio × its nearest-neighbour distance (no element data needed).
std::vector<std::pair<int, int>> nearest_neighbour_bonds(const Eigen::VectorXd& coordinates_angstrom,
                                                         double neighbour_ratio = 1.2);

// Largest minus smallest length of each bond (Å) over one period of the orbit from
// (q0, p0), integrated with `steps` classical Runge–Kutta steps. Empty when the system
// has no Cartesian map.
Eigen::VectorXd bond_stretch_amplitudes(const VibrationalSystem& system,
                                        const Eigen::VectorXd& equilibrium_angstrom,
                                        const std::vector<std::pair<int, int>>& bonds,
                                        const Eigen::VectorXd& q0, const Eigen::VectorXd& p0, double period,
                                        int steps = 512);

// Among the bonds joining atoms of the same two masses as the bond that stretches most,
// the smallest amplitude over the largest: 1 when they stretch alike, → 0 when one bond
// carries the motion alone. NaN without bonds or motion.
double equivalent_bond_ratio(const Eigen::VectorXd& amplitudes, const std::vector<std::pair<int, int>>& bonds,
                             const Eigen::VectorXd& masses_da);

}  // namespace overtone
