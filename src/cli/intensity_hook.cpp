#include "cli/intensity_hook.hpp"

namespace overtone::cli {

IntensityOutcome run_intensities(const AnalysisResult& analysis, const AnharmonicResult* anharmonic,
                                 const Potential& potential, const std::string& potential_choice,
                                 const std::string& electric_response_path) {
  IntensityOutcome outcome;
  const auto source =
      dipole_source_for(potential, potential_choice, analysis.molecule, electric_response_path);
  if (!source) {
    outcome.skipped =
        "no dipole source: the potential has no charges and MMFF94 cannot type the molecule (give "
        "--electric-response FILE)";
    return outcome;
  }
  outcome.results = analyze_intensities(analysis, anharmonic, *source);
  return outcome;
}

}  // namespace overtone::cli
