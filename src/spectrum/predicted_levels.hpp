#pragma once
// The predicted levels a spectrum or an assignment starts from, read from the JSON document
// of a run (docs/output-fields.md): the harmonic fundamentals (modes[], one level per ν
// number) or the VPT2 line list (levels[]), with their intensities where known.
#include <nlohmann/json.hpp>
#include <optional>
#include <string>
#include <vector>

#include "spectrum/spectrum.hpp"

namespace overtone {

struct PredictedLevel {
  std::string label;        // "ν1", "2ν2", "ν1+ν3"
  std::string kind;         // "fundamental", "overtone", "combination"
  std::vector<int> quanta;  // per ν number (index ν − 1)
  int total_quanta = 1;
  int sublevel = 1;
  std::string species;  // ASCII Mulliken label; empty without symmetry
  std::optional<bool> ir_active;
  std::optional<bool> raman_active;
  bool totally_symmetric = false;  // species of the totally symmetric representation
  double position_cm1 = 0.0;       // best estimate: resonance-corrected, else VPT2, else harmonic
  double harmonic_cm1 = 0.0;
  std::optional<double> ir_intensity_km_per_mol;
  std::optional<double> raman_activity_a4_per_u;
  int polyad = 0;  // 1-based, 0 when none
  std::vector<std::string> partners;
};

struct PredictedSpectrum {
  std::string molecule;          // title or formula
  std::string potential;         // potential description
  std::string intensity_source;  // intensity_model.source, empty when none
  std::string intensity_notes;
  bool anharmonic = false;  // levels from the VPT2 line list
  std::vector<PredictedLevel> levels;
};

// Whether an ASCII Mulliken label names the totally symmetric species of its group (A, A1,
// A', A1', Ag, A1g, Sigma+, Sigma_g+: the Mulliken convention, common practice, no source).
bool is_totally_symmetric_species(const std::string& species);

// Reads the levels: anharmonic (levels[]) when requested and present, else the harmonic
// fundamentals. Throws Error naming the first missing or malformed field.
PredictedSpectrum predicted_from_document(const nlohmann::json& document, bool anharmonic);

enum class SpectrumKind { infrared, raman };

// The stick lines of one technique: levels with a known intensity above round-off (1e-12 of
// the strongest).
std::vector<SpectrumLine> spectrum_lines(const PredictedSpectrum& predicted, SpectrumKind kind);

// The cold lines weighted by the ground-state population and the hot bands out of the
// thermally populated fundamentals (spectrum.hpp), at temperature_k > 0 (anharmonic levels
// needed for the hot-band positions). Hot bands weaker than min_relative of the strongest
// line are left out. Throws Error for a temperature that is not positive.
std::vector<SpectrumLine> lines_with_hot_bands(const PredictedSpectrum& predicted, SpectrumKind kind,
                                               double temperature_k, double min_relative = 1e-4);

}  // namespace overtone
