#include "pipeline/orbit_frames.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <boost/numeric/odeint.hpp>
#include <cmath>

#include "core/error.hpp"
#include "core/option_checks.hpp"
#include "families/molecular_system.hpp"

namespace overtone {

namespace {

// The state (Q, P) of H = ½|P|² + V(Q) in one vector, for Boost.Odeint.
using State = std::vector<double>;

const OrbitPoint& nearest_point(const std::vector<OrbitPoint>& points, double energy_cm1) {
  return *std::min_element(points.begin(), points.end(), [&](const OrbitPoint& a, const OrbitPoint& b) {
    return std::abs(a.energy_cm1 - energy_cm1) < std::abs(b.energy_cm1 - energy_cm1);
  });
}

// Positions Q at frames_per_period + 1 equally spaced times over one period (the last
// one closes the orbit and serves the closure figure).
std::vector<Eigen::VectorXd> integrate_period(const MolecularVibrationalSystem& system,
                                              const OrbitPoint& point, const OrbitFramesOptions& options) {
  namespace odeint = boost::numeric::odeint;
  const int n = system.dimension();
  // Scaled so that one tolerance suits every amplitude: q̂ = Q/ℓ, p̂ = P/(ωℓ).
  const double omega = point.angular_frequency;
  const double length = std::max(point.initial_positions.norm(), point.initial_momenta.norm() / omega);
  if (!(length > 0.0) || !std::isfinite(length)) throw Error("the orbit has no amplitude");
  State state(static_cast<std::size_t>(2 * n));
  for (int k = 0; k < n; ++k) {
    state[static_cast<std::size_t>(k)] = point.initial_positions(k) / length;
    state[static_cast<std::size_t>(n + k)] = point.initial_momenta(k) / (omega * length);
  }
  Eigen::VectorXd q(n);
  Eigen::VectorXd gradient(n);
  auto equations = [&](const State& x, State& dxdt, double) {
    for (int k = 0; k < n; ++k) q(k) = x[static_cast<std::size_t>(k)] * length;
    system.gradient(q, gradient);
    for (int k = 0; k < n; ++k) {
      dxdt[static_cast<std::size_t>(k)] = omega * x[static_cast<std::size_t>(n + k)];
      dxdt[static_cast<std::size_t>(n + k)] = -gradient(k) / (omega * length);
    }
  };
  std::vector<Eigen::VectorXd> positions;
  auto observe = [&](const State& x, double) {
    Eigen::VectorXd frame(n);
    for (int k = 0; k < n; ++k) frame(k) = x[static_cast<std::size_t>(k)] * length;
    positions.push_back(frame);
  };
  const double tolerance = options.integration_tolerance;
  auto stepper = odeint::make_dense_output(tolerance, tolerance, odeint::runge_kutta_dopri5<State>());
  const double step = point.period / options.frames_per_period;
  odeint::integrate_n_steps(stepper, equations, state, 0.0, step,
                            static_cast<std::size_t>(options.frames_per_period), observe);
  for (const Eigen::VectorXd& frame : positions)
    if (!frame.allFinite()) throw Error("the integration of the orbit gave non-finite positions");
  return positions;
}

double largest_atom_distance(const Eigen::VectorXd& displacement) {
  double largest = 0.0;
  for (Eigen::Index atom = 0; atom + 2 < displacement.size(); atom += 3)
    largest = std::max(largest, displacement.segment<3>(atom).norm());
  return largest;
}

}  // namespace

void OrbitFramesOptions::validate() const {
  using namespace option_checks;
  const char* owner = "orbit frames";
  for (const double energy : energies_cm1) require_positive(owner, "energies_cm1", energy);
  require_positive(owner, "default_quanta", default_quanta);
  require(frames_per_period >= 4 && frames_per_period <= 1000, owner, "frames_per_period",
          "a whole number in [4, 1000]", frames_per_period);
  require_in_open(owner, "integration_tolerance", integration_tolerance, 0.0, 1e-3);
}

OrbitFramesResult sample_family_orbits(const AnalysisResult& analysis, const Potential& potential,
                                       const FamiliesResult& families, const OrbitFramesOptions& options) {
  options.validate();
  OrbitFramesResult result;
  const MolecularVibrationalSystem system(potential, analysis.harmonic);
  const Eigen::VectorXd equilibrium = analysis.molecule.coordinates();
  for (std::size_t index = 0; index < families.families.size(); ++index) {
    const FamilyResult& family = families.families[index];
    const std::vector<OrbitPoint>& points = family.backbone.points;
    if (!family.continued || points.empty()) continue;
    const double harmonic_cm1 =
        families.units.cm1_per_angular_frequency *
        families.blocks[static_cast<std::size_t>(family.type.block)].angular_frequency;
    std::vector<double> energies = options.energies_cm1;
    if (energies.empty()) energies.push_back(options.default_quanta * harmonic_cm1);
    auto [lowest, highest] =
        std::minmax_element(points.begin(), points.end(),
                            [](const OrbitPoint& a, const OrbitPoint& b) { return a.energy < b.energy; });
    for (double energy : energies) {
      const OrbitPoint& point = nearest_point(points, energy);
      FamilyOrbitFrames orbit;
      orbit.family = static_cast<int>(index) + 1;
      orbit.requested_energy_cm1 = energy;
      orbit.energy_cm1 = point.energy_cm1;
      orbit.frequency_cm1 = point.frequency_cm1;
      orbit.period_fs = point.period_fs;
      orbit.outside_backbone = energy < lowest->energy_cm1 || energy > highest->energy_cm1;
      try {
        const std::vector<Eigen::VectorXd> positions = integrate_period(system, point, options);
        for (std::size_t k = 0; k < positions.size(); ++k) {
          const Eigen::VectorXd displacement = system.cartesian_displacement_angstrom(positions[k]);
          if (k + 1 < positions.size()) {
            orbit.amplitude_angstrom =
                std::max(orbit.amplitude_angstrom, largest_atom_distance(displacement));
            orbit.frames_angstrom.push_back(equilibrium + displacement);
          } else {
            orbit.closure_angstrom =
                largest_atom_distance(displacement + equilibrium - orbit.frames_angstrom[0]);
          }
        }
      } catch (const Error& error) {
        result.warnings.push_back(
            fmt::format("family {}: no animation at {:.0f} cm-1: {}", orbit.family, energy, error.what()));
        continue;
      }
      result.orbits.push_back(std::move(orbit));
    }
  }
  return result;
}

}  // namespace overtone
