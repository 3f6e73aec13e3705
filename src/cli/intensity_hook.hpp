#pragma once
// The intensities of a command's run, for main.cpp and the spectrum and assign commands.
#include <optional>
#include <string>

#include "pipeline/intensities.hpp"

namespace overtone::cli {

struct IntensityOutcome {
  std::optional<IntensityResults> results;
  std::string skipped;  // why there are none (empty when there are)
};

// potential_choice: what the user named (a force field or a file). Bad input (an unreadable
// electric-response file) throws Error; a molecule without any dipole source gives an outcome
// with the reason.
IntensityOutcome run_intensities(const AnalysisResult& analysis, const AnharmonicResult* anharmonic,
                                 const Potential& potential, const std::string& potential_choice,
                                 const std::string& electric_response_path);

}  // namespace overtone::cli
