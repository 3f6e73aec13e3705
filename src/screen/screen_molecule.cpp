#include "screen/screen_molecule.hpp"

#include <fmt/format.h>
#include <unistd.h>

#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <memory>
#include <new>
#include <set>

#include "core/error.hpp"
#include "core/warnings.hpp"
#include "molecule/read_molecule.hpp"
#include "potential/make_potential.hpp"
#include "report/anharmonic_report.hpp"

namespace overtone {

namespace {

namespace fs = std::filesystem;

std::optional<double> finite_or_empty(double value) {
  return std::isfinite(value) ? std::optional<double>(value) : std::nullopt;
}

// A record of a molecule file is read through read_molecule like any file, from a file of
// its own in a private temporary folder.
class RecordFile {
 public:
  RecordFile(const std::string& text, const std::string& format) {
    std::string pattern = (fs::temp_directory_path() / "overtone-record-XXXXXX").string();
    if (!mkdtemp(pattern.data())) throw Error("cannot create a temporary folder for a molecule record");
    folder_ = pattern;
    path_ = (fs::path(folder_) / ("record." + format)).string();
    std::ofstream out(path_, std::ios::binary);
    out << text;
    if (!out) throw Error("cannot write a molecule record to a temporary file");
  }
  ~RecordFile() {
    std::error_code ec;
    fs::remove_all(folder_, ec);
  }
  RecordFile(const RecordFile&) = delete;
  RecordFile& operator=(const RecordFile&) = delete;
  const std::string& path() const { return path_; }

 private:
  std::string folder_;
  std::string path_;
};

ReadResult read_record(const ScreenRecord& record) {
  ReadOptions options;
  if (record.format == smiles_record_format) {
    options.input_is_smiles = true;
    return read_molecule(record.text, options);
  }
  if (record.text.find_first_not_of(" \t\r\n$") == std::string::npos)
    throw Error(fmt::format("record {} is empty", record.origin));
  RecordFile file(record.text, record.format);
  options.format = record.format;
  return read_molecule(file.path(), options);
}

// The stage whose failure a numerical outcome of the analysis is, or empty when the
// structure is a converged minimum.
void check_minimum(const AnalysisResult& analysis, VariantOutcome& outcome) {
  if (analysis.optimized && !analysis.optimization.converged()) {
    outcome.status = status_failed;
    outcome.failed_stage = screen_stage::optimize;
    outcome.message = "the optimization did not converge: " + analysis.optimization.message;
    return;
  }
  const Eigen::VectorXd& frequencies = analysis.harmonic.frequencies_cm1;
  if (frequencies.size() > 0 && frequencies.minCoeff() <= 0.0) {
    outcome.status = status_failed;
    outcome.failed_stage = screen_stage::harmonic;
    outcome.message = fmt::format(
        "the structure has an imaginary frequency ({:.1f}i cm-1): it is a saddle point of the potential",
        std::abs(frequencies.minCoeff()));
  }
}

void add_harmonic_rows(const AnalysisResult& analysis, VariantOutcome& outcome) {
  const HarmonicResult& harmonic = analysis.harmonic;
  outcome.point_group = analysis.symmetry_used ? analysis.point_group.group.name : std::string();
  if (analysis.optimized) {
    outcome.optimization_converged = analysis.optimization.converged();
    outcome.rms_gradient = analysis.optimization.rms_gradient;
    outcome.energy_kcal_mol = finite_or_empty(analysis.optimization.energy_kcal_mol);
  }
  for (const ModeLabel& label : analysis.modes) {
    const auto index = static_cast<Eigen::Index>(label.harmonic_index);
    ScreenModeRow row;
    row.mode = label.number;
    row.fundamental = label.fundamental;
    row.species = label.species;
    row.harmonic_cm1 = harmonic.frequencies_cm1[index];
    if (label.activity_known) {
      row.ir_active = label.ir_active;
      row.raman_active = label.raman_active;
    }
    row.reduced_mass_da = harmonic.reduced_masses_da[index];
    row.stiffness_aj_per_angstrom2 = harmonic.stiffness_aj_per_angstrom2[index];
    if (row.harmonic_cm1 < 0.0) ++outcome.imaginary_modes;
    outcome.modes.push_back(row);
  }
  if (harmonic.frequencies_cm1.size() > 0) outcome.lowest_cm1 = harmonic.frequencies_cm1.minCoeff();
}

// Quanta of one set, as the line list labels them.
std::vector<int> single_set_quanta(std::size_t set_count, int set, int quanta) {
  std::vector<int> result(set_count, 0);
  result[static_cast<std::size_t>(set)] = quanta;
  return result;
}

const VibrationalLevel* level_with_quanta(const Vpt2Result& vpt2, const std::vector<int>& quanta) {
  for (const VibrationalLevel& level : vpt2.levels)
    if (level.set_quanta == quanta && level.sublevel == 0) return &level;
  return nullptr;
}

// A resonance candidate worth a row of the store: flagged, or symmetry-allowed and within
// a factor stored_candidate_fraction of its flag threshold (a near miss that another
// potential or isotopologue could flag). A drug-sized molecule has tens of thousands of
// candidates, nearly all orders of magnitude below the threshold; storing every one made
// the store grow by megabytes per molecule and the single writer the bottleneck of a
// screen on several workers.
bool worth_storing(const Resonance& resonance, const Vpt2Options& vpt2_options) {
  if (resonance.flagged) return true;
  if (!resonance.symmetry_allowed) return false;
  const double threshold = resonance.kind == ResonanceKind::darling_dennison
                               ? vpt2_options.darling_dennison_coupling_cm1
                               : vpt2_options.fermi_criterion_cm1;
  return resonance.criterion_value >= stored_candidate_fraction * threshold;
}

void add_anharmonic_rows(const AnalysisResult& analysis, const AnharmonicResult& anharmonic,
                         const Vpt2Options& vpt2_options, bool with_levels, VariantOutcome& outcome) {
  const Vpt2Result& vpt2 = anharmonic.vpt2;
  const std::vector<int>& numbers = anharmonic.set_numbers;
  const std::size_t set_count = vpt2.sets.size();
  for (ScreenModeRow& row : outcome.modes) {
    const ModeLabel& label = analysis.modes.at(static_cast<std::size_t>(row.mode - 1));
    const int set = vpt2.set_of_mode.at(static_cast<std::size_t>(label.harmonic_index));
    const auto index = static_cast<Eigen::Index>(label.harmonic_index);
    row.x_diagonal_cm1 = vpt2.x_cm1(index, index);
    if (const VibrationalLevel* fundamental = level_with_quanta(vpt2, single_set_quanta(set_count, set, 1))) {
      row.vpt2_cm1 = fundamental->anharmonic_cm1;
      row.corrected_cm1 = finite_or_empty(fundamental->resonance_corrected_cm1);
    }
  }
  for (const ModeLabel& row_label : analysis.modes) {
    std::vector<double> row;
    for (const ModeLabel& column_label : analysis.modes)
      row.push_back(vpt2.x_cm1(row_label.harmonic_index, column_label.harmonic_index));
    outcome.x_matrix_cm1.push_back(std::move(row));
  }
  int counter = 0;
  for (const Resonance& resonance : vpt2.resonances) {
    ++counter;  // the candidate's number in the analysis document, stored or not
    if (!worth_storing(resonance, vpt2_options)) continue;
    ScreenResonanceRow row;
    row.resonance = counter;
    row.kind = to_string(resonance.kind);
    row.label = resonance_label(resonance, numbers, true);
    const auto set = [&](std::size_t k) { return resonance.sets.at(k); };
    const auto omega = [&](std::size_t k) {
      return vpt2.sets.at(static_cast<std::size_t>(set(k))).harmonic_cm1;
    };
    std::vector<int> lower_quanta(set_count, 0);
    std::vector<int> upper_quanta(set_count, 0);
    row.first = numbers.at(static_cast<std::size_t>(set(0)));
    if (resonance.kind == ResonanceKind::fermi_2) {
      row.second = numbers.at(static_cast<std::size_t>(set(1)));
      row.partner = numbers.at(static_cast<std::size_t>(set(2)));
      lower_quanta[static_cast<std::size_t>(set(0))] += 1;
      lower_quanta[static_cast<std::size_t>(set(1))] += 1;
      upper_quanta[static_cast<std::size_t>(set(2))] = 1;
      row.lower_harmonic_cm1 = omega(0) + omega(1);
      row.upper_harmonic_cm1 = omega(2);
      row.partner_species = vpt2.sets.at(static_cast<std::size_t>(set(2))).species;
    } else {
      const bool overtones = resonance.kind == ResonanceKind::darling_dennison;
      row.second = row.first;
      row.partner = numbers.at(static_cast<std::size_t>(set(1)));
      lower_quanta[static_cast<std::size_t>(set(0))] = 2;
      upper_quanta[static_cast<std::size_t>(set(1))] = overtones ? 2 : 1;
      row.lower_harmonic_cm1 = 2.0 * omega(0);
      row.upper_harmonic_cm1 = (overtones ? 2.0 : 1.0) * omega(1);
      row.partner_species = vpt2.sets.at(static_cast<std::size_t>(set(1))).species;
    }
    row.lower_label = level_label(lower_quanta, numbers, true);
    row.upper_label = level_label(upper_quanta, numbers, true);
    if (const VibrationalLevel* upper = level_with_quanta(vpt2, upper_quanta))
      row.band_cm1 = upper->anharmonic_cm1;
    row.gap_cm1 = resonance.gap_cm1;
    row.coupling_cm1 = resonance.coupling_cm1;
    row.criterion_value = std::isfinite(resonance.criterion_value) ? resonance.criterion_value
                                                                   : std::numeric_limits<double>::max();
    row.symmetry_allowed = resonance.symmetry_allowed;
    row.flagged = resonance.flagged;
    outcome.resonances.push_back(row);
  }
  if (!with_levels) return;
  counter = 0;
  for (const VibrationalLevel& level : vpt2.levels) {
    ScreenLevelRow row;
    row.level = ++counter;
    row.kind = to_string(level.kind);
    row.label = level_label(level.set_quanta, numbers, true);
    row.species = level.species;
    row.sublevel = level.sublevel + 1;
    row.degeneracy = level.degeneracy;
    if (level.activity_known) {
      row.ir_active = level.ir_active;
      row.raman_active = level.raman_active;
    }
    row.harmonic_cm1 = level.harmonic_cm1;
    row.vpt2_cm1 = level.anharmonic_cm1;
    row.corrected_cm1 = finite_or_empty(level.resonance_corrected_cm1);
    if (level.in_polyad()) row.polyad = level.polyad + 1;
    outcome.levels.push_back(row);
  }
}

void add_family_rows(const AnalysisResult& analysis, const FamiliesResult& families,
                     VariantOutcome& outcome) {
  int counter = 0;
  for (const FamilyResult& family : families.families) {
    ScreenFamilyRow row;
    row.family = ++counter;
    row.fundamental = fundamental_of_mode_number(analysis.modes, family.type.mode_numbers.at(0));
    row.species = family.type.species;
    row.description = family.type.description;
    row.copies = family.type.copies;
    row.standing = family.type.standing;
    row.continued = family.continued;
    row.energy_max_cm1 = family.energy_max_cm1;
    if (family.continued) {
      const ContinuationResult& backbone = family.backbone;
      row.status = to_string(backbone.status);
      row.message = backbone.message;
      row.points = static_cast<int>(backbone.points.size());
      row.events = static_cast<int>(backbone.events.size());
      if (!backbone.points.empty()) {
        row.first_frequency_cm1 = backbone.points.front().frequency_cm1;
        row.last_frequency_cm1 = backbone.points.back().frequency_cm1;
        row.last_energy_cm1 = backbone.points.back().energy_cm1;
      }
    }
    for (const ResonanceThreat& threat : family.type.resonance_threats)
      if (threat.symmetry_allowed) ++row.allowed_threats;
    outcome.families.push_back(row);
  }
  for (const std::string& warning : families.warnings) outcome.warnings.push_back(warning);
}

// For each mode of a variant, the parent's mode whose Cartesian displacement overlaps it
// most (|cos| of the unit displacement vectors), and the share of the variant mode's
// kinetic energy on the labelled atoms (the squared mass-weighted components).
void compare_with_parent(const AnalysisResult& parent, const AnalysisResult& variant,
                         const std::vector<IsotopeChoice>& labelled, VariantOutcome& outcome) {
  const HarmonicResult& p = parent.harmonic;
  const HarmonicResult& v = variant.harmonic;
  if (p.cartesian_displacements.rows() != v.cartesian_displacements.rows()) return;
  const std::vector<int> parent_number = mode_number_of_index(parent.modes);
  for (ScreenModeRow& row : outcome.modes) {
    const int index = variant.modes.at(static_cast<std::size_t>(row.mode - 1)).harmonic_index;
    const Eigen::VectorXd overlaps =
        (p.cartesian_displacements.transpose() * v.cartesian_displacements.col(index)).cwiseAbs();
    Eigen::Index best = 0;
    overlaps.maxCoeff(&best);
    row.parent_mode = parent_number.at(static_cast<std::size_t>(best));
    row.shift_cm1 = row.harmonic_cm1 - p.frequencies_cm1[best];
    double share = 0.0;
    for (const IsotopeChoice& choice : labelled)
      share += v.mass_weighted_modes.col(index).segment<3>(3 * (choice.atom_number - 1)).squaredNorm();
    row.labelled_share = share;
  }
}

std::string labelled_text(const std::vector<IsotopeChoice>& choices) {
  std::string text;
  for (const IsotopeChoice& choice : choices)
    text += fmt::format("{}{}={}", text.empty() ? "" : " ", choice.atom_number, choice.mass_number);
  return text;
}

double seconds_since(std::chrono::steady_clock::time_point start) {
  return std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
}

// Every stage of one variant; a failure fills outcome and returns. The analysis is kept
// for comparing a variant with its parent.
struct VariantRun {
  VariantOutcome outcome;
  std::optional<AnalysisResult> analysis;
};

class MoleculeScreen {
 public:
  MoleculeScreen(const ScreenSettings& settings, const StageListener& on_stage)
      : settings_(settings), on_stage_(on_stage) {}

  void enter(const char* stage) {
    stage_ = stage;
    if (on_stage_) on_stage_(stage);
  }
  const std::string& stage() const { return stage_; }

  // harmonic_only: just the analysis (a parent needed only to compare variants with).
  VariantRun run(const Molecule& molecule, const Potential& potential, const std::string& variant,
                 bool harmonic_only) {
    VariantRun run;
    VariantOutcome& outcome = run.outcome;
    outcome.variant = variant;
    const auto start = std::chrono::steady_clock::now();
    try {
      run_stages(molecule, potential, harmonic_only, run);
    } catch (const Error& error) {
      fail(outcome, error.what());
    } catch (const std::bad_alloc&) {
      fail(outcome, "ran out of memory (the worker's memory limit, or the machine's, was reached)");
    } catch (const std::exception& error) {
      fail(outcome, std::string("internal error: ") + error.what());
    }
    outcome.warnings = merge_repeated_warnings(outcome.warnings);
    outcome.seconds = seconds_since(start);
    return run;
  }

 private:
  void fail(VariantOutcome& outcome, const std::string& message) const {
    outcome.status = status_failed;
    outcome.failed_stage = stage_;
    outcome.message = message;
  }

  // The stages up to the settings' last; a stage that cannot run for this molecule (not a
  // minimum, say) fails the variant with its reason.
  void run_stages(const Molecule& molecule, const Potential& potential, bool harmonic_only, VariantRun& run) {
    VariantOutcome& outcome = run.outcome;
    enter(screen_stage::harmonic);
    AnalysisOptions options;
    options.symmetry.tolerance_angstrom = settings_.symmetry_tolerance_angstrom;
    run.analysis = analyze_molecule(molecule, potential, options);
    const AnalysisResult& analysis = *run.analysis;
    outcome.warnings = analysis.warnings;
    add_harmonic_rows(analysis, outcome);
    check_minimum(analysis, outcome);
    if (outcome.status == status_failed || harmonic_only || settings_.stages == ScreenStages::harmonic)
      return;
    enter(screen_stage::anharmonic);
    AnharmonicOptions anharmonic_options;
    anharmonic_options.vpt2.exclude_below_cm1 = settings_.vpt2_exclude_below_cm1;
    // Without a stored line list only the fundamentals and the resonances' upper levels
    // (fundamentals, overtones) are read; the combination levels were most of the work.
    anharmonic_options.vpt2.include_combination_levels = settings_.levels;
    const AnharmonicResult anharmonic = analyze_anharmonic(analysis, potential, anharmonic_options);
    if (!anharmonic.ok()) {
      fail(outcome, anharmonic.message);
      return;
    }
    for (const std::string& warning : anharmonic.warnings) outcome.warnings.push_back(warning);
    add_anharmonic_rows(analysis, anharmonic, anharmonic_options.vpt2, settings_.levels, outcome);
    if (settings_.stages != ScreenStages::families) return;
    enter(screen_stage::families);
    const FamiliesResult families =
        analyze_families(analysis, potential, screen_families_options(analysis, anharmonic, settings_));
    if (!families.ok()) {
      fail(outcome, families.message);
      return;
    }
    add_family_rows(analysis, families, outcome);
  }

  const ScreenSettings& settings_;
  const StageListener& on_stage_;
  std::string stage_ = screen_stage::read;
};

}  // namespace

FamiliesOptions screen_families_options(const AnalysisResult& analysis, const AnharmonicResult& anharmonic,
                                        const ScreenSettings& settings) {
  FamiliesOptions options;
  if (settings.family_energy_max_cm1 > 0.0)
    options.energy_max_cm1 = settings.family_energy_max_cm1;
  else
    options.quanta = settings.family_quanta;
  // As `analyze`: one frequency window for the families' resonance threats and the
  // perturbative Fermi candidates, so that the two lists can be compared pair by pair.
  options.enumeration.resonance_window_cm1 = Vpt2Options{}.fermi_gap_cm1;
  // As `analyze`: the families from the minimum only (born families cost 2-3 times more).
  options.branches.enabled = false;
  if (settings.all_families) return options;
  std::set<int> fundamentals;
  for (const Resonance& resonance : anharmonic.vpt2.resonances)
    if (resonance.flagged)
      for (int set : resonance.sets)
        fundamentals.insert(anharmonic.set_numbers.at(static_cast<std::size_t>(set)));
  if (fundamentals.empty()) {
    options.continue_families = false;
    return options;
  }
  options.mode_numbers =
      mode_numbers_of_fundamentals(analysis, std::vector<int>(fundamentals.begin(), fundamentals.end()));
  return options;
}

MoleculeOutcome screen_molecule(const ScreenTask& task, const ScreenSettings& settings,
                                const std::vector<IsotopeRule>& rules, const StageListener& on_stage) {
  MoleculeScreen screen(settings, on_stage);
  const auto start = std::chrono::steady_clock::now();
  const bool parent_wanted = std::find(task.variants.begin(), task.variants.end(), "") != task.variants.end();
  Molecule molecule;
  std::vector<std::string> read_warnings;
  std::unique_ptr<Potential> potential;
  try {
    screen.enter(screen_stage::read);
    ReadResult read = read_record(task.record);
    molecule = std::move(read.molecule);
    molecule.title = task.record.id;
    molecule.source = task.record.origin;
    read_warnings = std::move(read.warnings);
    screen.enter(screen_stage::potential);
    potential = make_potential(settings.potential, molecule);
  } catch (const std::exception& error) {
    const bool ours = dynamic_cast<const Error*>(&error) != nullptr;
    MoleculeOutcome failed = failed_outcome(
        task.variants, screen.stage(), ours ? error.what() : std::string("internal error: ") + error.what());
    failed.formula = molecule.atom_count() > 0 ? molecule.formula() : std::string();
    failed.atom_count = static_cast<int>(molecule.atom_count());
    for (VariantOutcome& variant : failed.variants) variant.seconds = seconds_since(start);
    return failed;
  }

  MoleculeOutcome outcome;
  outcome.formula = molecule.formula();
  outcome.atom_count = static_cast<int>(molecule.atom_count());
  const bool variants_wanted = task.variants.size() > (parent_wanted ? 1u : 0u);
  VariantRun parent;
  if (parent_wanted || variants_wanted) {
    parent = screen.run(molecule, *potential, "", !parent_wanted);
    parent.outcome.warnings.insert(parent.outcome.warnings.begin(), read_warnings.begin(),
                                   read_warnings.end());
    if (parent_wanted) outcome.variants.push_back(parent.outcome);
  }
  for (const std::string& variant : task.variants) {
    if (variant.empty()) continue;
    const auto rule =
        std::find_if(rules.begin(), rules.end(), [&](const IsotopeRule& r) { return r.text == variant; });
    if (rule == rules.end()) throw Error(fmt::format("no isotope rule '{}' was given", variant));
    VariantOutcome labelled_outcome;
    labelled_outcome.variant = variant;
    std::vector<IsotopeChoice> choices;
    Molecule labelled = molecule;
    try {
      screen.enter(screen_stage::isotope_rule);
      choices = isotope_choices(*rule, molecule);
      if (!choices.empty()) apply_isotopes(labelled, choices);
    } catch (const Error& error) {
      labelled_outcome.status = status_failed;
      labelled_outcome.failed_stage = screen_stage::isotope_rule;
      labelled_outcome.message = error.what();
      outcome.variants.push_back(labelled_outcome);
      continue;
    }
    if (choices.empty()) {
      labelled_outcome.status = status_not_applicable;
      labelled_outcome.message = "the rule matches no atom of this molecule";
      outcome.variants.push_back(labelled_outcome);
      continue;
    }
    VariantRun run = screen.run(labelled, *potential, variant, false);
    run.outcome.labelled_atoms = labelled_text(choices);
    if (parent.analysis && run.analysis)
      compare_with_parent(*parent.analysis, *run.analysis, choices, run.outcome);
    outcome.variants.push_back(std::move(run.outcome));
  }
  return outcome;
}

}  // namespace overtone
