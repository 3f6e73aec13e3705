#pragma once
// Line-list intensities beyond the double-harmonic picture: transition moments of overtones
// and binary combinations to first order in the anharmonicity, and their redistribution
// inside resonance polyads.
//
// In dimensionless normal coordinates q (those of the force constants, V₃ = (1/6) Σ φ_ijk q_i
// q_j q_k in cm⁻¹), with μ = μ₀ + Σ_k μ_k q_k + ½ Σ_kl μ_kl q_k q_l and harmonic product states,
// the first-order transition moment to a two-quantum state f is
//   M_f = ⟨0|½ Σ μ_kl q_k q_l|f⟩                                   (electrical anharmonicity)
//       + Σ_k (μ_k/√2) ⟨1_k|V₃|f⟩ / (E_f − E_{1_k})                  (mechanical: the final state)
//       − Σ_m ⟨0|V₃|m⟩ ⟨m|Σ μ_k q_k|f⟩ / E_m,  m = f ± 1_k            (mechanical: the ground state)
// (first-order Rayleigh–Schrödinger perturbation theory of the states; the first
// non-vanishing order of a two-quantum transition in the second-order treatments of J. Vázquez
// and J. F. Stanton, Mol. Phys. 104, 377 (2006) and J. Bloino and V. Barone, J. Chem. Phys.
// 136, 124108 (2012), citations from memory). A denominator between two states of one
// resonance polyad is left out (the polyad's diagonalization treats that coupling), as VPT2
// deperturbs the positions. The same sums with α in place of μ give transition
// polarizabilities. Electrical anharmonicity needs second derivatives μ_kl: fixed charges
// have none (μ is linear in the Cartesian, hence in the rectilinear normal coordinates),
// atomic polar tensors do not carry them (left out), a Taylor expansion's dipole surface may
// (taylor_dipole.hpp); polarizability second derivatives are never used.
//
// Intensities: each moment becomes an effective derivative D_f = M_f √(2/λ_f) with λ_f =
// ħ/ω_f (ω_f the harmonic energy of f), so that a fundamental's D is ∂μ/∂Q exactly, and
// A_f = K |D_f|² (km/mol), S_f = 45 a² + 7 γ² of D_f (Å⁴/u) as in harmonic_intensities.hpp.
// A degenerate manifold sums |D|² over its component states; when it splits into sublevels,
// the total goes to the one sublevel active in the technique (none active: 0; several: null).
//
// Polyads: a state Σ_j c_j |j⟩ has D = Σ_j c_j D_j. Its signs are rebuilt for a polyad of two
// manifolds coupled at first order (Fermi types 1 and 2), one of them a single state a: a
// couples to the combination u = W/|W| of the other's components (W_c = ⟨c|V₃|a⟩; for CO₂'s
// 2ν2 the l = 0 sublevel), and the two-state problem gives c_u/c_a = (E_ψ − E_a)/|W|, E_ψ the
// resonance-corrected and E_a the deperturbed position. Any other polyad sums the intensities of its
// components weighted by the mixing weights (interference left out; a warning names it). Second-order
// corrections to the fundamentals' own moments (third dipole derivatives, quartic constants) are left out:
// the fundamentals keep their double-harmonic moments.
#include <array>
#include <functional>
#include <optional>
#include <string>
#include <vector>

#include "anharmonic/force_constants.hpp"
#include "anharmonic/vpt2.hpp"
#include "harmonic/harmonic.hpp"
#include "intensity/dipole_source.hpp"
#include "intensity/level_intensities.hpp"

namespace overtone {

// Intensities of every Vpt2Result level. harmonic: the result the force constants belong to
// (degenerate partners as the anharmonic stage rotated them). Throws Error for sizes that
// disagree.
LevelIntensityResult compute_anharmonic_level_intensities(const Vpt2Result& vpt2,
                                                          const ForceConstantResult& force_constants,
                                                          const HarmonicResult& harmonic,
                                                          const DipoleSource& source);

namespace detail {

// ⟨m|V₃|n⟩ (cm⁻¹) between harmonic product states of the modes (quanta per mode).
double cubic_matrix_element(const ForceConstantTensors& constants, const std::vector<int>& m,
                            const std::vector<int>& n);

// The first-order moment of the header comment (mechanical part) for a two-quantum state f,
// with derivatives ∂X/∂q_k as columns (any number of rows) and ω per mode (cm⁻¹); a
// one-quantum intermediate for which `resonant` says true is left out.
Eigen::VectorXd two_quantum_transition_moment(
    const ForceConstantTensors& constants, const Eigen::VectorXd& omega, const Eigen::MatrixXd& derivatives,
    const std::vector<int>& f, const std::function<bool(const std::vector<int>&)>& resonant = {});

// ⟨0|½ Σ_kl μ_kl q_k q_l|f⟩ for a two-quantum state f (second derivatives per component).
Eigen::Vector3d electrical_moment(const std::array<Eigen::MatrixXd, 3>& second, const std::vector<int>& f);

}  // namespace detail

}  // namespace overtone
