#include "report/harmonic_report.hpp"

#include <fmt/format.h>

#include "core/units.hpp"

namespace overtone {

namespace {

nlohmann::json vector3(const Eigen::Vector3d& v) { return nlohmann::json::array({v.x(), v.y(), v.z()}); }

}  // namespace

nlohmann::json analysis_to_json(const AnalysisResult& analysis) {
  using nlohmann::json;
  const auto& molecule = analysis.molecule;
  const auto& harmonic = analysis.harmonic;
  json document;
  document["program"] = {{"name", "overtone"}, {"version", "0.1.0"}};
  document["units"] = {{"energy", "kcal/mol"},
                       {"length", "angstrom"},
                       {"mass", "dalton"},
                       {"wavenumber", "cm-1"},
                       {"force_constant", "mdyn/angstrom"}};
  document["molecule"] = {{"title", molecule.title},
                          {"formula", molecule.formula()},
                          {"source", molecule.source},
                          {"charge", molecule.total_charge},
                          {"spin_multiplicity", molecule.spin_multiplicity}};
  document["potential"] = {{"description", analysis.potential_description}};

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
                          {"rotation_vibration_coupling", "neglected"}};

  json modes = json::array();
  for (std::size_t k = 0; k < analysis.mode_order.size(); ++k) {
    const int index = analysis.mode_order[k];
    json displacement = json::array();
    for (std::size_t i = 0; i < molecule.atoms.size(); ++i)
      displacement.push_back(vector3(harmonic.cartesian_displacements.col(index).segment<3>(3 * i)));
    modes.push_back({{"number", k + 1},
                     {"frequency_cm1", harmonic.frequencies_cm1[index]},
                     {"imaginary", harmonic.frequencies_cm1[index] < 0.0},
                     {"reduced_mass_da", harmonic.reduced_masses_da[index]},
                     {"force_constant_mdyn_angstrom", harmonic.force_constants_mdyn_per_angstrom[index]},
                     {"displacement", displacement}});
  }
  document["modes"] = modes;
  document["warnings"] = analysis.warnings;
  return document;
}

std::string modes_csv(const AnalysisResult& analysis) {
  const auto& harmonic = analysis.harmonic;
  std::string text = "mode,wavenumber_cm1,reduced_mass_da,force_constant_mdyn_per_angstrom\n";
  for (std::size_t k = 0; k < analysis.mode_order.size(); ++k) {
    const int index = analysis.mode_order[k];
    text += fmt::format("{},{:.4f},{:.6f},{:.6f}\n", k + 1, harmonic.frequencies_cm1[index],
                        harmonic.reduced_masses_da[index], harmonic.force_constants_mdyn_per_angstrom[index]);
  }
  return text;
}

std::string modes_table(const AnalysisResult& analysis) {
  const auto& molecule = analysis.molecule;
  const auto& harmonic = analysis.harmonic;
  std::string text;
  text +=
      fmt::format("{} ({}, {} atoms) on {}\n", molecule.title.empty() ? molecule.formula() : molecule.title,
                  molecule.formula(), molecule.atom_count(), analysis.potential_description);
  if (analysis.optimized)
    text += fmt::format("structure: {}; energy {:.6f} kcal/mol\n", analysis.optimization.message,
                        analysis.optimization.energy_kcal_mol);
  else
    text += "structure: analysed as given (no optimization)\n";
  text += fmt::format("hessian: {}; {} molecule, {} rigid-body motions removed\n\n", analysis.hessian.method,
                      harmonic.linear ? "linear" : "non-linear", harmonic.rigid_body_count);
  text += fmt::format("{:>5}  {:>12}  {:>12}  {:>14}\n", "mode", "ν̃ / cm⁻¹", "μ / Da", "k / mdyn Å⁻¹");
  for (std::size_t k = 0; k < analysis.mode_order.size(); ++k) {
    const int index = analysis.mode_order[k];
    const double wavenumber = harmonic.frequencies_cm1[index];
    const std::string shown =
        wavenumber < 0.0 ? fmt::format("{:.2f}i", -wavenumber) : fmt::format("{:.2f}", wavenumber);
    text += fmt::format("{:>5}  {:>12}  {:>12.4f}  {:>14.4f}\n", k + 1, shown,
                        harmonic.reduced_masses_da[index], harmonic.force_constants_mdyn_per_angstrom[index]);
  }
  for (const auto& warning : analysis.warnings) text += "warning: " + warning + "\n";
  return text;
}

}  // namespace overtone
