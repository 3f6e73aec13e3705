// Families benchmark: every symmetry-predicted family of water, ammonia, methane and
// benzene continued to 3 quanta. Per family it prints the accepted points, the Newton
// iterations and integrations per point, and the time per point against the unit of
// cost measured in the same continuation: one period integrated directly with the
// whole-space variational equations. Prints tables; no pass/fail.
//
// Usage: overtone-benchmark-families [MOLECULE ...]   (default: all four)
#include <fmt/format.h>

#include <algorithm>
#include <chrono>
#include <cstdio>
#include <functional>
#include <string>
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

struct Case {
  std::string name;
  std::string input;  // molecule file under molecules/, or SMILES
  bool smiles = false;
  std::string potential;  // file under potentials/, or a force-field name
  // Departures from the default options, and why (printed in the header).
  std::function<void(FamiliesOptions&)> adjust;
  std::string reason;
};

FamiliesOptions default_options() {
  FamiliesOptions options;
  options.quanta = 3.0;
  options.continuation.measure_reference_cost = true;  // the benchmark's unit, not a setting of the method
  return options;
}

// Every continuation setting that differs from a default-constructed ContinuationOptions,
// so that the header states exactly what a non-default case changed.
std::vector<std::string> changed_settings(const FamiliesOptions& options) {
  const ContinuationOptions d;
  const ContinuationOptions& o = options.continuation;
  std::vector<std::string> changed;
  auto number = [&](const char* name, double value, double fallback) {
    if (value != fallback) changed.push_back(fmt::format("{} = {:g} (default {:g})", name, value, fallback));
  };
  number("start_energy_fraction", o.start_energy_fraction, d.start_energy_fraction);
  number("integration_tolerance", o.integration_tolerance, d.integration_tolerance);
  number("variational_tolerance", o.variational_tolerance, d.variational_tolerance);
  number("closure_tolerance", o.closure_tolerance, d.closure_tolerance);
  number("max_newton_iterations", o.max_newton_iterations, d.max_newton_iterations);
  number("initial_step", o.initial_step, d.initial_step);
  number("min_step", o.min_step, d.min_step);
  number("max_step", o.max_step, d.max_step);
  number("max_energy_step_fraction", o.max_energy_step_fraction, d.max_energy_step_fraction);
  number("max_points", o.max_points, d.max_points);
  number("samples_per_period", o.samples_per_period, d.samples_per_period);
  number("compute_floquet", o.compute_floquet, d.compute_floquet);
  number("variational_nodes_per_period", o.variational_nodes_per_period, d.variational_nodes_per_period);
  number("stability_tolerance", o.stability_tolerance, d.stability_tolerance);
  number("partner_resolution", o.partner_resolution, d.partner_resolution);
  number("ladder_max_level", o.ladder_max_level, d.ladder_max_level);
  number("ladder_tolerance", o.ladder_tolerance, d.ladder_tolerance);
  return changed;
}

std::string short_type(const FamilyType& type) {
  return fmt::format("{} x{}", type.standing ? "standing" : "rotating", type.copies);
}

std::string joined(const std::vector<int>& numbers) { return fmt::format("{}", fmt::join(numbers, ",")); }

void print_line(const std::string& text) { std::printf("%s\n", text.c_str()); }

void run_case(const Case& c) {
  const std::string root = OVERTONE_SOURCE_DIR;
  ReadOptions read_options;
  read_options.input_is_smiles = c.smiles;
  const Molecule molecule =
      read_molecule(c.smiles ? c.input : root + "/molecules/" + c.input, read_options).molecule;
  const bool file_potential = c.potential.find(".toml") != std::string::npos;
  const auto potential =
      make_potential(file_potential ? root + "/potentials/" + c.potential : c.potential, molecule);

  auto start = Clock::now();
  const AnalysisResult analysis = analyze_molecule(molecule, *potential);
  const double analysis_s = seconds_since(start);
  std::vector<int> mode_order;
  for (const ModeLabel& mode : analysis.modes) mode_order.push_back(mode.harmonic_index);

  FamiliesOptions options = default_options();
  if (c.adjust) c.adjust(options);
  const MolecularVibrationalSystem probe(*potential, analysis.harmonic);

  print_line(fmt::format("\n== {} ({} atoms, {}, potential {}): {} modes, harmonic analysis {:.2f} s", c.name,
                         molecule.atom_count(), analysis.point_group.group.name, potential->description(),
                         analysis.harmonic.mode_count(), analysis_s));
  print_line(fmt::format("   Hessian-vector products: {} (the potential has {} analytic Hessian)",
                         probe.hessian_method(), potential->has_analytic_hessian() ? "an" : "no"));
  const std::vector<std::string> changed = changed_settings(options);
  if (changed.empty()) {
    print_line("   settings: defaults, to 3 quanta");
  } else {
    print_line("   settings: defaults, to 3 quanta, except");
    for (const std::string& line : changed) print_line("     " + line);
    if (!c.reason.empty()) print_line("   why: " + c.reason);
  }

  // The stage's own enumeration, then each family continued as compute_families does
  // (continue_family with energy_max = (quanta + 1)·ħω of its block). Called family by
  // family so that the reference period is integrated once per block: it depends on the
  // block's period against the whole space's fastest motion, not on the family, and for
  // benzene one costs as much as several points.
  FamiliesOptions enumeration_options = options;
  enumeration_options.continue_families = false;
  FamiliesResult result = compute_molecular_families(*potential, analysis.harmonic, analysis.point_group,
                                                     analysis.mode_symmetry, mode_order, enumeration_options);
  const std::size_t gradients_before = potential->counts().gradients;
  start = Clock::now();
  std::vector<double> block_reference(result.blocks.size(), 0.0);
  print_line(
      fmt::format("{:>3} {:<9} {:<6} {:<12} {:>2} {:>2} {:<18} {:>4} {:>6} {:>6} {:>6} {:>7} {:>8} {:>7} "
                  "{:>8} {:>7}",
                  "fam", "modes", "spec", "type", "m", "r", "status", "pts", "newt/p", "var/p", "orb/p",
                  "grad/p", "s/pt", "ladder", "ref/s", "ratio"));
  int points = 0, iterations = 0, variational = 0, orbits = 0;
  double point_s = 0.0, reference_weighted = 0.0, ladder_s = 0.0;
  for (std::size_t i = 0; i < result.families.size(); ++i) {
    FamilyResult& family = result.families[i];
    const int block = family.type.block;
    ContinuationOptions continuation = options.continuation;
    family.energy_max = (options.quanta + 1.0) * result.units.hbar * result.blocks[block].angular_frequency;
    family.energy_max_cm1 = family.energy_max * result.units.cm1_per_energy;
    continuation.energy_max = family.energy_max;
    // Families come block by block, so the first of each block measures its reference.
    const bool measured_here = block_reference[block] <= 0.0;
    continuation.measure_reference_cost = measured_here;
    family.backbone = continue_family(probe, family.type.seed, continuation);
    family.continued = true;
    const ContinuationResult& b = family.backbone;
    if (measured_here) block_reference[block] = b.seconds_per_variational_period;

    const int count = static_cast<int>(b.points.size());
    double family_point_s = 0.0;
    std::size_t family_gradients = 0;
    for (const OrbitPoint& point : b.points) {
      family_point_s += point.seconds;
      family_gradients += point.gradient_evaluations;
    }
    // The reference period runs inside the first point's analysis; it is not part of the
    // method's cost. What a family spends outside its points is the ladder refinement.
    const double reference = block_reference[block];
    const double reference_run = measured_here ? reference : 0.0;
    family_point_s -= reference_run;
    const double family_ladder_s = b.seconds - family_point_s - reference_run;
    const double per_point = count > 0 ? family_point_s / count : 0.0;
    auto per = [&](double total) { return count > 0 ? total / count : 0.0; };
    print_line(
        fmt::format("{:>3} {:<9} {:<6} {:<12} {:>2} {:>2} {:<18} {:>4} {:>6.2f} {:>6.2f} {:>6.2f} {:>7.0f} "
                    "{:>8.4f} {:>7.3f} {:>8.4f} {:>7.2f}",
                    i + 1, joined(family.type.mode_numbers), family.type.species, short_type(family.type),
                    b.reduced_dimension, b.shift_denominator, to_string(b.status), count,
                    per(b.newton_iterations), per(b.variational_integrations), per(b.orbit_integrations),
                    per(static_cast<double>(family_gradients)), per_point, family_ladder_s, reference,
                    reference > 0.0 ? per_point / reference : 0.0));
    std::fflush(stdout);
    points += count;
    iterations += b.newton_iterations;
    variational += b.variational_integrations;
    orbits += b.orbit_integrations;
    point_s += family_point_s;
    ladder_s += family_ladder_s;
    reference_weighted += count * reference;
  }
  const double families_s = seconds_since(start);
  const std::size_t gradients = potential->counts().gradients - gradients_before;
  auto per = [&](double total) { return points > 0 ? total / points : 0.0; };
  print_line(
      fmt::format("    total {}: {} families, {} points, {:.2f} Newton, {:.2f} variational and {:.2f} plain "
                  "integrations per point; {:.4f} s per point = {:.2f} reference periods (points-weighted)",
                  c.name, result.families.size(), points, per(iterations), per(variational), per(orbits),
                  per(point_s), reference_weighted > 0.0 ? point_s / reference_weighted : 0.0));
  double references_s = 0.0;
  for (const double reference : block_reference) references_s += reference;
  print_line(fmt::format(
      "    time {:.1f} s: points {:.1f} s, ladders {:.1f} s, reference periods {:.1f} s, other {:.1f} s; "
      "{} potential gradients ({:.3f} ms each at the rate of the whole run)",
      families_s, point_s, ladder_s, references_s, families_s - point_s - ladder_s - references_s, gradients,
      gradients > 0 ? 1e3 * families_s / static_cast<double>(gradients) : 0.0));
  for (const std::string& warning : result.warnings) print_line("    warning: " + warning);
}

}  // namespace

int main(int argc, char** argv) {
  std::vector<Case> cases = {
      {"water", "water.xyz", false, "water.toml", nullptr, ""},
      {"ammonia", "ammonia.xyz", false, "ammonia.toml", nullptr, ""},
      {"methane", "methane.xyz", false, "methane.toml", nullptr, ""},
      {"benzene", "c1ccccc1", true, "MMFF94",
       [](FamiliesOptions& options) {
         options.continuation.start_energy_fraction = 0.02;
         options.continuation.initial_step = 1.0;
         options.continuation.max_step = 2.0;
         options.continuation.max_energy_step_fraction = 0.34;
       },
       "no shipped force field, and MMFF94 has no analytic Hessian: Hessian products are central differences "
       "of gradients, so a point costs ~1e4 gradients. The default resolution (~30 points per family instead "
       "of ~8) would multiply the time of the points about fourfold. The backbone is coarser; the ladder "
       "levels are still refined on the family to the default tolerance (lowest E2u block: the same levels "
       "to 0.001 cm-1 with 16 and with 11 points)."},
  };
  std::vector<std::string> wanted(argv + 1, argv + argc);
  for (const std::string& name : wanted) {
    if (std::none_of(cases.begin(), cases.end(), [&](const Case& c) { return c.name == name; })) {
      std::fprintf(stderr, "unknown molecule '%s' (water, ammonia, methane, benzene)\n", name.c_str());
      return 2;
    }
  }
  for (const char* line : {
           "Families to 3 quanta. Per family: m = shooting dimension, r = integrations cover T/r (the "
           "orbit's",
           "symmetry supplies the rest); per accepted point: Newton iterations, variational and plain",
           "integrations, potential gradients (failed attempts included); s/pt = time of the points "
           "(correction,",
           "analysis, Floquet) per point; ladder = s spent refining the semiclassical levels; ref/s = one "
           "period",
           "integrated with direct whole-space variational equations, measured once per block in this run;",
           "ratio = s/pt / ref/s.",
       })
    print_line(line);
  const auto started = Clock::now();
  for (const Case& c : cases) {
    if (!wanted.empty() && std::find(wanted.begin(), wanted.end(), c.name) == wanted.end()) continue;
    try {
      run_case(c);
    } catch (const Error& error) {
      print_line(fmt::format("\n== {}: failed: {}", c.name, error.what()));
    }
    std::fflush(stdout);
  }
  print_line(fmt::format("\nbenchmark time {:.1f} s", seconds_since(started)));
  return 0;
}
