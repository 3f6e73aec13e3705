#include "report/anharmonic_report.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <limits>
#include <map>
#include <numeric>

#include "core/error.hpp"
#include "core/option_checks.hpp"

namespace overtone {

namespace {

const char* nu(bool ascii) { return ascii ? "v" : "ν"; }

std::vector<int> numbers_for(const Vpt2Result& vpt2, const AnharmonicReportOptions& options) {
  options.validate();
  if (options.set_numbers.empty()) return default_set_numbers(vpt2);
  if (options.set_numbers.size() != vpt2.sets.size())
    throw Error(fmt::format("the report needs one number per degenerate set ({}), got {}", vpt2.sets.size(),
                            options.set_numbers.size()));
  return options.set_numbers;
}

std::string component_label(const LevelComponent& c, const std::vector<int>& numbers, bool ascii) {
  std::string label = level_label(dense_quanta(c.quanta, numbers.size()), numbers, ascii);
  if (!c.tag.empty()) label += "(" + c.tag + ")";
  return label;
}

std::string level_name(const VibrationalLevel& level, const std::vector<int>& numbers, bool ascii) {
  std::string label = level_label(level.set_quanta, numbers, ascii);
  if (level.sublevel_count > 1)
    label += "(" + (level.species.empty() ? std::to_string(level.sublevel + 1) : level.species) + ")";
  return label;
}

// Admixtures smaller than this are left out of the text (the line list and the JSON keep them).
constexpr double shown_mixing_weight = 0.01;
// The summary shows at most this many components of a state, of at least this weight: the
// partners that borrow visible intensity.
constexpr std::size_t summary_mixing_components = 4;
constexpr double summary_mixing_weight = 0.05;

std::string mixing_text(const VibrationalLevel& level, const std::vector<int>& numbers, bool ascii,
                        double shown_weight = shown_mixing_weight,
                        std::size_t most_components = std::numeric_limits<std::size_t>::max()) {
  std::string text;
  std::size_t shown = 0;
  for (const auto& c : level.mixing) {
    if (c.weight < shown_weight) continue;
    if (shown == most_components) return text + "; …";
    if (!text.empty()) text += "; ";
    text += fmt::format("{:.2f} {}", c.weight, component_label(c, numbers, ascii));
    ++shown;
  }
  return text;
}

std::string partners_text(const Vpt2Result& vpt2, const VibrationalLevel& level,
                          const std::vector<int>& numbers, bool ascii) {
  std::string text;
  for (int p : level.partners) {
    if (!text.empty()) text += "; ";
    text += level_name(vpt2.levels[static_cast<std::size_t>(p)], numbers, ascii);
  }
  return text;
}

double best_position(const VibrationalLevel& level) {
  return level.in_polyad() && std::isfinite(level.resonance_corrected_cm1) ? level.resonance_corrected_cm1
                                                                           : level.anharmonic_cm1;
}

std::vector<int> levels_by_position(const Vpt2Result& vpt2) {
  std::vector<int> order(vpt2.levels.size());
  std::iota(order.begin(), order.end(), 0);
  std::stable_sort(order.begin(), order.end(), [&](int a, int b) {
    return best_position(vpt2.levels[static_cast<std::size_t>(a)]) <
           best_position(vpt2.levels[static_cast<std::size_t>(b)]);
  });
  return order;
}

std::string csv_field(const std::string& text) {
  if (text.find_first_of(",\"\n") == std::string::npos) return text;
  std::string quoted = "\"";
  for (char c : text) {
    if (c == '"') quoted += '"';
    quoted += c;
  }
  return quoted + "\"";
}

std::string yes_no(bool known, bool value) { return known ? (value ? "yes" : "no") : ""; }

// What every section of the text report needs.
struct ReportContext {
  const Vpt2Result& vpt2;
  std::vector<int> numbers;  // ν number per set
  bool ascii = false;

  std::string set_name(int set) const {
    return nu(ascii) + std::to_string(numbers[static_cast<std::size_t>(set)]);
  }
  // Sets in ν-number order (the order of the modes table).
  std::vector<int> sets_by_number() const {
    std::vector<int> order(numbers.size());
    for (std::size_t s = 0; s < numbers.size(); ++s)
      order[static_cast<std::size_t>(numbers[s] - 1)] = static_cast<int>(s);
    return order;
  }
  // Set-level x: off-diagonal the mean over components; diagonal known for nondegenerate sets.
  double set_x(const Eigen::MatrixXd& x, int s, int t, bool* known) const {
    const auto& a = vpt2.sets[static_cast<std::size_t>(s)].modes;
    const auto& b = vpt2.sets[static_cast<std::size_t>(t)].modes;
    *known = s != t || a.size() == 1;
    double sum = 0.0;
    for (int i : a)
      for (int j : b) sum += x(i, j);
    return sum / static_cast<double>(a.size() * b.size());
  }
};

std::string evaluation_count_text(const EvaluationCounts& c) {
  std::vector<std::string> parts;
  if (c.hessians) parts.push_back(fmt::format("{} Hessians", c.hessians));
  if (c.gradients) parts.push_back(fmt::format("{} gradients", c.gradients));
  if (c.energies) parts.push_back(fmt::format("{} energies", c.energies));
  std::string text;
  for (const auto& p : parts) text += (text.empty() ? "" : ", ") + p;
  return text.empty() ? std::string("none") : text;
}

std::string force_constant_text(const ForceConstantResult& fc, const Vpt2Result& vpt2) {
  const std::size_t cubic = fc.constants.cubic_entries(0.0).size();
  const std::size_t quartic = fc.constants.quartic_entries(0.0).size();
  std::string out = fmt::format(
      "Force constants: {} cubic and {} quartic nonzero ({}), {}; step h = {} in q\n", cubic, quartic,
      fc.full_quartic ? "all quartic" : "quartic with a repeated index", fc.method, fc.step);
  out += fmt::format("  potential evaluations: {} (without symmetry: {})\n",
                     evaluation_count_text(fc.evaluations), evaluation_count_text(fc.naive_evaluations));
  if (fc.symmetry_used)
    out += fmt::format(
        "  point group {}: {} cubic and {} quartic constants zero by symmetry, {} displaced Hessians "
        "obtained by symmetry; largest change by group averaging {:.2g} cm⁻¹\n",
        vpt2.point_group.empty() ? "(given)" : vpt2.point_group, fc.forbidden_cubic, fc.forbidden_quartic,
        fc.hessians_from_symmetry, fc.symmetry_adjustment_cm1);
  out += fmt::format("  largest spread between estimates of one constant: {:.2g} cm⁻¹\n",
                     fc.permutation_spread_cm1);
  return out;
}

std::string modes_text(const ReportContext& context) {
  std::string out = "Modes\n";
  out += fmt::format("  {:<6} {:<10} {:>10}  {}\n", "mode", "species", "ω, cm⁻¹", "degeneracy");
  for (int s : context.sets_by_number()) {
    const auto& set = context.vpt2.sets[static_cast<std::size_t>(s)];
    out += fmt::format("  {:<6} {:<10} {:>10.2f}  {}\n", context.set_name(s),
                       set.species.empty() ? "-" : set.species, set.harmonic_cm1, set.modes.size());
  }
  return out;
}

std::string x_matrix_text(const ReportContext& context, const Eigen::MatrixXd& x, const std::string& title) {
  const std::vector<int> order = context.sets_by_number();
  std::string text = title + "\n        ";
  for (int s : order) text += fmt::format("{:>10}", context.set_name(s));
  text += "\n";
  for (std::size_t r = 0; r < order.size(); ++r) {
    text += fmt::format("  {:<6}", context.set_name(order[r]));
    for (std::size_t c = 0; c <= r; ++c) {
      bool known = true;
      const double value = context.set_x(x, order[r], order[c], &known);
      text += known ? fmt::format("{:>10.3f}", value) : fmt::format("{:>10}", "-");
    }
    text += "\n";
  }
  return text;
}

std::string x_matrices_text(const ReportContext& context) {
  const Vpt2Result& vpt2 = context.vpt2;
  std::string out = x_matrix_text(
      context, vpt2.x_cm1, "Anharmonicity constants x (cm⁻¹), total = vibrational + Coriolis, deperturbed");
  if (vpt2.x_coriolis_cm1.size() > 0 && vpt2.x_coriolis_cm1.cwiseAbs().maxCoeff() > 0.0)
    out += x_matrix_text(context, vpt2.x_coriolis_cm1, "  of which Coriolis (rotation-vibration)");
  out += "  (a degenerate set's own constants: its split overtone levels below, and x, g where they apply)\n";
  for (const auto& d : vpt2.degenerate_constants)
    out += fmt::format("  degenerate {}: x = {:.3f}, g = {:.3f} cm⁻¹ (G = ω(v+1) + x(v+1)² + g l²)\n",
                       context.set_name(d.set), d.x_cm1, d.g_cm1);
  out +=
      fmt::format("  rotational constants (cm⁻¹): {:.4f} {:.4f} {:.4f}\n", vpt2.rotational_constants_cm1[0],
                  vpt2.rotational_constants_cm1[1], vpt2.rotational_constants_cm1[2]);
  return out;
}

std::string resonance_row(const ReportContext& context, const Resonance& r) {
  return fmt::format("  {:<24} {:<16} {:>9.2f} {:>9.2f} {:>11.3g} {:>9} {:>8}\n", to_string(r.kind),
                     resonance_label(r, context.numbers, context.ascii), r.gap_cm1, r.coupling_cm1,
                     r.criterion_value, r.symmetry_allowed ? "allowed" : "forbidden",
                     r.flagged ? "yes" : "no");
}

// All candidates (full), or those that pass the criterion and a count of the others.
std::string resonances_text(const ReportContext& context, bool flagged_only) {
  const auto& resonances = context.vpt2.resonances;
  const auto flagged = static_cast<std::size_t>(
      std::count_if(resonances.begin(), resonances.end(), [](const Resonance& r) { return r.flagged; }));
  std::string out =
      flagged_only ? fmt::format(
                         "Resonances treated: {} of {} candidates within the gap windows (Fermi: W⁴/|gap|³ ≥ "
                         "threshold, Martin et al. 1995; overtone-overtone: |W| ≥ threshold)\n",
                         flagged, resonances.size())
                   : "Resonances (Fermi: flagged when |gap| ≤ threshold and W⁴/|gap|³ ≥ threshold, Martin et "
                     "al. 1995)\n";
  if (resonances.empty()) return out + "  none within the gap thresholds\n";
  if (!flagged_only || flagged > 0)
    out += fmt::format("  {:<24} {:<16} {:>9} {:>9} {:>11} {:>9} {:>8}\n", "kind", "states", "gap", "W",
                       "criterion", "symmetry", "treated");
  for (const auto& r : resonances)
    if (!flagged_only || r.flagged) out += resonance_row(context, r);
  if (flagged_only) {
    const auto forbidden = std::count_if(resonances.begin(), resonances.end(), [](const Resonance& r) {
      return !r.flagged && !r.symmetry_allowed;
    });
    out += fmt::format("  candidates that did not pass: {} ({} of them forbidden by symmetry)\n",
                       resonances.size() - flagged, forbidden);
  }
  return out;
}

std::string summary_mixing(const ReportContext& context, const VibrationalLevel& level, bool summary) {
  if (!summary) return mixing_text(level, context.numbers, context.ascii);
  return mixing_text(level, context.numbers, context.ascii, summary_mixing_weight, summary_mixing_components);
}

std::string level_row(const ReportContext& context, const VibrationalLevel& level, bool summary) {
  const bool corrected = level.in_polyad() && std::isfinite(level.resonance_corrected_cm1);
  std::string activity;
  if (level.activity_known)
    activity = std::string(level.ir_active ? " IR" : "") + (level.raman_active ? " Raman" : "");
  return fmt::format("{}{:<14} {:<12} {:<10} {:>10.2f} {:>11.2f} {:>10}  {}{}\n", summary ? "      " : "  ",
                     level_name(level, context.numbers, context.ascii), to_string(level.kind),
                     level.species.empty() ? "-" : level.species, level.harmonic_cm1, level.anharmonic_cm1,
                     corrected ? fmt::format("{:.2f}", level.resonance_corrected_cm1) : "",
                     summary_mixing(context, level, summary),
                     activity.empty() ? "" : " [" + activity.substr(1) + "]");
}

std::string all_levels_text(const ReportContext& context) {
  std::string out = "Levels (cm⁻¹; corrected = after diagonalizing the resonance polyad)\n";
  out += fmt::format("  {:<14} {:<12} {:<10} {:>10} {:>11} {:>10}  {}\n", "level", "kind", "species",
                     "harmonic", "anharmonic", "corrected", "mixing");
  for (int index : levels_by_position(context.vpt2))
    out += level_row(context, context.vpt2.levels[static_cast<std::size_t>(index)], false);
  return out;
}

// Whether `other` shares at least the shown weight with the manifold of `fundamental`
// (either way round): the levels a spectrum shows near that fundamental's band.
bool mixed_with(const VibrationalLevel& other, const VibrationalLevel& fundamental) {
  const double shown_weight = summary_mixing_weight;
  const SparseQuanta own = sparse_quanta(fundamental.set_quanta);
  const SparseQuanta theirs = sparse_quanta(other.set_quanta);
  for (const auto& c : other.mixing)
    if (c.quanta == own && c.weight >= shown_weight) return true;
  for (const auto& c : fundamental.mixing)
    if (c.quanta == theirs && c.weight >= shown_weight) return true;
  return false;
}

// The fundamentals in ν order with their shifts, each followed by the levels it mixes with.
std::string fundamentals_text(const ReportContext& context) {
  const Vpt2Result& vpt2 = context.vpt2;
  std::vector<int> fundamental_of_set(vpt2.sets.size(), -1);
  for (std::size_t l = 0; l < vpt2.levels.size(); ++l) {
    const VibrationalLevel& level = vpt2.levels[l];
    if (level.kind != LevelKind::fundamental || level.sublevel != 0) continue;
    for (std::size_t s = 0; s < level.set_quanta.size(); ++s)
      if (level.set_quanta[s] == 1) fundamental_of_set[s] = static_cast<int>(l);
  }
  std::string out =
      "Fundamentals (cm⁻¹; shift = anharmonic − harmonic; corrected = after diagonalizing the resonance "
      "polyad; indented: levels mixed with it)\n";
  out += fmt::format("  {:<6} {:<10} {:>10} {:>11} {:>8} {:>10} {:>9}  {}\n", "mode", "species", "harmonic",
                     "anharmonic", "shift", "corrected", "x_ii", "mixing");
  for (int s : context.sets_by_number()) {
    const int index = fundamental_of_set[static_cast<std::size_t>(s)];
    if (index < 0) {
      out += fmt::format("  {:<6} {:<10} {:>10.2f}  excluded from VPT2\n", context.set_name(s),
                         vpt2.sets[static_cast<std::size_t>(s)].species.empty()
                             ? "-"
                             : vpt2.sets[static_cast<std::size_t>(s)].species,
                         vpt2.sets[static_cast<std::size_t>(s)].harmonic_cm1);
      continue;
    }
    const VibrationalLevel& level = vpt2.levels[static_cast<std::size_t>(index)];
    bool known = true;
    const double x_ii = context.set_x(vpt2.x_cm1, s, s, &known);
    const bool corrected = level.in_polyad() && std::isfinite(level.resonance_corrected_cm1);
    out += fmt::format("  {:<6} {:<10} {:>10.2f} {:>11.2f} {:>+8.2f} {:>10} {:>9}  {}\n", context.set_name(s),
                       level.species.empty() ? "-" : level.species, level.harmonic_cm1, level.anharmonic_cm1,
                       level.anharmonic_cm1 - level.harmonic_cm1,
                       corrected ? fmt::format("{:.2f}", level.resonance_corrected_cm1) : "",
                       known ? fmt::format("{:.3f}", x_ii) : "-", summary_mixing(context, level, true));
    for (int p : level.partners) {
      const VibrationalLevel& partner = vpt2.levels[static_cast<std::size_t>(p)];
      if (partner.kind != LevelKind::fundamental && mixed_with(partner, level))
        out += level_row(context, partner, true);
    }
  }
  return out;
}

// The modes beyond perturbation theory and those excluded from it, one line each.
std::string validity_text(const ReportContext& context) {
  const Vpt2Result& vpt2 = context.vpt2;
  std::string rows;
  for (const PerturbationCheck& check : vpt2.perturbation_checks) {
    if (!check.beyond_perturbation && !check.excluded) continue;
    rows += fmt::format(
        "  {:<6} {:>10.2f} {:>10.3g}  {:<20} {}\n", context.set_name(check.set), check.harmonic_cm1,
        check.anharmonic_ratio, term_label(check.largest_term, vpt2, context.numbers, context.ascii),
        check.beyond_perturbation ? (check.excluded ? "beyond; excluded" : "beyond") : "excluded");
  }
  if (rows.empty()) return "";
  std::string out = fmt::format(
      "Modes beyond perturbation theory (anharmonic ratio ≥ {:g}: the largest cubic or quartic term against "
      "½ωq² at "
      "the turning point of the fundamental){}\n",
      vpt2.perturbation_ratio_limit,
      vpt2.exclude_below_cm1 > 0.0
          ? fmt::format("; modes below {:g} cm⁻¹ excluded from VPT2 (reduced-dimensional)",
                        vpt2.exclude_below_cm1)
          : std::string());
  out += fmt::format("  {:<6} {:>10} {:>10}  {:<20} {}\n", "mode", "harmonic", "ratio", "largest term", "");
  return out + rows;
}

std::string full_lists_text(const Vpt2Result& vpt2, const std::string& note) {
  const std::string where =
      note.empty() ? std::string("the full report (detail full), the JSON document and the line list") : note;
  return fmt::format("\nFull x matrices, every resonance candidate ({}) and every level ({}): {}\n",
                     vpt2.resonances.size(), vpt2.levels.size(), where);
}
}  // namespace

std::string level_label(const std::vector<int>& set_quanta, const std::vector<int>& set_numbers, bool ascii) {
  std::vector<std::pair<int, int>> parts;  // (number, quanta)
  for (std::size_t s = 0; s < set_quanta.size(); ++s)
    if (set_quanta[s] > 0) parts.emplace_back(set_numbers.at(s), set_quanta[s]);
  std::sort(parts.begin(), parts.end());
  if (parts.empty()) return "0";
  std::string label;
  for (const auto& [number, quanta] : parts) {
    if (!label.empty()) label += "+";
    if (quanta > 1) label += std::to_string(quanta);
    label += nu(ascii) + std::to_string(number);
  }
  return label;
}

std::string term_label(const std::vector<int>& modes, const Vpt2Result& vpt2,
                       const std::vector<int>& set_numbers, bool ascii) {
  std::string text;
  for (int mode : modes)
    text += (text.empty() ? "" : ",") + std::string(nu(ascii)) +
            std::to_string(set_numbers.at(
                static_cast<std::size_t>(vpt2.set_of_mode.at(static_cast<std::size_t>(mode)))));
  return (ascii ? "phi(" : "φ(") + text + ")";
}

std::string resonance_label(const Resonance& r, const std::vector<int>& set_numbers, bool ascii) {
  const std::size_t sets = set_numbers.size();
  auto quanta = [&](std::initializer_list<std::pair<int, int>> entries) {
    std::vector<int> v(sets, 0);
    for (const auto& [s, count] : entries) v[static_cast<std::size_t>(s)] += count;
    return level_label(v, set_numbers, ascii);
  };
  switch (r.kind) {
    case ResonanceKind::fermi_1:
      return quanta({{r.sets[0], 2}}) + " / " + quanta({{r.sets[1], 1}});
    case ResonanceKind::fermi_2:
      return quanta({{r.sets[0], 1}, {r.sets[1], 1}}) + " / " + quanta({{r.sets[2], 1}});
    case ResonanceKind::darling_dennison:
      return quanta({{r.sets[0], 2}}) + " / " + quanta({{r.sets[1], 2}});
  }
  return "";
}

namespace {

// The two intensity columns of one level (empty where unknown), then the line end.
std::string intensity_columns(const LevelIntensityResult* intensities, int index) {
  auto cell = [&](const std::vector<std::optional<double>>& values) {
    const auto& value = intensities ? values[static_cast<std::size_t>(index)] : std::optional<double>();
    return value ? fmt::format("{:.6g}", *value) : std::string();
  };
  if (!intensities) return ",\n";
  return cell(intensities->ir_km_per_mol) + "," + cell(intensities->raman_activity_a4_per_u) + "\n";
}

}  // namespace

void AnharmonicReportOptions::validate() const {
  using namespace option_checks;
  const char* owner = "anharmonic report";
  for (const int number : set_numbers) require_at_least(owner, "set_numbers", number, 1);
  require(detail == ReportDetail::summary || detail == ReportDetail::full, owner, "detail", "summary or full",
          static_cast<int>(detail));
}

std::string line_list_csv(const Vpt2Result& vpt2, const AnharmonicReportOptions& options) {
  const std::vector<int> numbers = numbers_for(vpt2, options);
  // Quanta columns in mode-number order.
  std::vector<int> set_by_number(numbers.size());
  for (std::size_t s = 0; s < numbers.size(); ++s)
    set_by_number[static_cast<std::size_t>(numbers[s] - 1)] = static_cast<int>(s);
  std::string out =
      "label,kind,quanta,sublevel,degeneracy,species,ir_active,raman_active,harmonic_cm1,anharmonic_cm1,"
      "resonance_corrected_cm1,best_estimate_cm1,polyad,partners,mixing,ir_intensity_km_per_mol,"
      "raman_activity_a4_per_u\n";
  for (int index : levels_by_position(vpt2)) {
    const VibrationalLevel& level = vpt2.levels[static_cast<std::size_t>(index)];
    std::string quanta;
    for (int s : set_by_number)
      quanta += (quanta.empty() ? "" : " ") + std::to_string(level.set_quanta[static_cast<std::size_t>(s)]);
    const bool corrected = level.in_polyad() && std::isfinite(level.resonance_corrected_cm1);
    out += fmt::format(
        "{},{},{},{},{},{},{},{},{:.2f},{:.2f},{},{:.2f},{},{},{}\n",
        csv_field(level_label(level.set_quanta, numbers, options.ascii)), to_string(level.kind), quanta,
        level.sublevel + 1, level.degeneracy, csv_field(level.species),
        yes_no(level.activity_known, level.ir_active), yes_no(level.activity_known, level.raman_active),
        level.harmonic_cm1, level.anharmonic_cm1,
        corrected ? fmt::format("{:.2f}", level.resonance_corrected_cm1) : std::string(),
        best_position(level), level.in_polyad() ? std::to_string(level.polyad + 1) : std::string(),
        csv_field(partners_text(vpt2, level, numbers, options.ascii)),
        csv_field(mixing_text(level, numbers, options.ascii)));
    out.back() = ',';  // the intensity columns follow on the same row
    out += intensity_columns(options.intensities, index);
  }
  return out;
}

std::string anharmonic_report(const ForceConstantResult& fc, const Vpt2Result& vpt2,
                              const AnharmonicReportOptions& options) {
  const ReportContext context{vpt2, numbers_for(vpt2, options), options.ascii};
  std::string out;
  out += "Anharmonic analysis: second-order vibrational perturbation theory (VPT2)\n";
  out +=
      "Convention: V = ½Σω q² + (1/6)Σφ q q q + (1/24)Σφ q q q q, dimensionless normal coordinates, cm⁻¹\n\n";
  out += force_constant_text(fc, vpt2) + "\n";
  if (options.detail == ReportDetail::full) {
    out += modes_text(context) + "\n";
    out += x_matrices_text(context) + "\n";
    out += resonances_text(context, false) + "\n";
    out += all_levels_text(context);
  } else {
    out += fundamentals_text(context) + "\n";
    out += resonances_text(context, true) + "\n";
  }
  const std::string validity = validity_text(context);
  if (!validity.empty()) out += validity + "\n";
  for (const auto& w : fc.warnings) out += "warning: " + w + "\n";
  for (const auto& w : vpt2.warnings) out += "warning: " + w + "\n";
  if (options.detail == ReportDetail::summary) out += full_lists_text(vpt2, options.full_lists_note);
  out +=
      "\nNote: x includes the Coriolis term; compare the vibrational part (x_vibrational) with the families, "
      "which neglect rotation-vibration coupling.\n";
  return out;
}

}  // namespace overtone
