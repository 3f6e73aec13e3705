#include "report/anharmonic_json.hpp"

#include <algorithm>
#include <cmath>

#include "report/anharmonic_report.hpp"
#include "report/json_values.hpp"

namespace overtone {

namespace {

using nlohmann::json;

json counts_to_json(const EvaluationCounts& counts) {
  return {{"energies", counts.energies}, {"gradients", counts.gradients}, {"hessians", counts.hessians}};
}

json sorted_indices(const std::vector<int>& number_of_mode, std::initializer_list<int> indices) {
  std::vector<int> numbers;
  for (const int index : indices) numbers.push_back(number_of_mode[static_cast<std::size_t>(index)]);
  std::sort(numbers.begin(), numbers.end());
  return numbers;
}

json force_constants_to_json(const AnharmonicResult& anharmonic, const std::vector<int>& number_of_mode) {
  const ForceConstantResult& result = anharmonic.force_constants;
  json cubic = json::array();
  for (const auto& entry : result.constants.cubic_entries(0.0))
    cubic.push_back(
        {{"modes", sorted_indices(number_of_mode, {entry.i, entry.j, entry.k})}, {"value_cm1", entry.value}});
  json quartic = json::array();
  for (const auto& entry : result.constants.quartic_entries(0.0))
    quartic.push_back({{"modes", sorted_indices(number_of_mode, {entry.i, entry.j, entry.k, entry.l})},
                       {"value_cm1", entry.value}});
  return {{"convention",
           "V = 1/2 sum w_i q_i^2 + 1/6 sum phi_ijk q_i q_j q_k + 1/24 sum phi_ijkl q_i q_j q_k q_l, "
           "unrestricted sums over dimensionless normal coordinates, cm-1"},
          {"method", result.method},
          {"step", result.step},
          {"quartic_scope", result.full_quartic ? "all" : "semi-diagonal (iijj, iiij, iiii and ijkk)"},
          {"symmetry_used", result.symmetry_used},
          {"point_group", result.symmetry.point_group()},
          {"permutation_spread_cm1", result.permutation_spread_cm1},
          {"symmetry_adjustment_cm1", result.symmetry_adjustment_cm1},
          {"forbidden_cubic", result.forbidden_cubic},
          {"forbidden_quartic", result.forbidden_quartic},
          {"displaced_hessians", result.displaced_hessians},
          {"hessians_from_symmetry", result.hessians_from_symmetry},
          {"evaluations", counts_to_json(result.evaluations)},
          {"evaluations_without_symmetry", counts_to_json(result.naive_evaluations)},
          {"seconds", anharmonic.force_constants_s},
          {"warnings", result.warnings},
          {"cubic", std::move(cubic)},
          {"quartic", std::move(quartic)}};
}

// A per-mode matrix (harmonic order) rearranged into report order.
json matrix_in_report_order(const Eigen::MatrixXd& matrix, const AnalysisResult& analysis) {
  json rows = json::array();
  for (const ModeLabel& row : analysis.modes) {
    json values = json::array();
    for (const ModeLabel& column : analysis.modes)
      values.push_back(matrix(row.harmonic_index, column.harmonic_index));
    rows.push_back(values);
  }
  return rows;
}

json anharmonicity_to_json(const AnalysisResult& analysis, const AnharmonicResult& anharmonic) {
  const Vpt2Result& vpt2 = anharmonic.vpt2;
  json mode_numbers = json::array();
  for (const ModeLabel& mode : analysis.modes) mode_numbers.push_back(mode.number);
  json degenerate = json::array();
  for (const DegenerateSetConstants& constants : vpt2.degenerate_constants)
    degenerate.push_back({{"fundamental", anharmonic.set_numbers[static_cast<std::size_t>(constants.set)]},
                          {"x_cm1", constants.x_cm1},
                          {"g_cm1", constants.g_cm1}});
  return {{"form",
           "component form: E(n) - E(0) = sum_i w_i n_i + sum_{i<=j} x_ij [(n_i + 1/2)(n_j + 1/2) - 1/4]; "
           "rows and columns are the modes in report order (mode_numbers)"},
          {"mode_numbers", mode_numbers},
          {"x_cm1", matrix_in_report_order(vpt2.x_cm1, analysis)},
          {"x_vibrational_cm1", matrix_in_report_order(vpt2.x_vibrational_cm1, analysis)},
          {"x_coriolis_cm1", matrix_in_report_order(vpt2.x_coriolis_cm1, analysis)},
          {"x_vibrational_undeperturbed_cm1", matrix_in_report_order(vpt2.x_vibrational_plain_cm1, analysis)},
          {"degenerate_sets", degenerate},
          {"rotational_constants_cm1",
           {vpt2.rotational_constants_cm1[0], vpt2.rotational_constants_cm1[1],
            vpt2.rotational_constants_cm1[2]}}};
}

// Quanta indexed by ν number − 1.
json quanta_by_fundamental(const std::vector<int>& set_quanta, const std::vector<int>& set_numbers) {
  std::vector<int> quanta(set_quanta.size(), 0);
  for (std::size_t set = 0; set < set_quanta.size(); ++set)
    quanta[static_cast<std::size_t>(set_numbers[set] - 1)] = set_quanta[set];
  return quanta;
}

// [[ν number, quanta], ...] in ascending ν number: a component of a large polyad has a few
// quanta whatever the number of modes, and a dense list per component would make the
// document grow as the cube of the mode count.
json sparse_quanta_by_fundamental(const SparseQuanta& quanta, const std::vector<int>& set_numbers) {
  std::vector<std::pair<int, int>> pairs;
  for (const auto& [set, count] : quanta)
    pairs.emplace_back(set_numbers[static_cast<std::size_t>(set)], count);
  std::sort(pairs.begin(), pairs.end());
  json list = json::array();
  for (const auto& [number, count] : pairs) list.push_back({number, count});
  return list;
}

json levels_to_json(const AnharmonicResult& anharmonic) {
  const Vpt2Result& vpt2 = anharmonic.vpt2;
  const std::vector<int>& numbers = anharmonic.set_numbers;
  json levels = json::array();
  for (const VibrationalLevel& level : vpt2.levels) {
    json partners = json::array();
    for (const int partner : level.partners)
      partners.push_back(level_label(vpt2.levels[static_cast<std::size_t>(partner)].set_quanta, numbers));
    json mixing = json::array();
    for (const LevelComponent& component : level.mixing)
      mixing.push_back({{"label", level_label(dense_quanta(component.quanta, numbers.size()), numbers)},
                        {"quanta", sparse_quanta_by_fundamental(component.quanta, numbers)},
                        {"sublevel", component.tag},
                        {"species", component.species},
                        {"weight", component.weight}});
    const json activity_ir = level.activity_known ? json(level.ir_active) : json(nullptr);
    const json activity_raman = level.activity_known ? json(level.raman_active) : json(nullptr);
    levels.push_back({{"label", level_label(level.set_quanta, numbers)},
                      {"kind", to_string(level.kind)},
                      {"quanta", quanta_by_fundamental(level.set_quanta, numbers)},
                      {"sublevel", level.sublevel + 1},
                      {"sublevel_count", level.sublevel_count},
                      {"degeneracy", level.degeneracy},
                      {"species", level.species},
                      {"ir_active", activity_ir},
                      {"raman_active", activity_raman},
                      {"harmonic_cm1", level.harmonic_cm1},
                      {"anharmonic_cm1", level.anharmonic_cm1},
                      {"resonance_corrected_cm1", number_or_null(level.resonance_corrected_cm1)},
                      {"polyad", level.in_polyad() ? json(level.polyad + 1) : json(nullptr)},
                      {"partners", partners},
                      {"mixing", mixing}});
  }
  return levels;
}

json resonances_to_json(const AnharmonicResult& anharmonic) {
  const std::vector<int>& numbers = anharmonic.set_numbers;
  json resonances = json::array();
  for (const Resonance& resonance : anharmonic.vpt2.resonances) {
    json fundamentals = json::array();
    for (const int set : resonance.sets) fundamentals.push_back(numbers[static_cast<std::size_t>(set)]);
    resonances.push_back({{"kind", to_string(resonance.kind)},
                          {"label", resonance_label(resonance, numbers)},
                          {"modes", fundamentals},
                          {"gap_cm1", resonance.gap_cm1},
                          {"coupling_cm1", resonance.coupling_cm1},
                          {"criterion_value", resonance.criterion_value},
                          {"symmetry_allowed", resonance.symmetry_allowed},
                          {"flagged", resonance.flagged}});
  }
  return resonances;
}

json polyads_to_json(const AnharmonicResult& anharmonic) {
  const Vpt2Result& vpt2 = anharmonic.vpt2;
  const std::vector<int>& numbers = anharmonic.set_numbers;
  json polyads = json::array();
  for (const Polyad& polyad : vpt2.polyads) {
    json manifolds = json::array(), levels = json::array(), resonances = json::array();
    for (const auto& manifold : polyad.manifolds)
      manifolds.push_back(level_label(dense_quanta(manifold, numbers.size()), numbers));
    for (const int level : polyad.levels)
      levels.push_back(level_label(vpt2.levels[static_cast<std::size_t>(level)].set_quanta, numbers));
    for (const int resonance : polyad.resonances)
      resonances.push_back(resonance_label(vpt2.resonances[static_cast<std::size_t>(resonance)], numbers));
    polyads.push_back({{"number", polyads.size() + 1},
                       {"levels", levels},
                       {"manifolds", manifolds},
                       {"resonances", resonances},
                       {"state_count", polyad.state_count},
                       {"reached_quanta_limit", polyad.reached_quanta_limit},
                       {"cut_at_state_limit", polyad.cut_at_state_limit}});
  }
  return polyads;
}

json validity_to_json(const AnharmonicResult& anharmonic) {
  const Vpt2Result& vpt2 = anharmonic.vpt2;
  json modes = json::array();
  for (const PerturbationCheck& check : vpt2.perturbation_checks)
    modes.push_back({{"fundamental", anharmonic.set_numbers[static_cast<std::size_t>(check.set)]},
                     {"harmonic_cm1", check.harmonic_cm1},
                     {"anharmonic_ratio", check.anharmonic_ratio},
                     {"largest_term", term_label(check.largest_term, vpt2, anharmonic.set_numbers)},
                     {"beyond_perturbation", check.beyond_perturbation},
                     {"excluded", check.excluded}});
  return {{"ratio_limit", vpt2.perturbation_ratio_limit},
          {"exclude_below_cm1", vpt2.exclude_below_cm1},
          {"modes", modes}};
}

}  // namespace

nlohmann::json anharmonic_to_json(const AnalysisResult& analysis, const AnharmonicResult& anharmonic) {
  const std::vector<int> number_of_mode = mode_number_of_index(analysis.modes);
  json document;
  document["force_constants"] = force_constants_to_json(anharmonic, number_of_mode);
  document["anharmonicity"] = anharmonicity_to_json(analysis, anharmonic);
  document["levels"] = levels_to_json(anharmonic);
  document["resonances"] = resonances_to_json(anharmonic);
  document["polyads"] = polyads_to_json(anharmonic);
  document["vpt2_validity"] = validity_to_json(anharmonic);
  document["anharmonic_summary"] = {{"status", to_string(anharmonic.vpt2.status)},
                                    {"message", anharmonic.vpt2.message},
                                    {"warnings", anharmonic.vpt2.warnings},
                                    {"seconds", anharmonic.vpt2_s}};
  return document;
}

}  // namespace overtone
