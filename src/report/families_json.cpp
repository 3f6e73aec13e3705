#include "report/families_json.hpp"

#include <cmath>

#include "report/json_values.hpp"

namespace overtone {

namespace {

using nlohmann::json;

std::string phase_text(const PhasedElement& element) {
  if (element.numerator == 0) return "0";
  return std::to_string(element.numerator) + "/" + std::to_string(element.denominator);
}

// Operations by their ASCII names (docs/symmetry.md, "Labels"), as every JSON label.
json phased_elements(const std::vector<PhasedElement>& elements, const PointGroup& group) {
  json list = json::array();
  for (const PhasedElement& element : elements)
    list.push_back({{"operation", group.operations.at(static_cast<std::size_t>(element.element)).ascii_name},
                    {"phase", phase_text(element)}});
  return list;
}

json threats_to_json(const std::vector<ResonanceThreat>& threats, const std::vector<ModeLabel>& modes) {
  json list = json::array();
  for (const ResonanceThreat& threat : threats)
    list.push_back(
        {{"partner_modes", threat.partner_mode_numbers},
         {"partner_fundamentals", fundamentals_of_mode_numbers(modes, threat.partner_mode_numbers)},
         {"partner_species", threat.partner_species},
         {"order", threat.order},
         {"detuning_cm1", threat.detuning_cm1},
         {"coupling_dimension", threat.coupling_dimension},
         {"symmetry_allowed", threat.symmetry_allowed}});
  return list;
}

json point_to_json(const OrbitPoint& point) {
  return {{"energy_cm1", point.energy_cm1},
          {"frequency_cm1", point.frequency_cm1},
          {"period_fs", point.period_fs},
          {"action_hbar", point.action_hbar},
          {"amplitude_angstrom", number_or_null(point.amplitude_angstrom)},
          {"amplitude_normal_coordinate", point.amplitude},
          {"floquet_moduli", point.floquet_moduli},
          {"stable", point.stable},
          {"closure_error", point.closure_error},
          {"energy_drift", point.energy_drift},
          {"symmetry_residual", point.symmetry_residual}};
}

json event_to_json(const FamilyEvent& event) {
  json entry = {{"kind", to_string(event.kind)},
                {"point_index", event.point_index},
                {"energy_cm1", event.energy_cm1},
                {"message", event.message}};
  if (event.kind == FamilyEventKind::resonance_encounter) {
    entry["partner_family"] = event.partner_family + 1;
    entry["ratio"] = std::to_string(event.ratio_numerator) + ":" + std::to_string(event.ratio_denominator);
  }
  return entry;
}

json family_to_json(const AnalysisResult& analysis, const FamilyResult& family, int number) {
  const FamilyType& type = family.type;
  const PointGroup& group = analysis.point_group.group;
  json entry = {{"family", number},
                {"mode_numbers", type.mode_numbers},
                {"fundamentals", fundamentals_of_mode_numbers(analysis.modes, type.mode_numbers)},
                {"species", type.species},
                {"copies", type.copies},
                {"continuous_copies", type.continuous_copies},
                {"time_reversal", to_string(type.time_reversal)},
                {"standing", type.standing},
                {"ellipticity", type.ellipticity},
                {"description", type.description},
                {"subgroup", phased_elements(type.subgroup, group)},
                {"generators", phased_elements(type.generators, group)},
                {"resonance_threats", threats_to_json(type.resonance_threats, analysis.modes)},
                {"continued", family.continued}};
  if (family.parent_family >= 0) {
    entry["born_from_family"] = family.parent_family + 1;
    entry["birth_energy_cm1"] = family.birth_energy_cm1;
    entry["birth_kind"] = to_string(family.birth_kind);
    entry["generation"] = family.generation;
  } else {
    entry["born_from_family"] = nullptr;
  }
  if (!family.resonance_note.empty()) {
    entry["resonance_note"] = family.resonance_note;
    entry["resonance_shift_coefficient"] = family.resonance_shift_coefficient;
  }
  json points = json::array();
  json events = json::array();
  json ladder = json::array();
  if (family.continued) {
    const ContinuationResult& backbone = family.backbone;
    entry["energy_max_cm1"] = family.energy_max_cm1;
    entry["status"] = to_string(backbone.status);
    entry["message"] = backbone.message;
    for (std::size_t k = 0; k < backbone.points.size(); ++k) {
      points.push_back(point_to_json(backbone.points[k]));
      if (k < family.bond_amplitude_ratio.size())
        points.back()["bond_amplitude_ratio"] = number_or_null(family.bond_amplitude_ratio[k]);
    }
    for (const FamilyEvent& event : backbone.events) events.push_back(event_to_json(event));
    for (const LadderLevel& level : backbone.ladder)
      ladder.push_back({{"n", level.n},
                        {"transition_cm1", level.transition_cm1},
                        {"harmonic_cm1", level.harmonic_transition_cm1},
                        {"energy_cm1", level.energy_cm1},
                        {"refined", level.refined}});
    entry["cost"] = {{"newton_iterations", backbone.newton_iterations},
                     {"variational_integrations", backbone.variational_integrations},
                     {"orbit_integrations", backbone.orbit_integrations},
                     {"gradient_evaluations", backbone.gradient_evaluations},
                     {"seconds", backbone.seconds}};
    entry["warnings"] = backbone.warnings;
  }
  entry["points"] = points;
  entry["events"] = events;
  entry["ladder"] = ladder;
  return entry;
}

json orbit_count_to_json(const OrbitCount& count) {
  json bands = json::array();
  for (const OrbitCountBand& band : count.bands)
    bands.push_back({{"energy_low_cm1", band.energy_low_cm1},
                     {"energy_high_cm1", band.energy_high_cm1},
                     {"families_present", band.families_present},
                     {"fewest_orbits", band.fewest},
                     {"fewest_at_cm1", band.fewest_energy_cm1},
                     {"most_orbits", band.most},
                     {"continuous_families", band.continuous_families},
                     {"meets_lower_bound", band.meets_lower_bound}});
  return {{"degrees_of_freedom", count.degrees_of_freedom}, {"complete", count.complete}, {"bands", bands}};
}

}  // namespace

nlohmann::json families_to_json(const AnalysisResult& analysis, const FamiliesResult& families) {
  json list = json::array();
  for (std::size_t index = 0; index < families.families.size(); ++index)
    list.push_back(family_to_json(analysis, families.families[index], static_cast<int>(index) + 1));
  json summary = {{"system", families.system_description},
                  {"notes", families.notes},
                  {"warnings", families.warnings},
                  {"points", families.points},
                  {"newton_iterations", families.newton_iterations},
                  {"variational_integrations", families.variational_integrations},
                  {"orbit_integrations", families.orbit_integrations},
                  {"gradient_evaluations", families.gradient_evaluations},
                  {"seconds", families.seconds},
                  {"threads_used", families.threads_used},
                  {"left_out_mode_numbers", families.left_out_mode_numbers},
                  {"selection_note", families.selection_note},
                  {"birth_failures", families.birth_failures},
                  {"birth_probes", families.birth_probes},
                  {"birth_seconds", families.birth_seconds},
                  {"orbit_count", orbit_count_to_json(families.orbit_count)}};
  return {{"families", list}, {"families_summary", summary}};
}

}  // namespace overtone
