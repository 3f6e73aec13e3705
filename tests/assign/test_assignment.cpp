// Band assignment: the Hungarian algorithm against brute force, measured bands of water,
// heavy water and carbon dioxide assigned from the shipped potentials, invariance under
// shuffling and a spurious band left unassigned.
#include <gtest/gtest.h>

#include <algorithm>
#include <numeric>
#include <random>
#include <tuple>

#include "assign/assignment.hpp"
#include "assign/hungarian.hpp"
#include "core/error.hpp"
#include "molecule/read_molecule.hpp"
#include "pipeline/analysis.hpp"
#include "pipeline/intensities.hpp"
#include "potential/make_potential.hpp"
#include "report/document.hpp"

namespace overtone {
namespace {

// Sums of at most 7 costs of order one: round-off ~1e-15.
constexpr double cost_tolerance = 1e-9;

double brute_force_minimum(const Eigen::MatrixXd& cost) {
  const int n = static_cast<int>(cost.rows()), m = static_cast<int>(cost.cols());
  std::vector<int> columns(static_cast<std::size_t>(m));
  std::iota(columns.begin(), columns.end(), 0);
  double best = std::numeric_limits<double>::infinity();
  do {  // every ordering of the columns; the first n give an injective choice
    double total = 0.0;
    for (int i = 0; i < n; ++i) total += cost(i, columns[static_cast<std::size_t>(i)]);
    best = std::min(best, total);
  } while (std::next_permutation(columns.begin(), columns.end()));
  return best;
}

TEST(Hungarian, MatchesBruteForceOnSmallProblems) {
  std::mt19937 random(12345);
  std::uniform_real_distribution<double> value(0.0, 10.0);
  std::uniform_int_distribution<int> small(0, 3);
  for (int trial = 0; trial < 300; ++trial) {
    const int n = 1 + trial % 6, m = n + trial % 3;
    Eigen::MatrixXd cost(n, m);
    for (int i = 0; i < n; ++i)
      for (int j = 0; j < m; ++j)
        cost(i, j) = trial % 2 == 0 ? value(random) : static_cast<double>(small(random));  // ties too
    const std::vector<int> columns = minimum_cost_assignment(cost);
    std::vector<int> sorted = columns;
    std::sort(sorted.begin(), sorted.end());
    EXPECT_TRUE(std::adjacent_find(sorted.begin(), sorted.end()) == sorted.end()) << "a column used twice";
    EXPECT_NEAR(assignment_cost(cost, columns), brute_force_minimum(cost), cost_tolerance)
        << "trial " << trial;
  }
  EXPECT_THROW(minimum_cost_assignment(Eigen::MatrixXd::Zero(3, 2)), Error);
}

// The shipped example analysed fully (harmonic, VPT2, intensities) and read back as the
// predicted levels, as `overtone assign` does.
PredictedSpectrum shipped_prediction(const std::string& name,
                                     const std::vector<IsotopeChoice>& isotopes = {}) {
  const std::string dir = OVERTONE_SOURCE_DIR;
  ReadOptions read;
  read.isotopes = isotopes;
  const Molecule molecule = read_molecule(dir + "/molecules/" + name + ".xyz", read).molecule;
  const std::string potential_path = dir + "/potentials/" + name + ".toml";
  const auto potential = make_potential(potential_path, molecule);
  const AnalysisResult analysis = analyze_molecule(molecule, *potential);
  const AnharmonicResult anharmonic = analyze_anharmonic(analysis, *potential);
  const auto source = dipole_source_for(*potential, potential_path, analysis.molecule);
  const IntensityResults intensities = analyze_intensities(analysis, &anharmonic, *source);
  RunResults results;
  results.analysis = &analysis;
  results.anharmonic = &anharmonic;
  results.intensities = &intensities;
  return predicted_from_document(analysis_document(results), true);
}

ObservedBand band(double wavenumber, Technique technique, std::string tag = "",
                  Polarization polarization = Polarization::unspecified) {
  ObservedBand b;
  b.wavenumber_cm1 = wavenumber;
  b.technique = technique;
  b.isotopologue = std::move(tag);
  b.polarization = polarization;
  return b;
}

std::string assigned_label(const AssignResult& result, const std::vector<IsotopologueLevels>& levels,
                           int band) {
  const BandAssignment& a = result.bands[static_cast<std::size_t>(band)];
  if (a.level < 0) return "unassigned";
  for (const IsotopologueLevels& entry : levels)
    if (entry.tag == a.isotopologue) return entry.predicted.levels[static_cast<std::size_t>(a.level)].label;
  return "?";
}

// Water vapour band origins of H₂¹⁶O: ν2 1594.7, 2ν2 3151.6, ν1 3657.1, ν3 3755.9 cm⁻¹
// (the vibrational band origins tabulated by J. Tennyson et al., J. Quant. Spectrosc.
// Radiat. Transfer 117, 29 (2013), IUPAC critical evaluation; the fundamentals also in
// Herzberg, Infrared and Raman Spectra (1945); quoted from memory).
std::vector<ObservedBand> water_bands() {
  return {band(1594.7, Technique::infrared), band(3151.6, Technique::infrared),
          band(3657.1, Technique::infrared), band(3755.9, Technique::infrared)};
}

TEST(Assignment, WaterBandsGoToTheirLevels) {
  const std::vector<IsotopologueLevels> levels = {{"", shipped_prediction("water")}};
  const AssignResult result = assign_bands(water_bands(), levels);
  EXPECT_EQ(assigned_label(result, levels, 0), "ν2");
  EXPECT_EQ(assigned_label(result, levels, 1), "2ν2");
  EXPECT_EQ(assigned_label(result, levels, 2), "ν1");
  EXPECT_EQ(assigned_label(result, levels, 3), "ν3");
  for (const BandAssignment& a : result.bands) EXPECT_GT(a.margin, 0.0);
  for (const FundamentalFound& f : result.fundamentals) EXPECT_TRUE(f.found);
  // docs/anharmonic.md: this field puts the fundamentals within ~11 cm⁻¹ of the bands.
  EXPECT_LT(result.unscaled.max_abs_cm1, 60.0);
}

TEST(Assignment, ShuffledListGivesTheSameAssignmentAndASpuriousBandStaysUnassigned) {
  const std::vector<IsotopologueLevels> levels = {{"", shipped_prediction("water")}};
  std::vector<ObservedBand> bands = water_bands();
  bands.push_back(band(2500.0, Technique::infrared));  // nothing of water lies near 2500 cm⁻¹
  const AssignResult straight = assign_bands(bands, levels);
  EXPECT_EQ(assigned_label(straight, levels, 4), "unassigned");
  std::vector<int> order = {3, 4, 0, 2, 1};
  std::vector<ObservedBand> shuffled;
  for (const int i : order) shuffled.push_back(bands[static_cast<std::size_t>(i)]);
  const AssignResult again = assign_bands(shuffled, levels);
  for (std::size_t k = 0; k < order.size(); ++k)
    EXPECT_EQ(assigned_label(again, levels, static_cast<int>(k)), assigned_label(straight, levels, order[k]));
  EXPECT_NEAR(again.total_cost, straight.total_cost, cost_tolerance);
}

TEST(Assignment, CarbonDioxideFermiDyadGoesToBothPolyadMembers) {
  // Raman Fermi dyad 1285.4 and 1388.2 cm⁻¹ (1285.41, 1388.18: Álvarez, Tejeda, Fernández,
  // Molecules 29, 5103 (2024), abstract, as docs/anharmonic.md quotes it), both polarized;
  // IR bend 667.4 and antisymmetric stretch 2349.1 cm⁻¹ (from memory).
  const std::vector<IsotopologueLevels> levels = {{"", shipped_prediction("carbon-dioxide")}};
  const std::vector<ObservedBand> bands = {band(1285.4, Technique::raman, "", Polarization::polarized),
                                           band(1388.2, Technique::raman, "", Polarization::polarized),
                                           band(667.4, Technique::infrared),
                                           band(2349.1, Technique::infrared)};
  const AssignResult result = assign_bands(bands, levels);
  const auto& predicted = levels[0].predicted.levels;
  const BandAssignment& lower = result.bands[0];
  const BandAssignment& upper = result.bands[1];
  ASSERT_GE(lower.level, 0);
  ASSERT_GE(upper.level, 0);
  const PredictedLevel& a = predicted[static_cast<std::size_t>(lower.level)];
  const PredictedLevel& b = predicted[static_cast<std::size_t>(upper.level)];
  EXPECT_GT(a.polyad, 0);
  EXPECT_EQ(a.polyad, b.polyad);
  EXPECT_NE(lower.level, upper.level);
  EXPECT_LT(a.position_cm1, b.position_cm1);
  EXPECT_EQ(a.species, "Sigma_g+");
  EXPECT_EQ(b.species, "Sigma_g+");
  // Both dyad members borrow Raman activity from ν1 (level intensities).
  EXPECT_EQ(assigned_label(result, levels, 2), "ν2");
  EXPECT_EQ(assigned_label(result, levels, 3), "ν3");
}

TEST(Assignment, HeavyWaterIsAssignedJointlyWithWater) {
  // D₂O fundamentals ν2 1178.4, ν1 2671.6, ν3 2787.7 cm⁻¹ (gas phase; T. Shimanouchi, Tables
  // of Molecular Vibrational Frequencies, NSRDS-NBS 39 (1972); from memory).
  std::vector<IsotopologueLevels> levels = {{"", shipped_prediction("water")},
                                            {"D2O", shipped_prediction("water", {{2, 2}, {3, 2}})}};
  std::vector<ObservedBand> bands = water_bands();
  for (const double w : {1178.4, 2671.6, 2787.7}) bands.push_back(band(w, Technique::infrared, "D2O"));
  const AssignResult result = assign_bands(bands, levels);
  EXPECT_EQ(assigned_label(result, levels, 2), "ν1");
  EXPECT_EQ(assigned_label(result, levels, 4), "ν2");
  EXPECT_EQ(assigned_label(result, levels, 5), "ν1");
  EXPECT_EQ(assigned_label(result, levels, 6), "ν3");
  EXPECT_EQ(result.bands[5].isotopologue, "D2O");
  ObservedBand unknown = band(1000.0, Technique::infrared, "HDO");
  EXPECT_THROW(assign_bands({unknown}, levels), Error);
}

// Two fundamentals of a parent and an isotopologue, positions in cm⁻¹ (quanta per ν number).
PredictedSpectrum two_fundamentals(double nu1, double nu2) {
  PredictedSpectrum model;
  for (const auto& [label, quanta, position] :
       {std::tuple<std::string, std::vector<int>, double>{"ν1", {1, 0}, nu1}, {"ν2", {0, 1}, nu2}}) {
    PredictedLevel level;
    level.label = label;
    level.quanta = quanta;
    level.position_cm1 = position;
    model.levels.push_back(level);
  }
  return model;
}

TEST(Assignment, ConsistentIsotopeShiftsDecideBetweenCloseLevels) {
  // Constructed so that the absolute positions and the shifts disagree (arithmetic, no
  // outside data): the parent's bands lie 30 cm⁻¹ above ν1 and 30 below ν2; the
  // isotopologue's levels are predicted at 990 (shift −10) and 1030 (shift −70), and its
  // bands at 1020 and 1000 are the parent's bands moved by exactly those shifts. By
  // absolute position alone the swapped assignment is cheaper (residuals 10 against 30);
  // by the shifts the straight one is exact.
  const std::vector<IsotopologueLevels> levels = {{"", two_fundamentals(1000.0, 1100.0)},
                                                  {"heavy", two_fundamentals(990.0, 1030.0)}};
  const std::vector<ObservedBand> bands = {
      band(1030.0, Technique::unspecified), band(1070.0, Technique::unspecified),
      band(1020.0, Technique::unspecified, "heavy"), band(1000.0, Technique::unspecified, "heavy")};
  AssignOptions absolute_only;
  absolute_only.isotope_shifts = false;
  const AssignResult by_position = assign_bands(bands, levels, absolute_only);
  EXPECT_EQ(assigned_label(by_position, levels, 2), "ν2");
  EXPECT_EQ(assigned_label(by_position, levels, 3), "ν1");

  const AssignResult by_shift = assign_bands(bands, levels);
  EXPECT_EQ(assigned_label(by_shift, levels, 0), "ν1");
  EXPECT_EQ(assigned_label(by_shift, levels, 1), "ν2");
  EXPECT_EQ(assigned_label(by_shift, levels, 2), "ν1");
  EXPECT_EQ(assigned_label(by_shift, levels, 3), "ν2");
  EXPECT_GE(by_shift.shift_rounds, 2);  // the first solution had no parent reference
  ASSERT_TRUE(by_shift.bands[3].observed_shift_cm1 && by_shift.bands[3].predicted_shift_cm1);
  EXPECT_DOUBLE_EQ(*by_shift.bands[3].observed_shift_cm1, -70.0);
  EXPECT_DOUBLE_EQ(*by_shift.bands[3].predicted_shift_cm1, -70.0);
  EXPECT_FALSE(by_shift.bands[0].observed_shift_cm1);  // parent bands carry no shift
}

TEST(Assignment, InactiveLevelsAreProhibitedAndPolarizationCounts) {
  // CO₂'s Σg+ dyad is IR-inactive: an IR band at 1388 cm⁻¹ cannot take it (character table).
  const std::vector<IsotopologueLevels> levels = {{"", shipped_prediction("carbon-dioxide")}};
  const AssignResult result = assign_bands({band(1388.2, Technique::infrared)}, levels);
  if (result.bands[0].level >= 0) {
    const PredictedLevel& level = levels[0].predicted.levels[static_cast<std::size_t>(result.bands[0].level)];
    EXPECT_TRUE(level.ir_active.value_or(true)) << level.label;
  }
}

TEST(Assignment, ScaleFactorIsTheLeastSquaresOne) {
  // A model with two fundamentals and bands exactly 2 % below: the fitted factor is 0.98
  // with no residual (closed form).
  PredictedSpectrum model;
  for (const auto& [label, position] : {std::pair<std::string, double>{"ν1", 3000.0}, {"ν2", 1500.0}}) {
    PredictedLevel level;
    level.label = label;
    level.position_cm1 = position;
    model.levels.push_back(level);
  }
  const std::vector<IsotopologueLevels> levels = {{"", model}};
  AssignOptions options;
  options.fit_scale = true;
  options.expected_error_cm1 = 50.0;
  const AssignResult result = assign_bands(
      {band(2940.0, Technique::unspecified), band(1470.0, Technique::unspecified)}, levels, options);
  EXPECT_NEAR(result.scale, 0.98, 1e-12);
  EXPECT_NEAR(result.scaled.rms_cm1, 0.0, 1e-9);
  EXPECT_NEAR(result.unscaled.rms_cm1, std::sqrt((60.0 * 60.0 + 30.0 * 30.0) / 2.0), 1e-9);
}

TEST(ObservedBands, ReadsTheDocumentedColumnsAndRefusesMistakes) {
  const std::string text =
      "# water\nlabel,wavenumber_cm1,technique,polarization,relative_intensity,isotopologue\n"
      "bend,1594.7,IR,,100,\nsym,3657.1,Raman,polarized,,\n\"a, b\",2671.6,ir,,,D2O\n";
  const std::vector<ObservedBand> bands = parse_observed_bands(text, "bands.csv");
  ASSERT_EQ(bands.size(), 3u);
  EXPECT_EQ(bands[0].label, "bend");
  EXPECT_EQ(*bands[0].relative_intensity, 100.0);
  EXPECT_EQ(bands[1].technique, Technique::raman);
  EXPECT_EQ(bands[1].polarization, Polarization::polarized);
  EXPECT_EQ(bands[2].label, "a, b");
  EXPECT_EQ(bands[2].isotopologue, "D2O");
  EXPECT_THROW(parse_observed_bands("wavenumber_cm1\nabc\n", "x.csv"), Error);
  EXPECT_THROW(parse_observed_bands("frequency\n1000\n", "x.csv"), Error);
  EXPECT_THROW(parse_observed_bands("wavenumber_cm1,technique\n1000,UV\n", "x.csv"), Error);
  EXPECT_THROW(parse_observed_bands("wavenumber_cm1,technique,polarization\n1000,IR,polarized\n", "x.csv"),
               Error);
  EXPECT_THROW(parse_observed_bands("wavenumber_cm1\n", "x.csv"), Error);
}

}  // namespace
}  // namespace overtone
