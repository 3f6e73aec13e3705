#pragma once
// Cubic and quartic force constants in dimensionless normal coordinates.
//
// Convention used throughout the anharmonic stage (docs/anharmonic.md):
//   V(q) = V₀ + ½ Σ_i ω_i q_i² + (1/6) Σ_ijk φ_ijk q_i q_j q_k + (1/24) Σ_ijkl φ_ijkl q_i q_j q_k q_l
// with unrestricted sums, so φ_ijk = ∂³V/∂q_i∂q_j∂q_k and φ_ijkl = ∂⁴V/∂q_i∂q_j∂q_k∂q_l,
// all in cm⁻¹. The dimensionless normal coordinates are q_k = Q_k·sqrt(ω_k/ħ) with Q the
// normal coordinates of HarmonicResult (x = x_eq + M^{-1/2} L Q, Å·Da^½) and ω_k the
// harmonic angular frequency; ω_i in the formula above is the harmonic wavenumber in cm⁻¹.
// Mode indices are those of HarmonicResult (ascending harmonic wavenumber), 0-based.
//
// Method: normal-coordinate Hessians H_q (cm⁻¹) at the reference and at displacements
// ±h along each q_k, and (for quartic constants with four different indices) at
// ±h q_k ± h q_l:
//   φ_ijk  = [H_ij(+h e_k) − H_ij(−h e_k)] / (2h)
//   φ_ijkk = [H_ij(+h e_k) − 2 H_ij(0) + H_ij(−h e_k)] / h²
//   φ_ijkl = [H_ij(+h e_k + h e_l) − H_ij(+h e_k − h e_l) − H_ij(−h e_k + h e_l) + H_ij(−h e_k − h e_l)] /
//   (4h²)
// Hessians are analytic where the potential has them; otherwise each H_q comes from
// central differences of gradients along the normal coordinates with the same step, so
// the displaced points are shared (2M² + 1 gradients for all cubic and all semi-diagonal
// quartic constants). Every constant obtained from several displacement directions is
// the mean of its estimates (symmetrization over index permutations); the spread is
// reported.
#include <Eigen/Dense>
#include <cstdint>
#include <string>
#include <unordered_map>
#include <vector>

#include "core/progress.hpp"
#include "harmonic/harmonic.hpp"
#include "harmonic/normal_coordinates.hpp"
#include "potential/potential.hpp"
#include "symmetry/mode_symmetry.hpp"

namespace overtone {

// Fully symmetric cubic and quartic tensors over M modes. Cubic constants are stored
// densely; quartic ones sparsely (only the computed ones; has_quartic tells which).
class ForceConstantTensors {
 public:
  ForceConstantTensors() = default;
  explicit ForceConstantTensors(int mode_count);

  int mode_count() const { return mode_count_; }
  double cubic(int i, int j, int k) const { return cubic_[index3(i, j, k)]; }
  // Sets φ_ijk and all its index permutations.
  void set_cubic(int i, int j, int k, double value);

  // φ_ijkl, or 0 when it was not computed.
  double quartic(int i, int j, int k, int l) const;
  bool has_quartic(int i, int j, int k, int l) const;
  void set_quartic(int i, int j, int k, int l, double value);

  struct CubicEntry {
    int i, j, k;   // i ≤ j ≤ k
    double value;  // cm⁻¹
  };
  struct QuarticEntry {
    int i, j, k, l;  // i ≤ j ≤ k ≤ l
    double value;    // cm⁻¹
  };
  // Unique constants with |value| > threshold (cm⁻¹), sorted by indices.
  std::vector<CubicEntry> cubic_entries(double threshold_cm1 = 0.0) const;
  std::vector<QuarticEntry> quartic_entries(double threshold_cm1 = 0.0) const;
  // Every computed quartic constant, zeros included (has_quartic is true for each), sorted.
  std::vector<QuarticEntry> computed_quartic_entries() const;

  static std::uint64_t quartic_key(int i, int j, int k, int l);

 private:
  std::size_t index3(int i, int j, int k) const {
    return (static_cast<std::size_t>(i) * mode_count_ + j) * mode_count_ + k;
  }
  int mode_count_ = 0;
  std::vector<double> cubic_;
  std::unordered_map<std::uint64_t, double> quartic_;
};

struct ForceConstantOptions {
  // Displacement h in dimensionless normal coordinates. Truncation error of the central
  // differences is about h²/6 of the next-higher derivative (h² ≈ 4e-4 of a quintic
  // constant, which in dimensionless units is a few cm⁻¹ at most); round-off is
  // ε_H/h for cubic and ε_H/h² for quartic constants, with ε_H ≈ 1e-12·ω for double
  // precision Hessians, i.e. 1e-6 cm⁻¹. 0.02 keeps both far below 0.01 cm⁻¹ (the middle of
  // the 0.01–0.05 range of common practice, no source).
  double step = 0.02;
  // All φ_ijkl (also those with four different indices) when the mode count is at most
  // this; costs 2M(M−1) extra Hessians. Otherwise only constants with a repeated index,
  // plus those with four different indices inside pairs of one degenerate set (needed by
  // the combination levels of degenerate modes).
  int full_quartic_max_modes = 12;
  // Use the point group (ModeSymmetry) to reuse displaced Hessians/gradients related by an
  // operation, to set constants that must vanish to exactly zero and to make degenerate
  // partners consistent.
  bool use_symmetry = true;
  // The group is used (averaging, zeroing, species) only if its matrices on the normal
  // coordinates are exact to this (largest deviation, dimensionless; see
  // ModeSymmetry::representation_error()). Averaging with matrices this far off moves the
  // constants by about that fraction.
  double symmetry_tolerance = 1e-3;
  // Displaced Hessians are reused through an operation only if the matrices are exact to
  // this: a reused Hessian carries an error of about tolerance·ω into φ ≈ ΔH/(2h), i.e.
  // 1e-8·4000 cm⁻¹/0.04 = 1e-3 cm⁻¹. A symmetrized geometry and Hessian give ~1e-12.
  double reuse_tolerance = 1e-8;
  // Modes below this harmonic wavenumber (cm⁻¹), or imaginary ones, make the stage stop
  // with status not_a_minimum: dimensionless coordinates need ω well above zero.
  double minimum_frequency_cm1 = smallest_expanded_wavenumber_cm1;
  // Told after each displaced point's Hessian (stage "force constants", done of total points).
  ProgressCallback progress;

  void validate() const;  // throws Error naming the field that is out of range
};

enum class ForceConstantStatus { ok, not_a_minimum };
std::string to_string(ForceConstantStatus status);

struct ForceConstantResult {
  ForceConstantStatus status = ForceConstantStatus::ok;
  std::string message;
  std::vector<std::string> warnings;

  Eigen::VectorXd frequencies_cm1;        // ω_i, ascending (HarmonicResult order)
  ForceConstantTensors constants;         // φ in cm⁻¹
  bool full_quartic = false;              // all φ_ijkl computed
  ModeSymmetry symmetry;                  // the group data used (trivial if none)
  bool symmetry_used = false;             // false if not given, disabled or not exact enough
  bool symmetry_reused_hessians = false;  // displaced Hessians were reused through the group

  std::string method;  // "analytic Hessians" or "Hessians from central differences of gradients"
  double step = 0.0;   // h actually used (dimensionless)

  // Diagnostics.
  double permutation_spread_cm1 = 0.0;   // largest difference between estimates of one constant
  double symmetry_adjustment_cm1 = 0.0;  // largest change made by averaging over the group
  std::size_t forbidden_cubic = 0;       // unique φ_ijk that symmetry forces to zero
  std::size_t forbidden_quartic = 0;     // unique computed φ_ijkl that symmetry forces to zero
  std::size_t displaced_hessians = 0;    // normal-coordinate Hessians the scheme needs (incl. the reference)
  std::size_t hessians_from_symmetry = 0;  // of those, obtained from another by a group operation
  EvaluationCounts evaluations;            // potential evaluations this stage made
  EvaluationCounts naive_evaluations;      // what the same scheme needs without symmetry

  bool ok() const { return status == ForceConstantStatus::ok; }
  std::size_t mode_count() const { return static_cast<std::size_t>(frequencies_cm1.size()); }
};

// Force constants of the potential at the harmonic result's geometry (which must be a
// minimum of that potential). The overload with symmetry uses the group as described in
// the options; without it, degenerate sets come from ModeSymmetry::without_group on the
// harmonic wavenumbers.
// Throws Error for invalid options, size mismatches between potential, harmonic result and
// symmetry, or non-finite Hessians/gradients. A non-minimum gives status not_a_minimum.
ForceConstantResult compute_force_constants(const Potential& potential, const HarmonicResult& harmonic,
                                            const ForceConstantOptions& options = {});
ForceConstantResult compute_force_constants(const Potential& potential, const HarmonicResult& harmonic,
                                            const ModeSymmetry& symmetry,
                                            const ForceConstantOptions& options = {});

namespace detail {

// Whether symmetry forces φ_ijk to vanish in every invariant tensor.
bool cubic_must_vanish(const ModeSymmetry& symmetry, int i, int j, int k);

}  // namespace detail

}  // namespace overtone
