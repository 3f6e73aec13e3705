#pragma once
// Matrix elements of the anharmonic Hamiltonian in the product harmonic-oscillator basis
// of dimensionless normal coordinates, and the second-order (Van Vleck) effective
// Hamiltonian on a block of zeroth-order states. Internal to the anharmonic stage.
//
//   H = Σ_i ω_i (n_i + ½) + V₃ + V₄,   V₃ = (1/6) Σ φ_ijk q_i q_j q_k,  V₄ = (1/24) Σ φ_ijkl q_i q_j q_k q_l
//   q_i = (a_i + a_i†)/√2,  energies and φ in cm⁻¹.
// For states m, n of a block P (zeroth-order energies E_m, E_n):
//   H_eff(m, n) = δ_mn E_m + ⟨m|V₃|n⟩ + ⟨m|V₄|n⟩
//                 + ½ Σ_{k∉P} ⟨m|V₃|k⟩⟨k|V₃|n⟩ [1/(E_m − E_k) + 1/(E_n − E_k)]
// V₃ is first order and V₄ second order, as in VPT2. Quartic constants that were not
// computed count as zero.
#include <Eigen/Dense>
#include <map>
#include <set>
#include <vector>

#include "anharmonic/force_constants.hpp"

namespace overtone::detail {

using Quanta = std::vector<int>;  // vibrational quanta per mode

class AnharmonicOperator {
 public:
  AnharmonicOperator(const ForceConstantTensors& constants, const Eigen::VectorXd& frequencies_cm1);

  int mode_count() const { return static_cast<int>(omega_.size()); }
  // Σ_i ω_i (n_i + ½), cm⁻¹.
  double zeroth_order(const Quanta& n) const;
  double cubic_element(const Quanta& m, const Quanta& n) const;
  double quartic_element(const Quanta& m, const Quanta& n) const;
  // Every |k⟩ with ⟨k|V₃|n⟩ ≠ 0 and that element.
  const std::map<Quanta, double>& apply_cubic(const Quanta& n) const;
  // The Van Vleck second-order term between m and n, intermediates in `excluded` left out.
  double second_order(const Quanta& m, const Quanta& n, const std::set<Quanta>& excluded) const;
  // H_eff(m, n) as in the header comment.
  double element(const Quanta& m, const Quanta& n, const std::set<Quanta>& excluded) const;
  // H_eff on the block, with the block itself excluded from the intermediates.
  Eigen::MatrixXd block(const std::vector<Quanta>& states) const;

 private:
  double term(const std::vector<int>& counts, const Quanta& m, const Quanta& n, int rank) const;
  double constant(const std::vector<int>& indices) const;

  const ForceConstantTensors& constants_;
  Eigen::VectorXd omega_;
  struct CubicTerm {
    std::vector<std::pair<int, int>> factors;  // (mode, power)
    double value;                              // φ / Π power!
  };
  std::vector<CubicTerm> cubic_terms_;
  // apply_cubic results by state: the same states recur in many matrix elements.
  mutable std::map<Quanta, std::map<Quanta, double>> applied_;
};

// ⟨a|q^power|b⟩ for one harmonic oscillator, q = (a + a†)/√2.
double coordinate_power_element(int a, int b, int power);

}  // namespace overtone::detail
