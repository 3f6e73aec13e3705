#pragma once
// One molecule of a screen, in this process: read the record, set up the potential, run
// the same pipeline as `overtone analyze` up to the chosen stage for the parent and for
// every isotope variant asked for, and turn the results into store rows. Bad input and
// numerical outcomes (no convergence, a saddle point, an untypable atom) become a failed
// variant with the stage and the reason; nothing is thrown for them.
#include <functional>
#include <string>
#include <vector>

#include "pipeline/analysis.hpp"
#include "screen/inputs.hpp"
#include "screen/isotope_rules.hpp"
#include "screen/outcome.hpp"
#include "screen/settings.hpp"

namespace overtone {

struct ScreenTask {
  ScreenRecord record;
  // Variants still to compute: "" is the parent, any other entry the text of one of the
  // rules (IsotopeRule::text).
  std::vector<std::string> variants;
};

// Called with a stage name (screen_stage::*) each time a stage starts, so that a process
// watching from outside can say where a molecule was when it ran out of time or crashed.
using StageListener = std::function<void(const std::string& stage)>;

// Throws only for a task that names a variant without a matching rule (a program error).
MoleculeOutcome screen_molecule(const ScreenTask& task, const ScreenSettings& settings,
                                const std::vector<IsotopeRule>& rules, const StageListener& on_stage = {});

// The families options of a screen for an analysed molecule: the same window for the
// families' resonance threats as for the perturbative Fermi candidates (as `analyze` uses),
// the energy range of the settings, and the modes to continue (mode numbers; empty with
// continue_families false when nothing is to be continued).
FamiliesOptions screen_families_options(const AnalysisResult& analysis, const AnharmonicResult& anharmonic,
                                        const ScreenSettings& settings);

}  // namespace overtone
