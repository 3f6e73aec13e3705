// The count of distinct periodic orbits per energy band against the lower bound of one
// orbit per degree of freedom near a minimum (A. Weinstein, Normal modes for nonlinear
// Hamiltonian systems, Invent. Math. 20, 47 (1973); volume and page from memory, the
// theorem confirmed in H. Żołądek, Commun. Anal. Mech. 15, 300 (2023)).
#include <gtest/gtest.h>

#include <algorithm>

#include "core/error.hpp"
#include "families/families.hpp"
#include "families/orbit_count.hpp"
#include "support/model_systems.hpp"

namespace overtone {
namespace {

CoordinateSymmetry henon_heiles_symmetry() {
  const auto matrices = HenonHeiles::symmetry_matrices();
  return symmetry_from_matrices({matrices[1], matrices[3]}, {"C3", "σ"});
}

FamiliesResult henon_heiles_families(double energy_max, bool branches) {
  const HenonHeiles system;
  FamiliesOptions options;
  options.branches.enabled = branches;
  options.energy_max_cm1 = energy_max;  // model units: the factor to "cm⁻¹" is 1
  options.threads = 1;
  return compute_families(system, blocks_by_frequency(system.harmonic_angular_frequencies(), system.units()),
                          henon_heiles_symmetry(), options);
}

// Below the saddle energy 1/6 (Hénon and Heiles, Astron. J. 69, 73 (1964)) every level
// carries the three symmetry types of D3 on C² (Golubitsky, Stewart and Schaeffer,
// Singularities and Groups in Bifurcation Theory II (1988), ch. XVIII): two standing
// types along the three mirror lines (3 copies each) and the circular motion, whose two
// senses are one curve: 3 + 3 + 1 = 7 distinct orbits, at least the 2 degrees of freedom.
TEST(OrbitCount, HenonHeilesBelowTheSaddleMeetsTheBoundWithEveryFamily) {
  const double below_saddle = 0.16;
  const FamiliesResult result = henon_heiles_families(below_saddle, false);
  const OrbitCount& count = result.orbit_count;
  EXPECT_EQ(count.degrees_of_freedom, 2);
  EXPECT_TRUE(count.complete);
  ASSERT_EQ(count.bands.size(), 8u);
  EXPECT_DOUBLE_EQ(count.bands.back().energy_high, below_saddle);
  constexpr int distinct_orbits_from_symmetry = 3 + 3 + 1;
  for (const OrbitCountBand& band : count.bands) {
    EXPECT_GE(band.fewest, 2) << band.energy_low;
    EXPECT_TRUE(band.meets_lower_bound) << band.energy_low;
    EXPECT_EQ(band.fewest, distinct_orbits_from_symmetry) << band.energy_low;
    EXPECT_EQ(band.most, distinct_orbits_from_symmetry) << band.energy_low;
    EXPECT_EQ(band.families_present, 3);
  }
  for (const std::string& warning : result.warnings)
    EXPECT_EQ(warning.find("periodic orbits"), std::string::npos);
}

// With the families born at bifurcations below the saddle the count only grows: each
// birth adds its copies where it exists, and the bound stays met.
TEST(OrbitCount, HenonHeilesBornFamiliesAddToTheCount) {
  const FamiliesResult result = henon_heiles_families(0.16, true);
  int born = 0;
  for (const FamilyResult& family : result.families) born += family.parent_family >= 0 ? 1 : 0;
  EXPECT_GE(born, 1);
  for (const OrbitCountBand& band : result.orbit_count.bands) {
    EXPECT_GE(band.fewest, 3 + 3 + 1) << band.energy_low;
    EXPECT_TRUE(band.meets_lower_bound);
  }
  EXPECT_GT(result.orbit_count.bands.back().most, 3 + 3 + 1);
}

// Counting rules: copies that are time reverses of each other are one curve.
TEST(OrbitCount, TimeReversedCopiesCountOnce) {
  FamilyType rotating;
  rotating.copies = 2;
  rotating.time_reversal = TimeReversal::among_copies;
  EXPECT_EQ(distinct_orbits_per_family_orbit(rotating), 1);
  FamilyType partner = rotating;
  partner.time_reversal = TimeReversal::separate_partner;
  EXPECT_EQ(distinct_orbits_per_family_orbit(partner), 2);
}

// A family lost on the way (here: one ended at a third of the range by hand) drops the
// count below the bound; the result says so.
TEST(OrbitCount, LostFamilyWarnsBelowTheBound) {
  FamiliesResult result = henon_heiles_families(0.1, false);
  ASSERT_EQ(result.families.size(), 3u);
  // Keep only the rotating family (1 distinct orbit) and cut it short.
  std::vector<FamilyResult> families;
  for (const FamilyResult& family : result.families)
    if (!family.type.standing) families.push_back(family);
  ASSERT_EQ(families.size(), 1u);
  auto& points = families[0].backbone.points;
  const double cut = 0.03;
  points.erase(
      std::remove_if(points.begin(), points.end(), [&](const OrbitPoint& p) { return p.energy > cut; }),
      points.end());
  std::vector<std::string> warnings;
  const OrbitCount count = count_orbits(families, 2, 1.0, "energy units", OrbitCountOptions{}, warnings);
  ASSERT_EQ(count.bands.size(), 8u);
  EXPECT_FALSE(count.bands.front().meets_lower_bound);
  EXPECT_EQ(count.bands.front().fewest, 1);
  EXPECT_EQ(count.bands.back().fewest, 0);
  EXPECT_EQ(warnings.size(), count.bands.size());
}

TEST(OrbitCount, RefusesNoBands) {
  std::vector<std::string> warnings;
  OrbitCountOptions options;
  options.bands = 0;
  EXPECT_THROW(count_orbits({}, 2, 1.0, "energy units", options, warnings), Error);
}

}  // namespace
}  // namespace overtone
