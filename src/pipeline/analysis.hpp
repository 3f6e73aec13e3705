#pragma once
// The main job as one library call: optimize the structure on the chosen potential,
// then the harmonic analysis (later stages add symmetry, anharmonic constants and
// families). The command line only formats what this returns.
#include <string>
#include <vector>

#include "core/molecule.hpp"
#include "harmonic/harmonic.hpp"
#include "optimize/minimize.hpp"
#include "potential/potential.hpp"

namespace overtone {

struct AnalysisOptions {
  bool optimize = true;             // false: analyse the input geometry as given
  MinimizeOptions minimize;
  HessianOptions hessian;
  NormalModeOptions modes;
};

struct StageTimings {
  double optimize_s = 0.0;
  double hessian_s = 0.0;
  double normal_modes_s = 0.0;
};

struct AnalysisResult {
  Molecule molecule;                // at the analysed (optimized) geometry
  std::string potential_description;
  bool optimized = false;
  MinimizeResult optimization;      // filled when optimized
  HessianResult hessian;
  HarmonicResult harmonic;
  // Report order of the modes: mode_order[k] is the harmonic index (ascending
  // eigenvalue) of reported mode k+1. Without symmetry: descending wavenumber
  // (common practice, no source).
  std::vector<int> mode_order;
  StageTimings timings;
  std::vector<std::string> warnings;
};

// Throws Error for bad input (sizes, options); numerical outcomes (optimization not
// converged, saddle point, imaginary frequencies) are reported in the result.
AnalysisResult analyze_molecule(const Molecule& molecule, const Potential& potential,
                                const AnalysisOptions& options = {});

}  // namespace overtone
