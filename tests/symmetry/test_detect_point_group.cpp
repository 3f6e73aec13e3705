// Point-group detection on molecule files named for their expected group, on rotated
// and jiggled copies, on clearly distorted copies, on isotopologues and on synthetic
// clusters for every family; symmetrization and the symmetry frame.
#include <gtest/gtest.h>

#include <Eigen/Geometry>
#include <algorithm>
#include <random>

#include "core/error.hpp"
#include "molecule/read_molecule.hpp"
#include "symmetry/detect_point_group.hpp"
#include "symmetry/mode_symmetry.hpp"

namespace overtone {
namespace {

// The files are written with 8 decimals: symmetric to ~1e-8 Å.
constexpr double kFileSymmetry = 1e-6;
// A symmetrized geometry is symmetric to rounding.
constexpr double kExactSymmetry = 1e-10;
// The noise level: every coordinate moved by up to this (Å).
constexpr double kJiggle = 0.005;
// A clear distortion: one bond stretched by this (Å), five times the default tolerance.
constexpr double kDistortion = 0.1;
// Shortest distance between atoms of the synthetic clusters (Å): shorter than any bond,
// far above the noise.
constexpr double kClusterSpacing = 0.7;

std::string data_path(const std::string& file) {
  return std::string(OVERTONE_SOURCE_DIR) + "/tests/data/symmetry/" + file;
}

Molecule load(const std::string& file) { return read_molecule(data_path(file)).molecule; }

struct Expected {
  const char* file;
  const char* group;
  const char* vibrations;  // decomposition of the vibrational representation, our label order
};

// Sources of the decompositions: G. Herzberg, Infrared and Raman Spectra of Polyatomic
// Molecules (1945) and F. A. Cotton, Chemical Applications of Group Theory, 3rd ed.
// (1990), ch. 10 (from memory); B-labels in our axis convention (docs/symmetry.md):
// planar C2v in the yz plane (Mulliken 1955), so the in-plane antisymmetric species is B2
// (Herzberg, with the plane xz, writes B1); ethylene with z along C=C and x perpendicular
// to the plane, as in Mulliken 1955 and T. Shimanouchi's tables of molecular vibrational
// frequencies (NSRDS-NBS 39, 1972); benzene with C2' through atoms, as in E. B. Wilson,
// Phys. Rev. 45, 706 (1934). Where marked "closed form" the count was done by hand from
// the character table in the comment.
const std::vector<Expected> kMolecules = {
    {"water.C2v.xyz", "C2v", "2A1 + B2"},
    {"ammonia.C3v.xyz", "C3v", "2A1 + 2E"},
    {"methane.Td.xyz", "Td", "A1 + E + 2T2"},
    {"carbon_dioxide.Dinfh.xyz", "Dinfh", "Sigma_g+ + Sigma_u+ + Pi_u"},
    {"acetylene.Dinfh.xyz", "Dinfh", "2Sigma_g+ + Pi_g + Sigma_u+ + Pi_u"},
    {"boron_trifluoride.D3h.xyz", "D3h", "A1' + 2E' + A2''"},
    {"formaldehyde.C2v.xyz", "C2v", "3A1 + B1 + 2B2"},
    {"ethylene.D2h.xyz", "D2h", "3Ag + B2g + 2B3g + Au + 2B1u + 2B2u + B3u"},
    {"benzene.D6h.xyz", "D6h", "2A1g + A2g + 2B2g + E1g + 4E2g + A2u + 2B1u + 2B2u + 3E1u + 2E2u"},
    {"sulfur_hexafluoride.Oh.xyz", "Oh", "A1g + Eg + T2g + 2T1u + T2u"},
    {"ethane_staggered.D3d.xyz", "D3d", "3A1g + 3Eg + A1u + 2A2u + 3Eu"},
    {"ethane_eclipsed.D3h.xyz", "D3h", "3A1' + 3E' + A1'' + 2A2'' + 3E''"},
    {"allene.D2d.xyz", "D2d", "3A1 + B1 + 3B2 + 4E"},
    {"xenon_tetrafluoride.D4h.xyz", "D4h", "A1g + B1g + B2g + A2u + B2u + 2Eu"},
    // Closed form: C3h, 7 atoms; Γ3N = (21, 0, 0, 7, −2, −2) on (E, C3, C3², σh, S3, S3⁵).
    {"boric_acid.C3h.xyz", "C3h", "3A' + 4E' + 2A'' + E''"},
    // The classic result for C60 (e.g. the 4 IR-active T1u and 10 Raman-active Ag + Hg modes).
    {"buckminsterfullerene.Ih.xyz", "Ih", "2Ag + 3T1g + 4T2g + 6Gg + 8Hg + Au + 4T1u + 5T2u + 6Gu + 7Hu"},
    {"closo_dodecaborate.Ih.xyz", "Ih", ""},
    {"dodecahedrane.Ih.xyz", "Ih", ""},
    {"ferrocene_eclipsed.D5h.xyz", "D5h", ""},
    {"ferrocene_staggered.D5d.xyz", "D5d", ""},
    {"cyclooctasulfur.D4d.xyz", "D4d", ""},
};

std::string vibrations(const PointGroupResult& r) {
  return format_decomposition(r.group, vibrational_decomposition(r), false);
}

void expect_exactly_symmetric(const PointGroupResult& r) {
  const int n = static_cast<int>(r.atomic_numbers.size());
  for (int g = 0; g < r.group.order(); ++g) {
    for (auto frame : {CoordinateFrame::Symmetry, CoordinateFrame::File}) {
      const Eigen::VectorXd& x = frame == CoordinateFrame::Symmetry ? r.symmetry_frame_coordinates_angstrom
                                                                    : r.symmetrized_coordinates_angstrom;
      const Eigen::Vector3d c =
          frame == CoordinateFrame::Symmetry ? Eigen::Vector3d::Zero() : r.center_angstrom;
      const Eigen::Matrix3d m = r.operation_matrix(g, frame);
      for (int i = 0; i < n; ++i) {
        const Eigen::Vector3d image = m * (x.segment<3>(3 * i) - c) + c;
        ASSERT_LT((image - x.segment<3>(3 * r.permutations[g][i])).norm(), kExactSymmetry)
            << r.group.name << " operation " << r.group.operations[g].name;
      }
    }
  }
}

TEST(DetectPointGroup, MoleculeFilesGiveTheirGroupAndVibrations) {
  for (const auto& e : kMolecules) {
    SCOPED_TRACE(e.file);
    const PointGroupResult r = detect_point_group(load(e.file));
    EXPECT_EQ(r.group.name, e.group);
    EXPECT_LT(r.max_deviation_angstrom, kFileSymmetry);
    EXPECT_EQ(r.tolerance_angstrom, SymmetryOptions{}.tolerance_angstrom);
    if (std::string(e.vibrations).size() > 0) {
      EXPECT_EQ(vibrations(r), e.vibrations);
    }
    // The name in the file is the expected group.
    EXPECT_NE(std::string(e.file).find(std::string(".") + e.group + "."), std::string::npos);
    expect_exactly_symmetric(r);
    // Vibrational count 3N − 6 (3N − 5 linear) from the characters.
    int dimension = 0;
    const auto counts = vibrational_decomposition(r);
    for (std::size_t k = 0; k < counts.size(); ++k)
      dimension += counts[k] * r.group.character_table.irreps[k].dimension;
    EXPECT_EQ(dimension, 3 * static_cast<int>(r.atomic_numbers.size()) - (r.group.linear ? 5 : 6));
  }
}

Molecule rotated_jiggled_shuffled(const Molecule& original, unsigned seed, double jiggle) {
  std::mt19937 random(seed);
  std::normal_distribution<double> normal;
  std::uniform_real_distribution<double> uniform(-jiggle, jiggle);
  const Eigen::Quaterniond q =
      Eigen::Quaterniond(normal(random), normal(random), normal(random), normal(random)).normalized();
  const Eigen::Vector3d shift(normal(random), normal(random), normal(random));
  Molecule m = original;
  std::shuffle(m.atoms.begin(), m.atoms.end(), random);
  for (auto& atom : m.atoms) {
    atom.position_angstrom = q * atom.position_angstrom + shift;
    for (int k = 0; k < 3; ++k) atom.position_angstrom[k] += uniform(random);
  }
  return m;
}

TEST(DetectPointGroup, RotatedJiggledAndReorderedCopiesKeepTheGroup) {
  for (const auto& e : kMolecules) {
    const Molecule original = load(e.file);
    for (unsigned seed : {1u, 2u, 3u}) {
      SCOPED_TRACE(std::string(e.file) + " seed " + std::to_string(seed));
      const PointGroupResult r = detect_point_group(rotated_jiggled_shuffled(original, seed, kJiggle));
      EXPECT_EQ(r.group.name, e.group);
      EXPECT_LE(r.max_deviation_angstrom, r.tolerance_angstrom);
      // Per-atom noise is at most √3·kJiggle; symmetrization removes about that much.
      EXPECT_LE(r.max_deviation_angstrom, std::sqrt(3.0) * kJiggle + 1e-3);
      if (std::string(e.vibrations).size() > 0) {
        EXPECT_EQ(vibrations(r), e.vibrations);
      }
      expect_exactly_symmetric(r);
    }
  }
}

TEST(DetectPointGroup, TightToleranceRejectsNoisyCopies) {
  SymmetryOptions tight;
  tight.tolerance_angstrom = 1e-4;
  const PointGroupResult r =
      detect_point_group(rotated_jiggled_shuffled(load("methane.Td.xyz"), 7, kJiggle), tight);
  EXPECT_NE(r.group.name, "Td");
  EXPECT_EQ(r.tolerance_angstrom, 1e-4);
}

struct Distortion {
  const char* file;
  int anchor;  // 0-based atoms: the bond anchor→moved is stretched
  int moved;
  const char* group;  // the subgroup that keeps the stretched bond (closed form)
};

TEST(DetectPointGroup, ClearlyDistortedCopiesGiveTheLowerGroup) {
  const std::vector<Distortion> cases = {
      {"water.C2v.xyz", 0, 2, "Cs"},
      {"ammonia.C3v.xyz", 0, 3, "Cs"},
      {"methane.Td.xyz", 0, 4, "C3v"},
      {"carbon_dioxide.Dinfh.xyz", 0, 2, "Cinfv"},
      {"acetylene.Dinfh.xyz", 1, 3, "Cinfv"},
      {"boron_trifluoride.D3h.xyz", 0, 3, "C2v"},
      {"formaldehyde.C2v.xyz", 0, 3, "Cs"},
      {"ethylene.D2h.xyz", 0, 2, "Cs"},
      {"benzene.D6h.xyz", 0, 6, "C2v"},
      {"sulfur_hexafluoride.Oh.xyz", 0, 1, "C4v"},
      {"ethane_staggered.D3d.xyz", 0, 1, "C3v"},
      {"allene.D2d.xyz", 0, 1, "C2v"},
  };
  for (const auto& c : cases) {
    SCOPED_TRACE(c.file);
    Molecule m = load(c.file);
    Eigen::Vector3d& moved = m.atoms[c.moved].position_angstrom;
    const Eigen::Vector3d bond = moved - m.atoms[c.anchor].position_angstrom;
    moved += kDistortion * bond.normalized();
    EXPECT_EQ(detect_point_group(m).group.name, c.group);
    EXPECT_EQ(detect_point_group(rotated_jiggled_shuffled(m, 11, kJiggle)).group.name, c.group);
  }
}

// Bent beyond the tolerance, a linear molecule takes the group of its bend (closed form):
// trans-bent acetylene is C2h, cis-bent C2v.
TEST(DetectPointGroup, SlightlyBentLinearMolecules) {
  for (const auto& [sign, group] : {std::make_pair(-1.0, "C2h"), std::make_pair(1.0, "C2v")}) {
    Molecule m = load("acetylene.Dinfh.xyz");
    m.atoms[2].position_angstrom.x() += 0.05;
    m.atoms[3].position_angstrom.x() += sign * 0.05;
    EXPECT_EQ(detect_point_group(m).group.name, group);
    EXPECT_EQ(detect_point_group(rotated_jiggled_shuffled(m, 9, kJiggle)).group.name, group);
  }
}

TEST(DetectPointGroup, IsotopesBreakSymmetry) {
  Molecule hdo = load("water.C2v.xyz");
  apply_isotopes(hdo, {{2, 2}});
  EXPECT_EQ(detect_point_group(hdo).group.name, "Cs");
  Molecule d2o = load("water.C2v.xyz");
  apply_isotopes(d2o, {{2, 2}, {3, 2}});
  EXPECT_EQ(detect_point_group(d2o).group.name, "C2v");
  Molecule ch3d = load("methane.Td.xyz");
  apply_isotopes(ch3d, {{5, 2}});
  EXPECT_EQ(detect_point_group(ch3d).group.name, "C3v");
  Molecule c13o2 = load("carbon_dioxide.Dinfh.xyz");
  apply_isotopes(c13o2, {{2, 18}});
  EXPECT_EQ(detect_point_group(c13o2).group.name, "Cinfv");
}

// Orbits of generic points under a group have exactly that symmetry (closed form), so
// clusters of four orbits test every family and axis order.
TEST(DetectPointGroup, SyntheticClustersOfEveryFamily) {
  const std::vector<const char*> names = {
      "C1",  "Cs",  "Ci",  "C2",  "C3",  "C4",  "C5",  "C6",  "C7",  "C8",  "C2v", "C3v", "C4v", "C5v",
      "C6v", "C7v", "C8v", "C2h", "C3h", "C4h", "C5h", "C6h", "C8h", "D2",  "D3",  "D4",  "D5",  "D6",
      "D7",  "D8",  "D2h", "D3h", "D4h", "D5h", "D6h", "D7h", "D8h", "D2d", "D3d", "D4d", "D5d", "D6d",
      "D8d", "S4",  "S6",  "S8",  "S10", "S12", "S16", "T",   "Th",  "Td",  "O",   "Oh",  "I",   "Ih"};
  // Seeds chosen (by a search over random points) to keep every orbit's atoms apart.
  const std::vector<Eigen::Vector3d> seeds = {
      Eigen::Vector3d(0.08, -1.58, -0.26), Eigen::Vector3d(-0.19, 1.78, 2.02),
      Eigen::Vector3d(-2.97, -1.53, 1.81), Eigen::Vector3d(-1.75, 4.49, 0.89)};
  for (const char* name : names) {
    SCOPED_TRACE(name);
    const PointGroup g = make_point_group(name);
    Molecule m;
    int element = 6;
    for (const auto& seed : seeds) {
      std::vector<Eigen::Vector3d> orbit;
      for (const auto& op : g.operations) {
        const Eigen::Vector3d p = op.matrix * seed;
        if (std::none_of(orbit.begin(), orbit.end(),
                         [&](const Eigen::Vector3d& q) { return (p - q).norm() < 1e-6; }))
          orbit.push_back(p);
      }
      for (const auto& p : orbit) {
        Atom atom;
        atom.atomic_number = element;
        atom.mass_da = 2.0 * element;
        atom.position_angstrom = p;
        m.atoms.push_back(atom);
      }
      ++element;
    }
    // Scale so that no two atoms are closer than kClusterSpacing, as in a real molecule.
    double closest = 1e9;
    for (std::size_t i = 0; i < m.atoms.size(); ++i)
      for (std::size_t j = i + 1; j < m.atoms.size(); ++j)
        closest = std::min(closest, (m.atoms[i].position_angstrom - m.atoms[j].position_angstrom).norm());
    for (auto& atom : m.atoms) atom.position_angstrom *= std::max(1.0, kClusterSpacing / closest);
    const PointGroupResult r = detect_point_group(rotated_jiggled_shuffled(m, 5, 0.0));
    EXPECT_EQ(r.group.name, name);
    EXPECT_LT(r.max_deviation_angstrom, kFileSymmetry);
    expect_exactly_symmetric(r);
    const PointGroupResult noisy = detect_point_group(rotated_jiggled_shuffled(m, 6, kJiggle));
    EXPECT_EQ(noisy.group.name, name);
  }
}

// Atoms on the mirror plane of a planar C2v molecule lie in yz (Mulliken 1955), the
// principal axis is z, and a planar D6h molecule has its C2' (x) through atoms.
TEST(DetectPointGroup, SymmetryFrame) {
  const PointGroupResult water = detect_point_group(rotated_jiggled_shuffled(load("water.C2v.xyz"), 3, 0.0));
  for (int i = 0; i < 3; ++i)
    EXPECT_NEAR(water.symmetry_frame_coordinates_angstrom[3 * i], 0.0, kExactSymmetry);
  const PointGroupResult ethylene =
      detect_point_group(rotated_jiggled_shuffled(load("ethylene.D2h.xyz"), 3, 0.0));
  for (int i = 0; i < 6; ++i) {
    EXPECT_NEAR(ethylene.symmetry_frame_coordinates_angstrom[3 * i], 0.0, kExactSymmetry);  // plane yz
    if (ethylene.atomic_numbers[i] == 6) {                                                  // carbons on z
      EXPECT_NEAR(ethylene.symmetry_frame_coordinates_angstrom[3 * i + 1], 0.0, kExactSymmetry);
      EXPECT_GT(std::abs(ethylene.symmetry_frame_coordinates_angstrom[3 * i + 2]), 0.5);
    }
  }
  const PointGroupResult benzene =
      detect_point_group(rotated_jiggled_shuffled(load("benzene.D6h.xyz"), 3, 0.0));
  int on_x = 0;
  for (int i = 0; i < 12; ++i) {
    EXPECT_NEAR(benzene.symmetry_frame_coordinates_angstrom[3 * i + 2], 0.0, kExactSymmetry);  // plane xy
    on_x += std::abs(benzene.symmetry_frame_coordinates_angstrom[3 * i + 1]) < kExactSymmetry;
  }
  EXPECT_EQ(on_x, 4);
  const PointGroupResult ammonia =
      detect_point_group(rotated_jiggled_shuffled(load("ammonia.C3v.xyz"), 3, 0.0));
  for (int i = 0; i < 4; ++i)
    if (ammonia.atomic_numbers[i] == 7) {
      EXPECT_NEAR(ammonia.symmetry_frame_coordinates_angstrom.segment<2>(3 * i).norm(), 0.0, kExactSymmetry);
    }
  // Symmetry-frame coordinates are the rotated, centred symmetrized ones.
  for (int i = 0; i < 4; ++i)
    EXPECT_LT((ammonia.symmetry_from_file *
                   (ammonia.symmetrized_coordinates_angstrom.segment<3>(3 * i) - ammonia.center_angstrom) -
               ammonia.symmetry_frame_coordinates_angstrom.segment<3>(3 * i))
                  .norm(),
              kExactSymmetry);
}

TEST(DetectPointGroup, AtomOrbits) {
  const PointGroupResult r = detect_point_group(load("benzene.D6h.xyz"));
  ASSERT_EQ(r.atom_orbits.size(), 2u);
  EXPECT_EQ(r.atom_orbits[0], (std::vector<int>{0, 1, 2, 3, 4, 5}));
  EXPECT_EQ(r.atom_orbits[1], (std::vector<int>{6, 7, 8, 9, 10, 11}));
}

// An atom displaced by 1.75 × tolerance keeps every Td operation within 2 × tolerance,
// but averaging over Td would move it by 3/4 of that, more than the tolerance: the
// result is the largest subgroup that fits (C3v about the displaced bond), with a note.
TEST(DetectPointGroup, ReducesWhenSymmetrizingWouldExceedTheTolerance) {
  Molecule m = load("methane.Td.xyz");
  const SymmetryOptions options;
  Eigen::Vector3d& h = m.atoms[1].position_angstrom;
  h += 1.75 * options.tolerance_angstrom * h.normalized();
  const PointGroupResult r = detect_point_group(m, options);
  EXPECT_EQ(r.group.name, "C3v");
  EXPECT_LE(r.max_deviation_angstrom, options.tolerance_angstrom);
  EXPECT_EQ(r.operations_found, 24);
  EXPECT_TRUE(std::any_of(r.notes.begin(), r.notes.end(),
                          [](const std::string& note) { return note.find("reduced") != std::string::npos; }));
}

TEST(DetectPointGroup, RejectsBadInputAndOptions) {
  SymmetryOptions bad;
  bad.tolerance_angstrom = 0.0;
  EXPECT_THROW(bad.validate(), Error);
  SymmetryOptions odd;
  odd.linear_axis_order = 7;
  EXPECT_THROW(odd.validate(), Error);
  EXPECT_NO_THROW(SymmetryOptions{}.validate());
  Molecule single;
  single.atoms.resize(1);
  single.atoms[0].atomic_number = 18;
  single.atoms[0].mass_da = 39.9;
  EXPECT_THROW(detect_point_group(single), Error);
  Molecule massless = load("water.C2v.xyz");
  massless.atoms[1].mass_da = 0.0;
  EXPECT_THROW(detect_point_group(massless), Error);
}

TEST(DetectPointGroup, ToleranceIsBoundedBelowTheShortestBond) {
  // A 10 Å tolerance once turned ammonia into a linear structure with N and H at one
  // point; the bound keeps the tolerance near a quarter of the H–H bond.
  SymmetryOptions huge;
  huge.tolerance_angstrom = 10.0;
  EXPECT_THROW(huge.validate(), Error);
  EXPECT_THROW(detect_point_group(load("ammonia.C3v.xyz"), huge), Error);
  SymmetryOptions not_a_number;
  not_a_number.tolerance_angstrom = std::nan("");
  EXPECT_THROW(not_a_number.validate(), Error);
  SymmetryOptions largest;
  largest.tolerance_angstrom = max_symmetry_tolerance_angstrom;
  EXPECT_NO_THROW(largest.validate());
}

TEST(DetectPointGroup, SymmetrizationThatMergesAtomsIsRefused) {
  // Two H atoms 0.19 Å either side of the axis through N: within the largest tolerance
  // the structure is linear, and making it so would put both H at one point.
  Molecule m = load("water.C2v.xyz");  // O, H, H
  m.atoms[0].position_angstrom = Eigen::Vector3d(0.0, 0.0, 0.0);
  m.atoms[1].position_angstrom = Eigen::Vector3d(0.19, 0.0, 1.0);
  m.atoms[2].position_angstrom = Eigen::Vector3d(-0.19, 0.0, 1.0);
  SymmetryOptions options;
  options.tolerance_angstrom = max_symmetry_tolerance_angstrom;
  try {
    const PointGroupResult r = detect_point_group(m, options);
    FAIL() << "expected an error; found " << r.group.name << " moving atoms by " << r.max_deviation_angstrom;
  } catch (const Error& error) {
    EXPECT_NE(std::string(error.what()).find("atoms 2 and 3"), std::string::npos) << error.what();
  }
}

}  // namespace
}  // namespace overtone
