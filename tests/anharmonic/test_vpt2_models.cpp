// VPT2 on model force fields given directly in dimensionless normal coordinates, checked
// against closed forms of the harmonic-oscillator matrix elements and against exact
// diagonalization in a product harmonic-oscillator basis (DenseModel, written
// independently of the library's operator code).
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <map>
#include <set>

#include "anharmonic/effective_hamiltonian.hpp"
#include "anharmonic/vpt2.hpp"
#include "core/error.hpp"
#include "model_helpers.hpp"

namespace overtone {
namespace {

using testing::DenseModel;
using testing::model_force_constants;
using testing::model_harmonic;

// Matrix elements are sums of a few products of O(1) numbers times φ (≤ 300 cm⁻¹): round-off only.
constexpr double element_tolerance_cm1 = 1e-9;
// The closed-form x and the brute-force Van Vleck sums are the same algebra: round-off only
// on sums of terms of order φ²/ω ≈ 100 cm⁻¹.
constexpr double algebra_tolerance_cm1 = 1e-8;
// Exact levels near the bottom of the well converge in a basis of 30 states per mode far
// below this (the top states lie 30 quanta up): checked by the 26-state comparison below.
constexpr double basis_convergence_cm1 = 1e-6;

Vpt2Options no_coriolis() {
  Vpt2Options options;
  options.include_coriolis = false;
  return options;
}

// Eigenvalue whose eigenvector has the largest weight on the basis state index.
double eigenvalue_of_state(const Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd>& solver, int index) {
  Eigen::Index best = 0;
  solver.eigenvectors().row(index).cwiseAbs().maxCoeff(&best);
  return solver.eigenvalues()[best];
}

const VibrationalLevel& find_level(const Vpt2Result& r, std::vector<int> quanta) {
  for (const auto& level : r.levels)
    if (level.set_quanta == quanta) return level;
  throw std::runtime_error("level not found");
}

TEST(Vpt2Couplings, FermiCouplingsMatchDenseMatrixElements) {
  // ⟨2_i|H|1_j⟩ = φ_iij/4 and ⟨1_i 1_j|H|1_k⟩ = φ_ijk/(2√2) (derivation in docs/anharmonic.md),
  // checked on the dense Kronecker-product Hamiltonian.
  const double phi_iij = 37.0, phi_ijk = -53.0;
  ForceConstantTensors two(2);
  two.set_cubic(0, 0, 1, phi_iij);
  const DenseModel dense2({1000.0, 2000.0}, 8);
  const Eigen::MatrixXd v2 = dense2.anharmonic(two);
  EXPECT_NEAR(v2(dense2.index({2, 0}), dense2.index({0, 1})), phi_iij / 4.0, element_tolerance_cm1);

  ForceConstantTensors three(3);
  three.set_cubic(0, 1, 2, phi_ijk);
  const DenseModel dense3({1000.0, 1500.0, 2500.0}, 6);
  const Eigen::MatrixXd v3 = dense3.anharmonic(three);
  EXPECT_NEAR(v3(dense3.index({1, 1, 0}), dense3.index({0, 0, 1})), phi_ijk / (2.0 * std::sqrt(2.0)),
              element_tolerance_cm1);
}

TEST(Vpt2Couplings, OperatorElementsMatchDenseMatrices) {
  // Every cubic and quartic constant nonzero, all pairs of states with up to 3 quanta.
  const std::vector<double> omega{900.0, 1400.0, 2100.0};
  ForceConstantTensors t(3);
  int counter = 1;
  for (int i = 0; i < 3; ++i)
    for (int j = i; j < 3; ++j)
      for (int k = j; k < 3; ++k) {
        t.set_cubic(i, j, k, 10.0 * std::sin(1.7 * counter++));
        for (int l = k; l < 3; ++l) t.set_quartic(i, j, k, l, 5.0 * std::cos(0.9 * counter++));
      }
  const DenseModel dense(omega, 8);
  const Eigen::MatrixXd v = dense.anharmonic(t);
  const detail::AnharmonicOperator op(t, Eigen::Map<const Eigen::VectorXd>(omega.data(), 3));
  std::vector<detail::Quanta> states;
  for (int a = 0; a <= 3; ++a)
    for (int b = 0; a + b <= 3; ++b)
      for (int c = 0; a + b + c <= 3; ++c) states.push_back({a, b, c});
  for (const auto& m : states)
    for (const auto& n : states)
      EXPECT_NEAR(op.cubic_element(m, n) + op.quartic_element(m, n), v(dense.index(m), dense.index(n)),
                  element_tolerance_cm1);
}

// A three-mode field with every constant nonzero and no resonance closer than 150 cm⁻¹.
ForceConstantResult three_mode_field(const std::vector<double>& omega) {
  return model_force_constants(omega, [](ForceConstantTensors& t) {
    int counter = 1;
    for (int i = 0; i < 3; ++i)
      for (int j = i; j < 3; ++j)
        for (int k = j; k < 3; ++k) {
          t.set_cubic(i, j, k, 80.0 * std::sin(2.3 * counter++));
          for (int l = k; l < 3; ++l) t.set_quartic(i, j, k, l, 20.0 * std::cos(1.3 * counter++));
        }
  });
}

TEST(Vpt2ClosedForm, AnharmonicityConstantsEqualVanVleckSums) {
  // Nielsen/Mills x_ij in partial fractions against brute-force second-order sums over all
  // intermediate states (AnharmonicOperator::element), for every level of the line list.
  const std::vector<double> omega{1210.0, 1630.0, 3020.0};
  const auto fc = three_mode_field(omega);
  const Eigen::VectorXd w = fc.frequencies_cm1;
  const Eigen::MatrixXd x = detail::anharmonicity_constants(fc.constants, w);
  const detail::AnharmonicOperator op(fc.constants, w);
  const detail::Quanta ground{0, 0, 0};
  const double e0 = op.element(ground, ground, {ground});
  for (const detail::Quanta& n : std::vector<detail::Quanta>{{1, 0, 0},
                                                             {0, 1, 0},
                                                             {0, 0, 1},
                                                             {2, 0, 0},
                                                             {0, 2, 0},
                                                             {0, 0, 2},
                                                             {1, 1, 0},
                                                             {1, 0, 1},
                                                             {0, 1, 1},
                                                             {1, 1, 1},
                                                             {3, 0, 1}})
    EXPECT_NEAR(op.element(n, n, {n}) - e0, detail::term_value(w, x, n), algebra_tolerance_cm1)
        << "state " << n[0] << n[1] << n[2];
}

TEST(Vpt2ClosedForm, DeperturbedConstantsEqualSumsWithoutResonantPartners) {
  // 2ω₀ ≈ ω₂ (Fermi 1) and ω₀ + ω₁ ≈ ω₂ would be resonant; dropping their terms from x must
  // equal leaving the resonant partner states out of each state's second-order sum.
  const std::vector<double> omega{1010.0, 1985.0, 2030.0};
  const auto fc = three_mode_field(omega);
  const Eigen::VectorXd w = fc.frequencies_cm1;
  auto resonant = [](int a, int b, int c) {
    const std::multiset<int> lower{a, b};
    return c == 2 && (lower == std::multiset<int>{0, 0} || lower == std::multiset<int>{0, 1});
  };
  const Eigen::MatrixXd x = detail::anharmonicity_constants(fc.constants, w, resonant);
  const detail::AnharmonicOperator op(fc.constants, w);
  const std::vector<detail::Quanta> moves{{2, 0, -1}, {1, 1, -1}};
  auto partners = [&](const detail::Quanta& n) {
    detail::StateSet excluded{n};
    for (const auto& d : moves)
      for (int sign : {1, -1}) {
        detail::Quanta p = n;
        bool valid = true;
        for (int i = 0; i < 3; ++i) valid = valid && (p[i] += sign * d[i]) >= 0;
        if (valid) excluded.insert(p);
      }
    return excluded;
  };
  const detail::Quanta ground{0, 0, 0};
  const double e0 = op.element(ground, ground, partners(ground));
  for (const detail::Quanta& n : std::vector<detail::Quanta>{{1, 0, 0},
                                                             {0, 1, 0},
                                                             {0, 0, 1},
                                                             {2, 0, 0},
                                                             {0, 2, 0},
                                                             {0, 0, 2},
                                                             {1, 1, 0},
                                                             {1, 0, 1},
                                                             {0, 1, 1},
                                                             {2, 1, 1}})
    EXPECT_NEAR(op.element(n, n, partners(n)) - e0, detail::term_value(w, x, n), algebra_tolerance_cm1)
        << "state " << n[0] << n[1] << n[2];
}

TEST(Vpt2ClosedForm, SecondOrderCouplingsEqualSumsOverTheDenseBasis) {
  // The Van Vleck term ½ Σ_k ⟨m|V₃|k⟩⟨k|V₃|n⟩ [1/(E_m − E_k) + 1/(E_n − E_k)] between every
  // pair of states with up to 3 quanta (0 to 6 quanta apart) of a four-mode field with every
  // cubic constant nonzero, against the same sum over the whole dense basis (DenseModel,
  // independent of the operator code; 7 states per mode hold every intermediate, at most
  // 3 quanta above a state). The operator visits only the terms that can connect m and n.
  const std::vector<double> omega{730.0, 1190.0, 1655.0, 2430.0};
  const int modes = 4;
  ForceConstantTensors t(modes);
  int counter = 1;
  for (int i = 0; i < modes; ++i)
    for (int j = i; j < modes; ++j)
      for (int k = j; k < modes; ++k) t.set_cubic(i, j, k, 40.0 * std::sin(1.9 * counter++));
  const DenseModel dense(omega, 7);
  const Eigen::MatrixXd v = dense.anharmonic(t);
  const Eigen::Map<const Eigen::VectorXd> w(omega.data(), modes);
  const detail::AnharmonicOperator op(t, w);
  std::vector<detail::Quanta> states;
  for (int a = 0; a <= 3; ++a)
    for (int b = 0; a + b <= 3; ++b)
      for (int c = 0; a + b + c <= 3; ++c)
        for (int d = 0; a + b + c + d <= 3; ++d) states.push_back({a, b, c, d});
  std::vector<detail::Quanta> basis;
  for (int a = 0; a < 7; ++a)
    for (int b = 0; b < 7; ++b)
      for (int c = 0; c < 7; ++c)
        for (int d = 0; d < 7; ++d) basis.push_back({a, b, c, d});
  for (const auto& m : states)
    for (const auto& n : states) {
      const detail::StateSet excluded{m, n};
      const double em = op.zeroth_order(m), en = op.zeroth_order(n);
      double brute = 0.0;
      for (const auto& k : basis) {
        if (excluded.count(k)) continue;
        const double product = v(dense.index(m), dense.index(k)) * v(dense.index(k), dense.index(n));
        if (product == 0.0) continue;
        const double ek = op.zeroth_order(k);
        brute += 0.5 * product * (1.0 / (em - ek) + 1.0 / (en - ek));
      }
      EXPECT_NEAR(op.second_order(m, n, excluded), brute, algebra_tolerance_cm1)
          << "states " << m[0] << m[1] << m[2] << m[3] << " and " << n[0] << n[1] << n[2] << n[3];
    }
}

// Two-mode field scaled by λ: cubic constants ∝ λ, quartic ∝ λ², so VPT2 errs by O(λ⁴)
// away from resonance. Positive diagonal quartic constants keep the well bound.
ForceConstantResult two_mode_field(const std::vector<double>& omega, double lambda, double fermi_cubic) {
  return model_force_constants(omega, [&](ForceConstantTensors& t) {
    t.set_cubic(0, 0, 0, -150.0 * lambda);
    t.set_cubic(0, 0, 1, fermi_cubic * lambda);
    t.set_cubic(0, 1, 1, -90.0 * lambda);
    t.set_cubic(1, 1, 1, -200.0 * lambda);
    t.set_quartic(0, 0, 0, 0, 60.0 * lambda * lambda);
    t.set_quartic(0, 0, 1, 1, 25.0 * lambda * lambda);
    t.set_quartic(1, 1, 1, 1, 80.0 * lambda * lambda);
    t.set_quartic(0, 0, 0, 1, 10.0 * lambda * lambda);
    t.set_quartic(0, 1, 1, 1, -15.0 * lambda * lambda);
  });
}

struct ExactLevels {
  std::map<std::vector<int>, double> by_state;  // term value of the eigenstate dominated by each basis state
  Eigen::VectorXd term_values;                  // all, ascending, relative to the ground state
};

ExactLevels exact_levels(const std::vector<double>& omega, const ForceConstantResult& fc, int basis_size) {
  const DenseModel dense(omega, basis_size);
  const Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> solver(dense.hamiltonian(fc.constants));
  ExactLevels levels;
  const double ground = eigenvalue_of_state(solver, dense.index({0, 0}));
  for (const std::vector<int>& n : std::vector<std::vector<int>>{{1, 0}, {0, 1}, {2, 0}, {1, 1}, {0, 2}})
    levels.by_state[n] = eigenvalue_of_state(solver, dense.index(n)) - ground;
  levels.term_values = solver.eigenvalues().array() - ground;
  return levels;
}

TEST(Vpt2Exact, BasisIsConverged) {
  const std::vector<double> omega{1100.0, 1730.0};
  const auto fc = two_mode_field(omega, 1.0, 60.0);
  const auto a = exact_levels(omega, fc, 26), b = exact_levels(omega, fc, 30);
  for (const auto& [n, e] : a.by_state) EXPECT_NEAR(e, b.by_state.at(n), basis_convergence_cm1);
}

TEST(Vpt2Exact, ErrorScalesAsFourthPowerAwayFromResonance) {
  // Rayleigh–Schrödinger: with V₃ ∝ λ and V₄ ∝ λ² the first neglected energy terms are λ⁴,
  // so halving λ divides the VPT2 error by about 16 (ratio window 10–24 allows the λ⁶ tail).
  const std::vector<double> omega{1100.0, 1730.0};
  std::vector<double> errors;
  for (double lambda : {1.0, 0.5}) {
    const auto fc = two_mode_field(omega, lambda, 60.0);
    const auto vpt2 = run_vpt2(fc, model_harmonic(omega), no_coriolis());
    EXPECT_TRUE(vpt2.polyads.empty());
    const auto exact = exact_levels(omega, fc, 30);
    double worst = 0.0, shift = 0.0;
    for (const auto& [n, e] : exact.by_state) {
      const auto& level = find_level(vpt2, n);
      worst = std::max(worst, std::abs(level.anharmonic_cm1 - e));
      shift = std::max(shift, std::abs(level.anharmonic_cm1 - level.harmonic_cm1));
    }
    // Second-order theory captures the anharmonic shift (tens of cm⁻¹) to a few percent.
    EXPECT_LT(worst, 0.05 * shift) << "lambda " << lambda;
    errors.push_back(worst);
  }
  EXPECT_GT(errors[0] / errors[1], 10.0);
  EXPECT_LT(errors[0] / errors[1], 24.0);
}

TEST(Vpt2Exact, FermiPolyadReproducesExactDyad) {
  // 2ω₀ − ω₁ = −3 cm⁻¹: plain VPT2 fails for 2ν₀ and ν₁, the polyad (deperturbed x plus
  // the coupling φ₀₀₁/4) reproduces the exact dyad.
  const std::vector<double> omega{1000.0, 2003.0};
  const double lambda = 0.5;
  const auto fc = two_mode_field(omega, lambda, 50.0);
  const auto treated = run_vpt2(fc, model_harmonic(omega), no_coriolis());
  Vpt2Options plain_options = no_coriolis();
  plain_options.treat_resonances = false;
  const auto plain = run_vpt2(fc, model_harmonic(omega), plain_options);

  ASSERT_EQ(treated.resonances.size(), 1u);
  const Resonance& r = treated.resonances.front();
  EXPECT_EQ(r.kind, ResonanceKind::fermi_1);
  EXPECT_TRUE(r.flagged);
  EXPECT_NEAR(r.coupling_cm1, 50.0 * lambda / 4.0, element_tolerance_cm1);
  EXPECT_NEAR(r.gap_cm1, -3.0, element_tolerance_cm1);
  // Polyads: {2ν₀, ν₁}, {ν₀+ν₁, 3ν₀}, {2ν₁, 2ν₀+ν₁, 4ν₀}.
  EXPECT_EQ(treated.polyads.size(), 3u);
  EXPECT_EQ(find_level(treated, {2, 0}).polyad, find_level(treated, {0, 1}).polyad);
  EXPECT_FALSE(plain.resonances.front().flagged);
  EXPECT_TRUE(plain.polyads.empty());

  const auto exact = exact_levels(omega, fc, 30);
  // The exact dyad: the two eigenvalues nearest 2000 cm⁻¹.
  std::vector<double> dyad;
  for (Eigen::Index k = 0; k < exact.term_values.size(); ++k)
    if (std::abs(exact.term_values[k] - 2000.0) < 60.0) dyad.push_back(exact.term_values[k]);
  ASSERT_EQ(dyad.size(), 2u);
  std::vector<double> polyad{find_level(treated, {2, 0}).resonance_corrected_cm1,
                             find_level(treated, {0, 1}).resonance_corrected_cm1};
  std::vector<double> unperturbed{find_level(plain, {2, 0}).anharmonic_cm1,
                                  find_level(plain, {0, 1}).anharmonic_cm1};
  std::sort(polyad.begin(), polyad.end());
  std::sort(unperturbed.begin(), unperturbed.end());
  // Without a resonance treatment the small denominator spoils both levels by far more
  // than the coupling; with it, the error is of the order of the neglected higher-order
  // coupling terms (≈ W·(φ/ω) ≈ 0.1 cm⁻¹).
  constexpr double polyad_tolerance_cm1 = 0.5;
  for (int k = 0; k < 2; ++k) {
    EXPECT_NEAR(polyad[k], dyad[k], polyad_tolerance_cm1);
    EXPECT_GT(std::abs(unperturbed[k] - dyad[k]), 10.0 * polyad_tolerance_cm1);
  }
  // Mixing of a 3 cm⁻¹-detuned dyad with W = 6 cm⁻¹ is nearly complete.
  const auto& level = find_level(treated, {0, 1});
  ASSERT_EQ(level.mixing.size(), 2u);
  EXPECT_GT(level.mixing[1].weight, 0.3);
  EXPECT_NEAR(level.mixing[0].weight + level.mixing[1].weight, 1.0, 1e-12);
  EXPECT_EQ(level.partners.size(), 1u);
}

TEST(Vpt2Options, DefaultsAreValidAndBadValuesAreNamed) {
  EXPECT_NO_THROW(validate(Vpt2Options{}));
  Vpt2Options bad;
  bad.fermi_gap_cm1 = -1.0;
  try {
    validate(bad);
    FAIL() << "expected an error";
  } catch (const Error& e) {
    EXPECT_NE(std::string(e.what()).find("fermi_gap_cm1"), std::string::npos);
  }
}

}  // namespace
}  // namespace overtone
