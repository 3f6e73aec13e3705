#pragma once
// Harmonic analysis: Cartesian Hessian, mass weighting, exact removal of rigid-body
// motions, and the normal modes.
//
// Identity maintained by HarmonicResult: with R the 3N×r orthonormal basis of rigid-body
// motions in mass-weighted Cartesian space (r = 6, or 5 if linear), P = I − RRᵀ,
// F = M^{-1/2} H M^{-1/2} the mass-weighted Hessian, and L = mass_weighted_modes,
//   (PFP)·L = L·Λ, RᵀL = 0, LᵀL = I, eigenvalues = diag(Λ) ascending.
// Each column of L has its largest-magnitude component positive (a fixed sign).
// Normal coordinates Q (Å·Da^{1/2}) relate to Cartesians by x = x_eq + M^{-1/2} L Q.
#include <Eigen/Dense>
#include <string>
#include <vector>

#include "core/molecule.hpp"
#include "potential/potential.hpp"

namespace overtone {

// A molecule is linear when its smallest principal moment of inertia is below this
// fraction of the largest (dimensionless): far above the round-off of the moments of a
// linear structure (~1e-16), far below the ratio of any bent one.
inline constexpr double default_linearity_tolerance = 1e-8;

// The softest harmonic wavenumber (cm⁻¹) that the stages expanding the potential about a
// minimum (force constants, VPT2, families) accept: the dimensionless normal coordinate
// q = Q·√(ω/ħ) of a softer mode spans so much of the surface per unit that a quartic
// expansion about the structure says nothing, and such a mode is a nearly free motion
// (an internal rotor, a floppy complex) rather than a vibration about a minimum.
inline constexpr double smallest_expanded_wavenumber_cm1 = 5.0;

struct HessianOptions {
  // Use the potential's analytic Hessian when it has one.
  bool prefer_analytic = true;
  // Central-difference step for gradients, Å. Truncation error ∝ step² (third and
  // fourth derivatives; measured for MMFF94 acetaldehyde: spurious rigid-body
  // wavenumbers 10 cm⁻¹ at 0.005 Å, 1 cm⁻¹ at 0.0005 Å, the lowest mode converged to
  // 0.002 cm⁻¹), round-off ∝ ε_gradient/step (≈1e-7 kcal/mol/Å² here).
  double finite_difference_step_angstrom = 5e-4;
  // Make the Cartesian Hessian exactly invariant under translations and rotations by
  // projecting it with the (unit-mass) rigid-body projector, as holds for the exact
  // Hessian at a stationary point. Without it, finite-difference error leaks into the
  // rigid-body directions and isotopologues do not obey the product rule exactly.
  bool enforce_rigid_body_invariance = true;
  // Linearity test of the rigid-body basis used by that projection (see
  // default_linearity_tolerance).
  double linearity_tolerance = default_linearity_tolerance;

  void validate() const;  // throws Error naming the field that is out of range
};

struct HessianResult {
  Eigen::MatrixXd hessian;  // kcal/mol/Å², symmetrized
  std::string method;       // "analytic" or "central differences of gradients"
  std::size_t gradient_evaluations = 0;
  double asymmetry = 0.0;            // largest |H_ij − H_ji| before symmetrizing, kcal/mol/Å²
  double rigid_body_residual = 0.0;  // largest element removed by the invariance projection, kcal/mol/Å²
};

// Throws Error on size mismatch or a non-finite Hessian.
HessianResult compute_hessian(const Potential& potential, const Eigen::VectorXd& coordinates_angstrom,
                              const HessianOptions& options = {});

struct NormalModeOptions {
  // A molecule is linear when the smallest principal moment of inertia is below this
  // fraction of the largest (dimensionless), in (0, 1).
  double linearity_tolerance = default_linearity_tolerance;
  // Frequencies below this magnitude (cm⁻¹) that are negative are imaginary and warned
  // about only if their magnitude exceeds this threshold; smaller ones are noise.
  double imaginary_warning_cm1 = 1.0;
  // Largest |wavenumber| (cm⁻¹) accepted as a vibration; beyond it the potential is
  // absurd and Error is thrown. Molecular fundamentals end near 4400 cm⁻¹ (H2, common
  // practice, no source); 100000 cm⁻¹ is an electronic, not a vibrational, energy.
  double max_wavenumber_cm1 = 1e5;

  void validate() const;  // throws Error naming the field that is out of range
};

// not_a_minimum: some mode is imaginary by more than NormalModeOptions::imaginary_warning_cm1;
// the modes are still those of the given Hessian, but stages that expand about a minimum
// must not use them.
enum class HarmonicStatus { ok, not_a_minimum };
std::string to_string(HarmonicStatus status);

struct HarmonicResult {
  HarmonicStatus status = HarmonicStatus::ok;
  std::string message;
  Eigen::VectorXd coordinates_angstrom;  // 3N geometry the analysis was done at
  Eigen::VectorXd masses_da;             // N
  bool linear = false;
  int rigid_body_count = 6;                 // 6, or 5 for a linear molecule
  Eigen::MatrixXd cartesian_hessian;        // kcal/mol/Å²
  Eigen::MatrixXd rigid_body_basis;         // R, 3N × r, orthonormal (mass-weighted)
  Eigen::VectorXd eigenvalues;              // kcal/mol/(Å² Da), ascending
  Eigen::VectorXd frequencies_cm1;          // signed: negative means imaginary; ascending
  Eigen::MatrixXd mass_weighted_modes;      // L, 3N × (3N−r), orthonormal columns
  Eigen::MatrixXd cartesian_displacements;  // columns M^{-1/2} L_k normalized to unit length
  Eigen::VectorXd reduced_masses_da;        // 1 / |M^{-1/2} L_k|²
  Eigen::VectorXd
      stiffness_aj_per_angstrom2;  // λ_k μ_k: curvature along the unit Cartesian displacement (aJ/Å²)
  Eigen::VectorXd
      rigid_body_eigenvalues;  // of the unprojected F restricted to rigid-body space, kcal/mol/(Å² Da)
  std::vector<std::string> warnings;

  std::size_t mode_count() const { return static_cast<std::size_t>(frequencies_cm1.size()); }
  bool ok() const { return status == HarmonicStatus::ok; }
};

// Mass-weights, projects and diagonalizes the given Cartesian Hessian at the given
// geometry. Throws Error on inconsistent sizes, non-positive masses, non-finite input,
// or results that are non-finite or beyond NormalModeOptions::max_wavenumber_cm1.
HarmonicResult analyze_normal_modes(const Eigen::VectorXd& coordinates_angstrom,
                                    const Eigen::VectorXd& masses_da,
                                    const Eigen::MatrixXd& cartesian_hessian,
                                    const NormalModeOptions& options = {});

// Replaces the mass-weighted vector of mode k (unit length, within the span of modes of
// the same frequency, e.g. a symmetry-adapted partner) and recomputes its Cartesian
// displacement, reduced mass and force constant. Throws Error for an index or size that
// does not fit.
void replace_mode_vector(HarmonicResult& harmonic, Eigen::Index k, const Eigen::VectorXd& mass_weighted_mode);

// Orthonormal basis (3N×r) of the rigid-body motions (translations, rotations) in
// mass-weighted Cartesian space at the given geometry; r = 5 for linear molecules.
Eigen::MatrixXd rigid_body_basis(const Eigen::VectorXd& coordinates_angstrom,
                                 const Eigen::VectorXd& masses_da, double linearity_tolerance,
                                 bool* is_linear = nullptr);

}  // namespace overtone
