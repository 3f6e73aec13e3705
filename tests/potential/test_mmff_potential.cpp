// The compiled MMFF94 / MMFF94s against outside references:
//   - Open Babel 3.1.1's own term energies (OBForceField E_Bond, E_Angle, E_StrBnd,
//     E_Torsion, E_OOP, E_VDW, E_Electrostatic after Setup on the same geometry), a
//     general-purpose library, on real molecule sets shipped by Debian:
//     chemical-structures-data (about 570 small organics as 3-D CML) and rdkit-data (the
//     NCI set first_5K.smi, built to 3-D by Open Babel as the smiles: input does);
//   - central differences of our own energy (gradient) and gradient (Hessian);
//   - the published linear-bend form, E = 143.9325 ka (1 + cos θ) (Halgren, J. Comput.
//     Chem. 17, 490 (1996), part I, eq. 4), at exactly 180° and 179.9°.
// The set check runs on a subset in CI; OVERTONE_MMFF_CHECK=full (tools/check-mmff) runs
// every molecule of both sets.
#include <gtest/gtest.h>
#include <openbabel/forcefield.h>
#include <openbabel/mol.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <memory>
#include <random>
#include <string>
#include <vector>

#include "core/error.hpp"
#include "core/units.hpp"
#include "molecule/openbabel_bridge.hpp"
#include "molecule/read_molecule.hpp"
#include "potential/make_potential.hpp"
#include "potential/mmff_potential.hpp"

namespace overtone {
namespace {

const std::string source_dir = OVERTONE_SOURCE_DIR;
const std::string structures_dir = "/usr/share/chemical-structures";      // Debian chemical-structures-data
const std::string nci_smiles = "/usr/share/RDKit/Data/NCI/first_5K.smi";  // Debian rdkit-data

// Term energies against Open Babel: the two evaluate the same sums of the same closed
// forms in a different order (and Open Babel goes through acos/atan2 for angles), so they
// differ by rounding, ~1e-15 relative per term; sums with cancellation (stretch–bend,
// torsion) lose a few digits more (measured worst 3e-12 over both full sets). 1e-10 is
// the agreement asked of a reimplementation.
constexpr double term_relative_tolerance = 1e-10;
// Below this a term sum counts as zero for the relative comparison (kcal/mol): far
// below any energy difference that matters, far above rounding of the sums.
constexpr double term_absolute_floor_kcal_mol = 1e-9;
// Random displacement of every coordinate (Å): enough to move every term off its
// reference value, small enough to stay in the molecule's shape (common practice).
constexpr double displacement_angstrom = 0.1;

// Derivatives are checked against five-point central differences,
// f' ≈ (f(x−2h) − 8f(x−h) + 8f(x+h) − f(x+2h))/(12h): truncation h⁴ f⁽⁵⁾/30 and round-off
// ~1.5 ε |f|/h (common practice, no source). With h = 1e-4 Å and the energies, gradients
// and derivatives of these molecules (|E| ≲ 1e3 kcal/mol, fifth derivatives ≲ 1e6 in
// these units) both stay near 1e-9 kcal/mol/Å, below 1e-8 of the largest component or
// of 1 kcal/mol/Å, whichever is larger, while any wrong derivative term misses by orders
// of magnitude more (measured: ≤ 5e-10 relative for the gradient and the Hessian).
constexpr double difference_step_angstrom = 1e-4;
constexpr double gradient_relative_tolerance = 1e-8;
constexpr double hessian_relative_tolerance = 1e-8;
// H·v from the dual-number product against the full Hessian times v: both exact, so only
// rounding of sums over a few hundred terms separates them.
constexpr double product_relative_tolerance = 1e-12;

struct SetEntry {
  std::string input;
  bool smiles = false;
};

bool full_check() {
  const char* mode = std::getenv("OVERTONE_MMFF_CHECK");
  return mode && std::string(mode) == "full";
}

bool sets_installed() {
  return std::filesystem::exists(structures_dir) && std::filesystem::exists(nci_smiles);
}

std::vector<SetEntry> structure_files() {
  std::vector<SetEntry> entries;
  for (const auto& file : std::filesystem::recursive_directory_iterator(structures_dir))
    if (file.path().extension() == ".cml") entries.push_back({file.path().string(), false});
  std::sort(entries.begin(), entries.end(),
            [](const SetEntry& a, const SetEntry& b) { return a.input < b.input; });
  return entries;
}

std::vector<SetEntry> nci_entries(std::size_t limit) {
  std::vector<SetEntry> entries;
  std::ifstream stream(nci_smiles);
  std::string line;
  while (entries.size() < limit && std::getline(stream, line)) {
    const std::string smiles = line.substr(0, line.find_first_of(" \t"));
    if (!smiles.empty()) entries.push_back({smiles, true});
  }
  return entries;
}

// CI: every CML structure (quick to read) and the first 60 NCI SMILES (each built to
// 3-D, which dominates the run time) for MMFF94; every third CML structure and the first
// 30 NCI SMILES for MMFF94s, which shares all code and all but two tables. Full: all of
// both for both.
std::vector<SetEntry> check_set(const std::string& variant) {
  const bool full = full_check();
  const bool reduced = !full && variant != "MMFF94";
  std::vector<SetEntry> entries;
  const std::vector<SetEntry> files = structure_files();
  for (std::size_t k = 0; k < files.size(); k += reduced ? 3 : 1) entries.push_back(files[k]);
  const std::vector<SetEntry> nci = nci_entries(full ? 100000 : reduced ? 30 : 60);
  entries.insert(entries.end(), nci.begin(), nci.end());
  return entries;
}

bool read_entry(const SetEntry& entry, Molecule& molecule) {
  try {
    ReadOptions options;
    options.input_is_smiles = entry.smiles;
    molecule = read_molecule(entry.input, options).molecule;
    return true;
  } catch (const Error&) {
    return false;
  }
}

Eigen::VectorXd randomly_displaced(const Eigen::VectorXd& x, double amplitude, std::mt19937& generator) {
  std::uniform_real_distribution<double> uniform(-amplitude, amplitude);
  Eigen::VectorXd y = x;
  for (Eigen::Index k = 0; k < y.size(); ++k) y[k] += uniform(generator);
  return y;
}

// Open Babel's own force field on the same molecule, for its term energies.
class OpenBabelReference {
 public:
  OpenBabelReference(const std::string& name, const Molecule& molecule) {
    run_openbabel_on_one_thread();
    field_.reset(OpenBabel::OBForceField::FindForceField(name)->MakeNewInstance());
    static std::ostream discard(nullptr);
    field_->SetLogFile(&discard);
    field_->SetLogLevel(OBFF_LOGLVL_NONE);
    openbabel_from_molecule(molecule, mol_);
    ok_ = field_->Setup(mol_);
  }
  bool ok() const { return ok_; }
  // Bond, angle, stretch–bend, torsion, out-of-plane, van der Waals, electrostatic.
  std::array<double, 7> terms(const Eigen::VectorXd& x) {
    std::copy(x.data(), x.data() + x.size(), mol_.GetCoordinates());
    field_->SetCoordinates(mol_);
    return {field_->E_Bond(false),         field_->E_Angle(false), field_->E_StrBnd(false),
            field_->E_Torsion(false),      field_->E_OOP(false),   field_->E_VDW(false),
            field_->E_Electrostatic(false)};
  }

 private:
  std::unique_ptr<OpenBabel::OBForceField> field_;
  OpenBabel::OBMol mol_;
  bool ok_ = false;
};

std::array<double, 7> term_array(const MmffTermEnergies& e) {
  return {e.bond_stretch, e.angle_bend,    e.stretch_bend, e.torsion,
          e.out_of_plane, e.van_der_waals, e.electrostatic};
}

const char* const term_names[7] = {"bond",         "angle", "stretch-bend", "torsion",
                                   "out-of-plane", "vdw",   "electrostatic"};

double relative_difference(double ours, double reference) {
  return std::abs(ours - reference) / std::max(std::abs(reference), term_absolute_floor_kcal_mol);
}

class MmffAgainstOpenBabel : public ::testing::TestWithParam<std::string> {};

TEST_P(MmffAgainstOpenBabel, TermEnergiesAgreeOnRealMoleculeSets) {
  if (!sets_installed())
    GTEST_SKIP() << "Debian packages chemical-structures-data and rdkit-data are not installed (tools/setup)";
  const std::string variant = GetParam();
  std::mt19937 generator(11);
  std::array<double, 7> worst{};
  std::array<std::string, 7> worst_input;
  int checked = 0, untypable = 0, unreadable = 0, geometries = 0;
  for (const SetEntry& entry : check_set(variant)) {
    Molecule molecule;
    if (!read_entry(entry, molecule)) {
      ++unreadable;
      continue;
    }
    OpenBabelReference reference(variant, molecule);
    std::unique_ptr<MmffPotential> potential;
    try {
      potential = std::make_unique<MmffPotential>(variant, molecule);
    } catch (const Error& error) {
      // Either Open Babel could not set up, or it typed an atom with a type meant for
      // another element or coordination (then its energies would be meaningless).
      ++untypable;
      continue;
    }
    ASSERT_TRUE(reference.ok()) << entry.input << ": we accepted a molecule Open Babel rejects";
    ++checked;
    for (int repetition = 0; repetition < 2; ++repetition) {
      const Eigen::VectorXd x = randomly_displaced(molecule.coordinates(), displacement_angstrom, generator);
      const std::array<double, 7> ours = term_array(potential->term_energies(x));
      const std::array<double, 7> theirs = reference.terms(x);
      ++geometries;
      for (int k = 0; k < 7; ++k) {
        const double difference = relative_difference(ours[k], theirs[k]);
        EXPECT_LT(difference, term_relative_tolerance)
            << entry.input << " " << term_names[k] << ": ours " << ours[k] << ", open babel " << theirs[k];
        if (difference > worst[k]) {
          worst[k] = difference;
          worst_input[k] = entry.input;
        }
      }
    }
  }
  std::printf("%s: %d molecules checked at %d geometries; %d could not be typed (skipped), %d unreadable\n",
              variant.c_str(), checked, geometries, untypable, unreadable);
  for (int k = 0; k < 7; ++k)
    std::printf("  worst relative error %-14s %.2e  (%s)\n", term_names[k], worst[k], worst_input[k].c_str());
  EXPECT_GT(checked, 100);
}

INSTANTIATE_TEST_SUITE_P(Variants, MmffAgainstOpenBabel, ::testing::Values("MMFF94", "MMFF94s"));

// Five-point central difference of f along coordinate k.
template <class Result, class Function>
Result five_point(const Eigen::VectorXd& x, Eigen::Index k, const Function& f) {
  const double h = difference_step_angstrom;
  Eigen::VectorXd y = x;
  auto at = [&](double offset) {
    y[k] = x[k] + offset;
    return Result(f(y));
  };
  return Result((at(-2.0 * h) - 8.0 * at(-h) + 8.0 * at(h) - at(2.0 * h)) / (12.0 * h));
}

Eigen::VectorXd differenced_gradient(const Potential& potential, const Eigen::VectorXd& x) {
  Eigen::VectorXd gradient(x.size());
  for (Eigen::Index k = 0; k < x.size(); ++k)
    gradient[k] = five_point<double>(x, k, [&](const Eigen::VectorXd& y) { return potential.energy(y); });
  return gradient;
}

Eigen::MatrixXd differenced_hessian(const Potential& potential, const Eigen::VectorXd& x) {
  Eigen::MatrixXd hessian(x.size(), x.size());
  for (Eigen::Index k = 0; k < x.size(); ++k)
    hessian.col(k) = five_point<Eigen::VectorXd>(x, k, [&](const Eigen::VectorXd& y) {
      Eigen::VectorXd g;
      potential.energy_and_gradient(y, g);
      return g;
    });
  return hessian;
}

// Gradient, Hessian and Hessian–vector product of one potential at x against central
// differences (and against each other).
void expect_derivatives_consistent(const MmffPotential& potential, const Eigen::VectorXd& x,
                                   const std::string& label) {
  SCOPED_TRACE(label);
  Eigen::VectorXd gradient;
  const double energy = potential.energy_and_gradient(x, gradient);
  ASSERT_TRUE(std::isfinite(energy));
  ASSERT_TRUE(gradient.allFinite());
  EXPECT_NEAR(energy, potential.energy(x), 1e-12 * std::max(1.0, std::abs(energy)));
  const Eigen::VectorXd reference_gradient = differenced_gradient(potential, x);
  const double gradient_scale = std::max(1.0, reference_gradient.cwiseAbs().maxCoeff());
  EXPECT_LT((gradient - reference_gradient).cwiseAbs().maxCoeff(),
            gradient_relative_tolerance * gradient_scale);

  const Eigen::MatrixXd hessian = potential.hessian(x);
  ASSERT_TRUE(hessian.allFinite());
  const Eigen::MatrixXd reference_hessian = differenced_hessian(potential, x);
  const double hessian_scale = std::max(1.0, reference_hessian.cwiseAbs().maxCoeff());
  EXPECT_LT((hessian - reference_hessian).cwiseAbs().maxCoeff(), hessian_relative_tolerance * hessian_scale);
  EXPECT_EQ((hessian - hessian.transpose()).cwiseAbs().maxCoeff(), 0.0);

  std::mt19937 generator(3);
  std::normal_distribution<double> normal;
  Eigen::VectorXd direction(x.size());
  for (Eigen::Index k = 0; k < x.size(); ++k) direction[k] = normal(generator);
  const Eigen::VectorXd product = potential.hessian_vector_product(x, direction);
  const Eigen::VectorXd expected = hessian * direction;
  EXPECT_LT((product - expected).cwiseAbs().maxCoeff(),
            product_relative_tolerance * std::max(1.0, expected.cwiseAbs().maxCoeff()) * std::sqrt(x.size()));
}

TEST(MmffPotential, DerivativesAgreeWithCentralDifferencesOnRealMolecules) {
  if (!sets_installed())
    GTEST_SKIP() << "Debian packages chemical-structures-data and rdkit-data are not installed (tools/setup)";
  // Every 12th CML structure (about 48) and ten NCI molecules; a differenced Hessian costs
  // 6N gradients, so the whole set would take minutes for no more coverage of the code.
  std::vector<SetEntry> entries;
  const std::vector<SetEntry> files = structure_files();
  for (std::size_t k = 0; k < files.size(); k += full_check() ? 1 : 12) entries.push_back(files[k]);
  for (const SetEntry& entry : nci_entries(full_check() ? 200 : 10)) entries.push_back(entry);
  std::mt19937 generator(5);
  int checked = 0;
  for (const SetEntry& entry : entries) {
    Molecule molecule;
    if (!read_entry(entry, molecule)) continue;
    for (const char* variant : {"MMFF94", "MMFF94s"}) {
      std::unique_ptr<MmffPotential> potential;
      try {
        potential = std::make_unique<MmffPotential>(variant, molecule);
      } catch (const Error&) {
        continue;
      }
      const Eigen::VectorXd x = randomly_displaced(molecule.coordinates(), displacement_angstrom, generator);
      expect_derivatives_consistent(*potential, x, entry.input + " " + variant);
      ++checked;
    }
  }
  std::printf("derivatives checked on %d molecule/variant pairs\n", checked);
  EXPECT_GT(checked, 50);
}

// Linear molecules built exactly: heavy atoms on the z axis, hydrogens staggered about it.
struct Placed {
  int atomic_number;
  Eigen::Vector3d position;
};

Molecule build(const std::vector<Placed>& atoms, const std::vector<std::array<int, 3>>& bonds) {
  Molecule molecule;
  for (const Placed& placed : atoms) {
    Atom atom;
    atom.atomic_number = placed.atomic_number;
    atom.mass_da = 1.0;
    atom.position_angstrom = placed.position;
    molecule.atoms.push_back(atom);
  }
  for (const auto& b : bonds) molecule.bonds.push_back({b[0], b[1], b[2]});
  return molecule;
}

// Three hydrogens of a methyl group on carbon at height z, pointing along ±z.
void add_methyl_hydrogens(std::vector<Placed>& atoms, std::vector<std::array<int, 3>>& bonds, int carbon,
                          double z, double sign, double twist) {
  constexpr double ch = 1.093, tetrahedral = 109.47;
  const double polar = (180.0 - tetrahedral) * units::pi / 180.0;
  for (int k = 0; k < 3; ++k) {
    const double phi = twist + 2.0 * units::pi * k / 3.0;
    atoms.push_back(
        {1, Eigen::Vector3d(ch * std::sin(polar) * std::cos(phi), ch * std::sin(polar) * std::sin(phi),
                            z - sign * ch * std::cos(polar))});
    bonds.push_back({carbon, static_cast<int>(atoms.size()) - 1, 1});
  }
}

Molecule acetonitrile() {
  std::vector<Placed> atoms = {{6, {0, 0, 0}}, {6, {0, 0, 1.458}}, {7, {0, 0, 2.615}}};
  std::vector<std::array<int, 3>> bonds = {{0, 1, 1}, {1, 2, 3}};
  add_methyl_hydrogens(atoms, bonds, 0, 0.0, 1.0, 0.3);
  return build(atoms, bonds);
}

Molecule but_2_yne() {
  std::vector<Placed> atoms = {{6, {0, 0, 0}}, {6, {0, 0, 1.467}}, {6, {0, 0, 2.673}}, {6, {0, 0, 4.140}}};
  std::vector<std::array<int, 3>> bonds = {{0, 1, 1}, {1, 2, 3}, {2, 3, 1}};
  add_methyl_hydrogens(atoms, bonds, 0, 0.0, 1.0, 0.3);
  add_methyl_hydrogens(atoms, bonds, 3, 4.140, -1.0, 0.9);
  return build(atoms, bonds);
}

Molecule carbon_dioxide() {
  return build({{8, {0, 0, -1.162}}, {6, {0, 0, 0}}, {8, {0, 0, 1.162}}}, {{0, 1, 2}, {1, 2, 2}});
}

struct LinearCase {
  const char* name;
  Molecule (*make)();
  int pivot;               // a linear centre
  int moving;              // its neighbour on the rotated side
  std::vector<int> rigid;  // atoms rotated with it (its substituents)
  // Another linear centre, bent as well for the comparison with Open Babel (which is
  // wrong at exactly 180°): pivot, moving atom, its substituents; pivot −1 for none.
  int other_pivot = -1;
  int other_moving = -1;
  std::vector<int> other_rigid = {};
};

// Rotates `moving` and its substituents rigidly about `pivot` by `degrees` in the xz
// plane: every distance from the pivot and within the group is kept, so among the bends
// only the one about the pivot changes.
Eigen::VectorXd rotated_about(const Eigen::VectorXd& x, int pivot, int moving, const std::vector<int>& rigid,
                              double degrees) {
  Eigen::VectorXd y = x;
  const Eigen::Vector3d centre = x.segment<3>(3 * pivot);
  const double angle = degrees * units::pi / 180.0;
  std::vector<int> group = rigid;
  group.push_back(moving);
  for (const int atom : group) {
    const Eigen::Vector3d arm = x.segment<3>(3 * atom) - centre;
    const Eigen::Vector3d rotated(std::cos(angle) * arm.x() + std::sin(angle) * arm.z(), arm.y(),
                                  -std::sin(angle) * arm.x() + std::cos(angle) * arm.z());
    y.segment<3>(3 * atom) = centre + rotated;
  }
  return y;
}

Eigen::VectorXd bent(const Eigen::VectorXd& x, const LinearCase& c, double degrees) {
  return rotated_about(x, c.pivot, c.moving, c.rigid, degrees);
}

void PrintTo(const LinearCase& c, std::ostream* os) { *os << c.name; }

class LinearCentres : public ::testing::TestWithParam<LinearCase> {};

TEST_P(LinearCentres, SmoothAndExactAtAndNear180Degrees) {
  const LinearCase c = GetParam();
  const Molecule molecule = c.make();
  const MmffPotential potential("MMFF94", molecule);
  // The bend about the pivot must be a linear-form term.
  const detail::MmffAngleTerm* linear = nullptr;
  for (const auto& t : potential.terms().angles)
    if (t.linear && t.centre == c.pivot && (t.a == c.moving || t.c == c.moving)) linear = &t;
  ASSERT_NE(linear, nullptr) << "no linear bend about atom " << c.pivot + 1;
  const double ka = linear->force_constant;

  const Eigen::VectorXd straight = molecule.coordinates();
  expect_derivatives_consistent(potential, straight, std::string(c.name) + " at 180 degrees");
  const Eigen::VectorXd near = bent(straight, c, 0.1);
  expect_derivatives_consistent(potential, near, std::string(c.name) + " at 179.9 degrees");

  // Rotating one atom about the centre changes only that bend among the angle terms:
  // E(θ) − E(180°) = 143.9325 ka (1 + cos θ) = 143.9325 ka (1 − cos δ) (Halgren I,
  // eq. 4), tiny but exact to rounding of the angle sum.
  for (const double degrees : {0.1, 1.0, 5.0}) {
    const double expected = 143.9325 * ka * (1.0 - std::cos(degrees * units::pi / 180.0));
    const double change = potential.term_energies(bent(straight, c, degrees)).angle_bend -
                          potential.term_energies(straight).angle_bend;
    EXPECT_NEAR(change, expected, 1e-12 * std::max(1.0, potential.term_energies(straight).angle_bend))
        << degrees << " degrees";
  }

  // Away from exact collinearity Open Babel evaluates the same terms correctly: all seven
  // agree at 179.9° (and at 179° for a margin).
  OpenBabelReference reference("MMFF94", molecule);
  ASSERT_TRUE(reference.ok());
  for (const double degrees : {0.1, 1.0}) {
    Eigen::VectorXd y = bent(straight, c, degrees);
    if (c.other_pivot >= 0) y = rotated_about(y, c.other_pivot, c.other_moving, c.other_rigid, -degrees);
    const std::array<double, 7> ours = term_array(potential.term_energies(y));
    const std::array<double, 7> theirs = reference.terms(y);
    for (int k = 0; k < 7; ++k)
      EXPECT_LT(relative_difference(ours[k], theirs[k]), term_relative_tolerance)
          << term_names[k] << " at " << 180.0 - degrees << " degrees";
  }
}

INSTANTIATE_TEST_SUITE_P(Molecules, LinearCentres,
                         ::testing::Values(LinearCase{"acetonitrile", acetonitrile, 1, 2, {}},
                                           LinearCase{
                                               "but-2-yne", but_2_yne, 2, 3, {7, 8, 9}, 1, 0, {4, 5, 6}},
                                           LinearCase{"carbon dioxide", carbon_dioxide, 1, 2, {}}),
                         [](const auto& info) {
                           std::string name = info.param.name;
                           for (auto& ch : name)
                             if (!std::isalnum(static_cast<unsigned char>(ch))) ch = '_';
                           return name;
                         });

Molecule from_smiles(const std::string& smiles) {
  ReadOptions options;
  options.input_is_smiles = true;
  return read_molecule(smiles, options).molecule;
}

TEST(MmffPotential, EnergyIsInvariantUnderRigidMotionAndGradientHasNoNetForceOrTorque) {
  // Any potential of internal coordinates (common practice, no source).
  const Molecule molecule = from_smiles("CC(=O)Nc1ccc(O)cc1");
  const MmffPotential potential("MMFF94", molecule);
  std::mt19937 generator(17);
  const Eigen::VectorXd x = randomly_displaced(molecule.coordinates(), displacement_angstrom, generator);
  const Eigen::Matrix3d rotation =
      (Eigen::AngleAxisd(0.7, Eigen::Vector3d(1, 2, 3).normalized()).toRotationMatrix());
  Eigen::VectorXd moved = x;
  for (Eigen::Index a = 0; a < x.size() / 3; ++a)
    moved.segment<3>(3 * a) = rotation * x.segment<3>(3 * a) + Eigen::Vector3d(1.5, -2.0, 0.25);
  const double energy = potential.energy(x);
  EXPECT_NEAR(potential.energy(moved), energy, 1e-11 * std::abs(energy));
  Eigen::VectorXd gradient;
  potential.energy_and_gradient(x, gradient);
  Eigen::Vector3d force = Eigen::Vector3d::Zero(), torque = Eigen::Vector3d::Zero();
  for (Eigen::Index a = 0; a < x.size() / 3; ++a) {
    force += gradient.segment<3>(3 * a);
    torque += Eigen::Vector3d(x.segment<3>(3 * a)).cross(Eigen::Vector3d(gradient.segment<3>(3 * a)));
  }
  const double scale = gradient.cwiseAbs().maxCoeff();
  EXPECT_LT(force.norm(), 1e-12 * scale * x.size());
  EXPECT_LT(torque.norm(), 1e-11 * scale * x.size());
}

TEST(MmffPotential, Mmff94sDiffersOnlyInOutOfPlaneAndTorsionTerms) {
  // Halgren, J. Comput. Chem. 20, 720 (1999): MMFF94s changes only out-of-plane and
  // torsion parameters (for delocalized trivalent nitrogen, e.g. an anilide).
  const Molecule molecule = from_smiles("CC(=O)Nc1ccc(O)cc1");
  const MmffPotential standard("MMFF94", molecule);
  const MmffPotential s_variant("mmff94s", molecule);
  EXPECT_EQ(s_variant.variant_name(), "MMFF94s");
  const Eigen::VectorXd x = molecule.coordinates();
  const MmffTermEnergies a = standard.term_energies(x);
  const MmffTermEnergies b = s_variant.term_energies(x);
  EXPECT_EQ(a.bond_stretch, b.bond_stretch);
  EXPECT_EQ(a.angle_bend, b.angle_bend);
  EXPECT_EQ(a.stretch_bend, b.stretch_bend);
  EXPECT_EQ(a.van_der_waals, b.van_der_waals);
  EXPECT_EQ(a.electrostatic, b.electrostatic);
  EXPECT_NE(a.torsion + a.out_of_plane, b.torsion + b.out_of_plane);
}

TEST(MmffPotential, DielectricOptionsScaleTheCoulombTerm) {
  // Halgren I, eq. 8: E = 332.0716 q_i q_j / (D (r + δ)^n); D = 4 divides the constant-
  // dielectric energy by 4 exactly, and n = 2 changes the energy but not the others.
  const Molecule molecule = from_smiles("OCC(=O)N");
  const Eigen::VectorXd x = molecule.coordinates();
  const MmffPotential unit("MMFF94", molecule);
  MmffOptions options;
  options.dielectric_constant = 4.0;
  const MmffPotential screened("MMFF94", molecule, options);
  EXPECT_NEAR(screened.term_energies(x).electrostatic, 0.25 * unit.term_energies(x).electrostatic,
              1e-14 * std::abs(unit.term_energies(x).electrostatic));
  options.dielectric_constant = 1.0;
  options.distance_dependent_dielectric = true;
  const MmffPotential distance_dependent("MMFF94", molecule, options);
  EXPECT_NE(distance_dependent.term_energies(x).electrostatic, unit.term_energies(x).electrostatic);
  EXPECT_EQ(distance_dependent.term_energies(x).van_der_waals, unit.term_energies(x).van_der_waals);
  expect_derivatives_consistent(distance_dependent, x, "distance-dependent dielectric");
  EXPECT_NE(distance_dependent.description().find("dielectric"), std::string::npos);
  options.dielectric_constant = 0.0;
  EXPECT_THROW(MmffPotential("MMFF94", molecule, options), Error);
}

TEST(MmffPotential, UntypableAtomsAndUnknownVariantsAreClearErrors) {
  const Molecule sulfur_hexafluoride =
      read_molecule(source_dir + "/tests/data/molecules/sulfur-hexafluoride.xyz").molecule;
  try {
    MmffPotential potential("MMFF94", sulfur_hexafluoride);
    FAIL() << "MMFF94 has no type for hexavalent sulfur";
  } catch (const Error& error) {
    const std::string message = error.what();
    EXPECT_NE(message.find("no atom type for atom 1"), std::string::npos) << message;
    EXPECT_NE(message.find("S with 6 bonded neighbours"), std::string::npos) << message;
  }
  // F–F has neither a bond line in mmffbond.par nor an empirical-rule reference in
  // mmffbndk.par (Open Babel's copy of the empirical rule's reference pairs): the
  // message names both atoms with their types and the missing term.
  try {
    MmffPotential potential("MMFF94", from_smiles("FF"));
    FAIL() << "MMFF94 has no F-F bond parameter";
  } catch (const Error& error) {
    const std::string message = error.what();
    EXPECT_NE(message.find("no bond-stretch parameter for atoms 1 (F, type 11) – 2 (F, type 11)"),
              std::string::npos)
        << message;
  }
  EXPECT_THROW(MmffPotential("MMFF95", sulfur_hexafluoride), Error);
}

TEST(MakePotential, MmffNamesChooseTheCompiledOrTheOpenBabelEvaluation) {
  const Molecule molecule = from_smiles("C=O");
  EXPECT_EQ(make_potential("MMFF94", molecule)->description(), "MMFF94 (compiled)");
  EXPECT_EQ(make_potential("mmff94s", molecule)->description(), "MMFF94s (compiled)");
  EXPECT_EQ(make_potential("MMFF94-openbabel", molecule)->description(), "MMFF94 (Open Babel)");
  EXPECT_EQ(make_potential("mmff94s-OpenBabel", molecule)->description(), "MMFF94s (Open Babel)");
  EXPECT_EQ(make_potential("UFF", molecule)->description(), "UFF (Open Babel)");
  EXPECT_TRUE(make_potential("MMFF94", molecule)->has_analytic_hessian_vector_product());
  EXPECT_FALSE(make_potential("MMFF94-openbabel", molecule)->has_analytic_hessian_vector_product());
  EXPECT_THROW(make_potential("UFF-openbabel", molecule), Error);
  // Both evaluations of one force field give one energy (Open Babel's total energy).
  const Eigen::VectorXd x = molecule.coordinates();
  const double compiled = make_potential("MMFF94", molecule)->energy(x);
  const double bridged = make_potential("MMFF94-openbabel", molecule)->energy(x);
  EXPECT_NEAR(compiled, bridged, term_relative_tolerance * std::max(1.0, std::abs(bridged)));
}

}  // namespace
}  // namespace overtone
