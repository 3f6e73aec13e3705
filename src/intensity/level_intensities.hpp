#pragma once
// Intensities of the VPT2 line list in the double-harmonic approximation with resonance
// mixing ("intensity borrowing"): an eigenstate |ψ⟩ = Σ_j c_j |j⟩ of a resonance polyad
// has the transition moment Σ_j c_j ⟨j|μ|0⟩; with only fundamentals carrying a moment
// (the double-harmonic approximation), and at most one bright fundamental per polyad, its
// intensity is c_f² times the fundamental's: I_ψ = w_f I_f with w_f the mixing weight of
// the fundamental. So the intensity of a fundamental is shared among the members of its
// polyad, conserving the total (CO₂'s Fermi dyad ν1 / 2ν2 in Raman is the textbook case:
// G. Herzberg, Infrared and Raman Spectra, 1945, ch. III; from memory).
//
// Left out (docs/intensities.md): the intrinsic moments of overtones and combinations
// (electrical anharmonicity, second dipole derivatives; mechanical anharmonicity, cubic
// constants) and the interference of two bright fundamentals in one polyad (the mixing
// weights carry no signs). A level outside every polyad that is not a fundamental has no
// intensity in this model: it is reported as unknown, not zero.
#include <optional>
#include <string>
#include <vector>

#include "anharmonic/vpt2.hpp"
#include "intensity/harmonic_intensities.hpp"

namespace overtone {

struct LevelIntensityResult {
  // One entry per Vpt2Result::levels entry; nullopt where the model gives no value.
  std::vector<std::optional<double>> ir_km_per_mol;
  std::vector<std::optional<double>> raman_activity_a4_per_u;
  std::string treatment;              // the statement above in one line
  std::vector<std::string> warnings;  // polyads with more than one bright fundamental
};

// Throws Error when the harmonic intensities and the VPT2 result disagree in their mode count.
LevelIntensityResult compute_level_intensities(const Vpt2Result& vpt2,
                                               const HarmonicIntensityResult& harmonic);

}  // namespace overtone
