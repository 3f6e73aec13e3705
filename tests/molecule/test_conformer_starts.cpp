// Conformer starts: other conformations of the same molecule and stereoisomer, from the
// builder's ring templates and from settings of the rotatable bonds.
#include <gtest/gtest.h>

#include <cmath>
#include <string>

#include "core/units.hpp"
#include "molecule/conformer_starts.hpp"
#include "molecule/read_molecule.hpp"

namespace overtone {
namespace {

// A rotation about a bond moves no bonded pair: only round-off.
constexpr double bond_length_tolerance_angstrom = 1e-9;
// Open Babel's torsion values for an sp3–sp3 bond are the staggered ones, 60°, 180°
// and 300° (common practice, no source); the other rotors shift the butane skeleton
// by nothing, so the dihedral comes out at those values to round-off of the rotation.
constexpr double dihedral_tolerance_degree = 1.0;

Molecule from_smiles(const std::string& smiles) {
  ReadOptions options;
  options.input_is_smiles = true;
  return read_molecule(smiles, options).molecule;
}

double dihedral_degree(const Eigen::VectorXd& x, int a, int b, int c, int d) {
  const Eigen::Vector3d b1 = x.segment<3>(3 * b) - x.segment<3>(3 * a);
  const Eigen::Vector3d b2 = x.segment<3>(3 * c) - x.segment<3>(3 * b);
  const Eigen::Vector3d b3 = x.segment<3>(3 * d) - x.segment<3>(3 * c);
  const Eigen::Vector3d n1 = b1.cross(b2), n2 = b2.cross(b3);
  const double angle = std::atan2(b2.normalized().dot(n1.cross(n2)), n1.dot(n2)) * 180.0 / units::pi;
  return angle < 0.0 ? angle + 360.0 : angle;
}

TEST(ConformerStarts, StereoIdentityTellsMirrorImagesApart) {
  // (R)-butan-2-ol: its mirror image is the (S) enantiomer (closed form: a reflection
  // inverts every tetrahedral centre); a rotation and translation change nothing.
  const Molecule molecule = from_smiles("C[C@@H](O)CC");
  const Eigen::VectorXd x = molecule.coordinates();
  Eigen::VectorXd mirrored = x, moved = x;
  const Eigen::Matrix3d rotation =
      Eigen::AngleAxisd(0.7, Eigen::Vector3d(1, 2, 3).normalized()).toRotationMatrix();
  for (Eigen::Index i = 0; i < x.size(); i += 3) {
    mirrored[i] = -x[i];
    moved.segment<3>(i) = rotation * x.segment<3>(i) + Eigen::Vector3d(4.0, -1.0, 2.5);
  }
  const std::string original = stereo_identity(molecule, x);
  EXPECT_NE(original.find('@'), std::string::npos) << original;
  EXPECT_NE(stereo_identity(molecule, mirrored), original);
  EXPECT_EQ(stereo_identity(molecule, moved), original);
}

TEST(ConformerStarts, RotorStartsTurnOnlyAboutBondsAndReachStaggeredSettings) {
  const Molecule butane = from_smiles("CCCC");
  const ConformerStartsResult result = generate_conformer_starts(butane);
  ASSERT_GE(result.rotatable_bonds, 1);
  const Eigen::VectorXd x = butane.coordinates();
  bool gauche = false, anti = false;
  for (const ConformerStart& start : result.starts) {
    if (start.origin.rfind("rotor setting", 0) != 0) continue;
    for (const Bond& bond : butane.bonds) {
      const double before = (x.segment<3>(3 * bond.first) - x.segment<3>(3 * bond.second)).norm();
      const double after = (start.coordinates_angstrom.segment<3>(3 * bond.first) -
                            start.coordinates_angstrom.segment<3>(3 * bond.second))
                               .norm();
      EXPECT_NEAR(after, before, bond_length_tolerance_angstrom);
    }
    const double dihedral = dihedral_degree(start.coordinates_angstrom, 0, 1, 2, 3);
    gauche |= std::abs(dihedral - 60.0) < dihedral_tolerance_degree ||
              std::abs(dihedral - 300.0) < dihedral_tolerance_degree;
    anti |= std::abs(dihedral - 180.0) < dihedral_tolerance_degree;
  }
  EXPECT_TRUE(gauche);
  EXPECT_TRUE(anti);
}

TEST(ConformerStarts, EveryStartIsTheSameStereoisomer) {
  const Molecule molecule = from_smiles("C[C@@H](O)C[C@H](C)CC");
  const ConformerStartsResult result = generate_conformer_starts(molecule);
  EXPECT_FALSE(result.starts.empty());
  for (const ConformerStart& start : result.starts)
    EXPECT_EQ(stereo_identity(molecule, start.coordinates_angstrom), result.stereo_identity) << start.origin;
}

}  // namespace
}  // namespace overtone
