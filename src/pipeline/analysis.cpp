#include "pipeline/analysis.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <chrono>
#include <cmath>
#include <map>
#include <numeric>
#include <vector>

#include "core/error.hpp"
#include "families/amplitude_scan.hpp"
#include "symmetry/mode_symmetry.hpp"

namespace overtone {

namespace {

double seconds_since(std::chrono::steady_clock::time_point start) {
  return std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
}

// The anharmonic and families stages expand the potential about a minimum; anywhere
// else their numbers would be meaningless.
void require_minimum(const AnalysisResult& analysis, const std::string& stage) {
  if (analysis.optimized && !analysis.optimization.converged())
    throw Error(stage + " needs a minimum, but the optimization did not converge (" +
                analysis.optimization.message + "); try another potential or a better starting structure");
  const Eigen::VectorXd& frequencies = analysis.harmonic.frequencies_cm1;
  if (frequencies.size() == 0) throw Error(stage + " needs vibrational modes, and this molecule has none");
  if (frequencies.minCoeff() <= 0.0)
    throw Error(
        fmt::format("{} needs a minimum, but the structure has an imaginary frequency ({:.1f}i cm-1): "
                    "it is a saddle point of the potential",
                    stage, std::abs(frequencies.minCoeff())));
}

double seconds_between(std::chrono::steady_clock::time_point start,
                       std::chrono::steady_clock::time_point end) {
  return std::chrono::duration<double>(end - start).count();
}

}  // namespace

AnharmonicResult analyze_anharmonic(const AnalysisResult& analysis, const Potential& potential,
                                    const AnharmonicOptions& options) {
  require_minimum(analysis, "the anharmonic analysis");
  AnharmonicResult result;
  const auto start = std::chrono::steady_clock::now();
  if (analysis.symmetry_used) {
    SymmetryAdaptedHarmonic adapted =
        adapt_to_point_group(analysis.harmonic, analysis.point_group, analysis.mode_symmetry);
    result.harmonic = std::move(adapted.harmonic);
    result.force_constants =
        compute_force_constants(potential, result.harmonic, adapted.symmetry, options.force_constants);
  } else {
    result.harmonic = analysis.harmonic;
    result.force_constants = compute_force_constants(potential, result.harmonic, options.force_constants);
  }
  if (!result.force_constants.ok())
    throw Error("the force constants could not be computed: " + result.force_constants.message);
  const auto middle = std::chrono::steady_clock::now();
  result.vpt2 = run_vpt2(result.force_constants, result.harmonic, options.vpt2);
  result.force_constants_s = seconds_between(start, middle);
  result.vpt2_s = seconds_since(middle);
  result.set_numbers = set_numbers_from_mode_order(result.vpt2, report_mode_order(analysis));
  return result;
}

FamiliesResult analyze_families(const AnalysisResult& analysis, const Potential& potential,
                                const FamiliesOptions& options) {
  require_minimum(analysis, "the families of nonlinear normal modes");
  if (!analysis.symmetry_used)
    throw Error(
        "the families of nonlinear normal modes need the point group; run the analysis with symmetry");
  // Quartic force fields and Taylor expansions often turn over at large amplitude; a
  // scan along every normal coordinate says where, before a backbone runs into it, and
  // lets a continuation that fails just below the lowest barrier be called an escape.
  const Eigen::VectorXd& frequencies = analysis.harmonic.frequencies_cm1;
  const double top_energy_cm1 =
      options.energy_max_cm1 > 0.0 ? options.energy_max_cm1 : (options.quanta + 1.0) * frequencies.maxCoeff();
  AmplitudeScanOptions scan_options;
  scan_options.max_quanta = std::max(scan_options.max_quanta, top_energy_cm1 / frequencies.minCoeff());
  const AmplitudeScanResult scan = scan_normal_coordinates(potential, analysis.harmonic, scan_options);
  MolecularSystemOptions system_options;
  if (scan.turns_over) system_options.escape_energy_cm1 = scan.lowest_barrier_cm1;
  FamiliesResult result =
      compute_molecular_families(potential, analysis.harmonic, analysis.point_group, analysis.mode_symmetry,
                                 report_mode_order(analysis), options, system_options);
  for (const TurnoverFinding& finding : scan.findings) {
    if (finding.barrier_cm1 > top_energy_cm1) continue;
    const int fundamental = fundamental_of_mode_number(
        analysis.modes, mode_number_of_index(analysis.modes).at(static_cast<std::size_t>(finding.mode)));
    result.warnings.push_back(fmt::format(
        "the potential turns over along ν{} ({} direction) {:.0f} cm-1 above the minimum{}, inside the "
        "requested "
        "energy range: families that reach it stop there (escape), and nothing beyond it is meaningful",
        fundamental, finding.direction > 0 ? "positive" : "negative", finding.barrier_cm1,
        finding.hole ? " and falls into a hole" : ""));
  }
  return result;
}

std::vector<ResonanceCrossCheck> cross_check_resonances(const AnalysisResult& analysis,
                                                        const AnharmonicResult& anharmonic,
                                                        const FamiliesResult& families) {
  auto fundamental_of = [&](const std::vector<int>& mode_numbers) {
    return fundamental_of_mode_number(analysis.modes, mode_numbers.at(0));
  };
  std::map<std::pair<int, int>, ResonanceCrossCheck> checks;
  auto check_for = [&](int lower, int upper) -> ResonanceCrossCheck& {
    ResonanceCrossCheck& check = checks[{lower, upper}];
    check.lower_fundamental = lower;
    check.upper_fundamental = upper;
    return check;
  };
  for (const Resonance& resonance : anharmonic.vpt2.resonances) {
    if (resonance.kind != ResonanceKind::fermi_1) continue;
    ResonanceCrossCheck& check =
        check_for(anharmonic.set_numbers.at(static_cast<std::size_t>(resonance.sets[0])),
                  anharmonic.set_numbers.at(static_cast<std::size_t>(resonance.sets[1])));
    check.gap_cm1 = resonance.gap_cm1;
    check.listed_by_perturbative = true;
    check.perturbative_allowed = resonance.symmetry_allowed;
    check.perturbative_flagged = resonance.flagged;
  }
  std::map<int, int> family_count;
  for (const FamilyResult& family : families.families)
    ++family_count[fundamental_of(family.type.mode_numbers)];
  for (const FamilyResult& family : families.families) {
    const int lower = fundamental_of(family.type.mode_numbers);
    for (const ResonanceThreat& threat : family.type.resonance_threats) {
      if (threat.order != 2) continue;
      ResonanceCrossCheck& check = check_for(lower, fundamental_of(threat.partner_mode_numbers));
      if (!check.listed_by_perturbative) check.gap_cm1 = -threat.detuning_cm1;
      check.listed_by_families = true;
      check.families_of_lower = family_count[lower];
      if (threat.symmetry_allowed) ++check.families_allowed;
    }
  }
  std::vector<ResonanceCrossCheck> result;
  for (auto& [pair, check] : checks) {
    check.compared = check.listed_by_perturbative && check.listed_by_families;
    check.agree = !check.compared || check.perturbative_allowed == (check.families_allowed > 0);
    result.push_back(check);
  }
  return result;
}

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
  for (const auto& warning : potential.warnings()) result.warnings.push_back(warning);
  result.modes = number_modes(result.harmonic, result.symmetry_used ? &result.mode_symmetry : nullptr,
                              result.molecule.atom_count());
  return result;
}

}  // namespace overtone
