// Open Babel force fields behind the Potential interface: gradient sign and units
// against central differences of the energy, the out-of-plane correction (the fitted
// analytic model against Open Babel's own out-of-plane energy, and the differenced
// fallback), and clear errors for molecules a force field cannot handle. The reference
// throughout is Open Babel 3.1's energy (a general-purpose library).
#include <gtest/gtest.h>

#include <cmath>
#include <random>
#include <string>

#include "core/error.hpp"
#include "core/units.hpp"
#include "molecule/read_molecule.hpp"
#include "potential/detail_out_of_plane_model.hpp"
#include "potential/make_potential.hpp"
#include "potential/openbabel_potential.hpp"

namespace overtone {
namespace {

const std::string source_dir = OVERTONE_SOURCE_DIR;

// Central differences with this step have truncation error ~h²·E'''/6 ≈ 1e-10 and
// round-off ~ε·|E|/h ≈ 1e-9 kcal/mol/Å for these molecules (common practice, no source).
constexpr double difference_step_angstrom = 1e-5;
// Largest allowed |analytic − differenced| component, relative to the largest component:
// the differences' own error (above) over components of 1–100 kcal/mol/Å is 1e-11–1e-9
// relative (measured up to 2e-9 for MMFF94 now that no term is differenced inside the
// potential), so 1e-8 leaves a margin while still catching any wrong derivative term.
constexpr double gradient_relative_tolerance = 1e-8;

Molecule displaced_from_smiles(const std::string& smiles) {
  ReadOptions options;
  options.input_is_smiles = true;
  Molecule molecule = read_molecule(smiles, options).molecule;
  // Move off the minimum so every term has a non-zero gradient.
  Eigen::VectorXd x = molecule.coordinates();
  for (Eigen::Index k = 0; k < x.size(); ++k) x[k] += 0.03 * std::sin(1.7 * static_cast<double>(k) + 0.3);
  molecule.set_coordinates(x);
  return molecule;
}

Molecule from_smiles(const std::string& smiles) {
  ReadOptions options;
  options.input_is_smiles = true;
  return read_molecule(smiles, options).molecule;
}

// Every coordinate moved uniformly within ±amplitude (Å); fixed seed for reproducibility.
Eigen::VectorXd randomly_displaced(const Eigen::VectorXd& x, double amplitude, std::mt19937& generator) {
  std::uniform_real_distribution<double> uniform(-amplitude, amplitude);
  Eigen::VectorXd y = x;
  for (Eigen::Index k = 0; k < y.size(); ++k) y[k] += uniform(generator);
  return y;
}

Eigen::VectorXd differenced_gradient(const Potential& potential, const Eigen::VectorXd& x) {
  Eigen::VectorXd gradient(x.size());
  Eigen::VectorXd displaced = x;
  for (Eigen::Index k = 0; k < x.size(); ++k) {
    displaced[k] = x[k] + difference_step_angstrom;
    const double plus = potential.energy(displaced);
    displaced[k] = x[k] - difference_step_angstrom;
    const double minus = potential.energy(displaced);
    displaced[k] = x[k];
    gradient[k] = (plus - minus) / (2.0 * difference_step_angstrom);
  }
  return gradient;
}

class EveryForceField : public ::testing::TestWithParam<std::string> {};

TEST_P(EveryForceField, GradientIsTheDerivativeOfTheEnergy) {
  // Acetanilide-like (trigonal centres with out-of-plane terms) and ethylene.
  for (const char* smiles : {"CC(=O)Nc1ccccc1O", "C=C"}) {
    SCOPED_TRACE(smiles);
    const Molecule molecule = displaced_from_smiles(smiles);
    const OpenBabelPotential potential(GetParam(), molecule);
    const Eigen::VectorXd x = molecule.coordinates();
    Eigen::VectorXd analytic;
    potential.energy_and_gradient(x, analytic);
    const Eigen::VectorXd reference = differenced_gradient(potential, x);
    const double scale = reference.cwiseAbs().maxCoeff();
    EXPECT_LT((analytic - reference).cwiseAbs().maxCoeff(), gradient_relative_tolerance * scale)
        << "largest component " << scale;
  }
}

INSTANTIATE_TEST_SUITE_P(OpenBabel, EveryForceField,
                         ::testing::Values("MMFF94", "MMFF94s", "UFF", "GAFF", "Ghemical"));

TEST(OpenBabelPotential, RawGradientHasTheSignAndUnitsOfTheEnergyDerivative) {
  // Ethanol has no trigonal centre, so Open Babel's own analytic gradient applies
  // unchanged: this checks the force→gradient sign and the kJ/mol→kcal/mol factor.
  const Molecule molecule = displaced_from_smiles("CCO");
  for (const char* name : {"MMFF94", "UFF"}) {
    SCOPED_TRACE(name);
    const OpenBabelPotential potential(name, molecule);
    EXPECT_EQ(potential.out_of_plane_atom_count(), 0u);
    const Eigen::VectorXd x = molecule.coordinates();
    const Eigen::VectorXd raw = potential.raw_openbabel_gradient(x);
    const Eigen::VectorXd reference = differenced_gradient(potential, x);
    EXPECT_LT((raw - reference).cwiseAbs().maxCoeff(),
              gradient_relative_tolerance * reference.cwiseAbs().maxCoeff());
  }
}

TEST(OpenBabelPotential, OutOfPlaneAtomsAreFoundAtTrigonalCentres) {
  const Molecule ethylene = displaced_from_smiles("C=C");
  const OpenBabelPotential potential("MMFF94", ethylene);
  EXPECT_EQ(potential.out_of_plane_atom_count(), 6u);  // both carbons and their four neighbours
}

TEST(OpenBabelPotential, NamesAreCaseInsensitive) {
  EXPECT_EQ(canonical_openbabel_force_field("mmff94s"), "MMFF94s");
  EXPECT_EQ(canonical_openbabel_force_field("ghemical"), "Ghemical");
  EXPECT_EQ(canonical_openbabel_force_field("amber"), "");
}

TEST(OpenBabelPotential, UntypableMoleculesAndUnknownNamesAreClearErrors) {
  const Molecule sulfur_hexafluoride =
      read_molecule(source_dir + "/tests/data/molecules/sulfur-hexafluoride.xyz").molecule;
  try {
    OpenBabelPotential potential("MMFF94", sulfur_hexafluoride);
    FAIL() << "MMFF94 has no type for hexavalent sulfur";
  } catch (const Error& error) {
    EXPECT_NE(std::string(error.what()).find("no atom type for atom 1"), std::string::npos) << error.what();
  }
  EXPECT_NO_THROW(OpenBabelPotential("UFF", sulfur_hexafluoride));
  EXPECT_THROW(make_potential("not-a-force-field", sulfur_hexafluoride), Error);
}

// Radicals and ions: the rule reads Open Babel's perception (electron count, typical
// valence, spin multiplicity, formal charges). Closed forms: CH₃ has 9 electrons, NO₂ 23;
// CH₂ has carbon two bonds short of four; NH₄⁺ and OH⁻ contain no carbon; sulfate has net
// charge −2. Acetate, tetramethylammonium and zwitterionic nitromethane are singly charged
// organic species inside MMFF94's parameterization (Halgren, J. Comput. Chem. 17, 490
// (1996); from memory), and neutral methane needs no word.
TEST(OpenBabelPotential, WarnsOutsideTheParameterizationOfClosedShellOrganics) {
  auto warnings_for = [](const char* smiles, const char* force_field) {
    std::string all;
    for (const auto& warning : OpenBabelPotential(force_field, from_smiles(smiles)).warnings())
      all += warning + "\n";
    return all;
  };
  for (const char* radical : {"[CH3]", "[N](=O)=O", "[CH2]"}) {
    SCOPED_TRACE(radical);
    const std::string text = warnings_for(radical, "MMFF94");
    EXPECT_NE(text.find("closed-shell"), std::string::npos) << text;
    EXPECT_NE(text.find("radical"), std::string::npos) << text;
  }
  EXPECT_NE(warnings_for("[CH3]", "MMFF94").find("odd number of electrons, 9"), std::string::npos);
  EXPECT_NE(warnings_for("[CH2]", "MMFF94").find("atom C1 has 2 bond(s) fewer"), std::string::npos);
  for (const char* ion : {"[NH4+]", "[OH-]"}) {
    SCOPED_TRACE(ion);
    EXPECT_NE(warnings_for(ion, "MMFF94").find("inorganic ion"), std::string::npos);
  }
  EXPECT_NE(warnings_for("[O-]S(=O)(=O)[O-]", "GAFF").find("net charge -2"), std::string::npos);
  // Open Babel's UFF has no electrostatic term: the charge is ignored, which it says.
  EXPECT_NE(warnings_for("[NH4+]", "UFF").find("no electrostatic term"), std::string::npos);
  for (const char* fine : {"C", "CC(=O)[O-]", "C[N+](C)(C)C", "C[N+](=O)[O-]"}) {
    SCOPED_TRACE(fine);
    EXPECT_EQ(warnings_for(fine, "MMFF94"), "");
  }
}

// Molecules for the out-of-plane model: formaldehyde and benzene (sp2 carbon), an
// acetanilide-like molecule (amide nitrogen, carbonyl, aromatic ring), an amide with a
// fully substituted nitrogen, a pyramidal amine, and triphenylphosphine (nineteen
// three-coordinate centres, among them UFF's pyramidal phosphorus with its cos 2χ term).
const char* const out_of_plane_molecules[] = {"C=O",         "c1ccccc1", "CC(=O)Nc1ccccc1O",
                                              "CC(=O)N(C)C", "CN(C)C",   "c1ccc(cc1)P(c1ccccc1)c1ccccc1"};

// The model must reproduce Open Babel's out-of-plane energy to rounding: the energies are
// sums of a few dozen terms (relative rounding ~1e-15), and the fit's conditioning costs
// at most a few digits more. The potential's own check uses the same bound.
constexpr double model_relative_tolerance = 1e-10;

class OutOfPlaneModelForceField : public ::testing::TestWithParam<std::string> {};

TEST_P(OutOfPlaneModelForceField, ReproducesOpenBabelsOutOfPlaneEnergyAtRandomGeometries) {
  std::mt19937 generator(7);
  for (const char* smiles : out_of_plane_molecules) {
    SCOPED_TRACE(smiles);
    const Molecule molecule = from_smiles(smiles);
    const OpenBabelPotential potential(GetParam(), molecule);
    if (potential.out_of_plane_atom_count() == 0) continue;  // e.g. MMFF94's amine nitrogen
    ASSERT_TRUE(potential.out_of_plane_is_analytic()) << potential.out_of_plane_gradient_note();
    EXPECT_LT(potential.out_of_plane_fit_residual(), model_relative_tolerance);
    // Fresh geometries, some far beyond the fit's ±0.1 Å, where a wrong functional form
    // would show most.
    double largest_error = 0.0;
    double largest_energy = 0.0;
    for (const double amplitude : {0.05, 0.1, 0.2, 0.3}) {
      for (int i = 0; i < 5; ++i) {
        const Eigen::VectorXd x = randomly_displaced(molecule.coordinates(), amplitude, generator);
        const double expected = potential.openbabel_out_of_plane_energy(x);
        largest_error =
            std::max(largest_error, std::abs(potential.modelled_out_of_plane_energy(x) - expected));
        largest_energy = std::max(largest_energy, std::abs(expected));
      }
    }
    EXPECT_LT(largest_error, model_relative_tolerance * largest_energy)
        << "largest energy " << largest_energy;
  }
}

INSTANTIATE_TEST_SUITE_P(OpenBabel, OutOfPlaneModelForceField, ::testing::Values("MMFF94", "MMFF94s", "UFF"));

// The differenced out-of-plane gradient (step 1e-5 Å) has round-off ε·E_oop/h ≈ 2e-10
// kcal/mol/Å for out-of-plane energies of ~20 kcal/mol and truncation ~h² of the third
// derivative, far below this bound relative to components of 1–100 kcal/mol/Å.
constexpr double fallback_relative_tolerance = 1e-9;

TEST(OpenBabelPotential, DifferencedOutOfPlaneFallbackAgreesWithTheModel) {
  OpenBabelPotentialOptions options;
  options.analytic_out_of_plane = false;
  std::mt19937 generator(11);
  for (const char* smiles : {"CC(=O)Nc1ccccc1O", "c1ccc(cc1)P(c1ccccc1)c1ccccc1"}) {
    const Molecule molecule = from_smiles(smiles);
    // Strongly distorted, so that large Wilson angles exercise every part of the
    // derivative.
    const Eigen::VectorXd x = randomly_displaced(molecule.coordinates(), 0.2, generator);
    for (const char* name : {"MMFF94", "UFF"}) {
      SCOPED_TRACE(std::string(name) + " " + smiles);
      const OpenBabelPotential analytic(name, molecule);
      const OpenBabelPotential differenced(name, molecule, options);
      EXPECT_TRUE(analytic.out_of_plane_is_analytic()) << analytic.out_of_plane_gradient_note();
      EXPECT_FALSE(differenced.out_of_plane_is_analytic());
      EXPECT_NE(differenced.out_of_plane_gradient_note().find("turned off"), std::string::npos);
      EXPECT_THROW(differenced.modelled_out_of_plane_energy(x), Error);
      Eigen::VectorXd model_gradient, differenced_gradient;
      // The energy is Open Babel's either way.
      EXPECT_EQ(analytic.energy_and_gradient(x, model_gradient),
                differenced.energy_and_gradient(x, differenced_gradient));
      const double scale = differenced_gradient.cwiseAbs().maxCoeff();
      EXPECT_LT((model_gradient - differenced_gradient).cwiseAbs().maxCoeff(),
                fallback_relative_tolerance * scale);
    }
  }
}

TEST(OpenBabelPotential, GaffAndGhemicalKeepTheDifferencedOutOfPlaneGradient) {
  const Molecule molecule = displaced_from_smiles("CC(=O)Nc1ccccc1O");
  for (const char* name : {"GAFF", "Ghemical"}) {
    SCOPED_TRACE(name);
    const OpenBabelPotential potential(name, molecule);
    EXPECT_FALSE(potential.out_of_plane_is_analytic());
    if (potential.out_of_plane_atom_count() > 0) {
      EXPECT_NE(potential.out_of_plane_gradient_note().find("no fitted model"), std::string::npos);
    }
  }
}

TEST(OutOfPlaneModel, GradientIsTheDerivativeOfTheModelEnergy) {
  // The hand-derived Wilson-angle derivatives on their own, for both forms, at a strongly
  // distorted formaldehyde (Wilson angles of tens of degrees).
  std::mt19937 generator(3);
  const Molecule molecule = from_smiles("C=O");
  const Eigen::VectorXd x = randomly_displaced(molecule.coordinates(), 0.3, generator);
  detail::OutOfPlaneCentre centre;
  centre.atom = 0;
  centre.neighbours = {1, 2, 3};
  centre.coefficients = {0.7, -2.0};
  for (const auto form :
       {detail::OutOfPlaneForm::squared_wilson_angle, detail::OutOfPlaneForm::cosine_series}) {
    const detail::OutOfPlaneModel model(form, {centre}, 1.5);
    Eigen::VectorXd analytic = Eigen::VectorXd::Zero(x.size());
    model.add_gradient(x, analytic);
    // Fourth-order central differences (step 1e-4 Å: truncation ~h⁴ f⁽⁵⁾/30 ≲ 1e-13,
    // round-off ~ε·|E|/h ≈ 2e-12): the components here are as small as 0.1 kcal/mol/Å,
    // where the second-order stencil's error (~1e-9, varying with the SMILES-built start)
    // came within the tolerance.
    constexpr double step = 1e-4;
    Eigen::VectorXd reference(x.size());
    Eigen::VectorXd displaced = x;
    auto at = [&](Eigen::Index k, double offset) {
      displaced[k] = x[k] + offset;
      const double value = model.energy(displaced);
      displaced[k] = x[k];
      return value;
    };
    for (Eigen::Index k = 0; k < x.size(); ++k)
      reference[k] =
          (-at(k, 2.0 * step) + 8.0 * at(k, step) - 8.0 * at(k, -step) + at(k, -2.0 * step)) / (12.0 * step);
    EXPECT_LT((analytic - reference).cwiseAbs().maxCoeff(),
              gradient_relative_tolerance * reference.cwiseAbs().maxCoeff());
  }
}

TEST(OutOfPlaneModelFit, RejectsAnEnergyOfAnotherForm) {
  // A reference of the cosine-series form cannot be fitted by the squared-Wilson-angle
  // form: the fit must say so rather than return a model that is merely close. The
  // right form recovers the coefficients (the second, multiplying u² ~ χ⁴, less sharply).
  const Molecule molecule = from_smiles("C=O");
  const Eigen::VectorXd x0 = molecule.coordinates();
  detail::OutOfPlaneCentre centre;
  centre.atom = 0;
  centre.neighbours = {1, 2, 3};
  centre.coefficients = {5.0, 3.0};
  const detail::OutOfPlaneModel cosine_series(detail::OutOfPlaneForm::cosine_series, {centre}, 0.0);
  const auto wrong =
      detail::fit_out_of_plane_model(detail::OutOfPlaneForm::squared_wilson_angle, {centre}, x0,
                                     [&](const Eigen::VectorXd& x) { return cosine_series.energy(x); });
  EXPECT_FALSE(wrong.accepted);
  EXPECT_NE(wrong.reason.find("misses"), std::string::npos) << wrong.reason;
  const auto right =
      detail::fit_out_of_plane_model(detail::OutOfPlaneForm::cosine_series, {centre}, x0,
                                     [&](const Eigen::VectorXd& x) { return cosine_series.energy(x); });
  EXPECT_TRUE(right.accepted) << right.reason;
  EXPECT_NEAR(right.model.centres()[0].coefficients[0], 5.0, 1e-8);
  EXPECT_NEAR(right.model.centres()[0].coefficients[1], 3.0, 1e-5);
}

}  // namespace
}  // namespace overtone
