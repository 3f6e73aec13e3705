// VPT2 on shipped molecules and potentials: the Morse diatomic against its closed form and
// the handbook, the carbon dioxide Fermi dyad against the measured pair, water's
// anharmonicity constants against published ones, invariance under rotation and atom
// reordering.
#include <gtest/gtest.h>

#include <cmath>

#include "anharmonic/force_constants.hpp"
#include "anharmonic/vpt2.hpp"
#include "core/units.hpp"
#include "support/molecule_helpers.hpp"

namespace overtone {
namespace {

using testing::prepare;
using testing::prepare_symmetric;

// Central differences with h = 0.02 err by about h²/6 of the next derivative: for a Morse
// oscillator x = −5φ₃²/(48ω) + φ₄/16 moves by ~4e-5 relative, i.e. 0.002 cm⁻¹ of 53.
constexpr double morse_tolerance_cm1 = 0.01;
// Re-evaluating the same field in another frame or atom order: finite-difference round-off
// of displaced Hessians (1e-12·ω/h²) and rotated mode signs only.
constexpr double invariance_tolerance_cm1 = 1e-5;
// The full scheme averages further estimates (from mixed displacements) into φ_iijj; they
// differ by the O(h²) truncation error, 1e-3 cm⁻¹ at most on these levels.
constexpr double estimate_tolerance_cm1 = 1e-3;

const std::vector<IsotopeChoice> h2_16o{{1, 16}, {2, 1}, {3, 1}};
const std::vector<IsotopeChoice> c12_o16{{1, 16}, {2, 12}, {3, 16}};

// V = D (1 − exp(−a (r − r_e)))² between two atoms, with analytic gradient and Hessian.
class MorseDiatomic : public Potential {
 public:
  MorseDiatomic(double depth_kcal_mol, double width_per_angstrom, double r_e)
      : depth_(depth_kcal_mol), width_(width_per_angstrom), r_e_(r_e) {}
  std::string description() const override { return "test Morse diatomic"; }
  std::size_t atom_count() const override { return 2; }
  bool has_analytic_hessian() const override { return true; }

 protected:
  double compute_energy(const Eigen::VectorXd& x) const override {
    const double e = std::exp(-width_ * ((x.segment<3>(3) - x.segment<3>(0)).norm() - r_e_));
    return depth_ * (1 - e) * (1 - e);
  }
  double compute_energy_and_gradient(const Eigen::VectorXd& x, Eigen::VectorXd& g) const override {
    const Eigen::Vector3d d = x.segment<3>(3) - x.segment<3>(0);
    const double r = d.norm(), e = std::exp(-width_ * (r - r_e_));
    const double dv = 2 * depth_ * (1 - e) * width_ * e;
    g.segment<3>(3) = dv * d / r;
    g.segment<3>(0) = -dv * d / r;
    return depth_ * (1 - e) * (1 - e);
  }
  Eigen::MatrixXd compute_hessian(const Eigen::VectorXd& x) const override {
    const Eigen::Vector3d d = x.segment<3>(3) - x.segment<3>(0);
    const double r = d.norm(), e = std::exp(-width_ * (r - r_e_));
    const double dv = 2 * depth_ * (1 - e) * width_ * e;
    const double d2v = 2 * depth_ * width_ * width_ * e * (2 * e - 1);
    const Eigen::Vector3d u = d / r;
    const Eigen::Matrix3d block =
        d2v * u * u.transpose() + dv / r * (Eigen::Matrix3d::Identity() - u * u.transpose());
    Eigen::MatrixXd h(6, 6);
    h << block, -block, -block, block;
    return h;
  }

 private:
  double depth_, width_, r_e_;
};

TEST(Vpt2Morse, ShippedHydrogenChlorideMatchesTheHandbook) {
  // H³⁵Cl, Huber and Herzberg (1979): ω_e = 2990.946, ω_e x_e = 52.8186 cm⁻¹ (the values the
  // shipped potential was built from; see potentials/hcl-morse.toml). For a Morse
  // oscillator VPT2 is exact: x = −ω_e x_e, fundamental ω_e − 2ω_e x_e.
  const auto hcl = prepare("hcl.xyz", "hcl-morse.toml", {{1, 1}, {2, 35}});
  const auto fc = compute_force_constants(*hcl.potential, hcl.harmonic);
  const auto vpt2 = run_vpt2(fc, hcl.harmonic);
  EXPECT_NEAR(vpt2.harmonic_cm1[0], 2990.946, 0.01);
  EXPECT_NEAR(vpt2.x_cm1(0, 0), -52.8186, morse_tolerance_cm1);
  EXPECT_EQ(vpt2.x_coriolis_cm1(0, 0), 0.0);
  ASSERT_EQ(vpt2.levels.size(), 2u);
  EXPECT_NEAR(vpt2.levels[0].anharmonic_cm1, 2990.946 - 2 * 52.8186, morse_tolerance_cm1);
  // Overtone: 2ω_e − 6ω_e x_e.
  EXPECT_NEAR(vpt2.levels[1].anharmonic_cm1, 2 * 2990.946 - 6 * 52.8186, 3 * morse_tolerance_cm1);
}

TEST(Vpt2Morse, ClosedFormAnharmonicityForAnotherMorseOscillator) {
  // ω_e x_e = ω_e²/(4 D_e) (Morse 1929; any spectroscopy text), with ω_e = sqrt(2 D a²/μ).
  const double depth_cm1 = 20000.0, width = 2.2, r_e = 0.92;
  const MorseDiatomic morse(depth_cm1 * units::kcal_mol_per_cm1, width, r_e);
  Eigen::VectorXd x(6);
  x << 0.1, -0.2, 0.3, 0.1 + r_e * 0.6, -0.2 + r_e * 0.8, 0.3;
  const Eigen::Vector2d masses(1.00782503, 18.99840316);
  const HarmonicResult harmonic = analyze_normal_modes(x, masses, morse.hessian(x));
  const double mu = masses[0] * masses[1] / masses.sum();
  const double omega_cm1 = std::sqrt(2.0 * depth_cm1 * units::kcal_mol_per_cm1 * width * width / mu) *
                           units::cm1_per_internal_angular_frequency;
  EXPECT_NEAR(harmonic.frequencies_cm1[0], omega_cm1, 1e-6 * omega_cm1);
  const auto analytic = run_vpt2(compute_force_constants(morse, harmonic), harmonic);
  EXPECT_NEAR(analytic.x_cm1(0, 0), -omega_cm1 * omega_cm1 / (4.0 * depth_cm1), morse_tolerance_cm1);
}

TEST(Vpt2CarbonDioxide, FermiDyadIsFlaggedAndSplit) {
  const auto co2 = prepare_symmetric("carbon-dioxide.xyz", "carbon-dioxide.toml", c12_o16);
  const auto fc = compute_force_constants(*co2.potential, co2.adapted.harmonic, co2.adapted.symmetry);
  const auto vpt2 = run_vpt2(fc, co2.adapted.harmonic);
  // Sets in ascending order: bend (Πu), symmetric stretch (Σg+), antisymmetric stretch (Σu+).
  ASSERT_EQ(vpt2.sets.size(), 3u);
  EXPECT_EQ(vpt2.sets[0].species, "Pi_u");
  EXPECT_EQ(vpt2.sets[1].species, "Sigma_g+");
  // The 1:2 resonance 2ν_bend ↔ ν_symmetric stretch: flagged and symmetry-allowed
  // (Σg+ occurs in [Πu]² = Σg+ + Δg), coupling √2·|φ_{1,2a,2a}|/4 with the bend pair.
  const Resonance* fermi = nullptr;
  for (const auto& r : vpt2.resonances)
    if (r.kind == ResonanceKind::fermi_1 && r.sets == std::vector<int>{0, 1}) fermi = &r;
  ASSERT_NE(fermi, nullptr);
  EXPECT_TRUE(fermi->flagged);
  EXPECT_TRUE(fermi->symmetry_allowed);
  EXPECT_NEAR(fermi->coupling_cm1, std::sqrt(2.0) * std::abs(fc.constants.cubic(2, 0, 0)) / 4.0, 1e-9);
  EXPECT_NEAR(fermi->gap_cm1, 2 * 673.0 - 1354.0, 0.05);  // the field's harmonic wavenumbers (its header)

  // Textbook numbering: ν1 (Σg+, set 1), ν2 (Πu, set 0), ν3 (Σu+, set 2).
  const std::vector<int> nu1_quanta{0, 1, 0}, overtone_nu2_quanta{2, 0, 0};
  const VibrationalLevel* nu1 = nullptr;
  const VibrationalLevel* overtone_sigma = nullptr;
  const VibrationalLevel* overtone_delta = nullptr;
  for (const auto& level : vpt2.levels) {
    if (level.set_quanta == nu1_quanta) nu1 = &level;
    if (level.set_quanta == overtone_nu2_quanta && level.species == "Sigma_g+") overtone_sigma = &level;
    if (level.set_quanta == overtone_nu2_quanta && level.species == "Delta_g") overtone_delta = &level;
  }
  ASSERT_NE(nu1, nullptr);
  ASSERT_NE(overtone_sigma, nullptr);
  ASSERT_NE(overtone_delta, nullptr);
  ASSERT_TRUE(nu1->in_polyad());
  EXPECT_EQ(nu1->polyad, overtone_sigma->polyad);
  EXPECT_FALSE(overtone_delta->in_polyad());  // the l = 2 level has no Σg+ partner
  ASSERT_EQ(nu1->partners.size(), 1u);
  EXPECT_EQ(&vpt2.levels[static_cast<std::size_t>(nu1->partners[0])], overtone_sigma);
  // Mutual exclusion in D∞h: ν1 Raman only, the bend IR only.
  EXPECT_TRUE(nu1->raman_active);
  EXPECT_FALSE(nu1->ir_active);
  EXPECT_TRUE(vpt2.levels[0].ir_active);

  // Measured Raman dyad of ¹²C¹⁶O₂: 1285.41 and 1388.18 cm⁻¹ (Álvarez, Tejeda, Fernández,
  // Molecules 29, 5103 (2024), abstract; the classic values, Herzberg 1945, 1285.5 and
  // 1388.3). The field's harmonic part is fitted and its Fermi coupling tuned (|k122| =
  // 71.5 cm⁻¹), but its stretch anharmonicity is a Morse estimate and it has no quartic
  // bend terms: 10 cm⁻¹ for the positions, 5 cm⁻¹ for the splitting.
  const double lower = std::min(nu1->resonance_corrected_cm1, overtone_sigma->resonance_corrected_cm1);
  const double upper = std::max(nu1->resonance_corrected_cm1, overtone_sigma->resonance_corrected_cm1);
  EXPECT_NEAR(lower, 1285.41, 10.0);
  EXPECT_NEAR(upper, 1388.18, 10.0);
  EXPECT_NEAR(upper - lower, 1388.18 - 1285.41, 5.0);
  // Deperturbed, both lie near 1330 cm⁻¹: the resonance, not the diagonal, makes the gap.
  EXPECT_LT(std::abs(nu1->anharmonic_cm1 - overtone_sigma->anharmonic_cm1), 10.0);
  // Strong mixing of the dyad (the measured dyad is nearly 50:50 as well).
  ASSERT_EQ(nu1->mixing.size(), 2u);
  EXPECT_GT(nu1->mixing[1].weight, 0.3);
}

TEST(Vpt2Water, AnharmonicityConstantsAgreeWithPublishedOnes) {
  // W. S. Benedict, N. Gailar and E. K. Plyler, J. Chem. Phys. 24, 1139 (1956), the x_ij of
  // H₂¹⁶O (from memory): x11 = −42.576, x22 = −16.813, x33 = −47.566, x12 = −15.933,
  // x13 = −165.824, x23 = −20.332 cm⁻¹ (1 = symmetric stretch, 2 = bend, 3 = antisymmetric
  // stretch). Tolerance: the shipped field has the published harmonic part but only four
  // anharmonic constants (f_rrr, f_rrrr, f_ααα, f_rαα; no f_rr'r, f_rrα, f_rrαα, f_αααα, …),
  // so constants involving the bend are short by what those terms give, up to a few cm⁻¹;
  // 8 cm⁻¹ (5% of the largest) bounds the shortfall, and every sign and the ordering of
  // magnitudes must agree.
  const auto water = prepare_symmetric("water.xyz", "water.toml", h2_16o);
  const auto fc = compute_force_constants(*water.potential, water.adapted.harmonic, water.adapted.symmetry);
  const auto vpt2 = run_vpt2(fc, water.adapted.harmonic);
  EXPECT_TRUE(vpt2.resonances.empty() || !vpt2.resonances.front().flagged);
  // Harmonic order: bend (0), symmetric stretch (1), antisymmetric stretch (2).
  const int stretch = 1, bend = 0, antisymmetric = 2;
  const double published[3][3] = {
      {-42.576, -15.933, -165.824}, {-15.933, -16.813, -20.332}, {-165.824, -20.332, -47.566}};
  const int index[3] = {stretch, bend, antisymmetric};
  constexpr double water_tolerance_cm1 = 8.0;
  for (int a = 0; a < 3; ++a)
    for (int b = a; b < 3; ++b) {
      const double x = vpt2.x_cm1(index[a], index[b]);
      EXPECT_NEAR(x, published[a][b], water_tolerance_cm1) << "x" << a + 1 << b + 1;
      EXPECT_LT(x, 0.0);
    }
  EXPECT_LT(vpt2.x_cm1(stretch, antisymmetric), vpt2.x_cm1(antisymmetric, antisymmetric));
  EXPECT_LT(vpt2.x_cm1(antisymmetric, antisymmetric), vpt2.x_cm1(bend, bend));
  // The Coriolis part is where the theory puts it: between the bend and the antisymmetric
  // stretch (ζ about the axis perpendicular to the plane), nowhere between a1 modes.
  EXPECT_GT(vpt2.x_coriolis_cm1(bend, antisymmetric), 1.0);
  EXPECT_NEAR(vpt2.x_coriolis_cm1(bend, stretch), 0.0, 1e-9);
}

TEST(Vpt2Invariance, RotatedAndReorderedWaterGivesTheSameConstants) {
  const auto original = prepare("water.xyz", "water.toml", h2_16o);
  const auto vpt2 =
      run_vpt2(compute_force_constants(*original.potential, original.harmonic), original.harmonic);
  // Rotate and translate the molecule and swap the two hydrogen atoms (the field is
  // written per O–H bond, so the swap exchanges its two stretch coordinates).
  ReadOptions read;
  read.isotopes = h2_16o;
  Molecule moved = read_molecule(testing::source_path("molecules/water.xyz"), read).molecule;
  std::swap(moved.atoms[1], moved.atoms[2]);
  const Eigen::Matrix3d rotation =
      Eigen::AngleAxisd(2.1, Eigen::Vector3d(0.3, -1.0, 0.4).normalized()).toRotationMatrix();
  for (auto& atom : moved.atoms)
    atom.position_angstrom = rotation * atom.position_angstrom + Eigen::Vector3d(1.0, 2.0, -3.0);
  const auto potential = load_valence_force_field(testing::source_path("potentials/water.toml"), moved);
  const HarmonicResult harmonic =
      testing::harmonic_at_minimum(*potential, moved.coordinates(), moved.masses());
  const auto other = run_vpt2(compute_force_constants(*potential, harmonic), harmonic);
  EXPECT_LT((vpt2.x_cm1 - other.x_cm1).cwiseAbs().maxCoeff(), invariance_tolerance_cm1);
  EXPECT_LT((vpt2.x_coriolis_cm1 - other.x_coriolis_cm1).cwiseAbs().maxCoeff(), invariance_tolerance_cm1);
  for (std::size_t k = 0; k < vpt2.levels.size(); ++k)
    EXPECT_NEAR(vpt2.levels[k].anharmonic_cm1, other.levels[k].anharmonic_cm1, invariance_tolerance_cm1);
}

TEST(Vpt2Invariance, SymmetryAdaptedAndPlainRoutesAgree) {
  // The group only prunes and averages: the levels of methane (Td, degenerate E and T2
  // sets, whose overtones split into A1 + E + T2) are the same without it.
  const auto with = prepare_symmetric("methane.xyz", "methane.toml", {});
  const auto fc = compute_force_constants(*with.potential, with.adapted.harmonic, with.adapted.symmetry);
  const auto symmetric = run_vpt2(fc, with.adapted.harmonic);
  ForceConstantOptions plain;
  plain.use_symmetry = false;
  const auto fc_plain =
      compute_force_constants(*with.potential, with.adapted.harmonic, with.adapted.symmetry, plain);
  const auto without = run_vpt2(fc_plain, with.adapted.harmonic);
  ASSERT_EQ(symmetric.levels.size(), without.levels.size());
  std::vector<double> a, b;
  for (const auto& level : symmetric.levels) a.push_back(level.anharmonic_cm1);
  for (const auto& level : without.levels) b.push_back(level.anharmonic_cm1);
  std::sort(a.begin(), a.end());
  std::sort(b.begin(), b.end());
  for (std::size_t k = 0; k < a.size(); ++k) EXPECT_NEAR(a[k], b[k], 1e-3);
  // 2ν of the T2 bend splits into A1 + E + T2 ([T2]² = A1 + E + T2 in Td, Cotton 1990).
  int t2_overtone_sublevels = 0;
  for (const auto& level : symmetric.levels)
    if (level.kind == LevelKind::overtone &&
        symmetric
                .sets[static_cast<std::size_t>(
                    std::find(level.set_quanta.begin(), level.set_quanta.end(), 2) -
                    level.set_quanta.begin())]
                .species == "T2")
      t2_overtone_sublevels += level.degeneracy;
  EXPECT_EQ(t2_overtone_sublevels, 2 * 6);  // two T2 sets, six states each
}

TEST(Vpt2Invariance, SemiDiagonalQuarticFieldGivesTheSameLevels) {
  // The line list needs quartic constants with a repeated index, plus those with four
  // different indices inside pairs of one degenerate set (the combination levels of two
  // degenerate sets); the reduced scheme computes exactly these, so methane's levels must
  // not change when the full quartic field is left out.
  const auto methane = prepare_symmetric("methane.xyz", "methane.toml", {});
  ForceConstantOptions reduced;
  reduced.full_quartic_max_modes = 0;
  const auto full_fc =
      compute_force_constants(*methane.potential, methane.adapted.harmonic, methane.adapted.symmetry);
  const auto reduced_fc = compute_force_constants(*methane.potential, methane.adapted.harmonic,
                                                  methane.adapted.symmetry, reduced);
  ASSERT_TRUE(full_fc.full_quartic);
  ASSERT_FALSE(reduced_fc.full_quartic);
  EXPECT_LT(reduced_fc.evaluations.hessians, full_fc.evaluations.hessians);
  const auto full = run_vpt2(full_fc, methane.adapted.harmonic);
  const auto partial = run_vpt2(reduced_fc, methane.adapted.harmonic);
  ASSERT_EQ(full.levels.size(), partial.levels.size());
  for (std::size_t k = 0; k < full.levels.size(); ++k)
    EXPECT_NEAR(full.levels[k].anharmonic_cm1, partial.levels[k].anharmonic_cm1, estimate_tolerance_cm1);
}

}  // namespace
}  // namespace overtone
