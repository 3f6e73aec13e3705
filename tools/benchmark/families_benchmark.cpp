// Families benchmark: every symmetry-predicted family of water, ammonia, methane and
// benzene continued to 3 quanta at the default resolution and with the default checks
// (closure, energy drift, symmetry residual, Floquet multipliers at every point).
//
// Per family it prints the accepted points, the Newton iterations and integrations per
// point, the potential's evaluations per point (gradients, analytic Hessians, analytic
// Hessian–vector products, and their sum in gradient-equivalents: each Hessian and each
// Hessian–vector product weighted by its CPU time against one gradient, measured in the
// same process at the minimum), and the time per point against the unit of cost measured
// in the same continuation: one period integrated directly with the whole-space
// variational equations. Then the totals with wall-clock and CPU time of the process.
//
// With --threads N it also runs the whole stage (compute_molecular_families) once on one
// thread and once on N, reports the wall-clock speed-up and whether every number of the
// two results is identical. Prints tables; no pass/fail.
//
// Paracetamol runs only the whole stage with default options (the default selection for
// large molecules, one thread per core) and lists what was continued and left out.
//
// Usage: overtone-benchmark-families [--threads N] [MOLECULE ...]   (default: all)
#include <fmt/format.h>
#include <time.h>

#include <algorithm>
#include <chrono>
#include <cstdio>
#include <cstdlib>
#include <functional>
#include <string>
#include <thread>
#include <vector>

#include "core/error.hpp"
#include "families/families.hpp"
#include "families/molecular_system.hpp"
#include "molecule/read_molecule.hpp"
#include "pipeline/analysis.hpp"
#include "potential/make_potential.hpp"

namespace {

using namespace overtone;
using Clock = std::chrono::steady_clock;

double seconds_since(Clock::time_point start) {
  return std::chrono::duration<double>(Clock::now() - start).count();
}

// CPU time of the whole process (all threads): on a machine shared with other work,
// wall-clock time also counts the waits for a core.
double process_cpu_seconds() {
  timespec now{};
  clock_gettime(CLOCK_PROCESS_CPUTIME_ID, &now);
  return static_cast<double>(now.tv_sec) + 1e-9 * static_cast<double>(now.tv_nsec);
}

// Best over repetitions of the mean CPU time per call.
template <class Function>
double cpu_seconds_per_call(const Function& f) {
  double best = 1e300;
  for (int repetition = 0; repetition < 5; ++repetition) {
    int calls = 0;
    const double start = process_cpu_seconds();
    do {
      f();
      ++calls;
    } while (process_cpu_seconds() - start < 0.02);
    best = std::min(best, (process_cpu_seconds() - start) / calls);
  }
  return best;
}

struct Case {
  std::string name;
  std::string input;  // molecule file under molecules/, or SMILES
  bool smiles = false;
  std::string potential;  // file under potentials/, or a force-field name
  // Large molecules: only the whole stage as the pipeline runs it (default selection, one
  // thread per core), not every family on its own.
  bool stage_only = false;
};

// Weights of a Hessian and a Hessian–vector product in gradients (CPU time ratios).
struct Weights {
  double hessian = 0.0;
  double product = 0.0;
  double equivalents(std::size_t gradients, std::size_t hessians, std::size_t products) const {
    return static_cast<double>(gradients) + hessian * static_cast<double>(hessians) +
           product * static_cast<double>(products);
  }
};

Weights measure_weights(const Potential& potential, const Eigen::VectorXd& x) {
  Weights weights;
  Eigen::VectorXd gradient;
  const double gradient_s = cpu_seconds_per_call([&] { potential.energy_and_gradient(x, gradient); });
  if (potential.has_analytic_hessian())
    weights.hessian = cpu_seconds_per_call([&] { potential.hessian(x); }) / gradient_s;
  if (potential.has_analytic_hessian_vector_product()) {
    const Eigen::VectorXd direction = Eigen::VectorXd::Ones(x.size()).normalized();
    weights.product =
        cpu_seconds_per_call([&] { potential.hessian_vector_product(x, direction); }) / gradient_s;
  }
  return weights;
}

FamiliesOptions default_options() {
  FamiliesOptions options;
  options.quanta = 3.0;
  return options;
}

std::string short_type(const FamilyType& type) {
  return fmt::format("{} x{}", type.standing ? "standing" : "rotating", type.copies);
}

std::string joined(const std::vector<int>& numbers) { return fmt::format("{}", fmt::join(numbers, ",")); }

void print_line(const std::string& text) {
  std::printf("%s\n", text.c_str());
  std::fflush(stdout);
}

struct Prepared {
  Molecule molecule;
  std::unique_ptr<Potential> potential;
  AnalysisResult analysis;
  double analysis_s = 0.0;
};

Prepared prepare(const Case& c) {
  const std::string root = OVERTONE_SOURCE_DIR;
  ReadOptions read_options;
  read_options.input_is_smiles = c.smiles;
  Prepared p;
  p.molecule = read_molecule(c.smiles ? c.input : root + "/molecules/" + c.input, read_options).molecule;
  const bool file_potential = c.potential.find(".toml") != std::string::npos;
  p.potential =
      make_potential(file_potential ? root + "/potentials/" + c.potential : c.potential, p.molecule);
  const auto start = Clock::now();
  p.analysis = analyze_molecule(p.molecule, *p.potential);
  p.analysis_s = seconds_since(start);
  return p;
}

// Every number of two results that a report shows, compared exactly.
bool identical(const FamiliesResult& a, const FamiliesResult& b, std::string& difference) {
  if (a.families.size() != b.families.size()) {
    difference = "family count";
    return false;
  }
  for (std::size_t f = 0; f < a.families.size(); ++f) {
    const ContinuationResult& x = a.families[f].backbone;
    const ContinuationResult& y = b.families[f].backbone;
    if (x.status != y.status || x.points.size() != y.points.size() || x.events.size() != y.events.size() ||
        x.ladder.size() != y.ladder.size()) {
      difference = fmt::format("family {}: status or counts", f + 1);
      return false;
    }
    for (std::size_t i = 0; i < x.points.size(); ++i) {
      const OrbitPoint& p = x.points[i];
      const OrbitPoint& q = y.points[i];
      if (p.energy != q.energy || p.period != q.period || p.action != q.action ||
          p.amplitude != q.amplitude || p.closure_error != q.closure_error ||
          p.energy_drift != q.energy_drift || p.symmetry_residual != q.symmetry_residual ||
          p.floquet_moduli != q.floquet_moduli || p.initial_positions != q.initial_positions ||
          p.initial_momenta != q.initial_momenta) {
        difference = fmt::format("family {}, point {}", f + 1, i + 1);
        return false;
      }
    }
    for (std::size_t i = 0; i < x.events.size(); ++i)
      if (x.events[i].kind != y.events[i].kind || x.events[i].energy != y.events[i].energy ||
          x.events[i].partner_family != y.events[i].partner_family) {
        difference = fmt::format("family {}, event {}", f + 1, i + 1);
        return false;
      }
    for (std::size_t i = 0; i < x.ladder.size(); ++i)
      if (x.ladder[i].energy != y.ladder[i].energy) {
        difference = fmt::format("family {}, ladder level {}", f + 1, i);
        return false;
      }
  }
  return true;
}

// The whole stage with default options (the default selection, threads = cores): time,
// peak-free figures (points, evaluations) and what the selection left out.
void run_stage(const Case& c, const Prepared& p) {
  const AnalysisResult& analysis = p.analysis;
  print_line(fmt::format("\n== {} ({} atoms, {}, potential {}): {} modes, harmonic analysis {:.2f} s", c.name,
                         p.molecule.atom_count(), analysis.point_group.group.name, p.potential->description(),
                         analysis.harmonic.mode_count(), p.analysis_s));
  const auto started = Clock::now();
  const double cpu_started = process_cpu_seconds();
  const FamiliesResult result =
      compute_molecular_families(*p.potential, analysis.harmonic, analysis.point_group,
                                 analysis.mode_symmetry, report_mode_order(analysis), default_options());
  int continued = 0;
  for (const FamilyResult& family : result.families) continued += family.continued ? 1 : 0;
  print_line(
      fmt::format("    whole stage, default selection: {} of {} families continued on {} threads, {} points, "
                  "{:.1f} s wall, {:.1f} s CPU; {} gradients, {} Hessians, {} Hessian-vector products",
                  continued, result.families.size(), result.threads_used, result.points,
                  seconds_since(started), process_cpu_seconds() - cpu_started, result.gradient_evaluations,
                  result.hessian_evaluations, result.hessian_vector_products));
  if (!result.selection_note.empty())
    print_line(fmt::format("    left out: modes {} ({})", joined(result.left_out_mode_numbers),
                           result.selection_note));
  for (const FamilyResult& family : result.families)
    if (family.continued)
      print_line(fmt::format("    modes {:<6} {:<4} {:<18} {:>3} points, {:.1f} s",
                             joined(family.type.mode_numbers), family.type.species,
                             to_string(family.backbone.status), family.backbone.points.size(),
                             family.backbone.seconds));
}

// What branch switching costs: the whole stage on one thread without and with the born
// families, in the same process; the bifurcation search (probes) and the born families'
// continuation separately.
void run_branch_cost(const Case& c, const Prepared& p) {
  const AnalysisResult& analysis = p.analysis;
  auto run = [&](bool branches, double& wall, double& cpu) {
    FamiliesOptions options = default_options();
    options.threads = 1;
    options.branches.enabled = branches;
    const auto started = Clock::now();
    const double cpu_started = process_cpu_seconds();
    FamiliesResult result =
        compute_molecular_families(*p.potential, analysis.harmonic, analysis.point_group,
                                   analysis.mode_symmetry, report_mode_order(analysis), options);
    wall = seconds_since(started);
    cpu = process_cpu_seconds() - cpu_started;
    return result;
  };
  double wall_off = 0.0, cpu_off = 0.0, wall_on = 0.0, cpu_on = 0.0;
  const FamiliesResult without = run(false, wall_off, cpu_off);
  const FamiliesResult with = run(true, wall_on, cpu_on);
  int born = 0, born_points = 0;
  double born_seconds = 0.0;
  for (const FamilyResult& family : with.families)
    if (family.parent_family >= 0) {
      ++born;
      born_points += static_cast<int>(family.backbone.points.size());
      born_seconds += family.backbone.seconds;
    }
  print_line(fmt::format(
      "   branch switching ({}): {} born families ({} points, {} not born), {:.2f} s CPU with against {:.2f} "
      "s "
      "without = {:.2f}x; bifurcation search {} orbits, {:.2f} s; born families' continuation {:.2f} s; "
      "gradients {:.2f}x",
      c.name, born, born_points, with.birth_failures.size(), cpu_on, cpu_off,
      cpu_on / std::max(cpu_off, 1e-9), with.birth_probes, with.birth_seconds, born_seconds,
      static_cast<double>(with.gradient_evaluations) /
          static_cast<double>(std::max<std::size_t>(without.gradient_evaluations, 1))));
}

void run_case(const Case& c, int threads) {
  const Prepared p = prepare(c);
  if (c.stage_only) {
    run_stage(c, p);
    return;
  }
  const AnalysisResult& analysis = p.analysis;
  const Potential& potential = *p.potential;
  const std::vector<int> mode_order = report_mode_order(analysis);
  const FamiliesOptions options = default_options();
  const MolecularVibrationalSystem probe(potential, analysis.harmonic);
  const Weights weights = measure_weights(potential, analysis.harmonic.coordinates_angstrom);

  print_line(fmt::format("\n== {} ({} atoms, {}, potential {}): {} modes, harmonic analysis {:.2f} s", c.name,
                         p.molecule.atom_count(), analysis.point_group.group.name, potential.description(),
                         analysis.harmonic.mode_count(), p.analysis_s));
  print_line(fmt::format("   Hessian products: {}", probe.hessian_method()));
  print_line(
      fmt::format("   gradient-equivalents: 1 per gradient, {:.2f} per analytic Hessian, {:.2f} per analytic "
                  "Hessian-vector product (CPU time ratios measured here)",
                  weights.hessian, weights.product));
  print_line("   settings: defaults, to 3 quanta");
  run_branch_cost(c, p);

  // The stage's own enumeration, then each family continued as compute_families does
  // (continue_family with energy_max = (quanta + 1)·ħω of its block) on this thread.
  // Called family by family so that the reference period is integrated once per block:
  // it depends on the block's period against the whole space's fastest motion, not on
  // the family.
  FamiliesOptions enumeration_options = options;
  enumeration_options.continue_families = false;
  FamiliesResult result = compute_molecular_families(potential, analysis.harmonic, analysis.point_group,
                                                     analysis.mode_symmetry, mode_order, enumeration_options);
  const EvaluationCounts counts_before = potential.counts();
  const auto start = Clock::now();
  const double cpu_start = process_cpu_seconds();
  std::vector<double> block_reference(result.blocks.size(), 0.0);
  print_line(
      fmt::format("{:>3} {:<9} {:<6} {:<12} {:>2} {:>2} {:<18} {:>4} {:>6} {:>5} {:>5} {:>6} {:>5} {:>5} "
                  "{:>6} {:>7} {:>6} {:>7} {:>6}",
                  "fam", "modes", "spec", "type", "m", "r", "status", "pts", "newt/p", "var/p", "orb/p",
                  "grad/p", "hes/p", "hvp/p", "geq/p", "s/pt", "ladder", "ref/s", "ratio"));
  int points = 0, iterations = 0, variational = 0, orbits = 0;
  double point_s = 0.0, reference_weighted = 0.0, ladder_s = 0.0, references_s = 0.0;
  std::size_t gradients = 0, hessians = 0, products = 0;
  double worst_closure = 0.0, worst_drift = 0.0, worst_symmetry = 0.0;
  for (std::size_t i = 0; i < result.families.size(); ++i) {
    FamilyResult& family = result.families[i];
    const int block = family.type.block;
    ContinuationOptions continuation = options.continuation;
    family.energy_max = (options.quanta + 1.0) * result.units.hbar * result.blocks[block].angular_frequency;
    family.energy_max_cm1 = family.energy_max * result.units.cm1_per_energy;
    continuation.energy_max = family.energy_max;
    // Families come block by block, so the first of each block measures its reference
    // (outside the points' cost: it runs before the first point).
    const bool measured_here = block_reference[block] <= 0.0;
    continuation.measure_reference_cost = measured_here;
    family.backbone = continue_family(probe, family.type.seed, continuation);
    family.continued = true;
    const ContinuationResult& b = family.backbone;
    if (measured_here) {
      block_reference[block] = b.seconds_per_variational_period;
      references_s += b.seconds_per_variational_period;
    }
    const int count = static_cast<int>(b.points.size());
    double family_point_s = 0.0;
    for (const OrbitPoint& point : b.points) family_point_s += point.seconds;
    const double family_ladder_s =
        b.seconds - family_point_s - (measured_here ? block_reference[block] : 0.0);
    const double reference = block_reference[block];
    auto per = [&](double total) { return count > 0 ? total / count : 0.0; };
    // Per point: everything the family cost (points, failed attempts, ladder) over its points.
    print_line(fmt::format(
        "{:>3} {:<9} {:<6} {:<12} {:>2} {:>2} {:<18} {:>4} {:>6.2f} {:>5.2f} {:>5.2f} {:>6.0f} {:>5.1f} "
        "{:>5.1f} "
        "{:>6.0f} {:>7.4f} {:>6.3f} {:>7.4f} {:>6.2f}",
        i + 1, joined(family.type.mode_numbers), family.type.species, short_type(family.type),
        b.reduced_dimension, b.shift_denominator, to_string(b.status), count, per(b.newton_iterations),
        per(b.variational_integrations), per(b.orbit_integrations),
        per(static_cast<double>(b.gradient_evaluations)), per(static_cast<double>(b.hessian_evaluations)),
        per(static_cast<double>(b.hessian_vector_products)),
        per(weights.equivalents(b.gradient_evaluations, b.hessian_evaluations, b.hessian_vector_products)),
        per(family_point_s), family_ladder_s, reference,
        reference > 0.0 ? per(family_point_s) / reference : 0.0));
    points += count;
    iterations += b.newton_iterations;
    variational += b.variational_integrations;
    orbits += b.orbit_integrations;
    point_s += family_point_s;
    ladder_s += family_ladder_s;
    reference_weighted += count * reference;
    gradients += b.gradient_evaluations;
    hessians += b.hessian_evaluations;
    products += b.hessian_vector_products;
    for (const OrbitPoint& point : b.points) {
      worst_closure = std::max(worst_closure, point.closure_error);
      worst_drift = std::max(worst_drift, point.energy_drift);
      worst_symmetry = std::max(worst_symmetry, point.symmetry_residual);
    }
  }
  const double families_s = seconds_since(start);
  const double families_cpu_s = process_cpu_seconds() - cpu_start;
  const EvaluationCounts counts = potential.counts();
  auto per = [&](double total) { return points > 0 ? total / points : 0.0; };
  print_line(
      fmt::format("    total {}: {} families, {} points, {:.2f} Newton, {:.2f} variational and {:.2f} plain "
                  "integrations per point; {:.4f} s per point = {:.2f} reference periods (points-weighted)",
                  c.name, result.families.size(), points, per(iterations), per(variational), per(orbits),
                  per(point_s), reference_weighted > 0.0 ? point_s / reference_weighted : 0.0));
  print_line(fmt::format(
      "    per accepted point (ladders and failed attempts included): {:.0f} gradients, {:.1f} Hessians, "
      "{:.1f} "
      "Hessian-vector products = {:.0f} gradient-equivalents",
      per(static_cast<double>(gradients)), per(static_cast<double>(hessians)),
      per(static_cast<double>(products)), per(weights.equivalents(gradients, hessians, products))));
  print_line(fmt::format(
      "    time {:.1f} s wall, {:.1f} s CPU (one thread; reference periods {:.1f} s included): points {:.1f} "
      "s, "
      "ladders {:.1f} s; the potential evaluated {} gradients, {} Hessians, {} Hessian-vector products",
      families_s, families_cpu_s, references_s, point_s, ladder_s, counts.gradients - counts_before.gradients,
      counts.hessians - counts_before.hessians,
      counts.hessian_vector_products - counts_before.hessian_vector_products));
  print_line(
      fmt::format("    checks, largest over all points: closure error {:.2g}, energy drift {:.2g}, symmetry "
                  "residual {:.2g}",
                  worst_closure, worst_drift, worst_symmetry));
  for (const std::string& warning : result.warnings) print_line("    warning: " + warning);

  if (threads <= 1) return;
  // The whole stage as the pipeline calls it, on one thread and on `threads`.
  FamiliesOptions serial = options;
  serial.threads = 1;
  FamiliesOptions parallel = options;
  parallel.threads = threads;
  auto timed = [&](const FamiliesOptions& o, double& wall, double& cpu) {
    const auto started = Clock::now();
    const double cpu_started = process_cpu_seconds();
    FamiliesResult r = compute_molecular_families(potential, analysis.harmonic, analysis.point_group,
                                                  analysis.mode_symmetry, mode_order, o);
    wall = seconds_since(started);
    cpu = process_cpu_seconds() - cpu_started;
    return r;
  };
  double serial_wall = 0.0, serial_cpu = 0.0, parallel_wall = 0.0, parallel_cpu = 0.0;
  const FamiliesResult one = timed(serial, serial_wall, serial_cpu);
  const FamiliesResult many = timed(parallel, parallel_wall, parallel_cpu);
  std::string difference;
  const bool same = identical(one, many, difference);
  // What the schedule allows on idle cores: the pool hands out families in order to the
  // first free worker; with the serial run's family times that gives a makespan.
  std::vector<double> finish(static_cast<std::size_t>(threads), 0.0);
  double total_family_s = 0.0;
  for (const FamilyResult& family : one.families) {
    if (!family.continued) continue;
    *std::min_element(finish.begin(), finish.end()) += family.backbone.seconds;
    total_family_s += family.backbone.seconds;
  }
  const double makespan = *std::max_element(finish.begin(), finish.end());
  double load[3] = {0.0, 0.0, 0.0};
  if (std::FILE* file = std::fopen("/proc/loadavg", "r")) {
    if (std::fscanf(file, "%lf %lf %lf", &load[0], &load[1], &load[2]) != 3) load[0] = -1.0;
    std::fclose(file);
  }
  print_line(
      fmt::format("    whole stage: 1 thread {:.1f} s wall ({:.1f} s CPU), {} threads {:.1f} s wall ({:.1f} "
                  "s CPU): speed-up "
                  "{:.2f}; results {}",
                  serial_wall, serial_cpu, threads, parallel_wall, parallel_cpu, serial_wall / parallel_wall,
                  same ? "identical" : "differ (" + difference + ")"));
  print_line(
      fmt::format("    the family schedule allows a speed-up of {:.2f} on {} idle cores; load average during "
                  "the run {:.1f} on {} cores",
                  makespan > 0.0 ? total_family_s / makespan : 0.0, threads, load[0],
                  std::thread::hardware_concurrency()));
}

}  // namespace

int main(int argc, char** argv) {
  const std::vector<Case> cases = {
      {"water", "water.xyz", false, "water.toml"},
      {"carbon-dioxide", "carbon-dioxide.xyz", false, "carbon-dioxide.toml"},
      {"ammonia", "ammonia.xyz", false, "ammonia.toml"},
      {"methane", "methane.xyz", false, "methane.toml"},
      {"benzene", "c1ccccc1", true, "MMFF94"},
      // Paracetamol (20 atoms, 54 modes): the default selection for large molecules.
      {"paracetamol", "CC(=O)Nc1ccc(O)cc1", true, "MMFF94", true},
  };
  std::vector<std::string> wanted;
  int threads = 1;
  for (int i = 1; i < argc; ++i) {
    const std::string argument = argv[i];
    if (argument == "--threads" && i + 1 < argc) {
      threads = std::max(1, std::atoi(argv[++i]));
      continue;
    }
    if (std::none_of(cases.begin(), cases.end(), [&](const Case& c) { return c.name == argument; })) {
      std::fprintf(stderr,
                   "unknown molecule '%s' (water, carbon-dioxide, ammonia, methane, benzene, paracetamol)\n",
                   argument.c_str());
      return 2;
    }
    wanted.push_back(argument);
  }
  for (const char* line : {
           "Families to 3 quanta, default options. Per family: m = shooting dimension, r = integrations "
           "cover T/r",
           "(the orbit's symmetry supplies the rest); per accepted point (everything the family cost, ladder "
           "and",
           "failed attempts included, over its accepted points): Newton iterations, variational and plain",
           "integrations, gradients, analytic Hessians, analytic Hessian-vector products, "
           "gradient-equivalents;",
           "s/pt = time of the points (correction, verification, Floquet) per point; ladder = s spent "
           "refining",
           "the semiclassical levels; ref/s = one period integrated with direct whole-space variational",
           "equations, measured once per block in this run; ratio = s/pt / ref/s.",
       })
    print_line(line);
  const auto started = Clock::now();
  for (const Case& c : cases) {
    if (!wanted.empty() && std::find(wanted.begin(), wanted.end(), c.name) == wanted.end()) continue;
    try {
      run_case(c, threads);
    } catch (const Error& error) {
      print_line(fmt::format("\n== {}: failed: {}", c.name, error.what()));
    }
  }
  print_line(fmt::format("\nbenchmark time {:.1f} s", seconds_since(started)));
  return 0;
}
