#include "families/resonant_seeds.hpp"

#include <fmt/format.h>

#include <cmath>

#include "core/option_checks.hpp"
#include "core/units.hpp"

namespace overtone {

namespace {

// a = ½ ∂³V/∂q₁²∂q₂ by central differences of the Hessian along q₂.
double cubic_coupling(const VibrationalSystem& system, int lower, int partner, double step) {
  const int n = system.dimension();
  Eigen::MatrixXd direction = Eigen::MatrixXd::Zero(n, 1);
  direction(lower, 0) = 1.0;
  Eigen::VectorXd plus = Eigen::VectorXd::Zero(n), minus = plus;
  plus(partner) = step;
  minus(partner) = -step;
  Eigen::MatrixXd at_plus, at_minus;
  system.hessian_times(plus, direction, at_plus);
  system.hessian_times(minus, direction, at_minus);
  // ∂²V/∂q₁² = ω₁² + 2a q₂ + …
  return (at_plus(lower, 0) - at_minus(lower, 0)) / (4.0 * step);
}

}  // namespace

void ResonantSeedOptions::validate() const {
  option_checks::require_non_negative("resonant seed", "relative_detuning", relative_detuning);
}

std::vector<ResonantFamily> resonant_families(const VibrationalSystem& system,
                                              const std::vector<ModeBlock>& blocks, const FamilyType& lower,
                                              double start_energy, const ResonantSeedOptions& options) {
  options.validate();
  std::vector<ResonantFamily> result;
  if (!(options.relative_detuning > 0.0) || lower.block < 0) return result;
  const ModeBlock& block = blocks[static_cast<std::size_t>(lower.block)];
  if (block.coordinates.size() != 1) return result;
  const ResonanceThreat* threat = nullptr;
  for (const ResonanceThreat& candidate : lower.resonance_threats) {
    const ModeBlock& partner = blocks[static_cast<std::size_t>(candidate.partner_block)];
    const double detuning = partner.angular_frequency - 2.0 * block.angular_frequency;
    if (candidate.order == 2 && candidate.symmetry_allowed && partner.coordinates.size() == 1 &&
        std::abs(detuning) <= options.relative_detuning * block.angular_frequency)
      threat = &candidate;
  }
  if (threat == nullptr) return result;
  const ModeBlock& partner = blocks[static_cast<std::size_t>(threat->partner_block)];
  const int q1 = block.coordinates.front(), q2 = partner.coordinates.front();
  const double omega1 = block.angular_frequency, omega2 = partner.angular_frequency;
  // A step of a thousandth of the partner's amplitude at the start energy: the
  // differences err by ~(step)²·V⁽⁵⁾, far below a.
  const double step = 1e-3 * std::sqrt(2.0 * start_energy) / omega2;
  const double a = cubic_coupling(system, q1, q2, step);
  const double kappa = a / (omega1 * std::sqrt(2.0 * omega2));
  constexpr double negligible = 1e-12;  // relative to ω₁²/amplitude: no secular coupling
  if (std::abs(a) * std::sqrt(2.0 * start_energy) / omega2 <= negligible * omega1 * omega1) return result;
  // E = ω₁I₁ + ω₂I₂ + κ I₁ √I₂ cos ψ with I₁ = 4I₂; the coupling term is O(√E) smaller.
  const double action2 = start_energy / (4.0 * omega1 + omega2);
  const double action1 = 4.0 * action2;
  for (const double phase : {1.0, -1.0}) {
    ResonantFamily family;
    family.type = lower;
    family.replaced_block = lower.block;
    family.partner_block = threat->partner_block;
    family.coupling = a;
    family.shift_coefficient = phase * kappa / std::sqrt(6.0 * omega1);
    family.type.mode_numbers = {block.mode_numbers.front(), partner.mode_numbers.front()};
    family.type.resonance_threats.clear();
    const double frequency = omega1 + phase * kappa * std::sqrt(action2);
    family.type.description = fmt::format(
        "mixed oscillation of the 1:2 resonance of modes {} and {}, {} (mode {} at its largest positive "
        "displacement when mode {} is at its {}), seeded from the normal form",
        block.mode_numbers.front(), partner.mode_numbers.front(), phase > 0 ? "in phase" : "out of phase",
        partner.mode_numbers.front(), block.mode_numbers.front(), phase > 0 ? "turning points" : "centre");
    family.note = fmt::format(
        "replaces the family of mode {} alone: 1:2 resonance with mode {} (detuning {:.3g}, "
        "within {:.3g} of its frequency)",
        block.mode_numbers.front(), partner.mode_numbers.front(), omega2 - 2.0 * omega1,
        options.relative_detuning);
    FamilySeed& seed = family.type.seed;
    seed.angular_frequency = frequency;
    BranchStart start;
    start.positions = Eigen::VectorXd::Zero(system.dimension());
    start.momenta = start.positions;
    start.positions(q1) = std::sqrt(2.0 * action1 / omega1);
    // cos ψ = cos(2φ₁ − φ₂) = ±1 with φ₁(0) = 0: q₂(0) = ±its amplitude.
    start.positions(q2) = phase * std::sqrt(2.0 * action2 / omega2);
    start.period = 2.0 * units::pi / frequency;
    start.energy = start_energy;
    start.direction = Eigen::VectorXd::Zero(2 * system.dimension());
    start.direction.head(system.dimension()) = start.positions.normalized();
    constexpr double radial_step = 1e-3;  // keep the seed's amplitude, up to a thousandth
    start.step = radial_step;
    seed.branch = start;
    seed.linear_mode = start.positions.cast<std::complex<double>>();
    result.push_back(std::move(family));
  }
  return result;
}

}  // namespace overtone
