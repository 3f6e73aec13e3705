#pragma once
// The settings of a screen: what is computed for every molecule. Their SHA-256 over a
// canonical JSON text (settings_json) names a run in the store; the same settings find
// the same run again (resume), changed settings make a new run beside the old one.
// Execution choices (workers, time limit, shard, progress) are not settings: they do
// not change a result.
#include <nlohmann/json.hpp>
#include <string>

namespace overtone {

// How far each molecule goes; every stage includes the ones before it.
enum class ScreenStages {
  harmonic,    // optimization, point group, harmonic modes with species and activity
  anharmonic,  // + cubic/quartic constants, VPT2 x matrix, fundamentals, resonance flags
  families,    // + families of nonlinear normal modes with their backbones
};
std::string to_string(ScreenStages stages);
// Throws Error for a name other than harmonic, anharmonic or families.
ScreenStages screen_stages_from_string(const std::string& name);

// Version of what a result holds (tables and their meaning); part of the settings, so
// results computed by a program that stores something else are a different run.
// 2: the resonances table holds the flagged candidates and the symmetry-allowed ones
// within stored_candidate_fraction of their threshold, not every candidate.
// 3: without a stored line list, the polyads explored from combination levels are not
// diagonalized (their count no longer enters the polyad-limit warnings).
inline constexpr int screen_results_version = 3;

// Unflagged resonance candidates are stored when their criterion reaches this fraction of
// the flag threshold (W⁴/|Δ|³ against the Fermi criterion, W against the Darling–Dennison
// coupling): one order of magnitude of near misses.
inline constexpr double stored_candidate_fraction = 0.1;

struct ScreenSettings {
  std::string potential = "MMFF94";  // force-field name or potential file (its content is hashed)
  ScreenStages stages = ScreenStages::anharmonic;
  bool levels = false;  // store the VPT2 line list (overtones, combinations, polyads) too
  // Families: by default only the fundamentals that take part in a flagged resonance are
  // continued (the others are enumerated, not continued); all_families continues every one.
  bool all_families = false;
  double family_quanta = 3.0;                 // continue each family to (quanta + 1) quanta of its own mode
  double family_energy_max_cm1 = 0;           // > 0: to this energy above the minimum instead (cm⁻¹)
  double symmetry_tolerance_angstrom = 0.02;  // largest displacement when symmetrizing (Å)
  // > 0: VPT2 without the modes below this wavenumber (cm⁻¹), as `--vpt2-exclude-below`
  // of analyze: torsions and other floppy modes whose perturbative treatment fails.
  double vpt2_exclude_below_cm1 = 0.0;

  // Throws Error naming the field and its valid range.
  void validate() const;
};

// Canonical JSON of the settings (sorted keys), with the program and results version and,
// for a potential file, the SHA-256 of its content. Throws Error for an unreadable file.
nlohmann::json settings_json(const ScreenSettings& settings);
std::string settings_hash(const nlohmann::json& settings_document);

}  // namespace overtone
