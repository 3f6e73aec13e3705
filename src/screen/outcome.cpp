#include "screen/outcome.hpp"

#include "core/error.hpp"

namespace nlohmann {

// Absent values travel as null.
template <typename T>
struct adl_serializer<std::optional<T>> {
  static void to_json(json& document, const std::optional<T>& value) {
    if (value)
      document = *value;
    else
      document = nullptr;
  }
  static void from_json(const json& document, std::optional<T>& value) {
    if (document.is_null())
      value.reset();
    else
      value = document.get<T>();
  }
};

}  // namespace nlohmann

namespace overtone {

NLOHMANN_DEFINE_TYPE_NON_INTRUSIVE_WITH_DEFAULT(ScreenModeRow, mode, fundamental, species, harmonic_cm1,
                                                ir_active, raman_active, reduced_mass_da,
                                                stiffness_aj_per_angstrom2, vpt2_cm1, corrected_cm1,
                                                x_diagonal_cm1, parent_mode, shift_cm1, labelled_share)
NLOHMANN_DEFINE_TYPE_NON_INTRUSIVE_WITH_DEFAULT(ScreenResonanceRow, resonance, kind, label, first, second,
                                                partner, lower_label, upper_label, partner_species,
                                                lower_harmonic_cm1, upper_harmonic_cm1, band_cm1, gap_cm1,
                                                coupling_cm1, criterion_value, symmetry_allowed, flagged)
NLOHMANN_DEFINE_TYPE_NON_INTRUSIVE_WITH_DEFAULT(ScreenLevelRow, level, kind, label, species, sublevel,
                                                degeneracy, ir_active, raman_active, harmonic_cm1, vpt2_cm1,
                                                corrected_cm1, polyad)
NLOHMANN_DEFINE_TYPE_NON_INTRUSIVE_WITH_DEFAULT(ScreenFamilyRow, family, fundamental, species, description,
                                                copies, standing, continued, status, message, points,
                                                energy_max_cm1, first_frequency_cm1, last_frequency_cm1,
                                                last_energy_cm1, events, allowed_threats)
NLOHMANN_DEFINE_TYPE_NON_INTRUSIVE_WITH_DEFAULT(VariantOutcome, variant, status, failed_stage, message,
                                                labelled_atoms, point_group, optimization_converged,
                                                rms_gradient, energy_kcal_mol, imaginary_modes, lowest_cm1,
                                                warnings, seconds, modes, resonances, levels, families,
                                                x_matrix_cm1)
NLOHMANN_DEFINE_TYPE_NON_INTRUSIVE_WITH_DEFAULT(MoleculeOutcome, formula, atom_count, variants)

nlohmann::json outcome_to_json(const MoleculeOutcome& outcome) { return outcome; }

MoleculeOutcome outcome_from_json(const nlohmann::json& document) {
  try {
    return document.get<MoleculeOutcome>();
  } catch (const nlohmann::json::exception& error) {
    throw Error(std::string("a worker sent a malformed result: ") + error.what());
  }
}

MoleculeOutcome failed_outcome(const std::vector<std::string>& variants, const std::string& stage,
                               const std::string& message) {
  MoleculeOutcome outcome;
  for (const std::string& variant : variants) {
    VariantOutcome failed;
    failed.variant = variant;
    failed.status = status_failed;
    failed.failed_stage = stage;
    failed.message = message;
    outcome.variants.push_back(std::move(failed));
  }
  return outcome;
}

}  // namespace overtone
