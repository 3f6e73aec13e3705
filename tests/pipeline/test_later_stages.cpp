// The anharmonic and families stages run from the analysis: numbering shared with the
// modes table, the minimum required, and the Fermi 1:2 resonances of the perturbative
// stage checked pair by pair against the families' per-family symmetry rule.
#include <gtest/gtest.h>
#include <unistd.h>

#include <algorithm>
#include <cmath>
#include <fstream>
#include <string>
#include <vector>

#include "anharmonic/taylor_export.hpp"
#include "core/error.hpp"
#include "molecule/read_molecule.hpp"
#include "pipeline/analysis.hpp"
#include "potential/make_potential.hpp"
#include "potential/taylor_expansion_potential.hpp"

namespace overtone {
namespace {

const std::string source_dir = OVERTONE_SOURCE_DIR;

struct Analysed {
  Molecule molecule;
  std::unique_ptr<Potential> potential;
  AnalysisResult analysis;
};

Analysed run(const std::string& name, AnalysisOptions options = {}) {
  Analysed result;
  result.molecule = read_molecule(source_dir + "/molecules/" + name + ".xyz").molecule;
  result.potential = make_potential(source_dir + "/potentials/" + name + ".toml", result.molecule);
  result.analysis = analyze_molecule(result.molecule, *result.potential, options);
  return result;
}

// Enumeration only (no continuation), with the perturbative stage's Fermi window so the
// two stages list the same pairs.
FamiliesOptions enumeration_only() {
  FamiliesOptions options;
  options.quanta = 1.0;
  options.continue_families = false;
  options.enumeration.resonance_window_cm1 = Vpt2Options{}.fermi_gap_cm1;
  return options;
}

const ResonanceCrossCheck* find_pair(const std::vector<ResonanceCrossCheck>& checks, int lower, int upper) {
  for (const auto& check : checks)
    if (check.lower_fundamental == lower && check.upper_fundamental == upper) return &check;
  return nullptr;
}

TEST(LaterStages, ProgressReachesEveryStageThroughTheOptions) {
  std::vector<std::string> stages;
  AnalysisOptions analysis_options;
  analysis_options.progress = [&](const ProgressEvent& event) { stages.push_back(event.stage); };
  const Analysed water = run("water", analysis_options);
  for (const char* step : {"optimize", "Hessian", "normal modes"})
    EXPECT_NE(std::find(stages.begin(), stages.end(), step), stages.end()) << step;
  std::vector<ProgressEvent> events;
  AnharmonicOptions options;
  options.progress = [&](const ProgressEvent& event) { events.push_back(event); };
  const AnharmonicResult anharmonic = analyze_anharmonic(water.analysis, *water.potential, options);
  ASSERT_FALSE(events.empty());
  EXPECT_EQ(events.front().stage, "force constants");
  // The last event closes the VPT2 stage: every resonance group done.
  EXPECT_EQ(events.back().stage, "VPT2");
  EXPECT_GT(events.back().total, 0);
  EXPECT_EQ(events.back().done, events.back().total);
}

TEST(LaterStages, CarbonDioxideFermiDyadSeenByBothStages) {
  const Analysed co2 = run("carbon-dioxide");
  const AnharmonicResult anharmonic = analyze_anharmonic(co2.analysis, *co2.potential);
  // ν numbers of the sets follow the modes table: ν1 Σg+, ν2 Πu, ν3 Σu+.
  ASSERT_EQ(anharmonic.set_numbers.size(), 3u);
  for (std::size_t set = 0; set < anharmonic.vpt2.sets.size(); ++set) {
    const int first_mode = anharmonic.vpt2.sets[set].modes.front();
    for (const ModeLabel& mode : co2.analysis.modes)
      if (mode.harmonic_index == first_mode) {
        EXPECT_EQ(anharmonic.set_numbers[set], mode.fundamental);
      }
  }
  const FamiliesResult families = analyze_families(co2.analysis, *co2.potential, enumeration_only());
  const auto checks = cross_check_resonances(co2.analysis, anharmonic, families);
  // 2ν2 ≈ ν1 (Fermi 1931): Σg+ is in the symmetric square of Πu (Σg+ + Δg; Herzberg 1945,
  // from memory). Per family: the standing bend's second harmonic has a Σg+ component;
  // the rotating bend's (vibrational angular momentum l = ±1) has only l = ±2, Δg
  // (common practice, no source).
  const ResonanceCrossCheck* dyad = find_pair(checks, 2, 1);
  ASSERT_NE(dyad, nullptr);
  EXPECT_TRUE(dyad->compared);
  EXPECT_TRUE(dyad->perturbative_allowed);
  EXPECT_TRUE(dyad->perturbative_flagged);
  EXPECT_EQ(dyad->families_of_lower, 2);
  EXPECT_EQ(dyad->families_allowed, 1);
  EXPECT_TRUE(dyad->agree);
  // The default selection of large molecules keeps the dyad's modes: ν1 and both ν2 modes
  // (the bend is doubly degenerate), not ν3.
  std::vector<int> expected = mode_numbers_of_fundamentals(co2.analysis, {1, 2});
  EXPECT_EQ(flagged_resonance_mode_numbers(co2.analysis, anharmonic), expected);
  // Tied to the stretches continued anyway: the dyad's upper member ν1 lies between 1000
  // and 2000 cm⁻¹ (the observed dyad is at 1285/1388 cm⁻¹, Herzberg, Infrared and Raman
  // Spectra, 1945).
  EXPECT_EQ(flagged_resonance_mode_numbers(co2.analysis, anharmonic, 1000.0), expected);
  EXPECT_TRUE(flagged_resonance_mode_numbers(co2.analysis, anharmonic, 2000.0).empty());
}

TEST(LaterStages, MethaneAndAmmoniaResonanceRulesAgree) {
  // Td: [E²] = A1 + E, so 2ν2 (E) couples to ν1 (A1) but not to ν3 (T2); C3v: [E²] = A1 + E
  // (symmetric squares from the character tables, Herzberg 1945, from memory).
  const Analysed methane = run("methane");
  const AnharmonicResult anharmonic = analyze_anharmonic(methane.analysis, *methane.potential);
  const FamiliesResult families = analyze_families(methane.analysis, *methane.potential, enumeration_only());
  const auto checks = cross_check_resonances(methane.analysis, anharmonic, families);
  const ResonanceCrossCheck* forbidden = find_pair(checks, 2, 3);
  ASSERT_NE(forbidden, nullptr);
  EXPECT_TRUE(forbidden->compared);
  EXPECT_FALSE(forbidden->perturbative_allowed);
  EXPECT_EQ(forbidden->families_allowed, 0);
  const ResonanceCrossCheck* allowed = find_pair(checks, 2, 1);
  ASSERT_NE(allowed, nullptr);
  EXPECT_TRUE(allowed->perturbative_allowed);
  EXPECT_GT(allowed->families_allowed, 0);
  for (const auto& check : checks)
    EXPECT_TRUE(check.agree) << "2ν" << check.lower_fundamental << " / ν" << check.upper_fundamental;

  const Analysed ammonia = run("ammonia");
  const AnharmonicResult nh3 = analyze_anharmonic(ammonia.analysis, *ammonia.potential);
  const FamiliesResult nh3_families =
      analyze_families(ammonia.analysis, *ammonia.potential, enumeration_only());
  int compared = 0;
  for (const auto& check : cross_check_resonances(ammonia.analysis, nh3, nh3_families)) {
    EXPECT_TRUE(check.agree) << "2ν" << check.lower_fundamental << " / ν" << check.upper_fundamental;
    compared += check.compared ? 1 : 0;
  }
  EXPECT_GT(compared, 0);
}

TEST(LaterStages, ModeSelectionUsesTheNuNumbersOfTheModesTable) {
  const Analysed methane = run("methane");
  // CH4: ν1 A1 is mode 1, ν2 E modes 2–3, ν3 T2 modes 4–6, ν4 T2 modes 7–9.
  EXPECT_EQ(mode_numbers_of_fundamentals(methane.analysis, {3}), (std::vector<int>{4, 5, 6}));
  EXPECT_EQ(mode_numbers_of_fundamentals(methane.analysis, {1, 2}), (std::vector<int>{1, 2, 3}));
  EXPECT_THROW(mode_numbers_of_fundamentals(methane.analysis, {5}), Error);

  const Analysed water = run("water");
  FamiliesOptions options;
  options.quanta = 1.0;
  options.mode_numbers = mode_numbers_of_fundamentals(water.analysis, {2});
  const FamiliesResult families = analyze_families(water.analysis, *water.potential, options);
  ASSERT_EQ(families.families.size(), 3u);  // one per nondegenerate mode
  for (const FamilyResult& family : families.families) {
    EXPECT_EQ(family.continued, family.type.mode_numbers == std::vector<int>{2});
    if (family.continued) {
      EXPECT_EQ(family.backbone.status, ContinuationStatus::reached_energy_max);
    }
  }
}

TEST(LaterStages, AnUnconvergedStructureIsRefusedWithItsReason) {
  // A stretched water molecule and an optimizer allowed almost no steps.
  const std::string path =
      ::testing::TempDir() + "overtone-stretched-water-" + std::to_string(::getpid()) + ".xyz";
  std::ofstream(path) << "3\nstretched water\nO 0 0 0\nH 0 0.9 0.9\nH 0 -0.9 0.9\n";
  Analysed water;
  water.molecule = read_molecule(path).molecule;
  water.potential = make_potential(source_dir + "/potentials/water.toml", water.molecule);
  AnalysisOptions options;
  options.minimize.lbfgs_max_iterations = 1;
  options.minimize.newton_max_steps = 0;
  water.analysis = analyze_molecule(water.molecule, *water.potential, options);
  ASSERT_FALSE(water.analysis.optimization.converged());
  EXPECT_EQ(water.analysis.status, AnalysisStatus::not_converged) << water.analysis.message;
  const AnharmonicResult anharmonic = analyze_anharmonic(water.analysis, *water.potential);
  EXPECT_EQ(anharmonic.status, AnharmonicStatus::not_converged) << to_string(anharmonic.status);
  EXPECT_NE(anharmonic.message.find("did not converge"), std::string::npos) << anharmonic.message;
  const FamiliesResult families = analyze_families(water.analysis, *water.potential, enumeration_only());
  EXPECT_EQ(families.status, FamiliesStatus::not_converged) << to_string(families.status);
  EXPECT_NE(families.message.find("did not converge"), std::string::npos) << families.message;
  EXPECT_TRUE(families.families.empty());
}

// Planar ammonia is the saddle point of the umbrella inversion (common practice, no
// source): analysed as given, without optimization, it has one imaginary mode, and neither
// expanding stage runs; both say why.
TEST(LaterStages, ASaddlePointIsNotAMinimumForEitherExpandingStage) {
  Analysed planar;
  planar.molecule = read_molecule(source_dir + "/tests/data/molecules/ammonia-planar.xyz").molecule;
  planar.potential = make_potential("MMFF94", planar.molecule);
  AnalysisOptions as_given;
  as_given.optimize = false;
  planar.analysis = analyze_molecule(planar.molecule, *planar.potential, as_given);
  EXPECT_EQ(planar.analysis.status, AnalysisStatus::not_a_minimum) << planar.analysis.message;
  EXPECT_FALSE(planar.analysis.ok());
  const AnharmonicResult anharmonic = analyze_anharmonic(planar.analysis, *planar.potential);
  EXPECT_EQ(anharmonic.status, AnharmonicStatus::not_a_minimum) << to_string(anharmonic.status);
  EXPECT_NE(anharmonic.message.find("imaginary frequency"), std::string::npos) << anharmonic.message;
  const FamiliesResult families = analyze_families(planar.analysis, *planar.potential, enumeration_only());
  EXPECT_EQ(families.status, FamiliesStatus::not_a_minimum) << to_string(families.status);
  EXPECT_NE(families.message.find("saddle point"), std::string::npos) << families.message;
}

// The families are labelled by the point group's operations; without the group they are
// not computed, and the result says so.
TEST(LaterStages, FamiliesWithoutThePointGroupAreAStatus) {
  AnalysisOptions without_symmetry;
  without_symmetry.use_symmetry = false;
  const Analysed water = run("water", without_symmetry);
  EXPECT_TRUE(water.analysis.ok()) << water.analysis.message;
  const FamiliesResult families = analyze_families(water.analysis, *water.potential, enumeration_only());
  EXPECT_EQ(families.status, FamiliesStatus::no_point_group) << to_string(families.status);
  EXPECT_NE(families.message.find("point group"), std::string::npos) << families.message;
}

// Both expanding stages and the force-constant stage share one limit on the softest mode
// (common practice, no source: a mode of a few cm⁻¹ is a nearly free motion).
TEST(LaterStages, AModeTooSoftForAnExpansionIsRefusedByBothStagesAlike) {
  Analysed water = run("water");
  EXPECT_EQ(ForceConstantOptions{}.minimum_frequency_cm1, smallest_expanded_wavenumber_cm1);
  const double softest_cm1 = 0.5 * smallest_expanded_wavenumber_cm1;
  Eigen::Index softest = 0;
  water.analysis.harmonic.frequencies_cm1.minCoeff(&softest);
  water.analysis.harmonic.frequencies_cm1[softest] = softest_cm1;
  const AnharmonicResult anharmonic = analyze_anharmonic(water.analysis, *water.potential);
  EXPECT_EQ(anharmonic.status, AnharmonicStatus::not_a_minimum) << to_string(anharmonic.status);
  EXPECT_NE(anharmonic.message.find("softest mode is at 2.50 cm-1"), std::string::npos) << anharmonic.message;
  const FamiliesResult families = analyze_families(water.analysis, *water.potential, enumeration_only());
  EXPECT_EQ(families.status, FamiliesStatus::not_a_minimum) << to_string(families.status);
  EXPECT_NE(families.message.find("softest mode is at 2.50 cm-1"), std::string::npos) << families.message;
}

TEST(LaterStages, ATurnedOverExpansionStopsTheFamilyWithAClearReason) {
  // The H³⁵Cl Morse oscillator expanded to third order only, V(q) = ½ωq² + φ₃q³/6 in
  // dimensionless q, has a barrier of height (2/3)ω³/φ₃² at q = −2ω/φ₃ (closed form) and
  // falls into a hole beyond it. A family asked to go above the barrier must stop below it,
  // and the stage must say that the surface turns over.
  ReadOptions read;
  read.isotopes = {{1, 1}, {2, 35}};
  const Molecule molecule = read_molecule(source_dir + "/molecules/hcl.xyz", read).molecule;
  const auto morse = make_potential(source_dir + "/potentials/hcl-morse.toml", molecule);
  const AnalysisResult morse_analysis = analyze_molecule(molecule, *morse);
  const AnharmonicResult anharmonic = analyze_anharmonic(morse_analysis, *morse);
  TaylorExpansionData data = taylor_expansion_from_force_constants(
      anharmonic.force_constants, anharmonic.harmonic, morse_analysis.molecule, ExpansionCoordinates::normal);
  data.derivatives.erase(std::remove_if(data.derivatives.begin(), data.derivatives.end(),
                                        [](const ExpansionDerivative& d) { return d.indices.size() == 4; }),
                         data.derivatives.end());
  const TaylorExpansionPotential cubic(data, morse_analysis.molecule);
  const AnalysisResult analysis = analyze_molecule(morse_analysis.molecule, cubic);
  const double omega = anharmonic.force_constants.frequencies_cm1[0];
  const double phi3 = anharmonic.force_constants.constants.cubic(0, 0, 0);
  const double barrier_cm1 = 2.0 / 3.0 * std::pow(omega, 3) / (phi3 * phi3);

  FamiliesOptions options;
  options.energy_max_cm1 = 1.3 * barrier_cm1;
  const FamiliesResult families = analyze_families(analysis, cubic, options);
  ASSERT_EQ(families.families.size(), 1u);
  const ContinuationResult& backbone = families.families[0].backbone;
  EXPECT_EQ(backbone.status, ContinuationStatus::escaped) << backbone.message;
  ASSERT_FALSE(backbone.points.empty());
  EXPECT_LT(backbone.points.back().energy_cm1, barrier_cm1);
  // It got most of the way: near a barrier the period diverges (a separatrix).
  EXPECT_GT(backbone.points.back().energy_cm1, 0.8 * barrier_cm1);
  bool warned = false;
  for (const std::string& warning : families.warnings)
    warned = warned || warning.find("turns over along ν1") != std::string::npos;
  EXPECT_TRUE(warned);
}

// An expansion whose cubic term is so strong that the barrier, (2/3)ω³/φ₃² (closed form, as
// above), lies below the amplitude scan's first step: the structure is no minimum of this
// potential at the scan's resolution. The stage must say so in plain words, not name an
// internal option.
TEST(LaterStages, AStructureThatIsNoMinimumAlongAModeIsRefusedPlainly) {
  ReadOptions read;
  read.isotopes = {{1, 1}, {2, 35}};
  const Molecule molecule = read_molecule(source_dir + "/molecules/hcl.xyz", read).molecule;
  const auto morse = make_potential(source_dir + "/potentials/hcl-morse.toml", molecule);
  const AnalysisResult morse_analysis = analyze_molecule(molecule, *morse);
  const AnharmonicResult anharmonic = analyze_anharmonic(morse_analysis, *morse);
  TaylorExpansionData data = taylor_expansion_from_force_constants(
      anharmonic.force_constants, anharmonic.harmonic, morse_analysis.molecule, ExpansionCoordinates::normal);
  const double omega = anharmonic.force_constants.frequencies_cm1[0];
  const double phi3 = anharmonic.force_constants.constants.cubic(0, 0, 0);
  // φ₃ = 40ω: the barrier sits at |q| = 0.05 and is 4e-4 ω high; the scan's first step is
  // |q| = sqrt(2·10 + 1)/40 ≈ 0.11, where the cubic term already wins.
  constexpr double kCubicOverOmega = 40.0;
  data.derivatives.erase(std::remove_if(data.derivatives.begin(), data.derivatives.end(),
                                        [](const ExpansionDerivative& d) { return d.indices.size() == 4; }),
                         data.derivatives.end());
  for (ExpansionDerivative& d : data.derivatives)
    if (d.indices.size() == 3) d.value *= kCubicOverOmega * omega / std::abs(phi3);
  const TaylorExpansionPotential steep(data, morse_analysis.molecule);
  const AnalysisResult analysis = analyze_molecule(morse_analysis.molecule, steep);
  FamiliesOptions options;
  options.quanta = 1.0;
  const FamiliesResult families = analyze_families(analysis, steep, options);
  EXPECT_EQ(families.status, FamiliesStatus::not_a_minimum) << to_string(families.status);
  const std::string& message = families.message;
  EXPECT_NE(message.find("not a minimum of this potential along ν1"), std::string::npos) << message;
  EXPECT_EQ(message.find("escape_energy"), std::string::npos) << message;
}

}  // namespace
}  // namespace overtone
