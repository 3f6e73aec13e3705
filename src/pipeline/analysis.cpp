#include "pipeline/analysis.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <chrono>
#include <cmath>
#include <map>
#include <numeric>
#include <optional>
#include <set>
#include <vector>

#include "core/error.hpp"
#include "core/option_checks.hpp"
#include "core/units.hpp"
#include "core/warnings.hpp"
#include "families/amplitude_scan.hpp"
#include "potential/mmff_potential.hpp"
#include "potential/openbabel_potential.hpp"
#include "symmetry/mode_symmetry.hpp"

namespace overtone {

namespace {

// A retried symmetry detection accepts at most this fraction of the largest distance the
// rejected symmetrization moved an atom, so that the rejected group cannot be found again.
constexpr double symmetry_retry_tolerance_fraction = 0.5;
// Symmetrization that moved atoms by less than this (Å) only removed the optimizer's
// residual noise and cannot have carried a minimum onto a saddle.
constexpr double smallest_retry_tolerance_angstrom = 1e-6;

double seconds_since(std::chrono::steady_clock::time_point start) {
  return std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
}

// Why a structure cannot be expanded about (fit: it can). The values are those every
// expanding stage's status shares.
enum class Unfit { fit, not_converged, not_a_minimum, no_modes };

struct MinimumVerdict {
  Unfit reason = Unfit::fit;
  std::string message;  // what the user reads; empty when fit
};

// The anharmonic and families stages expand the potential about a minimum; anywhere
// else their numbers would be meaningless. A minimum: converged, and every harmonic
// wavenumber at least smallest_cm1 (the force-constant stage's own limit).
MinimumVerdict check_minimum(const AnalysisResult& analysis, const std::string& stage, double smallest_cm1) {
  if (analysis.optimized && !analysis.optimization.converged())
    return {analysis.optimization.status == MinimizeStatus::saddle_point ? Unfit::not_a_minimum
                                                                         : Unfit::not_converged,
            stage + " needs a minimum, but the optimization did not converge (" +
                analysis.optimization.message + "); try another potential or a better starting structure"};
  const Eigen::VectorXd& frequencies = analysis.harmonic.frequencies_cm1;
  if (frequencies.size() == 0)
    return {Unfit::no_modes, stage + " needs vibrational modes, and this molecule has none"};
  if (frequencies.minCoeff() <= 0.0)
    return {Unfit::not_a_minimum,
            fmt::format("{} needs a minimum, but the structure has an imaginary frequency ({:.1f}i cm-1): "
                        "it is a saddle point of the potential",
                        stage, std::abs(frequencies.minCoeff()))};
  if (frequencies.minCoeff() < smallest_cm1)
    return {Unfit::not_a_minimum,
            fmt::format("{} needs a minimum with every harmonic wavenumber at or above {} cm-1, but the "
                        "softest mode is at {:.2f} cm-1: a nearly free motion, not a vibration about a "
                        "minimum",
                        stage, smallest_cm1, frequencies.minCoeff())};
  return {};
}

// The status of an expanding stage (AnharmonicStatus, FamiliesStatus) for a verdict.
template <typename Status>
Status status_for(Unfit reason) {
  switch (reason) {
    case Unfit::fit:
      return Status::ok;
    case Unfit::not_converged:
      return Status::not_converged;
    case Unfit::not_a_minimum:
      return Status::not_a_minimum;
    case Unfit::no_modes:
      return Status::no_modes;
  }
  return Status::not_a_minimum;
}

// The verdict as the result of a stage that did not run; false when it may run.
template <typename Result>
bool refused(const MinimumVerdict& verdict, Result& result) {
  if (verdict.reason == Unfit::fit) return false;
  result.status = status_for<decltype(result.status)>(verdict.reason);
  result.message = verdict.message;
  return true;
}

double seconds_between(std::chrono::steady_clock::time_point start,
                       std::chrono::steady_clock::time_point end) {
  return std::chrono::duration<double>(end - start).count();
}

// A general force field describes every conformation of a molecule; a valence force
// field or a Taylor expansion describes one well, and far from it its energies mean
// nothing. Every class of general force field is listed here.
bool is_general_force_field(const Potential& potential) {
  return dynamic_cast<const OpenBabelPotential*>(&potential) != nullptr ||
         dynamic_cast<const MmffPotential*>(&potential) != nullptr;
}

struct RelaxedStart {
  Eigen::VectorXd coordinates_angstrom;
  double energy_kcal_mol = 0.0;
  std::string origin;
};

// Relaxes every start with L-BFGS alone (its energy at the hand-over gradient lies
// within ~g²/k of its basin's minimum, far below the margin) and returns the lowest
// that kept the stereo identity; none when no start relaxed.
std::optional<RelaxedStart> lowest_relaxed_start(const Molecule& molecule, const Potential& potential,
                                                 const AnalysisOptions& options,
                                                 ConformerFindings& findings) {
  const ConformerStartsResult starts = generate_conformer_starts(molecule, options.conformer_starts);
  findings.starts = static_cast<int>(starts.starts.size());
  MinimizeOptions relax = options.minimize;
  relax.newton_max_steps = 0;
  relax.max_saddle_escapes = 0;
  std::optional<RelaxedStart> lowest;
  for (const ConformerStart& start : starts.starts) {
    try {
      const MinimizeResult relaxed = minimize(potential, start.coordinates_angstrom, relax);
      if (relaxed.diverged() || relaxed.rms_gradient > relax.lbfgs_rms_gradient_target) continue;
      if (stereo_identity(molecule, relaxed.coordinates_angstrom) != starts.stereo_identity) continue;
      ++findings.relaxed;
      if (!lowest || relaxed.energy_kcal_mol < lowest->energy_kcal_mol)
        lowest = RelaxedStart{relaxed.coordinates_angstrom, relaxed.energy_kcal_mol, start.origin};
    } catch (const Error&) {
      // A start the potential cannot evaluate (an exactly linear angle, say) is no conformer.
    }
  }
  return lowest;
}

// The expansion's warnings through one channel: each stage's list with repeats merged,
// and the two gathered in the result.
void gather_warnings(AnharmonicResult& result) {
  std::vector<std::string> all = result.force_constants.warnings;
  all.insert(all.end(), result.vpt2.warnings.begin(), result.vpt2.warnings.end());
  result.warnings = merge_repeated_warnings(all);
  result.force_constants.warnings = merge_repeated_warnings(result.force_constants.warnings);
  result.vpt2.warnings = merge_repeated_warnings(result.vpt2.warnings);
}

}  // namespace

std::string to_string(AnalysisStatus status) {
  switch (status) {
    case AnalysisStatus::ok:
      return "ok";
    case AnalysisStatus::not_converged:
      return "not_converged";
    case AnalysisStatus::not_a_minimum:
      return "not_a_minimum";
  }
  return "unknown";
}

std::string to_string(AnharmonicStatus status) {
  switch (status) {
    case AnharmonicStatus::ok:
      return "ok";
    case AnharmonicStatus::not_converged:
      return "not_converged";
    case AnharmonicStatus::not_a_minimum:
      return "not_a_minimum";
    case AnharmonicStatus::no_modes:
      return "no_modes";
  }
  return "unknown";
}

AnharmonicResult analyze_anharmonic(const AnalysisResult& analysis, const Potential& potential,
                                    const AnharmonicOptions& given_options) {
  given_options.validate();
  AnharmonicResult result;
  if (refused(check_minimum(analysis, "the anharmonic analysis",
                            given_options.force_constants.minimum_frequency_cm1),
              result))
    return result;
  AnharmonicOptions options = given_options;
  if (!options.force_constants.progress) options.force_constants.progress = options.progress;
  if (!options.vpt2.progress) options.vpt2.progress = options.progress;
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
  if (!result.force_constants.ok()) {
    // The same limit as check_minimum's, so this is only reached through a caller's own
    // force-constant options.
    result.status = AnharmonicStatus::not_a_minimum;
    result.message = "the force constants could not be computed: " + result.force_constants.message;
    return result;
  }
  const auto middle = std::chrono::steady_clock::now();
  result.vpt2 = run_vpt2(result.force_constants, result.harmonic, options.vpt2);
  result.force_constants_s = seconds_between(start, middle);
  result.vpt2_s = seconds_since(middle);
  result.set_numbers = set_numbers_from_mode_order(result.vpt2, report_mode_order(analysis));
  gather_warnings(result);
  result.message = fmt::format("{} levels, {} resonance candidates", result.vpt2.levels.size(),
                               result.vpt2.resonances.size());
  return result;
}

namespace {

// A scan that turns over at its first displacement found no barrier at all: along that
// coordinate the energy falls (or cannot be evaluated) right next to the structure, which
// is then no minimum of the potential there, whatever the Hessian said.
MinimumVerdict check_rise_along_every_mode(const AnalysisResult& analysis, const AmplitudeScanResult& scan,
                                           const AmplitudeScanOptions& scan_options) {
  for (const TurnoverFinding& finding : scan.findings) {
    if (finding.barrier_cm1 > 0.0) continue;
    const int fundamental = fundamental_of_mode_number(
        analysis.modes, mode_number_of_index(analysis.modes).at(static_cast<std::size_t>(finding.mode)));
    const double first_q = std::sqrt(2.0 * scan_options.max_quanta + 1.0) / scan_options.points;
    return {Unfit::not_a_minimum,
            fmt::format("the structure is not a minimum of this potential along ν{}: in the {} direction the "
                        "energy {} at the first step of the amplitude scan ({:.3g} of the dimensionless "
                        "normal coordinate){}; the families of nonlinear normal modes need a minimum",
                        fundamental, finding.direction > 0 ? "positive" : "negative",
                        finding.note.empty() ? "already falls below the structure's" : "cannot be evaluated",
                        first_q, finding.note.empty() ? "" : " (" + finding.note + ")")};
  }
  return {};
}

}  // namespace

FamiliesResult analyze_families(const AnalysisResult& analysis, const Potential& potential,
                                const FamiliesOptions& options) {
  options.validate();
  FamiliesResult refusal;
  if (refused(
          check_minimum(analysis, "the families of nonlinear normal modes", smallest_expanded_wavenumber_cm1),
          refusal))
    return refusal;
  if (!analysis.symmetry_used) {
    refusal.status = FamiliesStatus::no_point_group;
    refusal.message =
        "the families of nonlinear normal modes need the point group; run the analysis with symmetry";
    return refusal;
  }
  // Quartic force fields and Taylor expansions often turn over at large amplitude; a
  // scan along every normal coordinate says where, before a backbone runs into it, and
  // lets a continuation that fails just below the lowest barrier be called an escape.
  const Eigen::VectorXd& frequencies = analysis.harmonic.frequencies_cm1;
  const double top_energy_cm1 =
      options.energy_max_cm1 > 0.0 ? options.energy_max_cm1 : (options.quanta + 1.0) * frequencies.maxCoeff();
  AmplitudeScanOptions scan_options;
  scan_options.max_quanta = std::max(scan_options.max_quanta, top_energy_cm1 / frequencies.minCoeff());
  const AmplitudeScanResult scan = scan_normal_coordinates(potential, analysis.harmonic, scan_options);
  if (refused(check_rise_along_every_mode(analysis, scan, scan_options), refusal)) return refusal;
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
  result.warnings = merge_repeated_warnings(result.warnings);
  for (FamilyResult& family : result.families)
    family.backbone.warnings = merge_repeated_warnings(family.backbone.warnings);
  return result;
}

std::vector<int> flagged_resonance_mode_numbers(const AnalysisResult& analysis,
                                                const AnharmonicResult& anharmonic, double upper_min_cm1) {
  std::set<int> fundamentals;
  for (const Resonance& resonance : anharmonic.vpt2.resonances) {
    if (!resonance.flagged) continue;
    double highest_cm1 = 0.0;
    for (const int set : resonance.sets)
      highest_cm1 =
          std::max(highest_cm1, anharmonic.vpt2.sets.at(static_cast<std::size_t>(set)).harmonic_cm1);
    if (highest_cm1 < upper_min_cm1) continue;
    for (const int set : resonance.sets)
      fundamentals.insert(anharmonic.set_numbers.at(static_cast<std::size_t>(set)));
  }
  return mode_numbers_of_fundamentals(analysis, std::vector<int>(fundamentals.begin(), fundamentals.end()));
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

namespace {

// Runs the quick conformer search after the input was optimized (result.optimization)
// and, for ConformerSearch::analyse_best, replaces that optimization with one from the
// lowest structure found.
void search_conformers(AnalysisResult& result, const Potential& potential, const AnalysisOptions& options) {
  ConformerFindings& findings = result.conformers;
  findings.searched = true;
  findings.input_minimum_kcal_mol = result.optimization.energy_kcal_mol;
  findings.best_kcal_mol = findings.input_minimum_kcal_mol;
  const std::optional<RelaxedStart> lowest =
      lowest_relaxed_start(result.molecule, potential, options, findings);
  if (!lowest ||
      lowest->energy_kcal_mol >= findings.input_minimum_kcal_mol - options.conformer_energy_margin_kcal_mol)
    return;
  findings.best_kcal_mol = lowest->energy_kcal_mol;
  findings.best_origin = lowest->origin;
  const double gap = findings.input_minimum_kcal_mol - lowest->energy_kcal_mol;
  if (options.conformers == ConformerSearch::analyse_best) {
    MinimizeResult best = minimize(potential, lowest->coordinates_angstrom, options.minimize);
    if (!best.diverged() && best.energy_kcal_mol < findings.input_minimum_kcal_mol) {
      findings.best_kcal_mol = best.energy_kcal_mol;
      result.optimization = std::move(best);
      result.warnings.push_back(fmt::format(
          "conformer search: analysed the lowest structure found ({}, {} starts), {:.2f} kcal/mol ({:.0f} "
          "cm-1) below the minimum reached from the input structure",
          findings.best_origin, findings.starts, findings.input_minimum_kcal_mol - findings.best_kcal_mol,
          (findings.input_minimum_kcal_mol - findings.best_kcal_mol) * units::cm1_per_kcal_mol));
      return;
    }
  }
  findings.analysed_lowest_found = false;
  findings.analysed_above_best_kcal_mol = gap;
  result.warnings.push_back(
      fmt::format("the analysed structure is a local minimum: a conformer at least {:.2f} kcal/mol ({:.0f} "
                  "cm-1) lower was "
                  "found ({}, one of {} starts); --conformer-search analyses the lowest conformer found",
                  gap, gap * units::cm1_per_kcal_mol, findings.best_origin, findings.starts));
}

// The verdicts of the optimization and the harmonic analysis on the structure reached.
void set_status(AnalysisResult& result) {
  const std::string harmonic = "harmonic analysis: " + result.harmonic.message;
  if (result.optimized && !result.optimization.converged()) {
    result.status = result.optimization.status == MinimizeStatus::saddle_point
                        ? AnalysisStatus::not_a_minimum
                        : AnalysisStatus::not_converged;
    result.message = "optimization: " + result.optimization.message + "; " + harmonic;
    return;
  }
  result.status = result.harmonic.ok() ? AnalysisStatus::ok : AnalysisStatus::not_a_minimum;
  result.message =
      result.optimized ? "optimization: " + result.optimization.message + "; " + harmonic : harmonic;
}

}  // namespace

void AnalysisOptions::validate() const {
  option_checks::require_non_negative("analysis", "conformer_energy_margin_kcal_mol",
                                      conformer_energy_margin_kcal_mol);
  minimize.validate();
  conformer_starts.validate();
  hessian.validate();
  modes.validate();
  symmetry.validate();
  species.validate();
}

void AnharmonicOptions::validate() const {
  force_constants.validate();
  vpt2.validate();
}

AnalysisOptions options_for_steps(const AnalysisOptions& options) {
  AnalysisOptions steps = options;
  steps.hessian.linearity_tolerance = options.modes.linearity_tolerance;
  steps.minimize.linearity_tolerance = options.modes.linearity_tolerance;
  return steps;
}

AnalysisResult analyze_molecule(const Molecule& molecule, const Potential& potential,
                                const AnalysisOptions& given_options) {
  given_options.validate();
  const AnalysisOptions options = options_for_steps(given_options);
  if (molecule.atom_count() != potential.atom_count())
    throw Error("the potential was set up for a different molecule (atom counts differ)");
  AnalysisResult result;
  result.molecule = molecule;
  result.potential_description = potential.description();

  const auto started = std::chrono::steady_clock::now();
  const auto tell = [&](const char* step) {
    if (options.progress) options.progress({step, 0, 0, "", seconds_since(started)});
  };
  auto clock = std::chrono::steady_clock::now();
  if (options.optimize) {
    tell("optimize");
    result.optimization = minimize(potential, molecule.coordinates(), options.minimize);
    if (result.optimization.diverged()) throw Error(result.optimization.message);
    result.optimized = true;
    if (options.conformers != ConformerSearch::off && is_general_force_field(potential)) {
      tell("conformer search");
      search_conformers(result, potential, options);
    }
    result.molecule.set_coordinates(result.optimization.coordinates_angstrom);
    if (!result.optimization.converged()) result.warnings.push_back(result.optimization.message);
  }
  result.timings.optimize_s = seconds_since(clock);

  // Symmetrizing moves a minimum that lies within the tolerance of a more symmetric
  // saddle point (a shallow double well) onto that saddle. When the optimized structure
  // is a minimum but its symmetrized copy has an imaginary frequency, the group is
  // detected again with a tolerance below the distance the symmetrization moved atoms,
  // which finds the lower group the minimum really has.
  const Eigen::VectorXd optimized_coordinates = result.molecule.coordinates();
  SymmetryOptions symmetry_options = options.symmetry;
  for (;;) {
    clock = std::chrono::steady_clock::now();
    result.molecule.set_coordinates(optimized_coordinates);
    if (options.use_symmetry) {
      result.point_group = detect_point_group(result.molecule, symmetry_options);
      result.symmetry_used = true;
      result.molecule.set_coordinates(result.point_group.symmetrized_coordinates_angstrom);
    }
    result.timings.symmetry_s += seconds_since(clock);

    clock = std::chrono::steady_clock::now();
    const Eigen::VectorXd x = result.molecule.coordinates();
    tell("Hessian");
    result.hessian = compute_hessian(potential, x, options.hessian);
    result.timings.hessian_s += seconds_since(clock);

    clock = std::chrono::steady_clock::now();
    if (result.symmetry_used)
      result.hessian.hessian = symmetrize_cartesian_hessian(result.hessian.hessian, result.point_group);
    result.timings.symmetry_s += seconds_since(clock);

    clock = std::chrono::steady_clock::now();
    tell("normal modes");
    result.harmonic =
        analyze_normal_modes(x, result.molecule.masses(), result.hessian.hessian, options.modes);
    result.timings.normal_modes_s += seconds_since(clock);

    const bool minimum_before_symmetrizing = result.optimized && result.optimization.converged();
    const bool imaginary = result.harmonic.mode_count() > 0 &&
                           result.harmonic.frequencies_cm1.minCoeff() < -options.modes.imaginary_warning_cm1;
    const double moved = result.symmetry_used ? result.point_group.max_deviation_angstrom : 0.0;
    const double lower_tolerance = moved * symmetry_retry_tolerance_fraction;
    if (!result.symmetry_used || !minimum_before_symmetrizing || !imaginary ||
        lower_tolerance < smallest_retry_tolerance_angstrom || result.point_group.group.order() == 1)
      break;
    result.warnings.push_back(fmt::format(
        "symmetrizing the optimized minimum to {} moved atoms by {:.2g} Å onto a saddle point (imaginary "
        "frequency {:.1f}i cm-1); the point group was detected again with tolerance {:.2g} Å",
        result.point_group.group.name, moved, std::abs(result.harmonic.frequencies_cm1.minCoeff()),
        lower_tolerance));
    symmetry_options.tolerance_angstrom = lower_tolerance;
  }
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
  result.warnings = merge_repeated_warnings(result.warnings);
  set_status(result);
  return result;
}

}  // namespace overtone
