#pragma once
// The main job as library calls: analyze_molecule optimizes the structure on the chosen
// potential, finds the point group and does the harmonic analysis; analyze_anharmonic
// and analyze_families take its result further. The command line only formats what
// these return.
#include <string>
#include <vector>

#include "anharmonic/force_constants.hpp"
#include "anharmonic/vpt2.hpp"
#include "core/molecule.hpp"
#include "core/progress.hpp"
#include "families/families.hpp"
#include "harmonic/harmonic.hpp"
#include "molecule/conformer_starts.hpp"
#include "optimize/minimize.hpp"
#include "pipeline/mode_numbering.hpp"
#include "potential/potential.hpp"
#include "symmetry/detect_point_group.hpp"
#include "symmetry/mode_symmetry.hpp"

namespace overtone {

// A quick conformer search on the general force fields (Open Babel's; a valence force
// field or a Taylor expansion describes one well and is never searched):
//   off:          none;
//   note:         the input is optimized and analysed as always; starts from
//                 generate_conformer_starts are relaxed, and when one ends lower than
//                 the analysed minimum by more than conformer_energy_margin_kcal_mol a
//                 warning says that the analysed structure is a local minimum and by how
//                 much the best found lies below it;
//   analyse_best: the lowest structure found (the input's minimum or a relaxed start) is
//                 optimized fully and analysed.
enum class ConformerSearch { off, note, analyse_best };

struct AnalysisOptions {
  bool optimize = true;  // false: analyse the input geometry as given
  MinimizeOptions minimize;
  ConformerSearch conformers = ConformerSearch::note;
  ConformerStartOptions conformer_starts;
  // Conformers closer in energy than this (kcal/mol, ≈35 cm⁻¹) are not reported: general
  // force fields do not order conformers that close reliably.
  double conformer_energy_margin_kcal_mol = 0.1;
  HessianOptions hessian;
  // modes.linearity_tolerance governs the whole run: it replaces the Hessian's and the
  // optimizer's own (options_for_steps).
  NormalModeOptions modes;
  // Detect the point group of the optimized structure, symmetrize geometry and
  // Hessian (exactly degenerate frequencies) and assign mode species.
  bool use_symmetry = true;
  SymmetryOptions symmetry;
  ModeSpeciesOptions species;
  // Told when each step starts (stage "optimize", "conformer search", "Hessian", "normal
  // modes"; no counts: these steps are short next to the later stages).
  ProgressCallback progress;

  // Throws Error naming the field that is out of range, here or in the options held.
  void validate() const;
};

struct StageTimings {
  double optimize_s = 0.0;
  double hessian_s = 0.0;
  double normal_modes_s = 0.0;
  double symmetry_s = 0.0;
};

struct ConformerFindings {
  bool searched = false;
  int starts = 0;                         // starting structures generated
  int relaxed = 0;                        // of them, relaxed to the same stereoisomer without trouble
  double input_minimum_kcal_mol = 0.0;    // energy of the minimum reached from the input
  double best_kcal_mol = 0.0;             // lowest energy found (input minimum included)
  std::string best_origin = "the input";  // where the lowest structure came from
  // Energy of the analysed structure above the lowest found (kcal/mol); 0 when it is
  // the lowest or within the margin.
  double analysed_above_best_kcal_mol = 0.0;
  bool analysed_lowest_found = true;  // false: a lower conformer was found and not analysed
};

// Whether the analysed structure is a minimum the later stages can expand about.
// not_converged: the optimization stopped short of its criterion; not_a_minimum: it ended on
// a saddle point, or the harmonic analysis found an imaginary mode beyond
// NormalModeOptions::imaginary_warning_cm1. The harmonic results are still those of the
// structure reached.
enum class AnalysisStatus { ok, not_converged, not_a_minimum };
std::string to_string(AnalysisStatus status);

struct AnalysisResult {
  AnalysisStatus status = AnalysisStatus::ok;
  std::string message;  // the optimization's and the harmonic analysis's verdicts
  Molecule molecule;    // at the analysed (optimized) geometry
  std::string potential_description;
  bool optimized = false;
  MinimizeResult optimization;  // filled when optimized
  ConformerFindings conformers;
  HessianResult hessian;
  HarmonicResult harmonic;
  bool symmetry_used = false;
  PointGroupResult point_group;      // when symmetry_used
  ModeSymmetryResult mode_symmetry;  // when symmetry_used
  // Reported modes in report order (numbering rule: pipeline/mode_numbering.hpp).
  std::vector<ModeLabel> modes;
  StageTimings timings;
  // Of every step and the potential, a repeated warning once with its count
  // (merge_repeated_warnings).
  std::vector<std::string> warnings;

  bool ok() const { return status == AnalysisStatus::ok; }
};

// The options each step of analyze_molecule runs with: these, with the one linearity
// tolerance of the run (modes.linearity_tolerance) in the optimizer's and the Hessian's
// options as well, so that every step agrees on which molecules are linear.
AnalysisOptions options_for_steps(const AnalysisOptions& options);

// Throws Error for bad input (sizes, options); numerical outcomes (optimization not
// converged, saddle point, imaginary frequencies) are reported in the result.
AnalysisResult analyze_molecule(const Molecule& molecule, const Potential& potential,
                                const AnalysisOptions& options = {});

// Harmonic index of each reported mode, in report order (AnalysisResult::modes).
inline std::vector<int> report_mode_order(const AnalysisResult& analysis) {
  return report_mode_order(analysis.modes);
}

// Report numbers of the modes of the given fundamentals (ν numbers), for
// FamiliesOptions::mode_numbers. Throws Error naming a ν number the molecule lacks.
inline std::vector<int> mode_numbers_of_fundamentals(const AnalysisResult& analysis,
                                                     const std::vector<int>& fundamentals) {
  return mode_numbers_of_fundamentals(analysis.modes, fundamentals);
}

struct AnharmonicOptions {
  ForceConstantOptions force_constants;
  Vpt2Options vpt2;
  // Given to the force constants and VPT2 where their own progress fields are empty.
  ProgressCallback progress;

  void validate() const;  // throws Error naming the field that is out of range in the options held
};

// Why the expansion did not run (the message says it in the user's words): the optimization
// did not converge (not_converged); a saddle point, an imaginary or too soft mode, or force
// constants refused for the same reason (not_a_minimum); a molecule without vibrations
// (no_modes). VPT2 has not run then; only refused force constants leave theirs filled.
enum class AnharmonicStatus { ok, not_converged, not_a_minimum, no_modes };
std::string to_string(AnharmonicStatus status);

struct AnharmonicResult {
  AnharmonicStatus status = AnharmonicStatus::ok;
  std::string message;
  // The harmonic result the constants refer to: the analysis's, with degenerate modes
  // rotated into symmetry-adapted partners when the point group is known.
  HarmonicResult harmonic;
  ForceConstantResult force_constants;
  Vpt2Result vpt2;
  std::vector<int> set_numbers;  // ν number of each Vpt2Result::sets entry (report numbering)
  double force_constants_s = 0.0;
  double vpt2_s = 0.0;
  // Of the force constants and VPT2, a repeated warning once with its count.
  std::vector<std::string> warnings;

  bool ok() const { return status == AnharmonicStatus::ok; }
};

// Cubic and quartic force constants at the analysed minimum, then VPT2 with resonances.
// A structure that is not a minimum (optimization not converged, imaginary or near-zero
// frequencies) is a status with the reason; throws Error for invalid options.
AnharmonicResult analyze_anharmonic(const AnalysisResult& analysis, const Potential& potential,
                                    const AnharmonicOptions& options = {});

// The symmetry-predicted families of nonlinear normal modes of every mode (or of
// options.mode_numbers, report numbering) and their backbone curves. A structure that is
// not a minimum (also along a mode, by the amplitude scan) or an analysis without the point
// group is a status with the reason; throws Error for invalid options. A family whose
// continuation stops reports why in its result.
FamiliesResult analyze_families(const AnalysisResult& analysis, const Potential& potential,
                                const FamiliesOptions& options);

// The mode numbers (report numbering) of every set taking part in a resonance the
// perturbative stage flagged whose highest fundamental lies at or above upper_min_cm1
// (harmonic): FamiliesOptions::resonance_mode_numbers, so that the default selection for
// large molecules keeps the families of the resonances that split measured bands (with
// upper_min_cm1 = FamiliesOptions::selection_min_cm1: the partners of the stretches).
std::vector<int> flagged_resonance_mode_numbers(const AnalysisResult& analysis,
                                                const AnharmonicResult& anharmonic,
                                                double upper_min_cm1 = 0.0);

// A Fermi resonance 2ν_lower ≈ ν_upper as the two stages see it: the perturbative
// symmetry rule (Γ_upper in the symmetric square of Γ_lower) against the families'
// per-family rule (the second harmonic of the family's motion has a component in the
// upper set). The two should agree wherever both list the pair; a pair inside only one
// stage's frequency window is reported with the other side marked absent.
struct ResonanceCrossCheck {
  int lower_fundamental = 0;  // ν numbers
  int upper_fundamental = 0;
  double gap_cm1 = 0.0;  // 2ω_lower − ω_upper (harmonic)
  bool listed_by_perturbative = false;
  bool perturbative_allowed = false;
  bool perturbative_flagged = false;  // strong enough to be treated in a polyad
  bool listed_by_families = false;
  int families_of_lower = 0;  // family types of the lower set
  int families_allowed = 0;   // of those, how many the symmetry lets drive the upper set
  bool compared = false;      // listed by both
  bool agree = true;          // compared and perturbative_allowed == (families_allowed > 0)
};

std::vector<ResonanceCrossCheck> cross_check_resonances(const AnalysisResult& analysis,
                                                        const AnharmonicResult& anharmonic,
                                                        const FamiliesResult& families);

}  // namespace overtone
