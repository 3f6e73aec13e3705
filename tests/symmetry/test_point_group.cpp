// Point groups in the symmetry frame: orders, character tables (orthogonality and
// textbook spot checks), Mulliken labels, functions and activities.
//
// Textbook reference for labels, characters and functions: F. A. Cotton, Chemical
// Applications of Group Theory, 3rd ed. (Wiley, 1990), Appendix IIA (character tables);
// checked here from memory of those tables.
#include <gtest/gtest.h>

#include <cmath>
#include <complex>
#include <numeric>

#include "core/error.hpp"
#include "symmetry/point_group.hpp"

namespace overtone {
namespace {

// Characters come from an eigen-decomposition of small integer matrices: exact to ~1e-12.
constexpr double kCharacterTolerance = 1e-9;
const double kGolden = (1.0 + std::sqrt(5.0)) / 2.0;

struct GroupCase {
  const char* name;
  int order;  // closed form: |Cn| = n, |Cnv| = |Cnh| = |Dn| = 2n, |Dnh| = |Dnd| = 4n, |S2n| = 2n, T 12,
              // Td/Th/O 24, Oh 48, I 60, Ih 120
};

const std::vector<GroupCase> kGroups = {
    {"C1", 1},   {"Cs", 2},   {"Ci", 2},   {"C2", 2},   {"C3", 3},   {"C4", 4},     {"C5", 5},
    {"C6", 6},   {"C7", 7},   {"C8", 8},   {"C2v", 4},  {"C3v", 6},  {"C4v", 8},    {"C5v", 10},
    {"C6v", 12}, {"C8v", 16}, {"C2h", 4},  {"C3h", 6},  {"C4h", 8},  {"C5h", 10},   {"C6h", 12},
    {"C8h", 16}, {"D2", 4},   {"D3", 6},   {"D4", 8},   {"D5", 10},  {"D6", 12},    {"D7", 14},
    {"D8", 16},  {"D2h", 8},  {"D3h", 12}, {"D4h", 16}, {"D5h", 20}, {"D6h", 24},   {"D8h", 32},
    {"D2d", 8},  {"D3d", 12}, {"D4d", 16}, {"D5d", 20}, {"D6d", 24}, {"D8d", 32},   {"S4", 4},
    {"S6", 6},   {"S8", 8},   {"S10", 10}, {"S12", 12}, {"S16", 16}, {"T", 12},     {"Td", 24},
    {"Th", 24},  {"O", 24},   {"Oh", 48},  {"I", 60},   {"Ih", 120}, {"Cinfv", 16}, {"Dinfh", 32}};

TEST(PointGroup, OrdersClassesAndOrthogonality) {
  for (const auto& c : kGroups) {
    SCOPED_TRACE(c.name);
    const PointGroup g = make_point_group(c.name);
    ASSERT_EQ(g.order(), c.order);
    const auto& table = g.character_table;
    const int classes = static_cast<int>(g.classes.size());
    // As many complex irreps as classes; Σ d² = |G| (closed form, Burnside).
    ASSERT_EQ(static_cast<int>(table.complex_characters.size()), classes);
    double squares = 0.0;
    for (const auto& row : table.complex_characters) squares += std::norm(row[0]);
    EXPECT_NEAR(squares, g.order(), kCharacterTolerance);
    // Row orthogonality: Σ_k |K_k| χ_a(k) χ_b(k)* = |G| δ_ab.
    for (const auto& a : table.complex_characters)
      for (const auto& b : table.complex_characters) {
        std::complex<double> sum = 0.0;
        for (int k = 0; k < classes; ++k)
          sum += static_cast<double>(table.class_sizes[k]) * a[k] * std::conj(b[k]);
        const double expected = &a == &b ? g.order() : 0.0;
        EXPECT_NEAR(std::abs(sum - expected), 0.0, kCharacterTolerance * g.order());
      }
    // Column orthogonality: Σ_a χ_a(k) χ_a(l)* = δ_kl |G|/|K_k|.
    for (int k = 0; k < classes; ++k)
      for (int l = 0; l < classes; ++l) {
        std::complex<double> sum = 0.0;
        for (const auto& row : table.complex_characters) sum += row[k] * std::conj(row[l]);
        const double expected = k == l ? static_cast<double>(g.order()) / table.class_sizes[k] : 0.0;
        EXPECT_NEAR(std::abs(sum - expected), 0.0, kCharacterTolerance * g.order());
      }
    // The real table: merged pairs have characters 2·Re χ and norm 2; others norm 1.
    for (const auto& irrep : table.irreps) {
      double norm = 0.0;
      for (int k = 0; k < classes; ++k)
        norm += table.class_sizes[k] * irrep.characters[k] * irrep.characters[k];
      EXPECT_NEAR(norm / g.order(), irrep.complex_pair ? 2.0 : 1.0, kCharacterTolerance) << irrep.label;
      EXPECT_NEAR(irrep.characters[0], irrep.dimension, kCharacterTolerance);
    }
    // Classes partition the operations; E first; every matrix orthogonal.
    EXPECT_EQ(g.operations[0].name, "E");
    int counted = 0;
    for (const auto& cls : g.classes) counted += static_cast<int>(cls.size());
    EXPECT_EQ(counted, g.order());
    for (const auto& op : g.operations)
      EXPECT_LT((op.matrix.transpose() * op.matrix - Eigen::Matrix3d::Identity()).cwiseAbs().maxCoeff(),
                1e-12);
    // Labels are unique.
    for (std::size_t a = 0; a < table.irreps.size(); ++a)
      for (std::size_t b = a + 1; b < table.irreps.size(); ++b)
        EXPECT_NE(table.irreps[a].label, table.irreps[b].label);
  }
}

std::vector<std::string> labels(const PointGroup& g) {
  std::vector<std::string> out;
  for (const auto& irrep : g.character_table.irreps) out.push_back(irrep.label);
  return out;
}

// Species lists and their order as printed in Cotton (1990), Appendix IIA (from memory);
// linear groups as in the same appendix for C∞v and D∞h, truncated at Φ plus the two
// halves of Γ that the finite D8h/C8v stand-in splits.
TEST(PointGroup, MullikenLabelsMatchTextbook) {
  using L = std::vector<std::string>;
  const std::vector<std::pair<const char*, L>> cases = {
      {"C1", {"A"}},
      {"Cs", {"A'", "A''"}},
      {"Ci", {"Ag", "Au"}},
      {"C2", {"A", "B"}},
      {"C3", {"A", "E"}},
      {"C4", {"A", "B", "E"}},
      {"C5", {"A", "E1", "E2"}},
      {"C6", {"A", "B", "E1", "E2"}},
      {"C2v", {"A1", "A2", "B1", "B2"}},
      {"C3v", {"A1", "A2", "E"}},
      {"C4v", {"A1", "A2", "B1", "B2", "E"}},
      {"C6v", {"A1", "A2", "B1", "B2", "E1", "E2"}},
      {"C2h", {"Ag", "Bg", "Au", "Bu"}},
      {"C3h", {"A'", "E'", "A''", "E''"}},
      {"C4h", {"Ag", "Bg", "Eg", "Au", "Bu", "Eu"}},
      {"C5h", {"A'", "E1'", "E2'", "A''", "E1''", "E2''"}},
      {"D2", {"A", "B1", "B2", "B3"}},
      {"D3", {"A1", "A2", "E"}},
      {"D4", {"A1", "A2", "B1", "B2", "E"}},
      {"D2h", {"Ag", "B1g", "B2g", "B3g", "Au", "B1u", "B2u", "B3u"}},
      {"D3h", {"A1'", "A2'", "E'", "A1''", "A2''", "E''"}},
      {"D4h", {"A1g", "A2g", "B1g", "B2g", "Eg", "A1u", "A2u", "B1u", "B2u", "Eu"}},
      {"D5h", {"A1'", "A2'", "E1'", "E2'", "A1''", "A2''", "E1''", "E2''"}},
      {"D6h", {"A1g", "A2g", "B1g", "B2g", "E1g", "E2g", "A1u", "A2u", "B1u", "B2u", "E1u", "E2u"}},
      {"D2d", {"A1", "A2", "B1", "B2", "E"}},
      {"D3d", {"A1g", "A2g", "Eg", "A1u", "A2u", "Eu"}},
      {"D4d", {"A1", "A2", "B1", "B2", "E1", "E2", "E3"}},
      {"D5d", {"A1g", "A2g", "E1g", "E2g", "A1u", "A2u", "E1u", "E2u"}},
      {"S4", {"A", "B", "E"}},
      {"S6", {"Ag", "Eg", "Au", "Eu"}},
      {"S8", {"A", "B", "E1", "E2", "E3"}},
      {"T", {"A", "E", "T"}},
      {"Th", {"Ag", "Eg", "Tg", "Au", "Eu", "Tu"}},
      {"Td", {"A1", "A2", "E", "T1", "T2"}},
      {"O", {"A1", "A2", "E", "T1", "T2"}},
      {"Oh", {"A1g", "A2g", "Eg", "T1g", "T2g", "A1u", "A2u", "Eu", "T1u", "T2u"}},
      {"I", {"A", "T1", "T2", "G", "H"}},
      {"Ih", {"Ag", "T1g", "T2g", "Gg", "Hg", "Au", "T1u", "T2u", "Gu", "Hu"}},
      {"Cinfv", {"Sigma+", "Sigma-", "Pi", "Delta", "Phi", "Gamma(B1)", "Gamma(B2)"}},
      {"Dinfh",
       {"Sigma_g+", "Sigma_g-", "Pi_g", "Delta_g", "Phi_g", "Gamma_g(B1g)", "Gamma_g(B2g)", "Sigma_u+",
        "Sigma_u-", "Pi_u", "Delta_u", "Phi_u", "Gamma_u(B1u)", "Gamma_u(B2u)"}},
  };
  for (const auto& [name, expected] : cases) EXPECT_EQ(labels(make_point_group(name)), expected) << name;
}

TEST(PointGroup, TypographicLabelsAndNames) {
  const PointGroup d6h = make_point_group("D6h");
  EXPECT_EQ(d6h.display_name, "D₆h");
  EXPECT_EQ(d6h.character_table.irreps[d6h.irrep_index("E2u")].display_label, "E₂u");
  const PointGroup d3h = make_point_group("D3h");
  EXPECT_EQ(d3h.character_table.irreps[d3h.irrep_index("A2''")].display_label, "A₂″");
  const PointGroup linear = make_point_group("Dinfh");
  EXPECT_EQ(linear.display_name, "D∞h");
  EXPECT_EQ(linear.finite_name, "D8h");
  EXPECT_EQ(linear.character_table.irreps[linear.irrep_index("Pi_u")].display_label, "Πu");
  EXPECT_EQ(linear.character_table.irreps[linear.irrep_index("Sigma_g+")].display_label, "Σg⁺");
  EXPECT_EQ(linear.character_table.irreps[linear.irrep_index("Pi_u")].finite_label, "E1u");
  EXPECT_EQ(make_point_group("C2v").character_table.class_labels,
            (std::vector<std::string>{"E", "C₂", "σv(xz)", "σv′(yz)"}));
  EXPECT_EQ(make_point_group("C3v").character_table.ascii_class_labels,
            (std::vector<std::string>{"E", "2C3", "3sigma_v"}));
}

// Characters of one species by class label (typographic); throws if absent.
std::vector<double> row(const PointGroup& g, const std::string& label) {
  const int index = g.irrep_index(label);
  if (index < 0) throw Error("no species " + label);
  return g.character_table.irreps[index].characters;
}

double by_class(const PointGroup& g, const std::string& label, const std::string& class_label) {
  const auto& classes = g.character_table.ascii_class_labels;
  const auto it = std::find(classes.begin(), classes.end(), class_label);
  if (it == classes.end()) throw Error("no class " + class_label + " in " + g.name);
  return row(g, label)[it - classes.begin()];
}

// Spot values from Cotton (1990), Appendix IIA (from memory).
TEST(PointGroup, CharacterSpotChecks) {
  const PointGroup c3v = make_point_group("C3v");
  EXPECT_NEAR(by_class(c3v, "E", "2C3"), -1.0, kCharacterTolerance);
  EXPECT_NEAR(by_class(c3v, "E", "3sigma_v"), 0.0, kCharacterTolerance);
  EXPECT_NEAR(by_class(c3v, "A2", "3sigma_v"), -1.0, kCharacterTolerance);

  const PointGroup d3h = make_point_group("D3h");
  EXPECT_NEAR(by_class(d3h, "E''", "sigma_h"), -2.0, kCharacterTolerance);
  EXPECT_NEAR(by_class(d3h, "E''", "2S3"), 1.0, kCharacterTolerance);
  EXPECT_NEAR(by_class(d3h, "A2''", "3sigma_v"), 1.0, kCharacterTolerance);

  const PointGroup td = make_point_group("Td");
  EXPECT_NEAR(by_class(td, "T2", "6S4"), -1.0, kCharacterTolerance);
  EXPECT_NEAR(by_class(td, "T2", "6sigma_d"), 1.0, kCharacterTolerance);
  EXPECT_NEAR(by_class(td, "T1", "6S4"), 1.0, kCharacterTolerance);
  EXPECT_NEAR(by_class(td, "E", "3C2"), 2.0, kCharacterTolerance);

  const PointGroup oh = make_point_group("Oh");
  EXPECT_NEAR(by_class(oh, "T1u", "6C4"), 1.0, kCharacterTolerance);
  EXPECT_NEAR(by_class(oh, "T1u", "i"), -3.0, kCharacterTolerance);
  EXPECT_NEAR(by_class(oh, "T2g", "6C2'"), 1.0, kCharacterTolerance);

  // Ih: χ_T1(C5) = (1+√5)/2 = φ, χ_T1(C5²) = (1−√5)/2, χ_G(C3) = 1, χ_H(C2) = 1.
  const PointGroup ih = make_point_group("Ih");
  EXPECT_NEAR(by_class(ih, "T1g", "12C5"), kGolden, kCharacterTolerance);
  EXPECT_NEAR(by_class(ih, "T1g", "12C5^2"), 1.0 - kGolden, kCharacterTolerance);
  EXPECT_NEAR(by_class(ih, "T2u", "12C5"), 1.0 - kGolden, kCharacterTolerance);
  EXPECT_NEAR(by_class(ih, "Gg", "20C3"), 1.0, kCharacterTolerance);
  EXPECT_NEAR(by_class(ih, "Hu", "15C2"), 1.0, kCharacterTolerance);
  EXPECT_NEAR(by_class(ih, "Hu", "15sigma"), -1.0, kCharacterTolerance);

  // D4d: E1 has √2 under S8, E3 has −√2 (2cos(2πk/8)).
  const PointGroup d4d = make_point_group("D4d");
  EXPECT_NEAR(by_class(d4d, "E1", "2S8"), std::sqrt(2.0), kCharacterTolerance);
  EXPECT_NEAR(by_class(d4d, "E3", "2S8"), -std::sqrt(2.0), kCharacterTolerance);

  // C5: the real E1 is ε + ε* with ε = exp(2πi/5): 2cos72° under C5.
  const PointGroup c5 = make_point_group("C5");
  EXPECT_TRUE(c5.character_table.irreps[c5.irrep_index("E1")].complex_pair);
  EXPECT_NEAR(by_class(c5, "E1", "C5"), 2.0 * std::cos(2.0 * M_PI / 5.0), kCharacterTolerance);
  EXPECT_NEAR(by_class(c5, "E2", "C5"), 2.0 * std::cos(4.0 * M_PI / 5.0), kCharacterTolerance);
}

std::vector<std::string> functions(const PointGroup& g, const std::string& label) {
  const Irrep& irrep = g.character_table.irreps[g.irrep_index(label)];
  std::vector<std::string> out = irrep.linear_functions;
  out.insert(out.end(), irrep.rotations.begin(), irrep.rotations.end());
  out.insert(out.end(), irrep.quadratic_functions.begin(), irrep.quadratic_functions.end());
  return out;
}

// Function columns of Cotton (1990), Appendix IIA (from memory), in our axis convention.
TEST(PointGroup, FunctionsMatchTextbook) {
  using L = std::vector<std::string>;
  const PointGroup c2v = make_point_group("C2v");
  EXPECT_EQ(functions(c2v, "A1"), (L{"z", "x²", "y²", "z²"}));
  EXPECT_EQ(functions(c2v, "A2"), (L{"Rz", "xy"}));
  EXPECT_EQ(functions(c2v, "B1"), (L{"x", "Ry", "xz"}));
  EXPECT_EQ(functions(c2v, "B2"), (L{"y", "Rx", "yz"}));
  const PointGroup d3h = make_point_group("D3h");
  EXPECT_EQ(functions(d3h, "A1'"), (L{"x²+y²", "z²"}));
  EXPECT_EQ(functions(d3h, "E'"), (L{"x", "y", "x²−y²", "xy"}));
  EXPECT_EQ(functions(d3h, "A2''"), (L{"z"}));
  EXPECT_EQ(functions(d3h, "E''"), (L{"Rx", "Ry", "xz", "yz"}));
  const PointGroup td = make_point_group("Td");
  EXPECT_EQ(functions(td, "A1"), (L{"x²+y²+z²"}));
  EXPECT_EQ(functions(td, "E"), (L{"2z²−x²−y²", "x²−y²"}));
  EXPECT_EQ(functions(td, "T1"), (L{"Rx", "Ry", "Rz"}));
  EXPECT_EQ(functions(td, "T2"), (L{"x", "y", "z", "xy", "xz", "yz"}));
  const PointGroup d2h = make_point_group("D2h");
  EXPECT_EQ(functions(d2h, "B1u"), (L{"z"}));
  EXPECT_EQ(functions(d2h, "B2u"), (L{"y"}));
  EXPECT_EQ(functions(d2h, "B3u"), (L{"x"}));
  EXPECT_EQ(functions(d2h, "B1g"), (L{"Rz", "xy"}));
  const PointGroup d2d = make_point_group("D2d");
  EXPECT_EQ(functions(d2d, "B2"), (L{"z", "xy"}));
  EXPECT_EQ(functions(d2d, "B1"), (L{"x²−y²"}));
  const PointGroup ih = make_point_group("Ih");
  EXPECT_EQ(functions(ih, "T1u"), (L{"x", "y", "z"}));
  EXPECT_EQ(functions(ih, "Hg"), (L{"2z²−x²−y²", "x²−y²", "xy", "xz", "yz"}));
  EXPECT_TRUE(functions(ih, "Gu").empty());
  const PointGroup linear = make_point_group("Dinfh");
  EXPECT_EQ(functions(linear, "Sigma_u+"), (L{"z"}));
  EXPECT_EQ(functions(linear, "Pi_u"), (L{"x", "y"}));
  EXPECT_EQ(functions(linear, "Pi_g"), (L{"Rx", "Ry", "xz", "yz"}));
  EXPECT_EQ(functions(linear, "Sigma_g+"), (L{"x²+y²", "z²"}));
}

// Rule of mutual exclusion (Herzberg 1945, ch. III): in a group with a centre of
// symmetry no species is both IR and Raman active; u species are never Raman active
// and g species never IR active.
TEST(PointGroup, MutualExclusionInCentrosymmetricGroups) {
  for (const auto& c : kGroups) {
    const PointGroup g = make_point_group(c.name);
    int inversion = -1;
    for (int k = 0; k < g.order(); ++k)
      if ((g.operations[k].matrix + Eigen::Matrix3d::Identity()).cwiseAbs().maxCoeff() < 1e-12) inversion = k;
    if (inversion < 0) continue;
    for (const auto& irrep : g.character_table.irreps) {
      EXPECT_FALSE(irrep.ir_active && irrep.raman_active) << c.name << " " << irrep.label;
      const bool gerade = irrep.characters[g.operations[inversion].class_index] > 0.0;
      if (gerade)
        EXPECT_FALSE(irrep.ir_active) << c.name << " " << irrep.label;
      else
        EXPECT_FALSE(irrep.raman_active) << c.name << " " << irrep.label;
    }
  }
}

// Each species appears in the regular representation as often as its (complex)
// dimension per complex component: closed form.
TEST(PointGroup, RegularRepresentationReduces) {
  for (const char* name : {"C3", "D6h", "Td", "Ih", "S8", "Dinfh"}) {
    const PointGroup g = make_point_group(name);
    std::vector<double> regular(g.order(), 0.0);
    regular[0] = g.order();
    const auto counts = reduce_representation(g, regular);
    for (std::size_t k = 0; k < counts.size(); ++k) {
      const Irrep& irrep = g.character_table.irreps[k];
      EXPECT_NEAR(counts[k], irrep.complex_pair ? irrep.dimension / 2 : irrep.dimension, 1e-9)
          << name << irrep.label;
    }
  }
}

TEST(PointGroup, FiniteGroupKeepsOperationOrder) {
  const PointGroup g = make_point_group("D3h");
  const FiniteGroup f = g.finite_group();
  ASSERT_EQ(f.order(), g.order());
  for (int k = 0; k < g.order(); ++k) {
    EXPECT_EQ(f.name(k), g.operations[k].name);
    EXPECT_TRUE(f.matrix(k).isApprox(Eigen::MatrixXd(g.operations[k].matrix)));
  }
  // D3h ≅ D6: its 1-D characters number |G/G'| = 4 (closed form).
  Subgroup whole;
  whole.elements.resize(f.order());
  std::iota(whole.elements.begin(), whole.elements.end(), 0);
  EXPECT_EQ(one_dimensional_characters(f, whole).size(), 4u);
}

TEST(PointGroup, RejectsBadNamesAndOrders) {
  EXPECT_THROW(make_point_group("X3"), Error);
  EXPECT_THROW(make_point_group("C3q"), Error);
  EXPECT_THROW(make_point_group("S5"), Error);
  EXPECT_THROW(make_point_group(PointGroupFamily::Cnv, 1), Error);
  EXPECT_THROW(make_point_group(PointGroupFamily::Dinfh, 1, 5), Error);
}

}  // namespace
}  // namespace overtone
