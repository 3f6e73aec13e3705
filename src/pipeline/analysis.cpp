#include "pipeline/analysis.hpp"

#include <algorithm>
#include <chrono>
#include <numeric>
#include <vector>

#include "core/error.hpp"

namespace overtone {

namespace {

double seconds_since(std::chrono::steady_clock::time_point start) {
  return std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
}

// Groups of mode indices: the symmetry sets when species were assigned, else single
// modes (exact frequency ties are kept together).
struct ModeGroup {
  std::vector<int> members;
  int irrep = -1;  // -1: unknown species
};

bool is_bend_of_linear_triatomic(const AnalysisResult& analysis, const ModeGroup& group) {
  return analysis.harmonic.linear && analysis.molecule.atom_count() == 3 && group.members.size() == 2;
}

std::vector<ModeLabel> label_modes(const AnalysisResult& analysis) {
  const HarmonicResult& harmonic = analysis.harmonic;
  std::vector<ModeGroup> groups;
  const bool with_species = analysis.symmetry_used && !analysis.mode_symmetry.sets.empty();
  if (with_species) {
    for (const auto& set : analysis.mode_symmetry.sets) groups.push_back({set.modes, set.irrep});
  } else {
    for (std::size_t k = 0; k < harmonic.mode_count(); ++k) groups.push_back({{static_cast<int>(k)}, -1});
  }
  auto wavenumber = [&](const ModeGroup& g) { return harmonic.frequencies_cm1[g.members.front()]; };
  std::stable_sort(groups.begin(), groups.end(), [&](const ModeGroup& a, const ModeGroup& b) {
    if (a.irrep != b.irrep) return a.irrep < b.irrep;
    return wavenumber(a) > wavenumber(b);
  });
  // Customary exception: the bend of a linear triatomic is ν2 (CO2, HCN).
  if (with_species && groups.size() == 3) {
    auto bend = std::find_if(groups.begin(), groups.end(),
                             [&](const ModeGroup& g) { return is_bend_of_linear_triatomic(analysis, g); });
    if (bend != groups.end() && bend != groups.begin() + 1) {
      const ModeGroup moved = *bend;
      groups.erase(bend);
      groups.insert(groups.begin() + 1, moved);
    }
  }
  std::vector<ModeLabel> labels;
  int number = 0;
  for (std::size_t g = 0; g < groups.size(); ++g) {
    for (const int index : groups[g].members) {
      ModeLabel label;
      label.harmonic_index = index;
      label.number = ++number;
      label.fundamental = static_cast<int>(g) + 1;
      label.degenerate_set = static_cast<int>(g) + 1;
      label.set_size = static_cast<int>(groups[g].members.size());
      if (with_species) {
        const ModeSpecies& species = analysis.mode_symmetry.modes[static_cast<std::size_t>(index)];
        label.species = species.species;
        label.display_species = species.display_species;
        label.ir_active = species.ir_active;
        label.raman_active = species.raman_active;
        label.activity_known = species.irrep >= 0;
      }
      labels.push_back(label);
    }
  }
  return labels;
}

}  // namespace

AnalysisResult analyze_molecule(const Molecule& molecule, const Potential& potential,
                                const AnalysisOptions& options) {
  if (molecule.atom_count() != potential.atom_count())
    throw Error("the potential was set up for a different molecule (atom counts differ)");
  AnalysisResult result;
  result.molecule = molecule;
  result.potential_description = potential.description();

  auto clock = std::chrono::steady_clock::now();
  if (options.optimize) {
    result.optimization = minimize(potential, molecule.coordinates(), options.minimize);
    result.optimized = true;
    result.molecule.set_coordinates(result.optimization.coordinates_angstrom);
    if (!result.optimization.converged()) result.warnings.push_back(result.optimization.message);
  }
  result.timings.optimize_s = seconds_since(clock);

  clock = std::chrono::steady_clock::now();
  if (options.use_symmetry) {
    result.point_group = detect_point_group(result.molecule, options.symmetry);
    result.symmetry_used = true;
    result.molecule.set_coordinates(result.point_group.symmetrized_coordinates_angstrom);
  }
  result.timings.symmetry_s += seconds_since(clock);

  clock = std::chrono::steady_clock::now();
  const Eigen::VectorXd x = result.molecule.coordinates();
  result.hessian = compute_hessian(potential, x, options.hessian);
  result.timings.hessian_s = seconds_since(clock);

  clock = std::chrono::steady_clock::now();
  if (result.symmetry_used)
    result.hessian.hessian = symmetrize_cartesian_hessian(result.hessian.hessian, result.point_group);
  result.timings.symmetry_s += seconds_since(clock);

  clock = std::chrono::steady_clock::now();
  result.harmonic = analyze_normal_modes(x, result.molecule.masses(), result.hessian.hessian, options.modes);
  result.timings.normal_modes_s = seconds_since(clock);
  for (const auto& warning : result.harmonic.warnings) result.warnings.push_back(warning);

  clock = std::chrono::steady_clock::now();
  if (result.symmetry_used) {
    result.mode_symmetry = assign_mode_species(result.point_group, result.harmonic, options.species);
    for (const auto& warning : result.mode_symmetry.warnings) result.warnings.push_back(warning);
  }
  result.timings.symmetry_s += seconds_since(clock);
  result.modes = label_modes(result);
  return result;
}

}  // namespace overtone
