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
#include "symmetry/detect_point_group.hpp"
#include "symmetry/mode_symmetry.hpp"

namespace overtone {

struct AnalysisOptions {
  bool optimize = true;  // false: analyse the input geometry as given
  MinimizeOptions minimize;
  HessianOptions hessian;
  NormalModeOptions modes;
  // Detect the point group of the optimized structure, symmetrize geometry and
  // Hessian (exactly degenerate frequencies) and assign mode species.
  bool use_symmetry = true;
  SymmetryOptions symmetry;
  ModeSpeciesOptions species;
};

// One reported normal mode: where it sits in the harmonic result and its labels.
struct ModeLabel {
  int harmonic_index = 0;       // column of HarmonicResult::mass_weighted_modes
  int number = 0;               // 1-based position in the report (unique per vector)
  int fundamental = 0;          // ν number: shared by the members of a degenerate set
  int degenerate_set = 0;       // 1-based id shared by the members of a set
  int set_size = 1;             // 1, 2, 3, ...
  std::string species;          // ASCII Mulliken label, empty without symmetry
  std::string display_species;  // typographic label
  bool ir_active = false;
  bool raman_active = false;
  bool activity_known = false;  // false when species could not be assigned
};

struct StageTimings {
  double optimize_s = 0.0;
  double hessian_s = 0.0;
  double normal_modes_s = 0.0;
  double symmetry_s = 0.0;
};

struct AnalysisResult {
  Molecule molecule;  // at the analysed (optimized) geometry
  std::string potential_description;
  bool optimized = false;
  MinimizeResult optimization;  // filled when optimized
  HessianResult hessian;
  HarmonicResult harmonic;
  bool symmetry_used = false;
  PointGroupResult point_group;      // when symmetry_used
  ModeSymmetryResult mode_symmetry;  // when symmetry_used
  // Reported modes in report order. Numbering rule (common practice, no source; the
  // convention of Herzberg's tables): by species in the character table's textbook
  // order, then by descending wavenumber; a degenerate set takes one ν number. Linear
  // triatomics follow the custom of calling the bend ν2. Without species: descending
  // wavenumber.
  std::vector<ModeLabel> modes;
  StageTimings timings;
  std::vector<std::string> warnings;
};

// Throws Error for bad input (sizes, options); numerical outcomes (optimization not
// converged, saddle point, imaginary frequencies) are reported in the result.
AnalysisResult analyze_molecule(const Molecule& molecule, const Potential& potential,
                                const AnalysisOptions& options = {});

}  // namespace overtone
