// Double-harmonic IR intensities and Raman activities: the unit factor, closed forms for a
// diatomic, zero intensity where the species forbids it, Crawford's G sum rule for several
// molecules and isotopologues, and invariance under rotation, translation and atom order.
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <string>
#include <vector>

#include "core/error.hpp"
#include "core/units.hpp"
#include "intensity/dipole_source.hpp"
#include "intensity/harmonic_intensities.hpp"
#include "molecule/read_molecule.hpp"
#include "pipeline/analysis.hpp"
#include "pipeline/intensities.hpp"
#include "potential/make_potential.hpp"
#include "potential/mmff_potential.hpp"

namespace overtone {
namespace {

// Sums of a few dozen products of numbers of order one: round-off stays near 1e-14; the
// G sum rule is asked to hold to 1e-8 relative (the precision the rule is checked to).
constexpr double sum_rule_tolerance = 1e-8;
// Closed forms evaluated through an eigen-decomposition: agreement to ~1e-12 relative.
constexpr double closed_form_tolerance = 1e-10;
// An intensity forbidden by symmetry is round-off of the symmetrized modes (≈1e-12 of the
// allowed ones); 1e-9 of the strongest band is far below any measurable band.
constexpr double forbidden_fraction = 1e-9;
// Rotated, translated or reordered inputs are re-optimized: the minimum is reached to a
// gradient of 1e-6 kcal/mol/Å, which moves intensities by ~1e-6 relative.
constexpr double invariance_tolerance = 1e-4;

std::string source_path(const std::string& relative) {
  return std::string(OVERTONE_SOURCE_DIR) + "/" + relative;
}

Molecule read_shipped(const std::string& name, const std::vector<IsotopeChoice>& isotopes = {}) {
  ReadOptions options;
  options.isotopes = isotopes;
  return read_molecule(source_path("molecules/" + name + ".xyz"), options).molecule;
}

struct MmffRun {
  AnalysisResult analysis;
  HarmonicIntensityResult intensities;
};

// The molecule on MMFF94 with MMFF94's charges, or with the given model charges (MMFF94
// gives the C–H bond no charge increment, so its methane is dark: a fixed-charge limit).
MmffRun run_mmff(const Molecule& molecule, const std::vector<double>& model_charges = {}) {
  const auto potential = make_potential("MMFF94", molecule);
  MmffRun run;
  run.analysis = analyze_molecule(molecule, *potential);
  const auto source = model_charges.empty() ? dipole_source_for(*potential, "MMFF94", run.analysis.molecule)
                                            : std::make_unique<FixedChargeDipole>(model_charges, "model");
  run.intensities = analyze_intensities(run.analysis, nullptr, *source).harmonic;
  return run;
}

// Any charges that sum to zero (model values).
const std::vector<double> methane_model_charges = {-0.4, 0.1, 0.1, 0.1, 0.1};

// Intensities sorted by harmonic wavenumber (pairs), for comparisons across atom orders.
std::vector<std::pair<double, double>> by_wavenumber(const MmffRun& run) {
  std::vector<std::pair<double, double>> pairs;
  for (Eigen::Index k = 0; k < run.analysis.harmonic.frequencies_cm1.size(); ++k)
    pairs.emplace_back(run.analysis.harmonic.frequencies_cm1[k], run.intensities.ir_km_per_mol[k]);
  std::sort(pairs.begin(), pairs.end());
  return pairs;
}

TEST(IntensityUnits, FactorAgreesWithTheUsualConversions) {
  // 1 (D/Å)²/u = 42.2561 km/mol and 1 e²/u = 974.864 km/mol: the conversions quoted with
  // double-harmonic intensities in the literature (from memory). The factor itself is
  // computed from CODATA 2018 constants in core/units.hpp.
  constexpr double quoted_precision = 2e-5;  // six quoted figures
  EXPECT_NEAR(units::km_per_mol_per_e2_per_da / 974.864, 1.0, quoted_precision);
  const double per_debye2 =
      units::km_per_mol_per_e2_per_da / (units::debye_per_e_angstrom * units::debye_per_e_angstrom);
  EXPECT_NEAR(per_debye2 / 42.2561, 1.0, quoted_precision);
}

// A diatomic along z with force constant f: one mode, Q = √μ Δr.
HarmonicResult diatomic(double mass_a, double mass_b) {
  Eigen::VectorXd x(6);
  x << 0, 0, 0, 0, 0, 1.2;
  Eigen::VectorXd m(2);
  m << mass_a, mass_b;
  Eigen::MatrixXd h = Eigen::MatrixXd::Zero(6, 6);
  const double f = 700.0;  // kcal/mol/Å², any stiffness
  h(2, 2) = h(5, 5) = f;
  h(2, 5) = h(5, 2) = -f;
  return analyze_normal_modes(x, m, h);
}

TEST(HarmonicIntensities, DiatomicWithFixedChargesMatchesTheClosedForm) {
  // μ = q r, Q = √μ_red Δr, so ∂μ/∂Q = q/√μ_red and A = K q²/μ_red (closed form).
  const double q = 0.23;
  const HarmonicResult h = diatomic(1.00782503, 34.96885268);
  const double reduced = 1.00782503 * 34.96885268 / (1.00782503 + 34.96885268);
  const FixedChargeDipole source({q, -q}, "test");
  const HarmonicIntensityResult result = compute_harmonic_intensities(h, source);
  EXPECT_NEAR(result.ir_km_per_mol[0] / (units::km_per_mol_per_e2_per_da * q * q / reduced), 1.0,
              closed_form_tolerance);
  EXPECT_FALSE(result.has_raman);
}

// The polar tensors and polarizability derivatives of a diatomic along z whose α has the
// parallel and perpendicular derivatives d_par, d_perp along the bond and rotates with it.
ElectricResponseData diatomic_response(double q, double d_par, double d_perp, double alpha_anisotropy) {
  ElectricResponseData data;
  data.title = "diatomic model";
  data.citation = "closed form";
  data.method = "model";
  data.elements = {"H", "Cl"};
  data.positions_angstrom.resize(6);
  data.positions_angstrom << 0, 0, 0, 0, 0, 1.2;
  data.dipole_derivatives = Eigen::MatrixXd::Zero(3, 6);
  data.dipole_derivatives.block(0, 0, 3, 3) = -q * Eigen::Matrix3d::Identity();
  data.dipole_derivatives.block(0, 3, 3, 3) = q * Eigen::Matrix3d::Identity();
  data.dipole_e_angstrom = Eigen::Vector3d(0, 0, q * 1.2);
  // α = α_par e eᵀ + α_perp (1 − e eᵀ), e = (r_b − r_a)/r. Moving atom b by δ along x tilts e
  // by δ/r: ∂α_xz/∂x_b = (α_par − α_perp)/r (a rotation); along z: diag(d_perp, d_perp, d_par).
  Eigen::MatrixXd d = Eigen::MatrixXd::Zero(6, 6);
  const double tilt = alpha_anisotropy / 1.2;
  // Atom b (columns 3, 4, 5): x → αxz, y → αyz, z → diagonal.
  d(4, 3) = tilt;
  d(5, 4) = tilt;
  d(0, 5) = d_perp;
  d(1, 5) = d_perp;
  d(2, 5) = d_par;
  // Atom a moves the other way.
  d.block(0, 0, 6, 3) = -d.block(0, 3, 6, 3);
  data.polarizability_derivatives = d;
  return data;
}

TEST(HarmonicIntensities, DiatomicRamanActivityAndDepolarizationMatchTheClosedForm) {
  // ∂α/∂Q = ∂α/∂r / √μ_red: a = (d_par + 2 d_perp)/(3√μ), γ = |d_par − d_perp|/√μ, and
  // ρ = 3γ²/(45a² + 4γ²) (D. A. Long, The Raman Effect, 2002, ch. 5; from memory). The
  // tilt terms belong to rotation and must not reach the vibration.
  const double d_par = 1.7, d_perp = 0.4;
  const HarmonicResult h = diatomic(1.00782503, 34.96885268);
  Molecule molecule;
  molecule.atoms.resize(2);
  molecule.atoms[0].atomic_number = 1;
  molecule.atoms[1].atomic_number = 17;
  molecule.set_coordinates(h.coordinates_angstrom);
  const PolarTensorDipole source(diatomic_response(0.2, d_par, d_perp, 2.5), molecule);
  const HarmonicIntensityResult result = compute_harmonic_intensities(h, source);
  ASSERT_TRUE(result.has_raman);
  const double reduced = 1.00782503 * 34.96885268 / (1.00782503 + 34.96885268);
  const double a = (d_par + 2.0 * d_perp) / 3.0, gamma = d_par - d_perp;
  const double activity = (45.0 * a * a + 7.0 * gamma * gamma) / reduced;
  EXPECT_NEAR(result.raman_activity_a4_per_u[0] / activity, 1.0, closed_form_tolerance);
  EXPECT_NEAR(result.depolarization_ratio[0], 3.0 * gamma * gamma / (45.0 * a * a + 4.0 * gamma * gamma),
              closed_form_tolerance);
  EXPECT_NEAR(result.crawford.relative_residual, 0.0, sum_rule_tolerance);
}

// Every mode of a species the character table calls IR-inactive has zero intensity; every
// IR-active one has some (checked on molecules whose fixed charges give every allowed
// band a dipole change).
void expect_zero_for_inactive_species(const MmffRun& run, int expected_inactive) {
  const double strongest = run.intensities.ir_km_per_mol.maxCoeff();
  int inactive = 0;
  for (const ModeLabel& label : run.analysis.modes) {
    ASSERT_TRUE(label.activity_known);
    const double value = run.intensities.ir_km_per_mol[label.harmonic_index];
    if (label.ir_active) {
      EXPECT_GT(value, forbidden_fraction * strongest) << label.species;
    } else {
      ++inactive;
      EXPECT_LT(value, forbidden_fraction * strongest) << label.species;
    }
  }
  EXPECT_EQ(inactive, expected_inactive);
}

TEST(HarmonicIntensities, CarbonDioxideSymmetricStretchIsDark) {
  // D∞h: Σg+ (symmetric stretch) IR-inactive, Πu (bend) and Σu+ (antisymmetric stretch)
  // active (Herzberg, Infrared and Raman Spectra, 1945; from memory).
  const MmffRun run = run_mmff(read_shipped("carbon-dioxide"));
  expect_zero_for_inactive_species(run, 1);
}

TEST(HarmonicIntensities, MethaneOnlyT2BandsAreBright) {
  // Td: A1 and E inactive, T2 active (character table): 1 + 2 inactive vectors.
  const MmffRun run = run_mmff(read_shipped("methane"), methane_model_charges);
  expect_zero_for_inactive_species(run, 3);
}

TEST(HarmonicIntensities, CrawfordSumRuleHoldsForMoleculesAndIsotopologues) {
  // G sum rule (B. Crawford, J. Chem. Phys. 20, 977 (1952); citation from memory), in the
  // form of harmonic_intensities.hpp: Σ_k A_k from the modes against the closed form from
  // the polar tensors, masses, permanent dipole and principal moments.
  const std::vector<std::pair<std::string, std::vector<IsotopeChoice>>> cases = {
      {"water", {}},         {"water", {{2, 2}, {3, 2}}},   {"water", {{2, 2}}},          {"ammonia", {}},
      {"ammonia", {{2, 2}}}, {"methane", {{2, 2}, {3, 2}}}, {"carbon-dioxide", {{2, 13}}}};
  for (const auto& [name, isotopes] : cases) {
    const MmffRun run = run_mmff(read_shipped(name, isotopes),
                                 name == "methane" ? methane_model_charges : std::vector<double>{});
    const CrawfordSum& sum = run.intensities.crawford;
    ASSERT_TRUE(sum.available);
    EXPECT_GT(sum.modes_km_per_mol, 0.0);
    EXPECT_LT(sum.relative_residual, sum_rule_tolerance)
        << name << " with " << isotopes.size() << " isotopes";
    // Water and ammonia are polar: the rotational correction takes part.
    if (name == "water" || name == "ammonia") {
      EXPECT_GT(sum.rotation_km_per_mol, 0.0) << name;
    }
  }
}

Molecule transformed(const Molecule& molecule, const Eigen::Matrix3d& rotation, const Eigen::Vector3d& shift,
                     const std::vector<int>& order) {
  Molecule result = molecule;
  result.atoms.clear();
  for (const int index : order) {
    Atom atom = molecule.atoms[static_cast<std::size_t>(index)];
    atom.position_angstrom = rotation * atom.position_angstrom + shift;
    result.atoms.push_back(atom);
  }
  result.bonds.clear();
  for (const Bond& bond : molecule.bonds) {
    Bond moved = bond;
    moved.first = static_cast<int>(std::find(order.begin(), order.end(), bond.first) - order.begin());
    moved.second = static_cast<int>(std::find(order.begin(), order.end(), bond.second) - order.begin());
    result.bonds.push_back(moved);
  }
  return result;
}

TEST(HarmonicIntensities, RotationTranslationAndAtomOrderLeaveIntensitiesUnchanged) {
  const Molecule ammonia = read_shipped("ammonia");
  const MmffRun reference = run_mmff(ammonia);
  const Eigen::Matrix3d rotation =
      Eigen::AngleAxisd(0.7, Eigen::Vector3d(1.0, -2.0, 0.5).normalized()).toRotationMatrix();
  const MmffRun moved =
      run_mmff(transformed(ammonia, rotation, Eigen::Vector3d(3.0, -1.0, 7.5), {2, 0, 3, 1}));
  const auto expected = by_wavenumber(reference);
  const auto found = by_wavenumber(moved);
  ASSERT_EQ(expected.size(), found.size());
  for (std::size_t k = 0; k < expected.size(); ++k)
    EXPECT_NEAR(found[k].second, expected[k].second, invariance_tolerance * (1.0 + expected[k].second));
}

TEST(HarmonicIntensities, PolarTensorsFollowARotatedMolecule) {
  // Polar tensors written in one frame give the same intensities for the molecule analysed
  // in another: the file frame is rotated onto the analysed geometry.
  const HarmonicResult h = diatomic(1.00782503, 34.96885268);
  Molecule molecule;
  molecule.atoms.resize(2);
  molecule.atoms[0].atomic_number = 1;
  molecule.atoms[1].atomic_number = 17;
  const Eigen::Matrix3d rotation =
      Eigen::AngleAxisd(1.1, Eigen::Vector3d(0.3, 1.0, -0.2).normalized()).toRotationMatrix();
  Eigen::VectorXd x = h.coordinates_angstrom;
  for (int a = 0; a < 2; ++a) x.segment<3>(3 * a) = rotation * x.segment<3>(3 * a) + Eigen::Vector3d(1, 2, 3);
  Eigen::MatrixXd hessian = Eigen::MatrixXd::Zero(6, 6);
  Eigen::MatrixXd r6 = Eigen::MatrixXd::Zero(6, 6);
  r6.block(0, 0, 3, 3) = rotation;
  r6.block(3, 3, 3, 3) = rotation;
  hessian = r6 * h.cartesian_hessian * r6.transpose();
  const HarmonicResult rotated = analyze_normal_modes(x, h.masses_da, hessian);
  molecule.set_coordinates(x);
  const PolarTensorDipole source(diatomic_response(0.2, 1.7, 0.4, 2.5), molecule);
  molecule.set_coordinates(h.coordinates_angstrom);
  const PolarTensorDipole unrotated(diatomic_response(0.2, 1.7, 0.4, 2.5), molecule);
  const auto a = compute_harmonic_intensities(rotated, source);
  const auto b = compute_harmonic_intensities(h, unrotated);
  EXPECT_NEAR(a.ir_km_per_mol[0] / b.ir_km_per_mol[0], 1.0, closed_form_tolerance);
  EXPECT_NEAR(a.raman_activity_a4_per_u[0] / b.raman_activity_a4_per_u[0], 1.0, closed_form_tolerance);
  EXPECT_NEAR(a.depolarization_ratio[0], b.depolarization_ratio[0], closed_form_tolerance);
}

TEST(ElectricResponseFile, ReadsTheDocumentedFormatAndRefusesMistakes) {
  const std::string text = R"(format = "overtone-electric-response"
format_version = 1
title = "model"
dipole = [0.0, 0.0, 0.24]
[units]
length = "angstrom"
dipole_derivative = "e"
polarizability_derivative = "angstrom^2"
[source]
citation = "closed form"
method = "model"
[[atoms]]
element = "H"
position = [0.0, 0.0, 0.0]
polar_tensor = [[-0.2, 0, 0], [0, -0.2, 0], [0, 0, -0.2]]
polarizability_derivative = [[0,0,0,0,-2.0,0], [0,0,0,0,0,-2.0], [-0.4,-0.4,-1.7,0,0,0]]
[[atoms]]
element = "Cl"
position = [0.0, 0.0, 1.2]
polar_tensor = [[0.2, 0, 0], [0, 0.2, 0], [0, 0, 0.2]]
polarizability_derivative = [[0,0,0,0,2.0,0], [0,0,0,0,0,2.0], [0.4,0.4,1.7,0,0,0]]
)";
  const ElectricResponseData data = parse_electric_response(text, "model.toml");
  ASSERT_EQ(data.elements.size(), 2u);
  ASSERT_TRUE(data.polarizability_derivatives);
  EXPECT_DOUBLE_EQ((*data.polarizability_derivatives)(2, 5), 1.7);
  EXPECT_DOUBLE_EQ((*data.polarizability_derivatives)(4, 3), 2.0);
  EXPECT_DOUBLE_EQ(data.dipole_derivatives(2, 5), 0.2);
  std::string wrong_shape = text;
  wrong_shape.replace(wrong_shape.find("[[0.2, 0, 0], [0, 0.2, 0], [0, 0, 0.2]]"), 39,
                      "[[0.2, 0, 0], [0, 0.2, 0]]");
  EXPECT_THROW(parse_electric_response(wrong_shape, "bad.toml"), Error);
  std::string wrong_unit = text;
  wrong_unit.replace(wrong_unit.find("\"e\""), 3, "\"coulomb\"");
  EXPECT_THROW(parse_electric_response(wrong_unit, "bad.toml"), Error);
}

}  // namespace
}  // namespace overtone

namespace overtone {
namespace {

// Carbon dioxide on its shipped valence force field with the model response of
// tests/data/intensity (bond polarizabilities; make_co2_model.py).
struct ModelCarbonDioxide {
  AnalysisResult analysis;
  AnharmonicResult anharmonic;
  IntensityResults intensities;
};

ModelCarbonDioxide model_carbon_dioxide() {
  const Molecule molecule = read_shipped("carbon-dioxide");
  const auto potential = make_potential(source_path("potentials/carbon-dioxide.toml"), molecule);
  ModelCarbonDioxide run;
  run.analysis = analyze_molecule(molecule, *potential);
  run.anharmonic = analyze_anharmonic(run.analysis, *potential);
  const PolarTensorDipole source(
      read_electric_response(source_path("tests/data/intensity/co2-model-response.toml")),
      run.analysis.molecule);
  run.intensities = analyze_intensities(run.analysis, &run.anharmonic, source);
  return run;
}

TEST(RamanActivities, MutualExclusionAndPolarizationInCarbonDioxide) {
  // D∞h: only Σg+ is Raman-active (the rule of mutual exclusion for a centrosymmetric
  // molecule; character table). A totally symmetric band has ρ < 3/4; every other species
  // has a = 0 (closed form), so ρ = 3/4 wherever its activity is not zero.
  const ModelCarbonDioxide run = model_carbon_dioxide();
  const HarmonicIntensityResult& h = run.intensities.harmonic;
  ASSERT_TRUE(h.has_raman);
  const double strongest = h.raman_activity_a4_per_u.maxCoeff();
  for (const ModeLabel& label : run.analysis.modes) {
    const double activity = h.raman_activity_a4_per_u[label.harmonic_index];
    if (label.raman_active) {
      EXPECT_GT(activity, forbidden_fraction * strongest) << label.species;
      EXPECT_LT(h.depolarization_ratio[label.harmonic_index], 0.75) << label.species;
    } else {
      EXPECT_LT(activity, forbidden_fraction * strongest) << label.species;
    }
  }
  EXPECT_LT(h.crawford.relative_residual, sum_rule_tolerance);
}

}  // namespace
}  // namespace overtone
