// Anharmonic force-constant benchmark: per molecule, the potential evaluations the
// displaced-Hessian scheme used against the count the same scheme needs without the
// point group, and the time of the force-constant stage against the harmonic stage it
// follows (Hessian + normal modes), both measured in the same process. A run of the
// force-constant stage with symmetry switched off is the in-process baseline for the
// savings and checks that the naive count is what that run really spends.
// Prints tables; no pass/fail.
#include <fmt/format.h>

#include <algorithm>
#include <chrono>
#include <cstdio>
#include <limits>
#include <memory>
#include <string>
#include <vector>

#include "anharmonic/force_constants.hpp"
#include "harmonic/harmonic.hpp"
#include "molecule/read_molecule.hpp"
#include "pipeline/analysis.hpp"
#include "potential/make_potential.hpp"
#include "symmetry/mode_symmetry.hpp"

namespace {

using namespace overtone;
using Clock = std::chrono::steady_clock;

double seconds(Clock::time_point start) {
  return std::chrono::duration<double>(Clock::now() - start).count();
}

// Mean time of one call, repeating it until the sample lasts this long: the analytic
// stages of the small molecules take microseconds, where one clock read or cache miss
// would otherwise be a visible part of the result.
constexpr double minimum_sample_s = 0.02;

template <class Work>
double time_per_call(Work&& work) {
  int calls = 0;
  const auto start = Clock::now();
  double elapsed = 0.0;
  do {
    work();
    ++calls;
    elapsed = seconds(start);
  } while (elapsed < minimum_sample_s);
  return elapsed / calls;
}

struct Case {
  std::string name;
  std::string source;     // SMILES, or a file under molecules/
  std::string potential;  // force-field name, or a file under potentials/
  bool smiles = false;
};

// The count a stage is paid in: analytic Hessians when the potential has them,
// gradients otherwise (the scheme never mixes the two, and energies alone are unused).
std::size_t cost_units(const EvaluationCounts& counts, bool analytic) {
  return analytic ? counts.hessians : counts.gradients;
}

bool same_counts(const EvaluationCounts& a, const EvaluationCounts& b) {
  return a.energies == b.energies && a.gradients == b.gradients && a.hessians == b.hessians;
}

std::string group_label(const AnalysisResult& analysis) {
  return analysis.symmetry_used ? analysis.point_group.group.name : "-";
}

}  // namespace

int main() {
  const std::string source = OVERTONE_SOURCE_DIR;
  // The shipped valence force fields (analytic Hessians) and MMFF94 from SMILES
  // (Hessians from gradients), from no symmetry to Td; adamantane is the largest that
  // keeps the whole run within a few minutes on a shared machine.
  const std::vector<Case> cases = {
      {"water", "water.xyz", "water.toml"},
      {"carbon dioxide", "carbon-dioxide.xyz", "carbon-dioxide.toml"},
      {"ammonia", "ammonia.xyz", "ammonia.toml"},
      {"methane", "methane.xyz", "methane.toml"},
      {"formaldehyde", "C=O", "MMFF94", true},
      {"acetaldehyde", "CC=O", "MMFF94", true},
      {"ethylene", "C=C", "MMFF94", true},
      {"methane", "C", "MMFF94", true},
      {"benzene", "c1ccccc1", "MMFF94", true},
      {"adamantane", "C1C2CC3CC1CC(C2)C3", "MMFF94", true},
  };
  // Best of several interleaved repetitions, so that load from other processes on the
  // shared cores inflates neither side of a ratio: at least the minimum, and more while a
  // molecule has used less than its budget, since short samples are the ones a busy
  // moment spoils most. The budget is what keeps the whole run near a minute.
  constexpr int minimum_repetitions = 3, maximum_repetitions = 9;
  constexpr double molecule_budget_s = 2.0;
  constexpr double unmeasured = std::numeric_limits<double>::infinity();

  struct Row {
    std::string name, potential, group, method, quartic;
    int modes = 0;
    bool analytic = false;
    std::size_t harmonic_units = 0;
    ForceConstantResult fc;
    EvaluationCounts unsymmetric_used;
    // Best times so far; none yet.
    double harmonic_s = unmeasured, adapt_s = unmeasured, fc_s = unmeasured, unsymmetric_s = unmeasured,
           evaluation_s = unmeasured;
    std::vector<std::string> notes;
  };
  std::vector<Row> rows;

  for (const auto& c : cases) {
    Row row;
    row.name = c.name;
    ReadOptions read_options;
    read_options.input_is_smiles = c.smiles;
    const Molecule molecule =
        read_molecule(c.smiles ? c.source : source + "/molecules/" + c.source, read_options).molecule;
    const std::string potential_name = c.smiles ? c.potential : source + "/potentials/" + c.potential;
    const auto potential = make_potential(potential_name, molecule);
    row.potential = c.smiles ? c.potential : "valence FF";
    row.analytic = potential->has_analytic_hessian();

    const AnalysisResult analysis = analyze_molecule(molecule, *potential);
    for (const auto& warning : analysis.warnings) row.notes.push_back(warning);
    row.group = group_label(analysis);
    row.modes = static_cast<int>(analysis.harmonic.mode_count());
    const SymmetryAdaptedHarmonic adapted =
        analysis.symmetry_used
            ? adapt_to_point_group(analysis.harmonic, analysis.point_group, analysis.mode_symmetry)
            : SymmetryAdaptedHarmonic{analysis.harmonic,
                                      ModeSymmetry::without_group(analysis.harmonic.frequencies_cm1)};

    const Eigen::VectorXd x = analysis.molecule.coordinates();
    const Eigen::VectorXd masses = analysis.molecule.masses();
    const EvaluationCounts before = potential->counts();
    compute_hessian(*potential, x);
    row.harmonic_units = cost_units(potential->counts(), row.analytic) - cost_units(before, row.analytic);

    ForceConstantOptions unsymmetric_options;
    unsymmetric_options.use_symmetry = false;
    const auto measuring = Clock::now();
    for (int repetition = 0; repetition < maximum_repetitions &&
                             (repetition < minimum_repetitions || seconds(measuring) < molecule_budget_s);
         ++repetition) {
      // One evaluation at the minimum, in the unit the stages pay: what the stage time
      // would be if it were nothing but evaluations.
      row.evaluation_s = std::min(row.evaluation_s, time_per_call([&] {
                                    Eigen::VectorXd gradient;
                                    if (row.analytic)
                                      potential->hessian(x);
                                    else
                                      potential->energy_and_gradient(x, gradient);
                                  }));
      row.harmonic_s = std::min(row.harmonic_s, time_per_call([&] {
                                  const HessianResult hessian = compute_hessian(*potential, x);
                                  analyze_normal_modes(x, masses, hessian.hessian);
                                }));
      row.adapt_s =
          std::min(row.adapt_s, time_per_call([&] {
                     if (analysis.symmetry_used)
                       adapt_to_point_group(analysis.harmonic, analysis.point_group, analysis.mode_symmetry);
                   }));
      row.fc_s = std::min(row.fc_s, time_per_call([&] {
                            row.fc = compute_force_constants(*potential, adapted.harmonic, adapted.symmetry);
                          }));
      row.unsymmetric_s = std::min(row.unsymmetric_s, time_per_call([&] {
                                     row.unsymmetric_used =
                                         compute_force_constants(*potential, adapted.harmonic,
                                                                 adapted.symmetry, unsymmetric_options)
                                             .evaluations;
                                   }));
    }
    row.method = row.analytic ? "analytic" : "gradients";
    row.quartic = row.fc.full_quartic ? "full" : "reduced";
    if (!row.fc.ok()) row.notes.push_back(row.fc.message);
    for (const auto& warning : row.fc.warnings) row.notes.push_back(warning);
    if (!same_counts(row.unsymmetric_used, row.fc.naive_evaluations))
      row.notes.push_back(fmt::format(
          "the run without symmetry made {} gradients and {} Hessians, the naive count says {} and {}",
          row.unsymmetric_used.gradients, row.unsymmetric_used.hessians, row.fc.naive_evaluations.gradients,
          row.fc.naive_evaluations.hessians));
    rows.push_back(std::move(row));
  }

  // Evaluations: "used" and "naive" are in the unit the potential is paid in (analytic
  // Hessians or gradients); "harmonic" is what the harmonic Hessian cost in that unit.
  std::printf("%s\n", fmt::format("{:<15} {:<10} {:>6} {:>5} {:<9} {:<7} {:>8} {:>7} {:>7} {:>6} {:>9} {:>7}",
                                  "molecule", "potential", "group", "modes", "hessians", "quartic",
                                  "harmonic", "used", "naive", "saving", "displaced", "by sym")
                          .c_str());
  for (const auto& r : rows) {
    const std::size_t used = cost_units(r.fc.evaluations, r.analytic);
    const std::size_t naive = cost_units(r.fc.naive_evaluations, r.analytic);
    std::printf(
        "%s\n",
        fmt::format("{:<15} {:<10} {:>6} {:>5} {:<9} {:<7} {:>8} {:>7} {:>7} {:>6.2f} {:>9} {:>7}", r.name,
                    r.potential, r.group, r.modes, r.method, r.quartic, r.harmonic_units, used, naive,
                    used ? double(naive) / used : 0.0, r.fc.displaced_hessians, r.fc.hessians_from_symmetry)
            .c_str());
  }

  std::printf(
      "used, naive, harmonic: analytic Hessians, or gradients for Hessians from gradients; naive = the same "
      "scheme without symmetry; displaced: normal-coordinate Hessians, of which by sym: from another by an "
      "operation\n");

  // Times: the force-constant stage (mode adaptation + constants) against the harmonic
  // stage; the share of the stage spent in potential evaluations (the rest is the
  // scheme's own bookkeeping); and the same constants without symmetry (the measured
  // saving).
  std::printf("\n%s\n", fmt::format("{:<15} {:<10} {:>10} {:>9} {:>9} {:>8} {:>10} {:>10} {:>8}", "molecule",
                                    "potential", "harmonic/s", "adapt/s", "fc/s", "fc/harm", "eval share",
                                    "no-sym/s", "speedup")
                            .c_str());
  for (const auto& r : rows) {
    const double stage_s = r.adapt_s + r.fc_s;
    const double evaluations_s = double(cost_units(r.fc.evaluations, r.analytic)) * r.evaluation_s;
    std::printf("%s\n",
                fmt::format("{:<15} {:<10} {:>10.2e} {:>9.2e} {:>9.2e} {:>8.1f} {:>9.0f}% {:>10.2e} {:>8.2f}",
                            r.name, r.potential, r.harmonic_s, r.adapt_s, r.fc_s, stage_s / r.harmonic_s,
                            100.0 * evaluations_s / stage_s, r.unsymmetric_s, r.unsymmetric_s / stage_s)
                    .c_str());
  }

  std::printf(
      "fc = mode adaptation + force constants; eval share: part of fc spent in potential evaluations; "
      "speedup: no-sym / fc\n");

  bool any_note = false;
  for (const auto& r : rows)
    for (const auto& note : r.notes) {
      if (!any_note) std::printf("\nnotes:\n");
      any_note = true;
      std::printf("  %s (%s): %s\n", r.name.c_str(), r.potential.c_str(), note.c_str());
    }
  return 0;
}
