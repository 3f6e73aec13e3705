#pragma once
// The families stage as one call: enumerate the symmetry-predicted families of every
// block of normal coordinates, continue each in energy, and flag resonance encounters
// between families. Works for any VibrationalSystem with a CoordinateSymmetry; the
// molecular entry point builds both from the harmonic and symmetry stages.
//
// Text and CSV renderings: families_report.hpp. Field reference: docs/families.md.
#include <string>
#include <vector>

#include "core/progress.hpp"
#include "families/branch_switching.hpp"
#include "families/family_types.hpp"
#include "families/molecular_system.hpp"
#include "families/orbit_count.hpp"
#include "families/periodic_orbits.hpp"
#include "families/resonant_seeds.hpp"
#include "families/vibrational_system.hpp"

namespace overtone {

struct FamiliesOptions {
  // Energy range of every family, measured from the minimum. Exactly one of the two:
  // energy_max_cm1 > 0: that energy (cm⁻¹ via the system's UnitConventions);
  // quanta > 0: (quanta + 1)·ħω of the family's own block, enough for the semiclassical
  // ladder to reach level `quanta` unless the mode hardens strongly.
  double energy_max_cm1 = 0.0;
  double quanta = 0.0;
  // Continue only the families of blocks containing one of these mode numbers. The other
  // families are still enumerated and reported without backbones. Empty: the default
  // selection below, or every block when all_modes is set.
  std::vector<int> mode_numbers;
  bool all_modes = false;
  // Default selection. Systems with at most all_modes_up_to coordinates: every block.
  // Larger ones: the blocks holding one of resonance_mode_numbers (the caller's flagged
  // resonances, e.g. the perturbative stage's) and the blocks whose harmonic wavenumber is
  // at least selection_min_cm1 (the stretches whose overtones are measured), except the
  // resonant blocks below selection_floor_cm1. What is left out is listed in
  // FamiliesResult::left_out_mode_numbers.
  int all_modes_up_to = 36;
  std::vector<int> resonance_mode_numbers;
  double selection_min_cm1 = 1500.0;
  // Torsions and other floppy modes: one period of theirs spans ω_max/ω steps of the fastest
  // motion (a 30 cm⁻¹ torsion costs a hundred times a C–H stretch's family), and their
  // quartic surface is the least trustworthy part of a force field. In a drug-sized
  // molecule nearly every one of them takes part in some flagged combination resonance.
  double selection_floor_cm1 = 400.0;
  bool continue_families = true;  // false: enumeration and resonance threats only
  EnumerationOptions enumeration;
  ContinuationOptions continuation;  // energy_max is set per family from the fields above
  // Resonance encounters between two continued families: their frequency ratio passes
  // p:q with 1 ≤ p, q ≤ encounter_max_ratio (coprime) at equal energy.
  int encounter_max_ratio = 3;
  // Threads that continue families at once (each family on one thread; the results do
  // not depend on the number). 0: one per core. Potentials that cannot be evaluated
  // from several threads at once (Potential::supports_concurrent_evaluation) run on one.
  int threads = 0;
  // Families born where a continued family period-doubles or passes a symmetry-breaking
  // branch point (branch_switching.hpp); continued to their parent's energy_max.
  BranchSwitchingOptions branches;
  // Near an exact 1:2 resonance the lower mode's family is replaced by the two mixed
  // families of the normal form (resonant_seeds.hpp).
  ResonantSeedOptions resonant_seeds;
  // Bands of the orbit count per energy (FamiliesResult::orbit_count).
  OrbitCountOptions orbit_count;
  // Told after each family and at accepted points (stage "families", done/total families).
  ProgressCallback progress;

  // Throws Error naming the field when a value is out of range, in these options or the
  // ones they hold (continuation's energy_max, set per family, is checked per family).
  void validate() const;
};

struct FamilyResult {
  FamilyType type;
  bool continued = false;   // false: not selected, or continue_families off
  double energy_max = 0.0;  // system units, the range it was continued to
  double energy_max_cm1 = 0.0;
  ContinuationResult backbone;  // empty unless continued
  // A family born at a bifurcation of another: that family's index in
  // FamiliesResult::families and the birth energy; −1 for families from the minimum.
  int parent_family = -1;
  FamilyEventKind birth_kind = FamilyEventKind::period_doubling;  // period_doubling or branch_point
  double birth_energy = 0.0;                                      // system units
  double birth_energy_cm1 = 0.0;
  int generation = 0;  // 0 from the minimum, 1 born of such a family, ...
  // Molecules, born families: per backbone point, among the bonds equivalent to the one
  // that stretches most, the smallest stretch amplitude over the largest (1: they stretch
  // alike, as in a normal mode; → 0: one bond alone, a local mode; bond_amplitudes.hpp).
  // Empty otherwise.
  std::vector<double> bond_amplitude_ratio;
  // A mixed family of a 1:2 resonance seeded from the normal form: which family it
  // replaces and why, and its predicted frequency shift / √E at exact resonance (system
  // units); empty and 0 otherwise.
  std::string resonance_note;
  double resonance_shift_coefficient = 0.0;
};

// Why the families were not computed (the message says it in the user's words), for the
// callers that check the expansion point first (the pipeline's analyze_families): the
// optimization did not converge (not_converged); a saddle point or a mode too soft or
// falling along its coordinate (not_a_minimum); a molecule without vibrations (no_modes);
// an analysis without the point group (no_point_group). Nothing else is filled then.
enum class FamiliesStatus { ok, not_converged, not_a_minimum, no_modes, no_point_group };
std::string to_string(FamiliesStatus status);

struct FamiliesResult {
  FamiliesStatus status = FamiliesStatus::ok;
  std::string message;  // ok: how many families were found and continued
  std::string system_description;
  UnitConventions units;
  std::vector<ModeBlock> blocks;
  std::vector<FamilyResult> families;  // by block (ascending frequency), then larger subgroups first
  std::vector<std::string> notes;      // model assumptions the report must state
  std::vector<std::string> warnings;
  // Modes whose families the default selection left out (report numbers, ascending), and
  // one line saying why and how to get them; both empty when nothing was left out.
  std::vector<int> left_out_mode_numbers;
  std::string selection_note;
  // Bifurcations where no family could be born (event, reason), one line each.
  std::vector<std::string> birth_failures;
  // Branch switching's own cost: the orbits solved to locate the bifurcations (the born
  // families' continuation is counted with theirs).
  int birth_probes = 0;
  double birth_seconds = 0.0;
  // Distinct periodic orbits per energy band against the degrees of freedom
  // (orbit_count.hpp); a band below the bound adds a warning.
  OrbitCount orbit_count;
  int threads_used = 1;  // threads that continued families
  // Totals over all continued families:
  int points = 0;
  int newton_iterations = 0;
  int variational_integrations = 0;
  int orbit_integrations = 0;
  std::size_t gradient_evaluations = 0;
  std::size_t hessian_evaluations = 0;
  std::size_t hessian_vector_products = 0;
  double seconds = 0.0;

  bool ok() const { return status == FamiliesStatus::ok; }
};

// Throws Error for invalid options or inconsistent system, blocks and symmetry (see
// enumerate_families and continue_family).
FamiliesResult compute_families(const VibrationalSystem& system, const std::vector<ModeBlock>& blocks,
                                const CoordinateSymmetry& symmetry, const FamiliesOptions& options);

// Molecules: the system of MolecularVibrationalSystem; the mode symmetry of the species
// assignment on the harmonic modes (mode_symmetry), from which come the symmetry of
// molecular_coordinate_symmetry and the blocks of molecular_mode_blocks (species and
// report numbers from mode_order, see there). Adds the note that rotation–vibration
// coupling is neglected.
FamiliesResult compute_molecular_families(const Potential& potential, const HarmonicResult& harmonic,
                                          const PointGroupResult& group, const ModeSymmetryResult& species,
                                          const std::vector<int>& mode_order, const FamiliesOptions& options,
                                          const MolecularSystemOptions& system_options = {});

}  // namespace overtone
