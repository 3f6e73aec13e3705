#include "report/anharmonic_report.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <map>
#include <numeric>

#include "core/error.hpp"

namespace overtone {

namespace {

const char* nu(bool ascii) { return ascii ? "v" : "ν"; }

std::vector<int> numbers_for(const Vpt2Result& vpt2, const AnharmonicReportOptions& options) {
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

std::string mixing_text(const VibrationalLevel& level, const std::vector<int>& numbers, bool ascii) {
  constexpr double shown_weight = 0.01;  // smaller admixtures are left out of the text
  std::string text;
  for (const auto& c : level.mixing) {
    if (c.weight < shown_weight) continue;
    if (!text.empty()) text += "; ";
    text += fmt::format("{:.2f} {}", c.weight, component_label(c, numbers, ascii));
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
  const std::vector<int> numbers = numbers_for(vpt2, options);
  const bool ascii = options.ascii;
  std::string out;
  out += "Anharmonic analysis: second-order vibrational perturbation theory (VPT2)\n";
  out +=
      "Convention: V = ½Σω q² + (1/6)Σφ q q q + (1/24)Σφ q q q q, dimensionless normal coordinates, cm⁻¹\n\n";

  const std::size_t cubic = fc.constants.cubic_entries(0.0).size();
  const std::size_t quartic = fc.constants.quartic_entries(0.0).size();
  out += fmt::format("Force constants: {} cubic and {} quartic nonzero ({}), {}; step h = {} in q\n", cubic,
                     quartic, fc.full_quartic ? "all quartic" : "quartic with a repeated index", fc.method,
                     fc.step);
  auto count_text = [](const EvaluationCounts& c) {
    std::vector<std::string> parts;
    if (c.hessians) parts.push_back(fmt::format("{} Hessians", c.hessians));
    if (c.gradients) parts.push_back(fmt::format("{} gradients", c.gradients));
    if (c.energies) parts.push_back(fmt::format("{} energies", c.energies));
    std::string text;
    for (const auto& p : parts) text += (text.empty() ? "" : ", ") + p;
    return text.empty() ? std::string("none") : text;
  };
  out += fmt::format("  potential evaluations: {} (without symmetry: {})\n", count_text(fc.evaluations),
                     count_text(fc.naive_evaluations));
  if (fc.symmetry_used)
    out += fmt::format(
        "  point group {}: {} cubic and {} quartic constants zero by symmetry, {} displaced Hessians "
        "obtained by symmetry; largest change by group averaging {:.2g} cm⁻¹\n",
        vpt2.point_group.empty() ? "(given)" : vpt2.point_group, fc.forbidden_cubic, fc.forbidden_quartic,
        fc.hessians_from_symmetry, fc.symmetry_adjustment_cm1);
  out += fmt::format("  largest spread between estimates of one constant: {:.2g} cm⁻¹\n\n",
                     fc.permutation_spread_cm1);

  // Modes in number order.
  std::vector<int> set_by_number(numbers.size());
  for (std::size_t s = 0; s < numbers.size(); ++s)
    set_by_number[static_cast<std::size_t>(numbers[s] - 1)] = static_cast<int>(s);
  out += "Modes\n";
  out += fmt::format("  {:<6} {:<10} {:>10}  {}\n", "mode", "species", "ω, cm⁻¹", "degeneracy");
  for (int s : set_by_number) {
    const auto& set = vpt2.sets[static_cast<std::size_t>(s)];
    out += fmt::format("  {:<6} {:<10} {:>10.2f}  {}\n",
                       nu(ascii) + std::to_string(numbers[static_cast<std::size_t>(s)]),
                       set.species.empty() ? "-" : set.species, set.harmonic_cm1, set.modes.size());
  }
  out += "\n";

  // Set-level x: off-diagonal the mean over components; diagonal for nondegenerate sets.
  auto set_x = [&](const Eigen::MatrixXd& x, int s, int t, bool* known) {
    const auto& a = vpt2.sets[static_cast<std::size_t>(s)].modes;
    const auto& b = vpt2.sets[static_cast<std::size_t>(t)].modes;
    *known = s != t || a.size() == 1;
    double sum = 0.0;
    for (int i : a)
      for (int j : b) sum += x(i, j);
    return sum / static_cast<double>(a.size() * b.size());
  };
  auto matrix_text = [&](const Eigen::MatrixXd& x, const std::string& title, const std::string& unknown) {
    std::string text = title + "\n        ";
    for (int s : set_by_number)
      text += fmt::format("{:>10}", nu(ascii) + std::to_string(numbers[static_cast<std::size_t>(s)]));
    text += "\n";
    for (std::size_t r = 0; r < set_by_number.size(); ++r) {
      const int s = set_by_number[r];
      text += fmt::format("  {:<6}", nu(ascii) + std::to_string(numbers[static_cast<std::size_t>(s)]));
      for (std::size_t c = 0; c <= r; ++c) {
        bool known = true;
        const double value = set_x(x, s, set_by_number[c], &known);
        text += known ? fmt::format("{:>10.3f}", value) : fmt::format("{:>10}", unknown);
      }
      text += "\n";
    }
    return text;
  };
  out += matrix_text(vpt2.x_cm1,
                     "Anharmonicity constants x (cm⁻¹), total = vibrational + Coriolis, deperturbed", "-");
  if (vpt2.x_coriolis_cm1.cwiseAbs().maxCoeff() > 0.0)
    out += matrix_text(vpt2.x_coriolis_cm1, "  of which Coriolis (rotation-vibration)", "-");
  out += "  (a degenerate set's own constants: its split overtone levels below, and x, g where they apply)\n";
  for (const auto& d : vpt2.degenerate_constants)
    out +=
        fmt::format("  degenerate {}: x = {:.3f}, g = {:.3f} cm⁻¹ (G = ω(v+1) + x(v+1)² + g l²)\n",
                    nu(ascii) + std::to_string(numbers[static_cast<std::size_t>(d.set)]), d.x_cm1, d.g_cm1);
  out +=
      fmt::format("  rotational constants (cm⁻¹): {:.4f} {:.4f} {:.4f}\n\n", vpt2.rotational_constants_cm1[0],
                  vpt2.rotational_constants_cm1[1], vpt2.rotational_constants_cm1[2]);

  out += "Resonances (Fermi: flagged when |gap| ≤ threshold and W⁴/|gap|³ ≥ threshold, Martin et al. 1995)\n";
  if (vpt2.resonances.empty())
    out += "  none within the gap thresholds\n";
  else
    out += fmt::format("  {:<24} {:<16} {:>9} {:>9} {:>11} {:>9} {:>8}\n", "kind", "states", "gap", "W",
                       "criterion", "symmetry", "treated");
  for (const auto& r : vpt2.resonances)
    out += fmt::format("  {:<24} {:<16} {:>9.2f} {:>9.2f} {:>11.3g} {:>9} {:>8}\n", to_string(r.kind),
                       resonance_label(r, numbers, ascii), r.gap_cm1, r.coupling_cm1, r.criterion_value,
                       r.symmetry_allowed ? "allowed" : "forbidden", r.flagged ? "yes" : "no");
  out += "\n";

  out += "Levels (cm⁻¹; corrected = after diagonalizing the resonance polyad)\n";
  out += fmt::format("  {:<14} {:<12} {:<10} {:>10} {:>11} {:>10}  {}\n", "level", "kind", "species",
                     "harmonic", "anharmonic", "corrected", "mixing");
  for (int index : levels_by_position(vpt2)) {
    const auto& level = vpt2.levels[static_cast<std::size_t>(index)];
    const bool corrected = level.in_polyad() && std::isfinite(level.resonance_corrected_cm1);
    std::string activity;
    if (level.activity_known)
      activity = std::string(level.ir_active ? " IR" : "") + (level.raman_active ? " Raman" : "");
    out += fmt::format(
        "  {:<14} {:<12} {:<10} {:>10.2f} {:>11.2f} {:>10}  {}{}\n", level_name(level, numbers, ascii),
        to_string(level.kind), level.species.empty() ? "-" : level.species, level.harmonic_cm1,
        level.anharmonic_cm1, corrected ? fmt::format("{:.2f}", level.resonance_corrected_cm1) : "",
        mixing_text(level, numbers, ascii), activity.empty() ? "" : " [" + activity.substr(1) + "]");
  }
  for (const auto& w : fc.warnings) out += "warning: " + w + "\n";
  for (const auto& w : vpt2.warnings) out += "warning: " + w + "\n";
  out +=
      "\nNote: x includes the Coriolis term; compare the vibrational part (x_vibrational) with the families, "
      "which neglect rotation-vibration coupling.\n";
  return out;
}

}  // namespace overtone
