#include "families/vibrational_system.hpp"

#include "core/units.hpp"

namespace overtone {

UnitConventions molecular_unit_conventions() {
  UnitConventions conventions;
  conventions.cm1_per_energy = units::cm1_per_kcal_mol;
  conventions.cm1_per_angular_frequency = units::cm1_per_internal_angular_frequency;
  conventions.fs_per_time = units::internal_time_unit_s / units::femtosecond_s;
  conventions.hbar = units::hbar_internal;
  conventions.name = "kcal/mol, Å·Da^½, internal time";
  conventions.energy_label = "cm-1";
  return conventions;
}

SystemEvaluationCounts& SystemEvaluationCounts::operator+=(const SystemEvaluationCounts& other) {
  potentials += other.potentials;
  gradients += other.gradients;
  hessian_directions += other.hessian_directions;
  hessians += other.hessians;
  hessian_vector_products += other.hessian_vector_products;
  return *this;
}

SystemEvaluationCounts SystemEvaluationCounts::operator-(const SystemEvaluationCounts& other) const {
  SystemEvaluationCounts difference;
  difference.potentials = potentials - other.potentials;
  difference.gradients = gradients - other.gradients;
  difference.hessian_directions = hessian_directions - other.hessian_directions;
  difference.hessians = hessians - other.hessians;
  difference.hessian_vector_products = hessian_vector_products - other.hessian_vector_products;
  return difference;
}

SystemEvaluationCounts& VibrationalSystem::counters() {
  thread_local SystemEvaluationCounts counts;
  return counts;
}

Eigen::VectorXd VibrationalSystem::cartesian_displacement_angstrom(const Eigen::VectorXd&) const {
  return {};
}

void VibrationalSystem::compute_hessian_times(const Eigen::VectorXd& q, const Eigen::MatrixXd& directions,
                                              Eigen::MatrixXd& out) const {
  const int n = dimension();
  const double step = hessian_step();
  Eigen::VectorXd plus(n), minus(n);
  if (directions.cols() >= n) {
    // Building the whole Hessian costs 2n gradients, fewer than 2k directional ones.
    Eigen::MatrixXd hessian(n, n);
    Eigen::VectorXd shifted = q;
    for (int axis = 0; axis < n; ++axis) {
      shifted(axis) = q(axis) + step;
      gradient(shifted, plus);
      shifted(axis) = q(axis) - step;
      gradient(shifted, minus);
      shifted(axis) = q(axis);
      hessian.col(axis) = (plus - minus) / (2.0 * step);
    }
    out.noalias() = hessian * directions;
    return;
  }
  out.resize(n, directions.cols());  // callers may pass an empty scratch matrix
  for (Eigen::Index k = 0; k < directions.cols(); ++k) {
    const double norm = directions.col(k).norm();
    if (norm == 0.0) {
      out.col(k).setZero();
      continue;
    }
    const double scaled_step = step / norm;
    gradient(q + scaled_step * directions.col(k), plus);
    gradient(q - scaled_step * directions.col(k), minus);
    out.col(k) = (plus - minus) / (2.0 * scaled_step);
  }
}

}  // namespace overtone
