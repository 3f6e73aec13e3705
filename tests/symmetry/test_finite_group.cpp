// Finite group machinery checked on closed-form facts about small groups.
#include <gtest/gtest.h>

#include <Eigen/Geometry>
#include <cmath>
#include <numeric>
#include <set>

#include "core/error.hpp"
#include "symmetry/finite_group.hpp"

namespace overtone {
namespace {

// Matrices built below are exact to rounding; products agree to a few ulps.
constexpr double kMatrixTolerance = 1e-9;
const double kPi = std::acos(-1.0);
const double kGolden = (1.0 + std::sqrt(5.0)) / 2.0;

Eigen::MatrixXd rotation(const Eigen::Vector3d& axis, double angle) {
  return Eigen::AngleAxisd(angle, axis.normalized()).toRotationMatrix();
}
Eigen::MatrixXd inversion() { return -Eigen::MatrixXd::Identity(3, 3); }
Eigen::MatrixXd rotation2d(double angle) {
  Eigen::MatrixXd m(2, 2);
  m << std::cos(angle), -std::sin(angle), std::sin(angle), std::cos(angle);
  return m;
}
Eigen::MatrixXd flip2d() {
  Eigen::MatrixXd m(2, 2);
  m << 1, 0, 0, -1;
  return m;
}

const Eigen::Vector3d kZ(0, 0, 1), kDiagonal(1, 1, 1), kFiveFold(0, 1, kGolden);

FiniteGroup d3_in_plane() {
  return FiniteGroup::generated_by({rotation2d(2 * kPi / 3), flip2d()}, {"C3", "σ"});
}
FiniteGroup cyclic4() { return FiniteGroup::generated_by({rotation(kZ, kPi / 2)}, {"C4"}); }
FiniteGroup tetrahedral_rotations() {
  return FiniteGroup::generated_by({rotation(kZ, kPi), rotation(kDiagonal, 2 * kPi / 3)});
}
FiniteGroup full_tetrahedral() {
  // S4 about z and C3 about (1,1,1) generate Td.
  const Eigen::MatrixXd s4 = rotation(kZ, kPi / 2) * Eigen::Vector3d(1, 1, -1).asDiagonal();
  return FiniteGroup::generated_by({s4, rotation(kDiagonal, 2 * kPi / 3)});
}
FiniteGroup octahedral_full() {
  return FiniteGroup::generated_by({rotation(kZ, kPi / 2), rotation(kDiagonal, 2 * kPi / 3), inversion()});
}
FiniteGroup icosahedral_rotations() {
  // (0, 1, φ) is a vertex of the icosahedron with vertices (0, ±1, ±φ) and cyclic
  // permutations, and (1,1,1) points at the centre of a face; orders 3 and 5 together
  // generate the whole of I ≅ A5 (no proper subgroup has order divisible by 15).
  return FiniteGroup::generated_by({rotation(kFiveFold, 2 * kPi / 5), rotation(kDiagonal, 2 * kPi / 3)});
}
FiniteGroup icosahedral_full() {
  return FiniteGroup::generated_by(
      {rotation(kFiveFold, 2 * kPi / 5), rotation(kDiagonal, 2 * kPi / 3), inversion()});
}

void expect_table_consistent(const FiniteGroup& g) {
  for (int a = 0; a < g.order(); ++a) {
    EXPECT_EQ(g.multiply(a, g.inverse(a)), g.identity());
    for (int b = 0; b < g.order(); ++b)
      EXPECT_LT((g.matrix(g.multiply(a, b)) - g.matrix(a) * g.matrix(b)).cwiseAbs().maxCoeff(),
                kMatrixTolerance);
  }
}

int total_subgroups(const std::vector<Subgroup>& classes) {
  int total = 0;
  for (const auto& s : classes) total += s.conjugate_count;
  return total;
}

// Orders, class counts: closed forms (|Dn| = 2n; T ≅ A4, Td ≅ O ≅ S4, I ≅ A5;
// classes of S4 are the 5 cycle types; A5 has 5 classes; Oh = O × Ci and Ih = I × Ci
// double the class count).
TEST(FiniteGroup, OrdersAndClassCounts) {
  struct Case {
    FiniteGroup group;
    int order;
    int classes;
  };
  std::vector<Case> cases = {
      {d3_in_plane(), 6, 3},        {cyclic4(), 4, 4},           {tetrahedral_rotations(), 12, 4},
      {full_tetrahedral(), 24, 5},  {octahedral_full(), 48, 10}, {icosahedral_rotations(), 60, 5},
      {icosahedral_full(), 120, 10}};
  for (const auto& c : cases) {
    EXPECT_EQ(c.group.order(), c.order);
    EXPECT_EQ(static_cast<int>(c.group.conjugacy_classes().size()), c.classes) << "order " << c.order;
    expect_table_consistent(c.group);
    // Classes partition the group (class equation).
    int sum = 0;
    for (const auto& cls : c.group.conjugacy_classes()) sum += static_cast<int>(cls.size());
    EXPECT_EQ(sum, c.order);
  }
}

TEST(FiniteGroup, ElementOrdersOfIcosahedralRotations) {
  // A5: 1 identity, 15 of order 2, 20 of order 3, 24 of order 5 (closed form, cycle types).
  const FiniteGroup g = icosahedral_rotations();
  std::map<int, int> counts;
  for (int a = 0; a < g.order(); ++a) ++counts[g.element_order(a)];
  EXPECT_EQ(counts[1], 1);
  EXPECT_EQ(counts[2], 15);
  EXPECT_EQ(counts[3], 20);
  EXPECT_EQ(counts[5], 24);
}

TEST(FiniteGroup, NamesAndFind) {
  const FiniteGroup g = d3_in_plane();
  EXPECT_EQ(g.name(g.identity()), "E");
  EXPECT_EQ(g.find(rotation2d(2 * kPi / 3)), g.find(g.matrix(g.find(rotation2d(2 * kPi / 3)))));
  EXPECT_EQ(g.name(g.find(rotation2d(2 * kPi / 3))), "C3");
  EXPECT_EQ(g.name(g.find(flip2d())), "σ");
  EXPECT_EQ(g.find(rotation2d(kPi / 2)), -1);
  EXPECT_EQ(g.find(Eigen::MatrixXd::Identity(3, 3)), -1);
}

TEST(FiniteGroup, FromElementsKeepsOrderAndChecksClosure) {
  const FiniteGroup d3 = d3_in_plane();
  std::vector<Eigen::MatrixXd> elements;
  std::vector<std::string> names;
  for (int a = d3.order() - 1; a >= 0; --a) {
    elements.push_back(d3.matrix(a));
    names.push_back(d3.name(a));
  }
  const FiniteGroup reversed = FiniteGroup::from_elements(elements, names);
  EXPECT_EQ(reversed.order(), 6);
  EXPECT_EQ(reversed.identity(), 5);
  EXPECT_EQ(reversed.name(0), d3.name(5));
  expect_table_consistent(reversed);
  elements.pop_back();  // drop the first element of d3: now E is missing or closure fails
  names.pop_back();
  EXPECT_THROW(FiniteGroup::from_elements(elements, names), Error);
  std::vector<Eigen::MatrixXd> repeated = {Eigen::MatrixXd::Identity(2, 2), Eigen::MatrixXd::Identity(2, 2)};
  EXPECT_THROW(FiniteGroup::from_elements(repeated, {"E", "E"}), Error);
}

TEST(FiniteGroup, RejectsBadGenerators) {
  Eigen::MatrixXd shear = Eigen::MatrixXd::Identity(2, 2);
  shear(0, 1) = 0.1;
  EXPECT_THROW(FiniteGroup::generated_by({shear}), Error);
  EXPECT_THROW(FiniteGroup::generated_by({flip2d(), rotation(kZ, 1.0)}), Error);
  EXPECT_THROW(FiniteGroup::generated_by({}), Error);
  // An irrational rotation angle never closes.
  EXPECT_THROW(FiniteGroup::generated_by({rotation2d(1.0)}, {}, 1e-8, 200), Error);
}

// Subgroup counts: D3 ≅ S3 has 6 subgroups in 4 classes (1, C2 ×3, C3, S3); C4 has 3;
// A4: 10 subgroups in 5 classes (1, C2 ×3, C3 ×4, V4, A4); S4: 30 in 11 classes;
// A5: 59 in 9 classes (1, C2 ×15, C3 ×10, V4 ×5, C5 ×6, S3 ×10, D5 ×6, A4 ×5, A5);
// all closed-form facts of these small groups (standard group theory, from memory).
TEST(FiniteGroup, SubgroupsUpToConjugacy) {
  struct Case {
    FiniteGroup group;
    int subgroups;
    int classes;
  };
  std::vector<Case> cases = {{d3_in_plane(), 6, 4},
                             {cyclic4(), 3, 3},
                             {tetrahedral_rotations(), 10, 5},
                             {full_tetrahedral(), 30, 11},
                             {icosahedral_rotations(), 59, 9}};
  for (const auto& c : cases) {
    const auto subgroups = subgroups_up_to_conjugacy(c.group);
    EXPECT_EQ(static_cast<int>(subgroups.size()), c.classes) << "order " << c.group.order();
    EXPECT_EQ(total_subgroups(subgroups), c.subgroups) << "order " << c.group.order();
    for (std::size_t k = 0; k + 1 < subgroups.size(); ++k) {
      const auto& a = subgroups[k].elements;
      const auto& b = subgroups[k + 1].elements;
      EXPECT_TRUE(a.size() < b.size() || (a.size() == b.size() && a < b));
    }
    for (const auto& s : subgroups) {
      // Lagrange; generators regenerate the subgroup; orbit-stabilizer for conjugates.
      EXPECT_EQ(c.group.order() % static_cast<int>(s.elements.size()), 0);
      EXPECT_EQ(subgroup_generated_by(c.group, s.generators).elements, s.elements);
      int normalizer = 0;
      std::set<int> members(s.elements.begin(), s.elements.end());
      for (int g = 0; g < c.group.order(); ++g) {
        bool normalizes = true;
        for (int h : s.elements)
          normalizes =
              normalizes && members.count(c.group.multiply(c.group.multiply(g, h), c.group.inverse(g)));
        normalizer += normalizes;
      }
      EXPECT_EQ(s.conjugate_count * normalizer, c.group.order());
    }
  }
}

void expect_homomorphisms(const FiniteGroup& g, const Subgroup& h,
                          const std::vector<OneDimensionalCharacter>& characters) {
  std::map<int, int> position;
  for (std::size_t k = 0; k < h.elements.size(); ++k) position[h.elements[k]] = static_cast<int>(k);
  std::set<std::vector<int>> distinct;
  for (const auto& c : characters) {
    ASSERT_EQ(c.phase_numerators.size(), h.elements.size());
    EXPECT_EQ(c.phase_denominator, static_cast<int>(h.elements.size()));
    distinct.insert(c.phase_numerators);
    for (int a : h.elements)
      for (int b : h.elements) {
        const int ab = g.multiply(a, b);
        EXPECT_EQ(c.phase_numerators[position[ab]],
                  (c.phase_numerators[position[a]] + c.phase_numerators[position[b]]) % c.phase_denominator);
      }
  }
  EXPECT_EQ(distinct.size(), characters.size());
  ASSERT_FALSE(characters.empty());
  for (int v : characters.front().phase_numerators) EXPECT_EQ(v, 0);  // trivial first
}

// Number of 1-D characters = |H/[H,H]|: C4 → 4, D3 → 2, T ≅ A4 → 3, Td ≅ S4 → 2,
// I ≅ A5 → 1 (perfect), Oh → 4, Ih → 2 (closed form).
TEST(FiniteGroup, OneDimensionalCharacterCounts) {
  struct Case {
    FiniteGroup group;
    int count;
  };
  std::vector<Case> cases = {
      {cyclic4(), 4},          {d3_in_plane(), 2},           {tetrahedral_rotations(), 3},
      {full_tetrahedral(), 2}, {icosahedral_rotations(), 1}, {octahedral_full(), 4},
      {icosahedral_full(), 2}};
  for (const auto& c : cases) {
    std::vector<int> all(c.group.order());
    std::iota(all.begin(), all.end(), 0);
    Subgroup whole;
    whole.elements = all;  // no generators given: the function finds its own
    const auto characters = one_dimensional_characters(c.group, whole);
    EXPECT_EQ(static_cast<int>(characters.size()), c.count) << "order " << c.group.order();
    expect_homomorphisms(c.group, whole, characters);
  }
}

TEST(FiniteGroup, CharactersOfEverySubgroupAreHomomorphisms) {
  const FiniteGroup g = octahedral_full();
  const auto subgroups = subgroups_up_to_conjugacy(g);
  // Oh has 98 subgroups in 33 conjugacy classes (from memory; the 32 crystallographic
  // point-group types with C2v, C2, Cs, D2, C2h, D2h... split by orientation).
  EXPECT_EQ(total_subgroups(subgroups), 98);
  EXPECT_EQ(static_cast<int>(subgroups.size()), 33);
  for (const auto& h : subgroups) {
    const auto characters = one_dimensional_characters(g, h);
    expect_homomorphisms(g, h, characters);
    // Cyclic subgroups have |H| characters (closed form).
    if (h.generators.size() == 1) {
      EXPECT_EQ(characters.size(), h.elements.size());
    }
  }
}

TEST(FiniteGroup, RejectsNonSubgroup) {
  const FiniteGroup g = d3_in_plane();
  Subgroup not_closed;
  not_closed.elements = {g.identity(), g.find(rotation2d(2 * kPi / 3))};
  std::sort(not_closed.elements.begin(), not_closed.elements.end());
  EXPECT_THROW(one_dimensional_characters(g, not_closed), Error);
}

}  // namespace
}  // namespace overtone
