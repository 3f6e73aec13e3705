// The line list without combination levels (what a screen without a stored line list
// asks for): the fundamentals and overtones, resonance-corrected ones included, are those
// of the full line list.
#include <gtest/gtest.h>

#include <string>

#include "molecule/read_molecule.hpp"
#include "pipeline/analysis.hpp"
#include "potential/make_potential.hpp"

namespace overtone {
namespace {

const std::string source_dir = OVERTONE_SOURCE_DIR;

// A polyad that holds a combination manifold (two sets with one quantum each).
bool holds_combination(const Polyad& polyad) {
  for (const SparseQuanta& manifold : polyad.manifolds)
    if (manifold.size() == 2 && manifold[0].second == 1 && manifold[1].second == 1) return true;
  return false;
}

const VibrationalLevel* same_level(const Vpt2Result& vpt2, const VibrationalLevel& level) {
  for (const auto& candidate : vpt2.levels)
    if (candidate.set_quanta == level.set_quanta && candidate.sublevel == level.sublevel) return &candidate;
  return nullptr;
}

TEST(LineListExtent, FundamentalsAndOvertonesDoNotDependOnTheCombinationLevels) {
  // A polyad is explored from its first line-list level, and fundamentals and overtones
  // come first, so leaving the combination levels out changes nothing for the others (an
  // identity of the method, checked bit for bit). Acetaldehyde under MMFF94 has CH
  // stretches in Fermi polyads with bend overtones and combinations.
  const Molecule molecule = read_molecule(source_dir + "/tests/data/formats/acetaldehyde.sdf").molecule;
  const auto potential = make_potential("MMFF94", molecule);
  const AnalysisResult analysis = analyze_molecule(molecule, *potential, {});
  AnharmonicOptions without_combinations;
  without_combinations.vpt2.include_combination_levels = false;
  const Vpt2Result full = analyze_anharmonic(analysis, *potential, {}).vpt2;
  const Vpt2Result reduced = analyze_anharmonic(analysis, *potential, without_combinations).vpt2;

  std::size_t fundamentals_and_overtones = 0;
  for (const auto& level : full.levels)
    if (level.kind == LevelKind::fundamental || level.kind == LevelKind::overtone)
      ++fundamentals_and_overtones;
  ASSERT_EQ(reduced.levels.size(), fundamentals_and_overtones);
  EXPECT_LT(reduced.polyads.size(), full.polyads.size());
  std::size_t in_polyad_with_combination = 0;
  for (const auto& level : reduced.levels) {
    const VibrationalLevel* same = same_level(full, level);
    ASSERT_NE(same, nullptr);
    EXPECT_EQ(level.anharmonic_cm1, same->anharmonic_cm1);
    ASSERT_EQ(level.in_polyad(), same->in_polyad());
    if (!level.in_polyad()) continue;
    EXPECT_EQ(level.resonance_corrected_cm1, same->resonance_corrected_cm1);
    if (holds_combination(reduced.polyads.at(static_cast<std::size_t>(level.polyad))))
      ++in_polyad_with_combination;
  }
  EXPECT_GT(in_polyad_with_combination, 0u);
}

}  // namespace
}  // namespace overtone
