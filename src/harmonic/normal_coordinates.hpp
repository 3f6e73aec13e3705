#pragma once
// Dimensionless normal coordinates q at a harmonic result, shared by the stages that
// expand the potential about the minimum (force constants, amplitude scans, Taylor
// expansions): q_k = Q_k·sqrt(ω_k/ħ) with Q the normal coordinates of HarmonicResult
// (x = x_eq + M^{-1/2} L Q, Å·Da^½) and ω_k the harmonic angular frequency.
#include <Eigen/Dense>

#include "harmonic/harmonic.hpp"

namespace overtone::detail {

// Conversion between dimensionless normal coordinates and Cartesians at a harmonic result.
struct NormalCoordinateFrame {
  Eigen::VectorXd reference;        // x_eq, Å
  Eigen::MatrixXd to_cartesian;     // 3N × M: x = x_eq + to_cartesian · q (Å per unit q)
  Eigen::VectorXd frequencies_cm1;  // ω

  explicit NormalCoordinateFrame(const HarmonicResult& harmonic);
  Eigen::VectorXd cartesian(const Eigen::VectorXd& q) const { return reference + to_cartesian * q; }
  // Cartesian gradient (kcal/mol/Å) → ∂V/∂q (cm⁻¹).
  Eigen::VectorXd gradient_q(const Eigen::VectorXd& cartesian_gradient) const;
  // Cartesian Hessian (kcal/mol/Å²) → ∂²V/∂q∂q (cm⁻¹).
  Eigen::MatrixXd hessian_q(const Eigen::MatrixXd& cartesian_hessian) const;
};

}  // namespace overtone::detail
