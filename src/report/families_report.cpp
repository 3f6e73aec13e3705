#include "report/families_report.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <sstream>

#include "core/error.hpp"
#include "core/text.hpp"

namespace overtone {

namespace {

template <typename Points>
double highest_energy_cm1(const Points& points) {
  double highest = points.front().energy_cm1;
  for (const auto& point : points) highest = std::max(highest, point.energy_cm1);
  return highest;
}

// "ν2" (or "ν2,ν3") with the labels of an analysed molecule; "modes 2,3" without.
std::string modes_text(const std::vector<int>& numbers, const std::vector<ModeLabel>& modes) {
  if (modes.empty()) return fmt::format("modes {}", fmt::join(numbers, ","));
  std::vector<std::string> names;
  for (const int fundamental : fundamentals_of_mode_numbers(modes, numbers))
    names.push_back("ν" + std::to_string(fundamental));
  return fmt::format("{}", fmt::join(names, ","));
}

// Typographic species of the block with labels; the ASCII one the families carry without.
std::string species_text(const std::vector<int>& numbers, const std::string& species,
                         const std::vector<ModeLabel>& modes) {
  for (const ModeLabel& mode : modes)
    if (!numbers.empty() && mode.number == numbers.front() && !mode.display_species.empty())
      return mode.display_species;
  return species;
}

std::string copies_text(const FamilyType& type, bool short_form = false) {
  if (type.continuous_copies) return short_form ? "all orientations" : "one per orientation about the axis";
  std::string text = std::to_string(type.copies);
  if (type.time_reversal == TimeReversal::among_copies)
    text += " (both senses)";
  else if (type.time_reversal == TimeReversal::separate_partner)
    text += " + time-reversed";
  return text;
}

std::string phase_text(const PhasedElement& element) {
  if (element.numerator == 0) return element.label + " (same time)";
  return fmt::format("{} (+{}/{} period)", element.label, element.numerator, element.denominator);
}

const FamilyResult& family_at(const FamiliesResult& result, int index) {
  if (index < 0 || index >= static_cast<int>(result.families.size()))
    throw Error(
        fmt::format("family index {} is outside 0..{}", index, static_cast<int>(result.families.size()) - 1));
  return result.families[static_cast<std::size_t>(index)];
}

// Largest of a diagnostic over a family's points.
template <typename Field>
double largest(const ContinuationResult& backbone, Field field) {
  double value = 0.0;
  for (const OrbitPoint& point : backbone.points) value = std::max(value, field(point));
  return value;
}

// The orbit count per band (see families/orbit_count.hpp).
std::string orbit_count_text(const OrbitCount& count, const std::string& unit) {
  if (count.bands.empty()) return {};
  std::ostringstream out;
  out << fmt::format("\nDistinct periodic orbits per energy band (lower bound: {} degrees of freedom{})\n",
                     count.degrees_of_freedom,
                     count.complete ? "" : "; partial, some families not continued");
  out << fmt::format("  {:>23}  {:>8}  {:>6}  {:>10}  {}\n", "energy (" + unit + ")", "families", "fewest",
                     "most", "bound");
  for (const OrbitCountBand& band : count.bands) {
    const std::string continuous =
        band.continuous_families > 0 ? fmt::format(" + {} continuous", band.continuous_families) : "";
    const char* verdict = !count.complete ? "-" : band.meets_lower_bound ? "met" : "BELOW";
    out << fmt::format("  {:>11.1f}-{:<11.1f}  {:>8}  {:>6}  {:>10}  {}\n", band.energy_low_cm1,
                       band.energy_high_cm1, band.families_present,
                       fmt::format("{}{}", band.fewest, continuous), band.most, verdict);
  }
  return out.str();
}

}  // namespace

std::string families_summary(const FamiliesResult& result, const std::vector<ModeLabel>& modes) {
  std::ostringstream out;
  for (std::size_t i = 0; i < result.families.size(); ++i) {
    const FamilyResult& family = result.families[i];
    const FamilyType& type = family.type;
    const std::string species =
        family.parent_family >= 0 ? std::string() : species_text(type.mode_numbers, type.species, modes);
    out << fmt::format("{:>3}  {:<14} {:<8} {:<9} copies {:<12} {}\n", i + 1,
                       modes_text(type.mode_numbers, modes), species.empty() ? "-" : species,
                       type.standing ? "standing" : "rotating", copies_text(type, true),
                       family.continued ? to_string(family.backbone.status) : "not continued");
  }
  return out.str();
}

std::string families_summary_text(const FamiliesResult& result, const std::vector<ModeLabel>& modes) {
  const std::string& unit = result.units.energy_label;
  std::ostringstream out;
  out << "Families of nonlinear normal modes\n";
  out << "  system: " << printable_text(result.system_description) << "\n";
  for (const auto& note : result.notes) out << "  note: " << note << "\n";
  if (!result.selection_note.empty())
    out << "  note: " << result.selection_note << " (--mode N for one, --all-modes for every one)\n";
  out << fmt::format("  energies and wavenumbers in {}; periods in {}; actions in units of hbar\n", unit,
                     result.units.energy_label == "cm-1" ? "fs" : "time units");
  for (const auto& warning : result.warnings) out << "  warning: " << warning << "\n";
  out << "\n";
  out << fmt::format("{:>3}  {:<14} {:<8} {:<9} {:>5}  {:<18} {:>6}  {:>10} {:>10} {:>10}  {}\n", "#",
                     modes.empty() ? "modes" : "fundamental", "species", "motion", "|H|", "copies", "points",
                     "omega(0)", "omega(max)", "E max", "status");
  for (std::size_t i = 0; i < result.families.size(); ++i) {
    const FamilyResult& family = result.families[i];
    const FamilyType& type = family.type;
    const auto& points = family.backbone.points;
    const std::string status = family.continued ? to_string(family.backbone.status) : "not continued";
    const std::string name = modes_text(type.mode_numbers, modes);
    const std::string species =
        family.parent_family >= 0 ? std::string() : species_text(type.mode_numbers, type.species, modes);
    if (points.empty()) {
      out << fmt::format("{:>3}  {:<14} {:<8} {:<9} {:>5}  {:<18} {:>6}  {:>10} {:>10} {:>10}  {}\n", i + 1,
                         name, species.empty() ? "-" : species, type.standing ? "standing" : "rotating",
                         type.subgroup.size(), copies_text(type, true), 0, "-", "-", "-", status);
    } else {
      out << fmt::format("{:>3}  {:<14} {:<8} {:<9} {:>5}  {:<18} {:>6}  {:>10.2f} {:>10.2f} {:>10.1f}  {}\n",
                         i + 1, name, species.empty() ? "-" : species,
                         type.standing ? "standing" : "rotating", type.subgroup.size(),
                         copies_text(type, true), points.size(), points.front().frequency_cm1,
                         points.back().frequency_cm1, highest_energy_cm1(points), status);
    }
  }
  for (std::size_t i = 0; i < result.families.size(); ++i) {
    const FamilyResult& family = result.families[i];
    if (family.parent_family >= 0)
      out << fmt::format("  family {} born from family {} at {:.6g} {} ({})\n", i + 1,
                         family.parent_family + 1, family.birth_energy_cm1, unit,
                         to_string(family.birth_kind));
  }
  for (std::size_t i = 0; i < result.families.size(); ++i)
    if (!result.families[i].resonance_note.empty())
      out << fmt::format("  family {}: {}\n", i + 1, result.families[i].resonance_note);
  for (const std::string& failure : result.birth_failures) out << "  no family born: " << failure << "\n";
  out << orbit_count_text(result.orbit_count, unit);
  return out.str();
}

std::string families_text_report(const FamiliesResult& result, const std::vector<ModeLabel>& modes) {
  const std::string& unit = result.units.energy_label;
  std::ostringstream out;
  out << families_summary_text(result, modes);
  for (std::size_t i = 0; i < result.families.size(); ++i) {
    const FamilyResult& family = result.families[i];
    const FamilyType& type = family.type;
    const ContinuationResult& backbone = family.backbone;
    const std::string species =
        family.parent_family >= 0 ? std::string() : species_text(type.mode_numbers, type.species, modes);
    out << fmt::format("\nFamily {} - {}{}: {}\n", i + 1, modes_text(type.mode_numbers, modes),
                       species.empty() ? "" : " (" + species + ")", type.description);
    std::vector<std::string> generators;
    for (const PhasedElement& element : type.generators) generators.push_back(phase_text(element));
    out << fmt::format(
        "  symmetry: subgroup of order {} generated by {}; linear orbit ellipticity {:.3f}\n",
        type.subgroup.size(),
        generators.empty() ? std::string("the identity") : fmt::format("{}", fmt::join(generators, ", ")),
        type.ellipticity);
    out << fmt::format("  copies: {}; time reversal: {}\n", copies_text(type), to_string(type.time_reversal));
    if (family.parent_family >= 0)
      out << fmt::format("  born from family {} at {:.6g} {} ({})\n", family.parent_family + 1,
                         family.birth_energy_cm1, unit, to_string(family.birth_kind));
    if (!family.resonance_note.empty()) out << "  resonant seed: " << family.resonance_note << "\n";
    if (!family.bond_amplitude_ratio.empty() && !backbone.points.empty())
      out << fmt::format(
          "  equivalent bonds' stretch, smallest over largest amplitude: {:.3f} at {:.6g} {} -> {:.3f} at "
          "{:.6g} "
          "{} (1: alike, 0: one bond alone)\n",
          family.bond_amplitude_ratio.front(), backbone.points.front().energy_cm1, unit,
          family.bond_amplitude_ratio.back(), backbone.points.back().energy_cm1, unit);
    for (const ResonanceThreat& threat : type.resonance_threats)
      out << fmt::format(
          "  resonance threat: {}{} near {}x this frequency (detuning {:+.1f} {}): {}\n",
          modes_text(threat.partner_mode_numbers, modes),
          threat.partner_species.empty()
              ? ""
              : " (" + species_text(threat.partner_mode_numbers, threat.partner_species, modes) + ")",
          threat.order, threat.detuning_cm1, unit,
          threat.symmetry_allowed ? "allowed by symmetry for this family" : "forbidden by symmetry");
    if (!family.continued) {
      out << "  backbone: not continued\n";
      continue;
    }
    out << fmt::format("  backbone: {} ({})\n", to_string(backbone.status), backbone.message);
    for (const auto& warning : backbone.warnings) out << "  warning: " << warning << "\n";
    const auto& points = backbone.points;
    if (points.empty()) continue;
    // A family that folds (a born family rising and coming back onto its parent) ends below
    // its highest point: say how high it went.
    const double highest = highest_energy_cm1(points);
    const std::string highest_text = highest > std::max(points.front().energy_cm1, points.back().energy_cm1)
                                         ? fmt::format(" (highest {:.6g} {})", highest, unit)
                                         : std::string();
    out << fmt::format(
        "    {} points from {:.4g} to {:.6g} {}{}; frequency {:.2f} -> {:.2f} {}; largest amplitude "
        "{:.4g}{}\n",
        points.size(), points.front().energy_cm1, points.back().energy_cm1, unit, highest_text,
        points.front().frequency_cm1, points.back().frequency_cm1, unit, points.back().amplitude,
        std::isnan(points.back().amplitude_angstrom)
            ? std::string()
            : fmt::format(" (largest atomic displacement {:.4f} A)", points.back().amplitude_angstrom));
    out << fmt::format(
        "    checks: closure error <= {:.1e}, energy drift <= {:.1e}, trajectory symmetry residual "
        "<= {:.1e}\n",
        largest(backbone, [](const OrbitPoint& p) { return p.closure_error; }),
        largest(backbone, [](const OrbitPoint& p) { return p.energy_drift; }),
        largest(backbone, [](const OrbitPoint& p) { return p.symmetry_residual; }));
    if (!points.front().floquet_multipliers.empty()) {
      const bool always_stable =
          std::all_of(points.begin(), points.end(), [](const OrbitPoint& p) { return p.stable; });
      out << fmt::format("    stability: {}; largest non-neutral Floquet modulus at the end {:.6f}\n",
                         always_stable ? "linearly stable at every point" : "unstable somewhere (see events)",
                         points.back().largest_modulus);
    }
    if (!backbone.events.empty()) {
      out << "  events:\n";
      for (const FamilyEvent& event : backbone.events)
        out << fmt::format("    {:>10.4g} {}  {}: {}\n", event.energy_cm1, unit, to_string(event.kind),
                           event.message);
    }
    if (!backbone.ladder.empty()) {
      out << "  semiclassical ladder (J = (n + 1/2) hbar along this family):\n";
      out << fmt::format("    {:>3} {:>12} {:>12} {:>10}\n", "n", "0->n", "harmonic", "shift");
      for (const LadderLevel& level : backbone.ladder) {
        if (level.n == 0) continue;
        out << fmt::format("    {:>3} {:>12.2f} {:>12.2f} {:>+10.2f}{}\n", level.n, level.transition_cm1,
                           level.harmonic_transition_cm1,
                           level.transition_cm1 - level.harmonic_transition_cm1,
                           level.refined ? "" : "  (interpolated)");
      }
    }
    const double count = static_cast<double>(points.size());
    out << fmt::format(
        "  cost: {:.1f} Newton iterations, {:.1f} variational and {:.1f} orbit integrations per "
        "point; {} gradients; {:.2f} s\n",
        backbone.newton_iterations / count, backbone.variational_integrations / count,
        backbone.orbit_integrations / count, backbone.gradient_evaluations, backbone.seconds);
  }
  return out.str();
}

std::string family_points_csv(const FamiliesResult& result, int family_index) {
  const FamilyResult& family = family_at(result, family_index);
  std::ostringstream out;
  out << "energy_cm1,frequency_cm1,period_fs,action_hbar,amplitude_q,amplitude_angstrom,closure_error,"
         "energy_drift,symmetry_residual,largest_floquet_modulus,unstable_multipliers,stable,newton_"
         "iterations,"
         "variational_integrations,orbit_integrations,born_from_family,birth_energy_cm1\n";
  // Every row of a born family names its parent and birth energy; empty for the others.
  const std::string birth = family.parent_family >= 0 ? fmt::format(",{},{:.10g}", family.parent_family + 1,
                                                                    family.birth_energy_cm1)
                                                      : std::string(",,");
  for (const OrbitPoint& p : family.backbone.points) {
    out << fmt::format(
        "{:.10g},{:.10g},{:.10g},{:.10g},{:.8g},{},{:.3e},{:.3e},{:.3e},{:.10g},{},{},{},{},{}{}\n",
        p.energy_cm1, p.frequency_cm1, p.period_fs, p.action_hbar, p.amplitude,
        std::isnan(p.amplitude_angstrom) ? std::string() : fmt::format("{:.8g}", p.amplitude_angstrom),
        p.closure_error, p.energy_drift, p.symmetry_residual, p.largest_modulus, p.unstable_count,
        p.stable ? 1 : 0, p.newton_iterations, p.variational_integrations, p.orbit_integrations, birth);
  }
  return out.str();
}

std::string family_csv_file_name(const FamiliesResult& result, int family_index,
                                 const std::vector<ModeLabel>& modes) {
  const FamilyResult& family = family_at(result, family_index);
  if (modes.empty())
    return fmt::format("family-{:02d}-modes-{}.csv", family_index + 1,
                       fmt::join(family.type.mode_numbers, "-"));
  std::vector<std::string> names;
  for (const int fundamental : fundamentals_of_mode_numbers(modes, family.type.mode_numbers))
    names.push_back("nu" + std::to_string(fundamental));
  return fmt::format("family-{:02d}-{}.csv", family_index + 1, fmt::join(names, "-"));
}

}  // namespace overtone
