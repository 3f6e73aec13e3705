#include "report/harmonic_report.hpp"

#include <fmt/format.h>

#include "core/text.hpp"
#include "core/units.hpp"
#include "report/symmetry_json.hpp"
#include "report/symmetry_report.hpp"

namespace overtone {

namespace {

nlohmann::json vector3(const Eigen::Vector3d& v) { return nlohmann::json::array({v.x(), v.y(), v.z()}); }

// Right-aligns UTF-8 text to a width in terminal columns.
std::string pad(const std::string& text, std::size_t width) {
  const std::size_t shown = display_width(text);
  return shown >= width ? text : std::string(width - shown, ' ') + text;
}

// Left-aligns UTF-8 text to a width in terminal columns.
std::string pad_after(const std::string& text, std::size_t width) {
  const std::size_t shown = display_width(text);
  return shown >= width ? text : text + std::string(width - shown, ' ');
}

// Per atom [x, y, z] of a 3N column.
nlohmann::json per_atom(const Eigen::VectorXd& column) {
  nlohmann::json list = nlohmann::json::array();
  for (Eigen::Index i = 0; i + 2 < column.size(); i += 3) list.push_back(vector3(column.segment<3>(i)));
  return list;
}

}  // namespace

nlohmann::json harmonic_to_json(const AnalysisResult& analysis) {
  using nlohmann::json;
  const auto& molecule = analysis.molecule;
  const auto& harmonic = analysis.harmonic;
  json document;
  document["program"] = {{"name", "overtone"}, {"version", "0.1.0"}};
  document["units"] = {{"energy", "kcal/mol"},
                       {"length", "angstrom"},
                       {"mass", "dalton"},
                       {"wavenumber", "cm-1"},
                       {"stiffness", "aJ/angstrom^2"}};
  document["molecule"] = {{"title", molecule.title},
                          {"formula", molecule.formula()},
                          {"source", molecule.source},
                          {"charge", molecule.total_charge},
                          {"spin_multiplicity", molecule.spin_multiplicity}};
  document["potential"] = {{"description", analysis.potential_description}};
  if (analysis.symmetry_used) {
    const PointGroupResult& group = analysis.point_group;
    document["point_group"] = group.group.name;
    document["symmetry"] = {
        {"point_group", group.group.name},
        {"order", group.group.order()},
        {"finite_group_used", group.group.finite_name},
        {"tolerance_angstrom", group.tolerance_angstrom},
        {"max_deviation_removed_angstrom", group.max_deviation_angstrom},
        {"vibrational_representation", analysis.mode_symmetry.decomposition},
        {"species_status",
         analysis.mode_symmetry.status == ModeSymmetryStatus::Assigned ? "assigned" : "ambiguous"},
        {"notes", group.notes}};
    document["symmetry"].update(symmetry_tables_to_json(group, analysis.mode_symmetry));
  } else {
    document["point_group"] = nullptr;
  }

  json atoms = json::array();
  for (std::size_t i = 0; i < molecule.atoms.size(); ++i) {
    const auto& atom = molecule.atoms[i];
    atoms.push_back({{"index", i + 1},
                     {"element", element_symbol(atom.atomic_number)},
                     {"mass_number", atom.mass_number > 0 ? json(atom.mass_number) : json(nullptr)},
                     {"mass_da", atom.mass_da},
                     {"position_angstrom", vector3(atom.position_angstrom)}});
  }
  document["atoms"] = atoms;

  if (analysis.optimized) {
    const auto& o = analysis.optimization;
    document["optimization"] = {{"status", to_string(o.status)},
                                {"converged", o.converged()},
                                {"message", o.message},
                                {"energy", o.energy_kcal_mol},
                                {"rms_gradient", o.rms_gradient},
                                {"max_gradient", o.max_gradient},
                                {"rms_gradient_criterion", o.rms_gradient_tolerance},
                                {"lbfgs_iterations", o.lbfgs_iterations},
                                {"newton_steps", o.newton_steps},
                                {"gradient_evaluations", o.gradient_evaluations},
                                {"negative_curvature_directions", o.negative_curvature_directions},
                                {"units",
                                 {{"energy", "kcal/mol"},
                                  {"rms_gradient", "kcal/mol/angstrom"},
                                  {"max_gradient", "kcal/mol/angstrom"},
                                  {"rms_gradient_criterion", "kcal/mol/angstrom"}}}};
  } else {
    document["optimization"] = {{"status", "skipped"}, {"converged", nullptr}};
  }

  json rigid = json::array();
  for (Eigen::Index k = 0; k < harmonic.rigid_body_eigenvalues.size(); ++k)
    rigid.push_back(units::wavenumber_cm1_from_eigenvalue(harmonic.rigid_body_eigenvalues[k]));
  document["harmonic"] = {{"hessian_method", analysis.hessian.method},
                          {"hessian_asymmetry_kcal_mol_angstrom2", analysis.hessian.asymmetry},
                          {"linear", harmonic.linear},
                          {"rigid_body_count", harmonic.rigid_body_count},
                          {"rigid_body_wavenumbers_cm1", rigid},
                          {"rotation_vibration_coupling", "neglected"},
                          {"stage_seconds",
                           {{"optimize", analysis.timings.optimize_s},
                            {"hessian", analysis.timings.hessian_s},
                            {"normal_modes", analysis.timings.normal_modes_s},
                            {"symmetry", analysis.timings.symmetry_s}}}};

  json modes = json::array();
  for (const ModeLabel& label : analysis.modes) {
    const int index = label.harmonic_index;
    json mode = {{"number", label.number},
                 {"fundamental", label.fundamental},
                 {"degenerate_set", label.degenerate_set},
                 {"degeneracy", label.set_size},
                 {"frequency_cm1", harmonic.frequencies_cm1[index]},
                 {"imaginary", harmonic.frequencies_cm1[index] < 0.0},
                 {"reduced_mass_da", harmonic.reduced_masses_da[index]},
                 {"stiffness_aj_per_angstrom2", harmonic.stiffness_aj_per_angstrom2[index]},
                 {"species", label.species.empty() ? json(nullptr) : json(label.species)},
                 {"ir_active", label.activity_known ? json(label.ir_active) : json(nullptr)},
                 {"raman_active", label.activity_known ? json(label.raman_active) : json(nullptr)},
                 {"displacement", per_atom(harmonic.cartesian_displacements.col(index))},
                 {"mass_weighted_vector", per_atom(harmonic.mass_weighted_modes.col(index))}};
    modes.push_back(mode);
  }
  document["modes"] = modes;
  document["warnings"] = analysis.warnings;
  return document;
}

std::string modes_csv(const AnalysisResult& analysis) {
  const auto& harmonic = analysis.harmonic;
  std::string text =
      "mode,fundamental,degenerate_set,species,wavenumber_cm1,reduced_mass_da,stiffness_aj_per_angstrom2,"
      "ir_active,raman_active\n";
  auto flag = [](const ModeLabel& label, bool value) -> std::string {
    return label.activity_known ? (value ? "yes" : "no") : "";
  };
  for (const ModeLabel& label : analysis.modes) {
    const int index = label.harmonic_index;
    text += fmt::format("{},{},{},{},{:.4f},{:.6f},{:.6f},{},{}\n", label.number, label.fundamental,
                        label.degenerate_set, label.species, harmonic.frequencies_cm1[index],
                        harmonic.reduced_masses_da[index], harmonic.stiffness_aj_per_angstrom2[index],
                        flag(label, label.ir_active), flag(label, label.raman_active));
  }
  return text;
}

std::string modes_table(const AnalysisResult& analysis) {
  const auto& molecule = analysis.molecule;
  const auto& harmonic = analysis.harmonic;
  std::string text;
  text +=
      fmt::format("{} ({}, {} atoms) on {}\n",
                  molecule.title.empty() ? molecule.formula() : printable_text(molecule.title),
                  molecule.formula(), molecule.atom_count(), printable_text(analysis.potential_description));
  if (analysis.optimized)
    text += fmt::format("structure: {}; energy {:.6f} kcal/mol\n", analysis.optimization.message,
                        analysis.optimization.energy_kcal_mol);
  else
    text += "structure: analysed as given (no optimization)\n";
  text += fmt::format("hessian: {}; {} molecule, {} rigid-body motions removed\n", analysis.hessian.method,
                      harmonic.linear ? "linear" : "non-linear", harmonic.rigid_body_count);
  if (analysis.symmetry_used)
    text += fmt::format("point group {} (largest deviation removed {:.1e} Å); Γvib = {}\n",
                        analysis.point_group.group.display_name, analysis.point_group.max_deviation_angstrom,
                        analysis.mode_symmetry.display_decomposition);
  text += "\n";
  // What a spectroscopist matches against a band comes first (ν, species, position,
  // activity); the per-vector quantities follow, one line per vector of a degenerate set.
  constexpr std::size_t nu_width = 5, species_width = 8, wavenumber_width = 11, degeneracy_width = 4,
                        activity_width = 5, mode_width = 5, mass_width = 9, stiffness_width = 10;
  text += pad_after("ν", nu_width) + "  " + pad_after("species", species_width) + "  " +
          pad("cm⁻¹", wavenumber_width) + "  " + pad("deg", degeneracy_width) + "  " +
          pad("IR", activity_width) + "  " + pad("Raman", activity_width) + "  │" + pad("mode", mode_width) +
          "  " + pad("μ/Da", mass_width) + "  " + pad("k/aJ Å⁻²", stiffness_width) + "\n";
  auto activity = [](const ModeLabel& label, bool value) -> std::string {
    return label.activity_known ? (value ? "yes" : "–") : "?";
  };
  int shown_fundamental = 0;
  for (const ModeLabel& label : analysis.modes) {
    const int index = label.harmonic_index;
    std::string fundamental_part;
    if (label.fundamental != shown_fundamental) {
      shown_fundamental = label.fundamental;
      const double wavenumber = harmonic.frequencies_cm1[index];
      const std::string shown =
          wavenumber < 0.0 ? fmt::format("{:.2f}i", -wavenumber) : fmt::format("{:.2f}", wavenumber);
      fundamental_part =
          pad_after("ν" + std::to_string(label.fundamental), nu_width) + "  " +
          pad_after(label.display_species.empty() ? "?" : label.display_species, species_width) + "  " +
          pad(shown, wavenumber_width) + "  " +
          pad(label.set_size > 1 ? std::to_string(label.set_size) : "", degeneracy_width) + "  " +
          pad(activity(label, label.ir_active), activity_width) + "  " +
          pad(activity(label, label.raman_active), activity_width);
    } else {
      fundamental_part = std::string(
          nu_width + species_width + wavenumber_width + degeneracy_width + 2 * activity_width + 10, ' ');
    }
    text += fundamental_part + "  │" + pad(std::to_string(label.number), mode_width) + "  " +
            pad(fmt::format("{:.4f}", harmonic.reduced_masses_da[index]), mass_width) + "  " +
            pad(fmt::format("{:.4f}", harmonic.stiffness_aj_per_angstrom2[index]), stiffness_width) + "\n";
  }
  text += "deg: vectors sharing the ν number; μ: reduced mass; k: stiffness λμ along the vector (aJ/Å²)\n";
  for (const auto& warning : analysis.warnings) text += "warning: " + printable_text(warning) + "\n";
  return text;
}

}  // namespace overtone
