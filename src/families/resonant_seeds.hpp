#pragma once
// Families of a 1:2 resonance seeded from its normal form.
//
// When a nondegenerate mode (ω₁, coordinate q₁) and a nondegenerate partner (ω₂, q₂)
// sit at ω₂ ≈ 2ω₁ and symmetry allows the coupling q₁²q₂, first-order averaging gives
//   H̄ = ω₁I₁ + ω₂I₂ + κ I₁ √I₂ cos(2φ₁ − φ₂),   κ = a / (ω₁ √(2ω₂)),
// a = ½ ∂³V/∂q₁²∂q₂ (q_k = √(2I_k/ω_k) cos φ_k). At exact resonance its periodic orbits
// with both modes excited have cos ψ = ±1 and I₁ = 4I₂ (the in-phase and out-of-phase
// mixed families), frequency ω₁ ± κ√I₂ with E ≈ 6ω₁I₂: their shift grows like √E with
// opposite signs; the lower mode has no family of its own. Close to resonance these
// two families replace the lower mode's Lyapunov family as the families to continue:
// the seed is the normal form's orbit at the first energy, and the corrector keeps its
// amplitude (FamilySeed::branch with the radial direction).
#include <optional>
#include <string>
#include <vector>

#include "families/family_types.hpp"

namespace overtone {

struct ResonantSeedOptions {
  // Seed the mixed families when |ω₂ − 2ω₁| ≤ this × ω₁ (dimensionless); 0 turns it off.
  // Further off resonance the lower mode's family exists down to the minimum and the
  // other mixed family is born by period doubling of the partner's (branch switching).
  double relative_detuning = 1e-3;

  void validate() const;  // throws Error naming the field that is out of range
};

// One mixed family of a 1:2 resonance: its type (symmetry of the lower mode's family,
// both modes, a seed from the normal form) and what it replaces.
struct ResonantFamily {
  FamilyType type;
  int replaced_block = -1;  // the lower mode's block
  int partner_block = -1;
  double coupling = 0.0;           // a = ½ ∂³V/∂q₁²∂q₂, system units
  double shift_coefficient = 0.0;  // ±κ/√(6ω₁): frequency shift / √E at exact resonance
  std::string note;                // which family it replaces and why
};

// The in-phase and out-of-phase families for the family `lower` (of a nondegenerate
// block with a symmetry-allowed order-2 threat from a nondegenerate partner within the
// detuning), seeded at `start_energy`; empty when that does not apply or the coupling
// vanishes.
std::vector<ResonantFamily> resonant_families(const VibrationalSystem& system,
                                              const std::vector<ModeBlock>& blocks, const FamilyType& lower,
                                              double start_energy, const ResonantSeedOptions& options);

}  // namespace overtone
