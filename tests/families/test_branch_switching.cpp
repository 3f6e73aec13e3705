// Families born at bifurcations: the detuned 1:2 resonance against its normal form, and
// the births of water and carbon dioxide on the shipped potentials.
#include <gtest/gtest.h>

#include <cmath>
#include <vector>

#include "core/error.hpp"
#include "families/branch_switching.hpp"
#include "families/families.hpp"
#include "support/model_systems.hpp"

namespace overtone {
namespace {

// Normal form of H = ½(p₁² + ω₁²q₁²) + ½(p₂² + ω₂²q₂²) + a q₁²q₂ near ω₂ = 2ω₁ + δ
// (first-order averaging; J. A. Sanders, F. Verhulst and J. Murdock, Averaging Methods in
// Nonlinear Dynamical Systems, 2nd ed. (Springer 2007), the 1:2 resonance; chapter from
// memory). With q_k = sqrt(2I_k/ω_k) cos φ_k the averaged coupling is
//   κ I₁ sqrt(I₂) cos(2φ₁ − φ₂),   κ = a / (ω₁ sqrt(2ω₂)).
// On the q₂ family (I₁ = 0, φ₂ = ω₂t) the q₁ motion in the frame turning at ω₂/2 has the
// quadratic Hamiltonian ½(ω₁ − ω₂/2)(x² + y²) + ½κ sqrt(I₂)(x² − y²): hyperbolic, with
// multipliers through −1 on the q₂ family's period, once |κ| sqrt(I₂) > |ω₁ − ω₂/2|.
// The birth energy E = ω₂I₂ is therefore
//   E_birth = ω₁² ω₂² δ² / (2a²)     for either sign of δ,
// and the family born there is supercritical (it exists above E_birth).
double normal_form_birth_energy(double omega1, double omega2, double cubic) {
  const double detuning = omega2 - 2.0 * omega1;
  return omega1 * omega1 * omega2 * omega2 * detuning * detuning / (2.0 * cubic * cubic);
}

// The normal form drops terms of relative size δ/ω₁ (the detuning inside the frequency
// factors) and aA/ω₁² (the second-order width of the instability tongue), each at most
// ~1% here, and the quartic's frequency shifts, ~0.3% (measured: 1e-4 for δ = ±0.02).
constexpr double kBirthEnergyRelative = 0.02;
constexpr double kSymmetryResidual = 1e-7;  // as for the families from the minimum
constexpr double kClosure = 1e-8;

struct Detuned {
  double omega1 = 1.0;
  double detuning = 0.02;
  double cubic = 0.1;
  double quartic = 1e-3;
};

FamiliesResult detuned_families(const Detuned& model, double energy_max) {
  const ResonantPair system(model.omega1, 2.0 * model.omega1 + model.detuning, model.cubic, model.quartic);
  FamiliesOptions options;
  options.energy_max_cm1 = energy_max;  // model units
  options.threads = 1;
  return compute_families(
      system, blocks_by_frequency(system.harmonic_angular_frequencies(), system.units()),
      symmetry_from_matrices(ResonantPair::symmetry_matrices(), ResonantPair::symmetry_labels()), options);
}

void expect_birth_as_predicted(const Detuned& model) {
  const double omega2 = 2.0 * model.omega1 + model.detuning;
  const double predicted = normal_form_birth_energy(model.omega1, omega2, model.cubic);
  const FamiliesResult result = detuned_families(model, 2.5 * predicted);
  ASSERT_GE(result.families.size(), 3u);
  // Families from the minimum: one per mode (blocks ascending: q₁ first).
  const FamilyResult& lower = result.families[0];
  const FamilyResult& upper = result.families[1];
  ASSERT_EQ(lower.type.mode_numbers, std::vector<int>{1});
  ASSERT_EQ(upper.type.mode_numbers, std::vector<int>{2});
  EXPECT_EQ(lower.backbone.status, ContinuationStatus::reached_energy_max) << lower.backbone.message;
  int born = 0;
  for (const FamilyResult& family : result.families) {
    if (family.parent_family < 0) continue;
    ++born;
    // Born of the q₂ family by period doubling, where the normal form says.
    EXPECT_EQ(family.parent_family, 1);
    EXPECT_EQ(family.birth_kind, FamilyEventKind::period_doubling);
    EXPECT_NEAR(family.birth_energy / predicted, 1.0, kBirthEnergyRelative)
        << "detuning " << model.detuning << ": born at " << family.birth_energy << ", normal form "
        << predicted;
    // Both modes, q₁ at half the q₂ frequency: q₁(t + T/2) = −q₁(t), one copy.
    EXPECT_EQ(family.type.mode_numbers, (std::vector<int>{1, 2}));
    EXPECT_EQ(family.type.copies, 1);
    ASSERT_EQ(family.type.subgroup.size(), 2u);
    EXPECT_EQ(family.type.subgroup[1].numerator, 1);
    EXPECT_EQ(family.type.subgroup[1].denominator, 2);
    ASSERT_EQ(family.backbone.status, ContinuationStatus::reached_energy_max) << family.backbone.message;
    const OrbitPoint& first = family.backbone.points.front();
    // Supercritical: it starts just above the birth with twice the parent's period.
    EXPECT_GE(first.energy, family.birth_energy);
    EXPECT_NEAR(first.angular_frequency / (0.5 * omega2), 1.0, 0.05);
    for (const OrbitPoint& point : family.backbone.points) {
      EXPECT_LT(point.closure_error, kClosure);
      EXPECT_LT(point.symmetry_residual, kSymmetryResidual);
      EXPECT_GT(std::abs(point.initial_positions(0)) + std::abs(point.initial_momenta(0)), 0.0);
    }
    // The other mixed family of the normal form is the q₁ family continued: at the same
    // energy the two differ (opposite phase of the coupling).
    const OrbitPoint& last = family.backbone.points.back();
    const OrbitPoint& lower_last = lower.backbone.points.back();
    EXPECT_NEAR(last.energy, lower_last.energy, 1e-9 * last.energy);
    EXPECT_GT(std::abs(last.angular_frequency - lower_last.angular_frequency), 1e-3 * model.omega1);
  }
  EXPECT_EQ(born, 1);
}

TEST(BranchSwitching, DetunedOneToTwoBirthAboveResonanceMatchesTheNormalForm) {
  expect_birth_as_predicted(Detuned{});
}

TEST(BranchSwitching, DetunedOneToTwoBirthBelowResonanceMatchesTheNormalForm) {
  Detuned model;
  model.detuning = -0.02;
  expect_birth_as_predicted(model);
}

// The prediction scales as δ²: halving the detuning quarters the birth energy.
TEST(BranchSwitching, BirthEnergyScalesWithTheSquareOfTheDetuning) {
  Detuned model;
  model.detuning = 0.01;
  expect_birth_as_predicted(model);
}

// Least-squares slope of log|y| against log x.
double log_log_slope(const std::vector<double>& x, const std::vector<double>& y) {
  double sx = 0.0, sy = 0.0, sxx = 0.0, sxy = 0.0;
  const double count = static_cast<double>(x.size());
  for (std::size_t k = 0; k < x.size(); ++k) {
    const double lx = std::log(x[k]), ly = std::log(std::abs(y[k]));
    sx += lx;
    sy += ly;
    sxx += lx * lx;
    sxy += lx * ly;
  }
  return (count * sxy - sx * sy) / (count * sxx - sx * sx);
}

// Exactly at 1:2 resonance (ω₂ = 2ω₁) the same normal form has, with I₁ = 4I₂ and
// cos ψ = ±1, the two mixed families with frequency ω₁ ± κ√I₂ and E ≈ 6ω₁I₂: shifts
// ±κ√(E/(6ω₁)), growing like √E with opposite signs; the lower mode has no family of its
// own; the q₂ family is a quartic oscillator, ω₂ + 3bE/ω₂³ (a shift ∝ E).
TEST(ResonantSeeds, ExactOneToTwoResonanceGivesTheTwoMixedFamiliesAndNoLoneLowerMode) {
  const double omega1 = 1.0, cubic = 0.1, quartic = 1e-3, energy_max = 4e-3;
  const ResonantPair system(omega1, 2.0 * omega1, cubic, quartic);
  FamiliesOptions options;
  options.energy_max_cm1 = energy_max;
  // From E = 2e-4: below it the q₂ orbit is harmonic to 1e-9 and its shooting Newton
  // does not resolve the period's shift.
  options.continuation.start_energy_fraction = 0.05;
  options.threads = 1;
  const FamiliesResult result = compute_families(
      system, blocks_by_frequency(system.harmonic_angular_frequencies(), system.units()),
      symmetry_from_matrices(ResonantPair::symmetry_matrices(), ResonantPair::symmetry_labels()), options);
  const double kappa = cubic / (omega1 * std::sqrt(2.0 * 2.0 * omega1));
  const double predicted_coefficient = kappa / std::sqrt(6.0 * omega1);
  // The next order of the normal form adds O(a²E/ω⁴) to the shift, ~5% of it at
  // energy_max: the exponent within 0.05, the prefactor at the lowest points within 5%.
  constexpr double kExponent = 0.05, kPrefactorRelative = 0.05;
  int mixed = 0, smooth = 0;
  std::vector<double> signs;
  for (const FamilyResult& family : result.families) {
    ASSERT_NE(family.type.mode_numbers, std::vector<int>{1}) << "a family of the lower mode alone";
    if (family.parent_family >= 0) continue;
    const auto& points = family.backbone.points;
    ASSERT_EQ(family.backbone.status, ContinuationStatus::reached_energy_max)
        << family.type.description << ": " << family.backbone.message;
    ASSERT_GE(points.size(), 5u);
    std::vector<double> energies, shifts;
    for (const OrbitPoint& point : points) {
      energies.push_back(point.energy);
      shifts.push_back(point.angular_frequency -
                       (family.type.mode_numbers.size() == 2 ? omega1 : 2.0 * omega1));
    }
    if (family.type.mode_numbers == std::vector<int>{2}) {
      ++smooth;
      EXPECT_NEAR(log_log_slope(energies, shifts), 1.0, kExponent);
      continue;
    }
    ++mixed;
    EXPECT_FALSE(family.resonance_note.empty());
    EXPECT_NEAR(log_log_slope(energies, shifts), 0.5, kExponent) << family.type.description;
    const double coefficient = shifts.front() / std::sqrt(energies.front());
    EXPECT_NEAR(std::abs(coefficient) / predicted_coefficient, 1.0, kPrefactorRelative);
    signs.push_back(coefficient);
    for (const OrbitPoint& point : points) EXPECT_LT(point.symmetry_residual, kSymmetryResidual);
  }
  EXPECT_EQ(mixed, 2);
  EXPECT_EQ(smooth, 1);
  ASSERT_EQ(signs.size(), 2u);
  EXPECT_LT(signs[0] * signs[1], 0.0);  // opposite shifts
}

TEST(BranchSwitching, OptionsAreChecked) {
  BranchSwitchingOptions options;
  options.depth = -1;
  EXPECT_THROW(options.validate(), Error);
  options = {};
  options.first_step = 0.0;
  EXPECT_THROW(options.validate(), Error);
  options = {};
  options.max_probes = 1;
  EXPECT_THROW(options.validate(), Error);
}

}  // namespace
}  // namespace overtone
