#include "families/bond_amplitudes.hpp"

#include <algorithm>
#include <boost/numeric/odeint.hpp>
#include <cmath>
#include <limits>

namespace overtone {

std::vector<std::pair<int, int>> nearest_neighbour_bonds(const Eigen::VectorXd& coordinates_angstrom,
                                                         double neighbour_ratio) {
  const int atoms = static_cast<int>(coordinates_angstrom.size() / 3);
  auto distance = [&](int i, int j) {
    return (coordinates_angstrom.segment<3>(3 * i) - coordinates_angstrom.segment<3>(3 * j)).norm();
  };
  std::vector<std::pair<int, int>> bonds;
  for (int i = 0; i < atoms; ++i) {
    double nearest = std::numeric_limits<double>::infinity();
    for (int j = 0; j < atoms; ++j)
      if (j != i) nearest = std::min(nearest, distance(i, j));
    for (int j = 0; j < atoms; ++j) {
      if (j == i || distance(i, j) > neighbour_ratio * nearest) continue;
      const std::pair<int, int> bond{std::min(i, j), std::max(i, j)};
      if (std::find(bonds.begin(), bonds.end(), bond) == bonds.end()) bonds.push_back(bond);
    }
  }
  std::sort(bonds.begin(), bonds.end());
  return bonds;
}

Eigen::VectorXd bond_stretch_amplitudes(const VibrationalSystem& system,
                                        const Eigen::VectorXd& equilibrium_angstrom,
                                        const std::vector<std::pair<int, int>>& bonds,
                                        const Eigen::VectorXd& q0, const Eigen::VectorXd& p0, double period,
                                        int steps) {
  if (system.cartesian_displacement_angstrom(q0).size() == 0 || bonds.empty() || steps < 1) return {};
  const Eigen::Index n = q0.size();
  Eigen::VectorXd lowest = Eigen::VectorXd::Constant(static_cast<Eigen::Index>(bonds.size()),
                                                     std::numeric_limits<double>::infinity());
  Eigen::VectorXd highest = -lowest;
  auto record = [&](const Eigen::VectorXd& q) {
    const Eigen::VectorXd x = equilibrium_angstrom + system.cartesian_displacement_angstrom(q);
    for (std::size_t b = 0; b < bonds.size(); ++b) {
      const double length = (x.segment<3>(3 * bonds[b].first) - x.segment<3>(3 * bonds[b].second)).norm();
      const auto k = static_cast<Eigen::Index>(b);
      lowest(k) = std::min(lowest(k), length);
      highest(k) = std::max(highest(k), length);
    }
  };
  // y = (q, p), ẏ = (p, −∇V(q)), fixed steps of Boost.Odeint's classical Runge–Kutta.
  using State = std::vector<double>;
  auto rate = [&](const State& y, State& dydt, double /*t*/) {
    const Eigen::Map<const Eigen::VectorXd> state(y.data(), 2 * n);
    Eigen::VectorXd gradient;
    system.gradient(state.head(n), gradient);
    Eigen::Map<Eigen::VectorXd> out(dydt.data(), 2 * n);
    out << state.tail(n), -gradient;
  };
  auto observe = [&](const State& y, double /*t*/) {
    record(Eigen::Map<const Eigen::VectorXd>(y.data(), n));
  };
  State y(static_cast<std::size_t>(2 * n));
  Eigen::Map<Eigen::VectorXd>(y.data(), 2 * n) << q0, p0;
  boost::numeric::odeint::integrate_n_steps(boost::numeric::odeint::runge_kutta4<State>(), rate, y, 0.0,
                                            period / steps, steps, observe);
  return highest - lowest;
}

double equivalent_bond_ratio(const Eigen::VectorXd& amplitudes, const std::vector<std::pair<int, int>>& bonds,
                             const Eigen::VectorXd& masses_da) {
  if (amplitudes.size() == 0 || amplitudes.size() != static_cast<Eigen::Index>(bonds.size()))
    return std::numeric_limits<double>::quiet_NaN();
  Eigen::Index largest = 0;
  amplitudes.maxCoeff(&largest);
  if (!(amplitudes(largest) > 0.0)) return std::numeric_limits<double>::quiet_NaN();
  auto kind = [&](const std::pair<int, int>& bond) {
    const double a = masses_da(bond.first), b = masses_da(bond.second);
    return std::make_pair(std::min(a, b), std::max(a, b));
  };
  const auto reference = kind(bonds[static_cast<std::size_t>(largest)]);
  double smallest = amplitudes(largest);
  for (std::size_t b = 0; b < bonds.size(); ++b)
    if (kind(bonds[b]) == reference) smallest = std::min(smallest, amplitudes(static_cast<Eigen::Index>(b)));
  return smallest / amplitudes(largest);
}

}  // namespace overtone
