// Open Babel force fields behind the Potential interface: gradient sign and units
// against central differences of the energy, the out-of-plane correction, and clear
// errors for molecules a force field cannot handle.
#include <gtest/gtest.h>

#include <cmath>
#include <string>

#include "core/error.hpp"
#include "core/units.hpp"
#include "molecule/read_molecule.hpp"
#include "potential/make_potential.hpp"
#include "potential/openbabel_potential.hpp"

namespace overtone {
namespace {

const std::string source_dir = OVERTONE_SOURCE_DIR;

// Central differences with this step have truncation error ~h²·E'''/6 ≈ 1e-10 and
// round-off ~ε·|E|/h ≈ 1e-9 kcal/mol/Å for these molecules (common practice, no source).
constexpr double difference_step_angstrom = 1e-5;
// Largest allowed |analytic − differenced| component, relative to the largest component.
constexpr double gradient_relative_tolerance = 1e-6;

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

}  // namespace
}  // namespace overtone
