#pragma once
// Intensities for the main job: which dipole source an analysis uses, and the harmonic and
// line-list intensities from it (src/intensity).
#include <memory>
#include <optional>
#include <string>

#include "intensity/anharmonic_intensities.hpp"
#include "intensity/dipole_source.hpp"
#include "intensity/harmonic_intensities.hpp"
#include "intensity/level_intensities.hpp"
#include "pipeline/analysis.hpp"

namespace overtone {

// The dipole source of a run, first that applies:
//   1. electric_response_path, when given (atomic polar tensors, docs/intensities.md);
//   2. the dipole surface terms ([dipole]) of a Taylor-expansion file named by
//      potential_choice (docs/taylor-expansion-format.md);
//   3. the potential's own charges: the compiled MMFF94/MMFF94s, or the `charges` key of the
//      valence force-field file named by potential_choice;
//   4. MMFF94 charges assigned to the molecule by Open Babel (the potential has none), with
//      a note saying so;
// or null when none applies (MMFF94 cannot type the molecule). Throws Error for an
// electric-response file that cannot be read or does not fit the molecule.
std::unique_ptr<DipoleSource> dipole_source_for(const Potential& potential,
                                                const std::string& potential_choice, const Molecule& molecule,
                                                const std::string& electric_response_path = "");

struct IntensityResults {
  HarmonicIntensityResult harmonic;            // per harmonic index of AnalysisResult::harmonic
  std::optional<LevelIntensityResult> levels;  // when the anharmonic stage ran
};

// Intensities at the analysed geometry; degenerate sets from analysis.modes; the line list's
// from compute_anharmonic_level_intensities when the anharmonic stage ran. Throws Error for
// sizes that disagree.
IntensityResults analyze_intensities(const AnalysisResult& analysis, const AnharmonicResult* anharmonic,
                                     const DipoleSource& source);

}  // namespace overtone
