#include "pipeline/analysis.hpp"

#include <algorithm>
#include <chrono>
#include <numeric>

#include "core/error.hpp"

namespace overtone {

namespace {

double seconds_since(std::chrono::steady_clock::time_point start) {
  return std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
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
  const Eigen::VectorXd x = result.molecule.coordinates();
  result.hessian = compute_hessian(potential, x, options.hessian);
  result.timings.hessian_s = seconds_since(clock);

  clock = std::chrono::steady_clock::now();
  result.harmonic = analyze_normal_modes(x, result.molecule.masses(), result.hessian.hessian, options.modes);
  result.timings.normal_modes_s = seconds_since(clock);
  for (const auto& warning : result.harmonic.warnings) result.warnings.push_back(warning);

  result.mode_order.resize(result.harmonic.mode_count());
  std::iota(result.mode_order.begin(), result.mode_order.end(), 0);
  std::stable_sort(result.mode_order.begin(), result.mode_order.end(), [&](int a, int b) {
    return result.harmonic.frequencies_cm1[a] > result.harmonic.frequencies_cm1[b];
  });
  return result;
}

}  // namespace overtone
