// Species of actual normal modes: from a generic Hessian with the group's symmetry
// (a random matrix averaged over the group) and from Open Babel's UFF Hessian by finite
// differences; degenerate sets, the matrices D(g) on each set, IR/Raman activity.
#include <gtest/gtest.h>

#include <Eigen/Geometry>
#include <array>
#include <map>
#include <random>

#include "core/error.hpp"
#include "harmonic/harmonic.hpp"
#include "molecule/read_molecule.hpp"
#include "potential/make_potential.hpp"
#include "symmetry/detect_point_group.hpp"
#include "symmetry/mode_symmetry.hpp"

namespace overtone {
namespace {

// Eigenvectors of a dense symmetric solver are accurate to ~1e-12 of the matrix norm.
constexpr double kRepresentationTolerance = 1e-8;
// Degenerate frequencies of a symmetrized Hessian agree to rounding (cm⁻¹).
constexpr double kDegenerateSpreadCm1 = 1e-6;

std::string data_path(const std::string& file) {
  return std::string(OVERTONE_SOURCE_DIR) + "/tests/data/symmetry/" + file;
}

Molecule load(const std::string& file) { return read_molecule(data_path(file)).molecule; }

// A generic Hessian with exactly the group's symmetry: a random positive matrix averaged
// over the group (no accidental degeneracies, almost surely).
Eigen::MatrixXd random_invariant_hessian(const PointGroupResult& r, unsigned seed, CoordinateFrame frame) {
  const int size = 3 * static_cast<int>(r.atomic_numbers.size());
  std::mt19937 random(seed);
  std::normal_distribution<double> normal;
  Eigen::MatrixXd m(size, size);
  for (int i = 0; i < size; ++i)
    for (int j = 0; j < size; ++j) m(i, j) = normal(random);
  const Eigen::MatrixXd positive = m * m.transpose() / size + Eigen::MatrixXd::Identity(size, size);
  return symmetrize_cartesian_hessian(positive * 500.0, r, frame);
}

struct Analysis {
  PointGroupResult group;
  HarmonicResult harmonic;
  ModeSymmetryResult species;
};

Analysis analyze_random(const std::string& file, unsigned seed = 1) {
  Analysis a;
  a.group = detect_point_group(load(file));
  const Eigen::MatrixXd h = random_invariant_hessian(a.group, seed, CoordinateFrame::File);
  a.harmonic = analyze_normal_modes(a.group.symmetrized_coordinates_angstrom, a.group.masses_da, h);
  a.species = assign_mode_species(a.group, a.harmonic);
  return a;
}

// Properties every assignment of a symmetric Hessian must have.
void expect_consistent(const Analysis& a) {
  const PointGroup& pg = a.group.group;
  const FiniteGroup f = pg.finite_group();
  EXPECT_EQ(a.species.status, ModeSymmetryStatus::Assigned) << a.species.message;
  EXPECT_TRUE(a.species.warnings.empty());
  EXPECT_EQ(a.species.assigned_multiplicities, a.species.expected_multiplicities);
  int covered = 0;
  for (const auto& set : a.species.sets) {
    const Irrep& irrep = pg.character_table.irreps[set.irrep];
    ASSERT_EQ(static_cast<int>(set.modes.size()), irrep.dimension) << set.species;
    EXPECT_LT(set.frequency_spread_cm1, kDegenerateSpreadCm1);
    EXPECT_NEAR(set.purity, 1.0, kRepresentationTolerance);
    EXPECT_LT(set.invariance_residual, kRepresentationTolerance);
    covered += irrep.dimension;
    // D(g) is a representation with the species' characters.
    for (int g = 0; g < pg.order(); ++g) {
      EXPECT_NEAR(set.operation_matrices[g].trace(), irrep.characters[pg.operations[g].class_index],
                  kRepresentationTolerance);
      for (int h = 0; h < pg.order(); ++h) {
        const Eigen::MatrixXd product = set.operation_matrices[g] * set.operation_matrices[h];
        ASSERT_LT((product - set.operation_matrices[f.multiply(g, h)]).cwiseAbs().maxCoeff(),
                  kRepresentationTolerance);
      }
    }
    // The adapted basis spans the same space as the members.
    Eigen::MatrixXd members(set.adapted_modes.rows(), set.modes.size());
    for (std::size_t k = 0; k < set.modes.size(); ++k)
      members.col(k) = a.harmonic.mass_weighted_modes.col(set.modes[k]);
    EXPECT_LT((members * members.transpose() - set.adapted_modes * set.adapted_modes.transpose()).norm(),
              kRepresentationTolerance);
  }
  EXPECT_EQ(covered, static_cast<int>(a.harmonic.mode_count()));
  for (const auto& mode : a.species.modes) EXPECT_NEAR(mode.purity, 1.0, kRepresentationTolerance);
}

TEST(ModeSymmetry, GenericSymmetricHessiansGiveTheGeometryDecomposition) {
  for (const char* file :
       {"water.C2v.xyz", "ammonia.C3v.xyz", "methane.Td.xyz", "carbon_dioxide.Dinfh.xyz",
        "acetylene.Dinfh.xyz", "boron_trifluoride.D3h.xyz", "benzene.D6h.xyz", "sulfur_hexafluoride.Oh.xyz",
        "boric_acid.C3h.xyz", "allene.D2d.xyz", "cyclooctasulfur.D4d.xyz", "buckminsterfullerene.Ih.xyz"}) {
    SCOPED_TRACE(file);
    expect_consistent(analyze_random(file));
  }
}

std::map<std::string, std::pair<bool, bool>> activity_by_species(const Analysis& a) {
  std::map<std::string, std::pair<bool, bool>> out;
  for (const auto& set : a.species.sets) out[set.species] = {set.ir_active, set.raman_active};
  return out;
}

// Selection rules as in Herzberg (1945) ch. III and Cotton (1990) ch. 10 (from memory).
TEST(ModeSymmetry, InfraredAndRamanActivity) {
  using Activity = std::map<std::string, std::pair<bool, bool>>;  // species -> (IR, Raman)
  // CO2: Σg+ Raman only; Σu+ and Πu IR only.
  EXPECT_EQ(activity_by_species(analyze_random("carbon_dioxide.Dinfh.xyz")),
            (Activity{{"Sigma_g+", {false, true}}, {"Sigma_u+", {true, false}}, {"Pi_u", {true, false}}}));
  // CH4: A1 and E Raman only, T2 both.
  EXPECT_EQ(activity_by_species(analyze_random("methane.Td.xyz")),
            (Activity{{"A1", {false, true}}, {"E", {false, true}}, {"T2", {true, true}}}));
  // SF6: T1u IR only; A1g, Eg, T2g Raman only; T2u inactive.
  EXPECT_EQ(activity_by_species(analyze_random("sulfur_hexafluoride.Oh.xyz")),
            (Activity{{"A1g", {false, true}},
                      {"Eg", {false, true}},
                      {"T2g", {false, true}},
                      {"T1u", {true, false}},
                      {"T2u", {false, false}}}));
  // Water: all three both.
  for (const auto& [species, activity] : activity_by_species(analyze_random("water.C2v.xyz")))
    EXPECT_EQ(activity, std::make_pair(true, true)) << species;
  // C60: 4 IR-active sets (T1u) and 10 Raman-active ones (2 Ag + 8 Hg).
  const Analysis c60 = analyze_random("buckminsterfullerene.Ih.xyz");
  int ir = 0, raman = 0;
  for (const auto& set : c60.species.sets) {
    ir += set.ir_active;
    raman += set.raman_active;
  }
  EXPECT_EQ(ir, 4);
  EXPECT_EQ(raman, 10);
  // Benzene: IR A2u + E1u (4 fundamentals), Raman A1g + E1g + E2g (7 fundamentals).
  const Analysis benzene = analyze_random("benzene.D6h.xyz");
  ir = raman = 0;
  for (const auto& set : benzene.species.sets) {
    ir += set.ir_active;
    raman += set.raman_active;
  }
  EXPECT_EQ(ir, 4);
  EXPECT_EQ(raman, 7);
}

// UFF (Open Babel) Hessians at the file geometries: not minima, but with the molecule's
// symmetry, which is all the species need. Finite-difference noise breaks degeneracies
// by far less than the default degeneracy tolerance.
TEST(ModeSymmetry, ForceFieldHessians) {
  for (const char* file : {"water.C2v.xyz", "ammonia.C3v.xyz", "methane.Td.xyz", "carbon_dioxide.Dinfh.xyz",
                           "benzene.D6h.xyz", "ethane_staggered.D3d.xyz"}) {
    SCOPED_TRACE(file);
    const Molecule molecule = load(file);
    const PointGroupResult group = detect_point_group(molecule);
    const auto potential = make_potential("UFF", molecule);
    const HessianResult hessian = compute_hessian(*potential, molecule.coordinates());
    for (bool symmetrize : {false, true}) {
      Analysis a;
      a.group = group;
      const Eigen::MatrixXd h =
          symmetrize ? symmetrize_cartesian_hessian(hessian.hessian, group) : hessian.hessian;
      a.harmonic = analyze_normal_modes(molecule.coordinates(), molecule.masses(), h);
      a.species = assign_mode_species(group, a.harmonic);
      EXPECT_EQ(a.species.status, ModeSymmetryStatus::Assigned) << a.species.message;
      EXPECT_EQ(a.species.assigned_multiplicities, a.species.expected_multiplicities);
      if (symmetrize) expect_consistent(a);
    }
  }
}

TEST(ModeSymmetry, SymmetrizedHessianIsInvariantAndIdempotent) {
  const PointGroupResult r = detect_point_group(load("ammonia.C3v.xyz"));
  const int size = 3 * static_cast<int>(r.atomic_numbers.size());
  std::mt19937 random(4);
  std::normal_distribution<double> normal;
  Eigen::MatrixXd m(size, size);
  for (int i = 0; i < size; ++i)
    for (int j = 0; j < size; ++j) m(i, j) = normal(random);
  const Eigen::MatrixXd h = symmetrize_cartesian_hessian(m + m.transpose(), r);
  for (int g = 0; g < r.group.order(); ++g) {
    Eigen::MatrixXd d(size, size);
    for (int k = 0; k < size; ++k) d.col(k) = apply_operation(r, g, Eigen::VectorXd::Unit(size, k));
    EXPECT_LT((d.transpose() * h * d - h).cwiseAbs().maxCoeff(), 1e-12);
  }
  EXPECT_LT((symmetrize_cartesian_hessian(h, r) - h).cwiseAbs().maxCoeff(), 1e-12);
  EXPECT_THROW(symmetrize_cartesian_hessian(Eigen::MatrixXd::Zero(3, 3), r), Error);
}

// Partners of a degenerate set transform like the Cartesian components: for ammonia's E,
// partner 1 is even under σv(xz) like x, and C3 turns it by +120° towards partner 2;
// for methane's T2, partner k is even under C2 about axis k only, like x, y, z.
TEST(ModeSymmetry, AdaptedPartnersTransformLikeCoordinates) {
  const Analysis ammonia = analyze_random("ammonia.C3v.xyz");
  const PointGroup& c3v = ammonia.group.group;
  int c3 = -1, sigma_xz = -1;
  for (int g = 0; g < c3v.order(); ++g) {
    if (c3v.operations[g].name == "C₃") c3 = g;
    if ((c3v.operations[g].matrix - Eigen::Vector3d(1, -1, 1).asDiagonal().toDenseMatrix()).norm() < 1e-12)
      sigma_xz = g;
  }
  ASSERT_GE(c3, 0);
  ASSERT_GE(sigma_xz, 0);
  const double third = 2.0 * M_PI / 3.0;
  for (const auto& set : ammonia.species.sets) {
    if (set.species != "E") continue;
    Eigen::Matrix2d expected;
    expected << std::cos(third), -std::sin(third), std::sin(third), std::cos(third);
    EXPECT_LT((set.operation_matrices[c3] - Eigen::MatrixXd(expected)).cwiseAbs().maxCoeff(),
              kRepresentationTolerance);
    EXPECT_LT((set.operation_matrices[sigma_xz] - Eigen::MatrixXd(Eigen::Vector2d(1, -1).asDiagonal()))
                  .cwiseAbs()
                  .maxCoeff(),
              kRepresentationTolerance);
  }
  const Analysis methane = analyze_random("methane.Td.xyz");
  const PointGroup& td = methane.group.group;
  for (const auto& set : methane.species.sets) {
    if (set.species != "T2") continue;
    for (int axis = 0; axis < 3; ++axis) {
      Eigen::Vector3d signs(-1, -1, -1);
      signs[axis] = 1;
      int c2 = -1;
      for (int g = 0; g < td.order(); ++g)
        if ((td.operations[g].matrix - Eigen::Matrix3d(signs.asDiagonal())).norm() < 1e-12) c2 = g;
      ASSERT_GE(c2, 0);
      EXPECT_LT((set.operation_matrices[c2] - Eigen::MatrixXd(signs.asDiagonal())).cwiseAbs().maxCoeff(),
                kRepresentationTolerance);
    }
  }
}

// Accidental degeneracy: all of water's modes given one frequency. Projection separates
// the two A1 modes from the B2 one, and the A1 modes stay themselves.
TEST(ModeSymmetry, AccidentalDegeneracyIsSplitByProjection) {
  Analysis a = analyze_random("water.C2v.xyz");
  a.harmonic.frequencies_cm1.setConstant(1500.0);
  a.species = assign_mode_species(a.group, a.harmonic);
  EXPECT_EQ(a.species.status, ModeSymmetryStatus::Assigned) << a.species.message;
  ASSERT_EQ(a.species.sets.size(), 3u);
  for (const auto& set : a.species.sets) {
    ASSERT_EQ(set.modes.size(), 1u);
    const Eigen::VectorXd mode = a.harmonic.mass_weighted_modes.col(set.modes[0]);
    EXPECT_NEAR(std::abs(mode.dot(set.adapted_modes.col(0))), 1.0, kRepresentationTolerance) << set.species;
  }
  EXPECT_EQ(a.species.decomposition, "2A1 + B2");
}

TEST(ModeSymmetry, HarmonicDataInTheSymmetryFrame) {
  // Turn the file away from any orientation that looks like the symmetry frame first.
  Molecule molecule = load("boron_trifluoride.D3h.xyz");
  const Eigen::Matrix3d turn =
      Eigen::AngleAxisd(0.7, Eigen::Vector3d(1, 2, 3).normalized()).toRotationMatrix();
  for (auto& atom : molecule.atoms) atom.position_angstrom = turn * atom.position_angstrom;
  const PointGroupResult r = detect_point_group(molecule);
  const Eigen::MatrixXd h = random_invariant_hessian(r, 3, CoordinateFrame::Symmetry);
  const HarmonicResult harmonic = analyze_normal_modes(r.symmetry_frame_coordinates_angstrom, r.masses_da, h);
  Analysis a{r, harmonic, assign_mode_species(r, harmonic)};
  EXPECT_EQ(a.species.frame, CoordinateFrame::Symmetry);
  expect_consistent(a);
}

TEST(ModeSymmetry, RejectsMismatchedHarmonicData) {
  const Analysis water = analyze_random("water.C2v.xyz");
  HarmonicResult other_isotope = water.harmonic;
  other_isotope.masses_da[1] = 2.014;
  EXPECT_THROW(assign_mode_species(water.group, other_isotope), Error);
  HarmonicResult moved = water.harmonic;
  moved.coordinates_angstrom[3] += 0.3;
  EXPECT_THROW(assign_mode_species(water.group, moved), Error);
  ModeSpeciesOptions bad;
  bad.purity_tolerance = 0.0;
  EXPECT_THROW(assign_mode_species(water.group, water.harmonic, bad), Error);
}

// ---- The model on the normal coordinates (ModeSymmetry) ----------------------------------

ModeSymmetry model_of(const Analysis& a) {
  return mode_symmetry(a.group, a.species, a.harmonic.mass_weighted_modes);
}

int set_of_species(const ModeSymmetry& model, const std::string& species) {
  for (int s = 0; s < model.set_count(); ++s)
    if (model.set_species(s) == species) return s;
  return -1;
}

std::string square(const Analysis& a, const std::string& species, bool symmetric) {
  const ModeSymmetry model = model_of(a);
  const int s = set_of_species(model, species);
  if (s < 0) return "no set of species " + species;
  return model.species_label(symmetric ? model.symmetric_square_characters(s)
                                       : model.antisymmetric_square_characters(s));
}

// Symmetric and antisymmetric parts of the square of a degenerate species, as tabulated for
// overtones of degenerate vibrations (G. Herzberg, Infrared and Raman Spectra of Polyatomic
// Molecules (1945), ch. II, table of symmetric products; from memory), computed here from
// the matrices R(g) of actual normal modes.
TEST(ModeSymmetryModel, SymmetricAndAntisymmetricSquaresOfDegenerateSpecies) {
  const Analysis ammonia = analyze_random("ammonia.C3v.xyz");
  EXPECT_EQ(square(ammonia, "E", true), "A1 + E");
  EXPECT_EQ(square(ammonia, "E", false), "A2");
  const Analysis benzene = analyze_random("benzene.D6h.xyz");
  EXPECT_EQ(square(benzene, "E1u", true), "A1g + E2g");
  EXPECT_EQ(square(benzene, "E1u", false), "A2g");
  const Analysis methane = analyze_random("methane.Td.xyz");
  EXPECT_EQ(square(methane, "T2", true), "A1 + E + T2");
  EXPECT_EQ(square(methane, "T2", false), "T1");
  // The first overtone of a Π bend is Σg⁺ + Δg (l = 0 and |l| = 2), its antisymmetric part Σg⁻.
  const Analysis co2 = analyze_random("carbon_dioxide.Dinfh.xyz");
  EXPECT_EQ(square(co2, "Pi_u", true), "Sigma_g+ + Delta_g");
  EXPECT_EQ(square(co2, "Pi_u", false), "Sigma_g-");
}

// The number of independent invariants of symmetric powers of one set, against the
// invariant polynomials of the vector representation written out by hand (closed form):
// Td on (x, y, z): cubic xyz; quartic r⁴ and x⁴ + y⁴ + z⁴. C3v on (x, y) = E: cubic
// Re (x + iy)³ = x³ − 3xy² (the σv(xz) keeps y → −y); quartic r⁴.
TEST(ModeSymmetryModel, InvariantsOfSymmetricPowers) {
  const ModeSymmetry methane = model_of(analyze_random("methane.Td.xyz"));
  const int t2 = set_of_species(methane, "T2");
  ASSERT_GE(t2, 0);
  EXPECT_NEAR(methane.invariant_count(std::array<int, 3>{t2, t2, t2}), 1.0, kRepresentationTolerance);
  EXPECT_NEAR(methane.invariant_count(std::array<int, 4>{t2, t2, t2, t2}), 2.0, kRepresentationTolerance);
  const ModeSymmetry ammonia = model_of(analyze_random("ammonia.C3v.xyz"));
  const int e = set_of_species(ammonia, "E");
  ASSERT_GE(e, 0);
  EXPECT_NEAR(ammonia.invariant_count(std::array<int, 3>{e, e, e}), 1.0, kRepresentationTolerance);
  EXPECT_NEAR(ammonia.invariant_count(std::array<int, 4>{e, e, e, e}), 1.0, kRepresentationTolerance);
}

// Resonance rules of a degenerate bend and the stretches of carbon dioxide (Fermi's 2ν2/ν1
// dyad is allowed; 2ν2/ν3 is not, Σu⁺ being absent from Σg⁺ + Δg; E. Fermi, Z. Phys. 71,
// 250 (1931)) and of methane (ν2 + ν4 has T1 + T2 and so reaches ν3, ν1 + ν2 is E and
// does not; direct products from the Td character table, Cotton (1990) Appendix IIA).
TEST(ModeSymmetryModel, ResonanceRulesFollowTheSquaresAndProducts) {
  const ModeSymmetry co2 = model_of(analyze_random("carbon_dioxide.Dinfh.xyz"));
  const int bend = set_of_species(co2, "Pi_u"), symmetric = set_of_species(co2, "Sigma_g+"),
            antisymmetric = set_of_species(co2, "Sigma_u+");
  EXPECT_TRUE(co2.overtone_couples(bend, symmetric));
  EXPECT_FALSE(co2.overtone_couples(bend, antisymmetric));
  EXPECT_FALSE(co2.combination_couples(bend, symmetric, antisymmetric));
  EXPECT_TRUE(co2.overtones_couple(bend, antisymmetric));  // both squares hold Σg⁺
  const Analysis methane_analysis = analyze_random("methane.Td.xyz");
  const ModeSymmetry methane = model_of(methane_analysis);
  int a1 = -1, e = -1;
  std::vector<int> t2;
  for (int s = 0; s < methane.set_count(); ++s) {
    if (methane.set_species(s) == "A1") a1 = s;
    if (methane.set_species(s) == "E") e = s;
    if (methane.set_species(s) == "T2") t2.push_back(s);
  }
  ASSERT_GE(a1, 0);
  ASSERT_GE(e, 0);
  ASSERT_EQ(t2.size(), 2u);
  EXPECT_TRUE(methane.combination_couples(e, t2[0], t2[1]));
  EXPECT_FALSE(methane.combination_couples(a1, e, t2[0]));
  EXPECT_TRUE(methane.overtone_couples(e, a1));
  EXPECT_FALSE(methane.overtone_couples(a1, e));  // Sym²A1 = A1
}

TEST(ModeSymmetryModel, MultiplicityIsIntegralWithinTheNamedTolerance) {
  EXPECT_EQ(as_multiplicity(2.0 + 0.5 * multiplicity_tolerance).count, 2);
  EXPECT_TRUE(as_multiplicity(2.0 + 0.5 * multiplicity_tolerance).integral);
  EXPECT_FALSE(as_multiplicity(2.0 + 2.0 * multiplicity_tolerance).integral);
  EXPECT_FALSE(as_multiplicity(0.5 - 0.1).integral);
}

TEST(ModeSymmetryModel, WithoutGroupSetsFollowTheDegeneracyTolerance) {
  const Eigen::Vector4d wavenumbers(1500.0, 1000.0, 1000.0 + 0.5 * degeneracy_tolerance_cm1,
                                    1000.0 + 2.0 * degeneracy_tolerance_cm1);
  const ModeSymmetry model = ModeSymmetry::without_group(wavenumbers);
  EXPECT_EQ(model.sets(), (std::vector<std::vector<int>>{{0}, {1, 2}, {3}}));
  EXPECT_FALSE(model.has_group());
}

TEST(ModeSymmetryModel, RejectsInconsistentData) {
  const Eigen::MatrixXd identity = Eigen::MatrixXd::Identity(2, 2);
  EXPECT_THROW(ModeSymmetry({identity}, {"E"}, {{0}}), Error);             // mode 1 in no set
  EXPECT_THROW(ModeSymmetry({identity}, {"E"}, {{0, 1}, {1}}), Error);     // mode 1 twice
  EXPECT_THROW(ModeSymmetry({-identity}, {"E"}, {{0}, {1}}), Error);       // not the identity first
  EXPECT_THROW(ModeSymmetry({identity}, {"E", "C2"}, {{0}, {1}}), Error);  // names
  const Analysis water = analyze_random("water.C2v.xyz");
  EXPECT_THROW(mode_symmetry(water.group, water.species, Eigen::MatrixXd::Identity(9, 2)), Error);
}

}  // namespace
}  // namespace overtone
