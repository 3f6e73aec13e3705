// Taylor-expansion potential: file parsing and errors, derivatives against finite
// differences, units, the rigid superposition of the molecule, the normal-coordinate
// form, and the guard against holes of a quartic surface.
#include <gtest/gtest.h>

#include <cmath>
#include <cstdio>
#include <fstream>
#include <string>

#include "core/error.hpp"
#include "core/units.hpp"
#include "potential/taylor_expansion_potential.hpp"

namespace overtone {
namespace {

// Central differences with step 1e-5 Å on polynomials of degree 4 with O(10³) coefficients:
// truncation ~1e-10·V''', round-off ~1e-16·|V|/1e-5 ≈ 1e-9 relative.
constexpr double finite_difference_step = 1e-5;
constexpr double derivative_tolerance = 1e-6;  // relative to the largest entry
// Evaluating the same polynomial in other units or another frame: round-off only.
constexpr double same_value_tolerance = 1e-9;

// A bent triatomic (C2v-like) with a few arbitrary Cartesian derivatives of every order.
const char* cartesian_text = R"(
format = "overtone-taylor-expansion"
version = 1
title = "test triatomic"
coordinates = "cartesian"
[units]
energy = "kcal/mol"
length = "angstrom"
[reference]
elements = ["O", "H", "H"]
positions = [[0.0, 0.0, 0.0], [0.76, 0.0, 0.59], [-0.76, 0.0, 0.59]]
energy = -3.5
[cartesian]
first = [[1, 0.2]]
second = [[1, 1, 500.0], [2, 2, 300.0], [3, 3, 700.0], [4, 4, 450.0], [5, 5, 50.0], [6, 6, 400.0],
          [7, 7, 450.0], [8, 8, 50.0], [9, 9, 400.0], [1, 4, -200.0], [3, 6, -150.0], [4, 7, 20.0]]
third = [[1, 1, 1, -900.0], [4, 6, 6, 300.0], [3, 4, 7, -120.0]]
fourth = [[1, 1, 1, 1, 2000.0], [4, 4, 6, 6, 500.0], [2, 3, 5, 9, 80.0]]
)";

Molecule molecule_for(const TaylorExpansionData& data) {
  Molecule m;
  for (std::size_t a = 0; a < data.atomic_numbers.size(); ++a) {
    Atom atom;
    atom.atomic_number = data.atomic_numbers[a];
    atom.mass_da = atom.atomic_number == 8 ? 15.9949 : atom.atomic_number == 17 ? 34.96885268 : 1.00783;
    atom.position_angstrom = data.reference_angstrom.segment<3>(3 * static_cast<Eigen::Index>(a));
    m.atoms.push_back(atom);
  }
  return m;
}

Eigen::VectorXd displaced(const Eigen::VectorXd& x, double scale, int seed) {
  Eigen::VectorXd d(x.size());
  for (Eigen::Index i = 0; i < x.size(); ++i) d[i] = scale * std::sin(1.37 * (i + 1) + seed);
  return x + d;
}

TEST(TaylorExpansionPotential, CartesianTermsFollowTheTaylorConvention) {
  const auto data = parse_taylor_expansion(cartesian_text, "text");
  const Molecule molecule = molecule_for(data);
  const TaylorExpansionPotential potential(data, molecule);
  // u = Δx: E = E_ref + g₁u₁ + ½Σ H u u + (1/6)·(−900)u₁³ + ½·300·u₄u₆² − 120 u₃u₄u₇ + …
  Eigen::VectorXd x = data.reference_angstrom;
  x[0] += 0.01;
  const double u = 0.01;
  const double expected =
      -3.5 + 0.2 * u + 0.5 * 500.0 * u * u - 900.0 / 6.0 * u * u * u + 2000.0 / 24.0 * u * u * u * u;
  EXPECT_NEAR(potential.energy(x), expected, same_value_tolerance);
  Eigen::VectorXd y = data.reference_angstrom;
  y[3] += 0.02;   // u₄
  y[5] += -0.03;  // u₆
  y[6] += 0.01;   // u₇
  const double u4 = 0.02, u6 = -0.03, u7 = 0.01;
  const double expected_y = -3.5 + 0.5 * (450.0 * u4 * u4 + 400.0 * u6 * u6 + 450.0 * u7 * u7) +
                            20.0 * u4 * u7 + 0.5 * 300.0 * u4 * u6 * u6 + 500.0 / 4.0 * u4 * u4 * u6 * u6;
  EXPECT_NEAR(potential.energy(y), expected_y, same_value_tolerance);
}

TEST(TaylorExpansionPotential, GradientAndHessianMatchFiniteDifferences) {
  const auto data = parse_taylor_expansion(cartesian_text, "text");
  const TaylorExpansionPotential potential(data, molecule_for(data));
  const Eigen::VectorXd x = displaced(data.reference_angstrom, 0.03, 1);
  Eigen::VectorXd g;
  potential.energy_and_gradient(x, g);
  const Eigen::MatrixXd h = potential.hessian(x);
  Eigen::VectorXd g_fd(x.size());
  Eigen::MatrixXd h_fd(x.size(), x.size());
  for (Eigen::Index i = 0; i < x.size(); ++i) {
    Eigen::VectorXd plus = x, minus = x, gp, gm;
    plus[i] += finite_difference_step;
    minus[i] -= finite_difference_step;
    g_fd[i] = (potential.energy(plus) - potential.energy(minus)) / (2 * finite_difference_step);
    potential.energy_and_gradient(plus, gp);
    potential.energy_and_gradient(minus, gm);
    h_fd.col(i) = (gp - gm) / (2 * finite_difference_step);
  }
  EXPECT_LT((g - g_fd).cwiseAbs().maxCoeff(), derivative_tolerance * g.cwiseAbs().maxCoeff());
  EXPECT_LT((h - h_fd).cwiseAbs().maxCoeff(), derivative_tolerance * h.cwiseAbs().maxCoeff());
  EXPECT_LT((h - h.transpose()).cwiseAbs().maxCoeff(), same_value_tolerance);
}

TEST(TaylorExpansionPotential, UnitsOfTheFileDoNotChangeTheSurface) {
  const auto data = parse_taylor_expansion(cartesian_text, "text");
  const Molecule molecule = molecule_for(data);
  const TaylorExpansionPotential original(data, molecule);
  TaylorWriteOptions options;
  options.energy_unit = "hartree";
  options.length_unit = "bohr";
  const auto reread = parse_taylor_expansion(write_taylor_expansion(data, options), "rewritten");
  const TaylorExpansionPotential rewritten(reread, molecule);
  for (int seed = 0; seed < 3; ++seed) {
    const Eigen::VectorXd x = displaced(data.reference_angstrom, 0.05, seed);
    EXPECT_NEAR(original.energy(x), rewritten.energy(x), same_value_tolerance * 100.0);
  }
}

TEST(TaylorExpansionPotential, MoleculeInAnotherFrameSeesTheSameSurface) {
  const auto data = parse_taylor_expansion(cartesian_text, "text");
  const Molecule molecule = molecule_for(data);
  const TaylorExpansionPotential reference_frame(data, molecule);
  // The same molecule rotated and translated: the loader superimposes it once.
  const Eigen::Matrix3d rotation =
      Eigen::AngleAxisd(0.7, Eigen::Vector3d(1, 2, -1).normalized()).toRotationMatrix();
  const Eigen::Vector3d translation(3.0, -1.0, 0.5);
  auto moved = [&](const Eigen::VectorXd& x) {
    Eigen::VectorXd y(x.size());
    for (Eigen::Index a = 0; a < x.size() / 3; ++a)
      y.segment<3>(3 * a) = rotation * x.segment<3>(3 * a) + translation;
    return y;
  };
  Molecule turned = molecule;
  turned.set_coordinates(moved(molecule.coordinates()));
  const TaylorExpansionPotential other_frame(data, turned);
  for (int seed = 0; seed < 3; ++seed) {
    const Eigen::VectorXd x = displaced(data.reference_angstrom, 0.05, seed);
    EXPECT_NEAR(reference_frame.energy(x), other_frame.energy(moved(x)), same_value_tolerance);
  }
  EXPECT_LT(
      (other_frame.reference_in_molecule_frame() - moved(data.reference_angstrom)).cwiseAbs().maxCoeff(),
      1e-9);
}

// A diatomic in normal coordinates: one mode along the bond.
TaylorExpansionData diatomic_normal(double cubic_cm1, double quartic_cm1) {
  TaylorExpansionData data;
  data.title = "diatomic";
  data.coordinates = ExpansionCoordinates::normal;
  data.atomic_numbers = {1, 17};
  data.masses_da = Eigen::Vector2d(1.00782503, 34.96885268);
  data.reference_angstrom = Eigen::VectorXd::Zero(6);
  data.reference_angstrom[5] = 1.27455;
  data.frequencies_cm1 = Eigen::VectorXd::Constant(1, 2990.946);
  data.mode_displacements = Eigen::MatrixXd::Zero(6, 1);
  data.mode_displacements(2, 0) = -1.0 / data.masses_da[0];  // centre of mass fixed
  data.mode_displacements(5, 0) = 1.0 / data.masses_da[1];
  data.derivatives = {{{0, 0, 0}, cubic_cm1 * units::kcal_mol_per_cm1},
                      {{0, 0, 0, 0}, quartic_cm1 * units::kcal_mol_per_cm1}};
  return data;
}

// The geometry at dimensionless normal coordinate q of the diatomic: q = sqrt(ω/ħ)·Q with
// Q = sqrt(μ)·Δr, so Δr = q·sqrt(ħ/(μω)), shared so that the centre of mass stays put.
Eigen::VectorXd along_bond(const TaylorExpansionData& data, double q) {
  const double mu = data.masses_da[0] * data.masses_da[1] / data.masses_da.sum();
  const double omega = data.frequencies_cm1[0] / units::cm1_per_internal_angular_frequency;
  const double dr = q * std::sqrt(units::hbar_internal / (mu * omega));
  Eigen::VectorXd x = data.reference_angstrom;
  x[2] -= dr * mu / data.masses_da[0];
  x[5] += dr * mu / data.masses_da[1];
  return x;
}

TEST(TaylorExpansionPotential, NormalFormIsQuarticInDimensionlessCoordinates) {
  const double phi3 = -1686.0, phi4 = 739.0;  // cm⁻¹, of the size of H³⁵Cl's (test_vpt2_morse)
  const auto data = diatomic_normal(phi3, phi4);
  const TaylorExpansionPotential potential(data, molecule_for(data));
  for (double q : {-0.8, 0.3, 1.1}) {
    const Eigen::VectorXd x = along_bond(data, q);
    const double expected_cm1 = 0.5 * 2990.946 * q * q + phi3 * q * q * q / 6.0 + phi4 * q * q * q * q / 24.0;
    EXPECT_NEAR(potential.energy(x) * units::cm1_per_kcal_mol, expected_cm1, 1e-8 * 2990.946);
  }
}

TEST(TaylorExpansionPotential, HoleOfATurnedOverSurfaceIsReported) {
  // Negative quartic constant: the surface turns over a few quanta out and falls into a hole.
  const auto data = diatomic_normal(0.0, -400.0);
  TaylorExpansionPotential potential(data, molecule_for(data));
  // V(q) = ½ω q² − 400 q⁴/24 cm⁻¹ crosses zero at q² = 12ω/400, q ≈ 9.5.
  EXPECT_NO_THROW(potential.energy(along_bond(data, 2.0)));
  try {
    potential.energy(along_bond(data, 12.0));
    FAIL() << "expected the hole to be reported";
  } catch (const Error& e) {
    EXPECT_NE(std::string(e.what()).find("turned over"), std::string::npos) << e.what();
  }
  potential.set_hole_guard(false);
  EXPECT_LT(potential.energy(along_bond(data, 12.0)), 0.0);
}

void expect_error(const std::string& text, const std::string& fragment) {
  try {
    const auto data = parse_taylor_expansion(text, "case");
    const TaylorExpansionPotential potential(data, molecule_for(data));
    FAIL() << "expected an error mentioning '" << fragment << "'";
  } catch (const Error& e) {
    EXPECT_NE(std::string(e.what()).find(fragment), std::string::npos) << e.what();
  }
}

std::string replaced(std::string text, const std::string& from, const std::string& to) {
  const auto at = text.find(from);
  EXPECT_NE(at, std::string::npos) << from;
  return text.replace(at, from.size(), to);
}

TEST(TaylorExpansionPotential, MalformedFilesAreRejectedWithTheKey) {
  const std::string good = cartesian_text;
  expect_error(replaced(good, "overtone-taylor-expansion", "something-else"), "format");
  expect_error(replaced(good, "version = 1", "version = 7"), "version");
  expect_error(replaced(good, "energy = \"kcal/mol\"", "energy = \"furlong\""), "energy unit");
  expect_error(replaced(good, "[3, 3, 700.0]", "[3, 3, 700.0], [3, 3, 1.0]"), "twice");
  expect_error(replaced(good, "[1, 1, 1, -900.0]", "[1, 1, 10, -900.0]"), "outside 1..9");
  expect_error(replaced(good, "coordinates = \"cartesian\"", "coordinates = \"polar\""), "coordinates");
  expect_error(replaced(good, "elements = [\"O\", \"H\", \"H\"]", "elements = [\"O\", \"H\", \"Qq\"]"), "Qq");
  expect_error("format = [", "malformed TOML");
  expect_error("format = [", "taylor-expansion file 'case' line 1");
}

TEST(TaylorExpansionPotential, MagnitudesBeyondTheDocumentedLimitsAreRefused) {
  // Limits of docs/taylor-expansion-format.md (file_limits.hpp), and non-finite numbers.
  const std::string good = cartesian_text;
  expect_error(replaced(good, "[1, 1, 1, -900.0]", "[1, 1, 1, -9e300]"), "largest magnitude");
  expect_error(replaced(good, "[1, 1, 1, -900.0]", "[1, 1, 1, nan]"), "finite");
  expect_error(replaced(good, "[3, 3, 700.0]", "[3, 3, inf]"), "finite");
  expect_error(replaced(good, "[-0.76, 0.0, 0.59]", "[-0.76, 0.0, 1e300]"), "reference.positions");
  expect_error(replaced(good, "energy = -3.5", "energy = 1e300"), "reference.energy");
}

TEST(TaylorExpansionPotential, MoleculeMismatchIsAnError) {
  const auto data = parse_taylor_expansion(cartesian_text, "text");
  Molecule wrong_order = molecule_for(data);
  std::swap(wrong_order.atoms[0], wrong_order.atoms[1]);
  EXPECT_THROW(TaylorExpansionPotential(data, wrong_order), Error);
  Molecule distorted = molecule_for(data);
  distorted.atoms[1].position_angstrom.x() += 1.5;
  EXPECT_THROW(TaylorExpansionPotential(data, distorted), Error);
  Molecule fewer = molecule_for(data);
  fewer.atoms.pop_back();
  EXPECT_THROW(TaylorExpansionPotential(data, fewer), Error);
}

TEST(TaylorExpansionPotential, NormalModesMustBeVibrations) {
  auto data = diatomic_normal(0.0, 0.0);
  data.mode_displacements(2, 0) = 1.0;  // both atoms move alike: a translation
  data.mode_displacements(5, 0) = 1.0;
  EXPECT_THROW(TaylorExpansionPotential(data, molecule_for(data)), Error);
}

TEST(TaylorExpansionPotential, FilesAreRecognizedByTheirFormatKey) {
  const std::string path = ::testing::TempDir() + "overtone_taylor_test.toml";
  {
    std::ofstream out(path);
    out << cartesian_text;
  }
  EXPECT_TRUE(is_taylor_expansion_file(path));
  const Molecule molecule = molecule_for(parse_taylor_expansion(cartesian_text, "text"));
  EXPECT_NO_THROW(load_taylor_expansion_potential(path, molecule));
  {
    std::ofstream out(path);
    out << "format_version = 1\ntitle = \"a valence force field\"\n";
  }
  EXPECT_FALSE(is_taylor_expansion_file(path));
  std::remove(path.c_str());
  EXPECT_FALSE(is_taylor_expansion_file(path));
  EXPECT_THROW(load_taylor_expansion_potential(path, molecule), Error);
}

}  // namespace
}  // namespace overtone
