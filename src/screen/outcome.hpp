#pragma once
// What screening one molecule gives: for the parent and each isotope variant either the
// rows of the store's tables (docs/screening.md, "Schema") or the stage that failed and
// why. Worker processes send it to the process that writes the store as JSON
// (outcome_to_json / outcome_from_json); doubles are written with 17 significant digits,
// so the numbers arrive bit for bit.
#include <nlohmann/json.hpp>
#include <optional>
#include <string>
#include <vector>

namespace overtone {

// Status of one variant of one molecule in a run.
inline constexpr const char* status_done = "done";
inline constexpr const char* status_failed = "failed";
inline constexpr const char* status_not_applicable = "not_applicable";  // the isotope rule matches nothing

// Stage names used in failures.
namespace screen_stage {
inline constexpr const char* read = "read";
inline constexpr const char* isotope_rule = "isotope-rule";
inline constexpr const char* potential = "potential";
inline constexpr const char* optimize = "optimize";
inline constexpr const char* harmonic = "harmonic";
inline constexpr const char* anharmonic = "anharmonic";
inline constexpr const char* families = "families";
}  // namespace screen_stage

struct ScreenModeRow {
  int mode = 0;                   // mode number (report order)
  int fundamental = 0;            // ν number
  std::string species;            // ASCII Mulliken label; empty without symmetry
  double harmonic_cm1 = 0.0;      // signed: negative is imaginary
  std::optional<bool> ir_active;  // empty when the species is unknown
  std::optional<bool> raman_active;
  double reduced_mass_da = 0.0;
  double stiffness_aj_per_angstrom2 = 0.0;
  std::optional<double> vpt2_cm1;        // VPT2 fundamental (deperturbed), anharmonic stage
  std::optional<double> corrected_cm1;   // after its resonance polyad, when in one
  std::optional<double> x_diagonal_cm1;  // x_ii (component form, Coriolis included)
  std::optional<int> parent_mode;        // variants: the parent's mode of largest overlap
  std::optional<double> shift_cm1;       // variants: harmonic_cm1 − that parent mode's
  std::optional<double> labelled_share;  // variants: kinetic-energy share of the labelled atoms
};

struct ScreenResonanceRow {
  int resonance = 0;  // 1-based, in the order of the anharmonic stage
  std::string kind;   // overtone-fundamental, combination-fundamental, overtone-overtone
  std::string label;  // e.g. "2v3 / v1"
  int first = 0;      // ν numbers: 2ν_first or ν_first + ν_second ↔ ν_partner (or 2ν_partner)
  int second = 0;
  int partner = 0;
  std::string lower_label;  // "2v3", "v2+v5"
  std::string upper_label;  // "v1", "2v4"
  std::string partner_species;
  double lower_harmonic_cm1 = 0.0;  // 2ω_first or ω_first + ω_second
  double upper_harmonic_cm1 = 0.0;  // ω_partner (2ω_partner for overtone-overtone)
  std::optional<double> band_cm1;   // VPT2 position of the upper level (deperturbed)
  double gap_cm1 = 0.0;
  double coupling_cm1 = 0.0;
  double criterion_value = 0.0;  // Fermi: W⁴/|Δ|³ (cm⁻¹); overtone-overtone: W (cm⁻¹)
  bool symmetry_allowed = false;
  bool flagged = false;
};

struct ScreenLevelRow {
  int level = 0;  // 1-based, line-list order
  std::string kind;
  std::string label;
  std::string species;
  int sublevel = 1;
  int degeneracy = 1;
  std::optional<bool> ir_active;
  std::optional<bool> raman_active;
  double harmonic_cm1 = 0.0;
  double vpt2_cm1 = 0.0;
  std::optional<double> corrected_cm1;
  std::optional<int> polyad;  // 1-based
};

struct ScreenFamilyRow {
  int family = 0;  // 1-based, in the order of the families stage
  int fundamental = 0;
  std::string species;
  std::string description;
  int copies = 1;
  bool standing = true;
  bool continued = false;
  std::string status;  // continuation status; empty when not continued
  std::string message;
  int points = 0;
  double energy_max_cm1 = 0.0;
  std::optional<double> first_frequency_cm1;  // backbone at its lowest and highest energy
  std::optional<double> last_frequency_cm1;
  std::optional<double> last_energy_cm1;
  int events = 0;
  int allowed_threats = 0;  // symmetry-allowed resonance threats
};

struct VariantOutcome {
  std::string variant;  // "" for the parent, else the isotope rule's text
  std::string status = status_done;
  std::string failed_stage;
  std::string message;
  std::string labelled_atoms;  // variants: "3=13 7=18" (atom number = mass number)
  std::string point_group;
  std::optional<bool> optimization_converged;
  std::optional<double> rms_gradient;  // kcal/mol/Å
  std::optional<double> energy_kcal_mol;
  int imaginary_modes = 0;
  std::optional<double> lowest_cm1;
  std::vector<std::string> warnings;
  double seconds = 0.0;
  std::vector<ScreenModeRow> modes;
  std::vector<ScreenResonanceRow> resonances;
  std::vector<ScreenLevelRow> levels;
  std::vector<ScreenFamilyRow> families;
  std::vector<std::vector<double>> x_matrix_cm1;  // report order; empty before the anharmonic stage
};

struct MoleculeOutcome {
  std::string formula;  // empty when the record could not be read
  int atom_count = 0;
  std::vector<VariantOutcome> variants;
};

nlohmann::json outcome_to_json(const MoleculeOutcome& outcome);
// Throws Error for a document that is not an outcome.
MoleculeOutcome outcome_from_json(const nlohmann::json& document);

// Every requested variant failed at one stage with one message (a record that cannot be
// read, a worker that crashed or ran out of time).
MoleculeOutcome failed_outcome(const std::vector<std::string>& variants, const std::string& stage,
                               const std::string& message);

}  // namespace overtone
