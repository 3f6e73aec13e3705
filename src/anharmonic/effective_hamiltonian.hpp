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
//
// Cost: an intermediate k of the second-order sum differs from m by one cubic term (at
// most three modes, one or three quanta) and from n by another, so only the terms that
// touch a mode where m and n differ (and, when they differ by two quanta, the terms that
// move a single quantum) can contribute; when m and n differ by four or six quanta (a
// Darling–Dennison coupling), a term of three different modes must touch two of the modes
// where they differ. second_order visits those terms and nothing else (O(M) of them for a
// Darling–Dennison coupling, O(M²) for two quanta apart) and keeps no state between calls.
#include <Eigen/Dense>
#include <array>
#include <unordered_set>
#include <vector>

#include "anharmonic/force_constants.hpp"

namespace overtone::detail {

using Quanta = std::vector<int>;  // vibrational quanta per mode

struct QuantaHash {
  std::size_t operator()(const Quanta& n) const {
    std::size_t h = n.size();
    for (int q : n) h ^= static_cast<std::size_t>(q) + 0x9e3779b97f4a7c15ULL + (h << 6) + (h >> 2);
    return h;
  }
};
using StateSet = std::unordered_set<Quanta, QuantaHash>;

class AnharmonicOperator {
 public:
  AnharmonicOperator(const ForceConstantTensors& constants, const Eigen::VectorXd& frequencies_cm1);

  int mode_count() const { return static_cast<int>(omega_.size()); }
  // Σ_i ω_i (n_i + ½), cm⁻¹.
  double zeroth_order(const Quanta& n) const;
  double cubic_element(const Quanta& m, const Quanta& n) const;
  double quartic_element(const Quanta& m, const Quanta& n) const;
  // The Van Vleck second-order term between m and n, intermediates in `excluded` left out.
  double second_order(const Quanta& m, const Quanta& n, const StateSet& excluded) const;
  // H_eff(m, n) as in the header comment.
  double element(const Quanta& m, const Quanta& n, const StateSet& excluded) const;

 private:
  // One unique nonzero φ_ijk as a product of powers of distinct modes.
  struct CubicTerm {
    std::array<int, 3> modes{};
    std::array<int, 3> powers{};
    int factor_count = 0;
    double value = 0.0;  // φ / Π power!
  };
  double term(const std::vector<int>& counts, const Quanta& m, const Quanta& n, int rank) const;
  double constant(const std::vector<int>& indices) const;
  // ⟨k|V₃|n⟩ where k − n is nonzero only at the given modes (by the given changes).
  double cubic_between(const Quanta& n, const std::vector<std::pair<int, int>>& difference) const;

  const ForceConstantTensors& constants_;
  Eigen::VectorXd omega_;
  std::vector<CubicTerm> cubic_terms_;
  std::vector<std::vector<int>> terms_of_mode_;         // cubic terms in which each mode occurs
  std::vector<std::vector<int>> paired_terms_of_mode_;  // ... of those, the ones with at most two modes
  std::vector<int> single_quantum_terms_;               // terms with a squared or cubed factor
  // Terms of three different modes by each pair of their modes (i < j): the pair (i, j)
  // owns entries [pair_start_[i·M + j], pair_start_[i·M + j + 1]) of terms_of_pair_.
  std::vector<int> pair_start_;
  std::vector<int> terms_of_pair_;
};

// ⟨a|q^power|b⟩ for one harmonic oscillator, q = (a + a†)/√2.
double coordinate_power_element(int a, int b, int power);

}  // namespace overtone::detail
