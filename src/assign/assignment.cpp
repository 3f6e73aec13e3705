#include "assign/assignment.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <limits>
#include <map>
#include <tuple>

#include "assign/hungarian.hpp"
#include "core/error.hpp"

namespace overtone {

namespace {

// A cost no real option reaches: an option forbidden by activity or by the isotopologue.
// Costs are squared σ counts (≤ ~1e6 for any band within 1e3 σ), so 1e12 never wins and
// keeps the sums exact to 1e-4.
constexpr double forbidden_cost = 1e12;

// One column of the problem: a level of one isotopologue for one technique, or the
// unassigned option of one band.
struct Column {
  int tag = -1;  // index into the isotopologue list; −1: unassigned column
  int level = -1;
  Technique technique = Technique::unspecified;
  int band = -1;  // for an unassigned column: the band it belongs to
};

std::optional<double> predicted_intensity(const PredictedLevel& level, Technique technique) {
  if (technique == Technique::infrared) return level.ir_intensity_km_per_mol;
  if (technique == Technique::raman) return level.raman_activity_a4_per_u;
  return std::nullopt;
}

bool active(const PredictedLevel& level, Technique technique) {
  const bool ir = level.ir_active.value_or(true), raman = level.raman_active.value_or(true);
  if (technique == Technique::infrared) return ir;
  if (technique == Technique::raman) return raman;
  return ir || raman;
}

struct Problem {
  const std::vector<ObservedBand>* bands;
  const std::vector<IsotopologueLevels>* levels;
  std::vector<int> band_tag;
  std::vector<Column> columns;
  // Strongest observed (per tag and technique) and predicted (per tag and technique) intensities.
  std::map<std::pair<int, Technique>, double> strongest_observed, strongest_predicted;
  int parent_tag = -1;  // the molecule as given ("" tag), −1 when no band or level set has it
  // Per tag and level: the parent's level with the same quanta and sublevel, −1 when none.
  std::vector<std::vector<int>> counterpart;
};

// The observed wavenumbers of the parent's assigned levels in one solution: a band of the
// same technique first, else any band on that level.
struct ParentBands {
  std::map<std::pair<int, Technique>, double> by_technique;
  std::map<int, double> any;

  std::optional<double> of(int level, Technique technique) const {
    if (const auto found = by_technique.find({level, technique}); found != by_technique.end())
      return found->second;
    if (const auto found = any.find(level); found != any.end()) return found->second;
    return std::nullopt;
  }
};

void find_counterparts(Problem& problem) {
  const auto& levels = *problem.levels;
  for (std::size_t t = 0; t < levels.size(); ++t)
    if (levels[t].tag.empty()) problem.parent_tag = static_cast<int>(t);
  problem.counterpart.assign(levels.size(), {});
  if (problem.parent_tag < 0) return;
  const auto& parent = levels[static_cast<std::size_t>(problem.parent_tag)].predicted.levels;
  for (std::size_t t = 0; t < levels.size(); ++t) {
    const auto& own = levels[t].predicted.levels;
    problem.counterpart[t].assign(own.size(), -1);
    if (static_cast<int>(t) == problem.parent_tag) continue;
    for (std::size_t l = 0; l < own.size(); ++l)
      for (std::size_t p = 0; p < parent.size(); ++p)
        if (parent[p].quanta == own[l].quanta && parent[p].sublevel == own[l].sublevel) {
          problem.counterpart[t][l] = static_cast<int>(p);
          break;
        }
  }
}

Problem set_up(const std::vector<ObservedBand>& bands, const std::vector<IsotopologueLevels>& levels) {
  Problem problem{&bands, &levels, {}, {}, {}, {}, -1, {}};
  std::map<std::pair<int, Technique>, bool> slots;
  for (const ObservedBand& band : bands) {
    int tag = -1;
    for (std::size_t t = 0; t < levels.size(); ++t)
      if (levels[t].tag == band.isotopologue) tag = static_cast<int>(t);
    if (tag < 0)
      throw Error(
          fmt::format("observed band at {} cm-1 (line {}) names the isotopologue '{}', for which nothing "
                      "was predicted (give --isotopologue {}=...)",
                      band.wavenumber_cm1, band.line, band.isotopologue, band.isotopologue));
    problem.band_tag.push_back(tag);
    slots[{tag, band.technique}] = true;
    if (band.relative_intensity) {
      double& top = problem.strongest_observed[{tag, band.technique}];
      top = std::max(top, *band.relative_intensity);
    }
  }
  for (const auto& [slot, unused] : slots) {
    const auto& [tag, technique] = slot;
    const auto& tag_levels = levels[static_cast<std::size_t>(tag)].predicted.levels;
    for (std::size_t l = 0; l < tag_levels.size(); ++l) {
      problem.columns.push_back({tag, static_cast<int>(l), technique, -1});
      if (const auto value = predicted_intensity(tag_levels[l], technique)) {
        double& top = problem.strongest_predicted[{tag, technique}];
        top = std::max(top, *value);
      }
    }
  }
  for (std::size_t b = 0; b < bands.size(); ++b)
    problem.columns.push_back({-1, -1, Technique::unspecified, static_cast<int>(b)});
  find_counterparts(problem);
  return problem;
}

double intensity_cost(const Problem& problem, const ObservedBand& band, const PredictedLevel& level, int tag,
                      const AssignOptions& options) {
  const std::optional<double> predicted = predicted_intensity(level, band.technique);
  if (!band.relative_intensity || !predicted) return 0.0;
  const double top_observed = problem.strongest_observed.at({tag, band.technique});
  const auto top = problem.strongest_predicted.find({tag, band.technique});
  if (top == problem.strongest_predicted.end() || !(top->second > 0.0) || !(top_observed > 0.0)) return 0.0;
  const double observed = std::max(options.intensity_floor, *band.relative_intensity / top_observed);
  const double expected = std::max(options.intensity_floor, *predicted / top->second);
  const double decades = std::log10(observed / expected);
  return options.intensity_weight * decades * decades;
}

double polarization_cost(const ObservedBand& band, const PredictedLevel& level,
                         const AssignOptions& options) {
  if (band.technique != Technique::raman || level.species.empty()) return 0.0;
  if (band.polarization == Polarization::polarized && !level.totally_symmetric)
    return options.polarized_mismatch_cost;
  if (band.polarization == Polarization::depolarized && level.totally_symmetric)
    return options.depolarized_mismatch_cost;
  return 0.0;
}

// Observed and predicted (scaled) shift of an isotopologue band on `column` from the parent
// band on the counterpart level, when there is one.
std::optional<std::pair<double, double>> isotope_shift(const Problem& problem, const ObservedBand& band,
                                                       const Column& column, double scale,
                                                       const ParentBands* parent_bands) {
  if (!parent_bands || column.tag < 0 || column.tag == problem.parent_tag || problem.parent_tag < 0)
    return std::nullopt;
  const int partner =
      problem.counterpart[static_cast<std::size_t>(column.tag)][static_cast<std::size_t>(column.level)];
  if (partner < 0) return std::nullopt;
  const std::optional<double> parent_observed = parent_bands->of(partner, band.technique);
  if (!parent_observed) return std::nullopt;
  const PredictedLevel& own = (*problem.levels)[static_cast<std::size_t>(column.tag)]
                                  .predicted.levels[static_cast<std::size_t>(column.level)];
  const PredictedLevel& parent = (*problem.levels)[static_cast<std::size_t>(problem.parent_tag)]
                                     .predicted.levels[static_cast<std::size_t>(partner)];
  return std::make_pair(band.wavenumber_cm1 - *parent_observed,
                        scale * (own.position_cm1 - parent.position_cm1));
}

double option_cost(const Problem& problem, int b, const Column& column, double scale,
                   const AssignOptions& options, const ParentBands* parent_bands) {
  const ObservedBand& band = (*problem.bands)[static_cast<std::size_t>(b)];
  if (column.tag < 0) return column.band == b ? options.unassigned_cost : forbidden_cost;
  if (column.tag != problem.band_tag[static_cast<std::size_t>(b)] || column.technique != band.technique)
    return forbidden_cost;
  const PredictedLevel& level = (*problem.levels)[static_cast<std::size_t>(column.tag)]
                                    .predicted.levels[static_cast<std::size_t>(column.level)];
  if (!active(level, band.technique)) return forbidden_cost;
  const int quanta = std::max(1, level.total_quanta);
  double residual =
      (band.wavenumber_cm1 - scale * level.position_cm1) / (options.expected_error_cm1 * quanta);
  if (const auto shift = isotope_shift(problem, band, column, scale, parent_bands)) {
    const auto& [observed, predicted] = *shift;
    const double sigma =
        quanta * std::max(options.shift_error_floor_cm1, options.shift_relative_error * std::abs(predicted));
    residual = (observed - predicted) / sigma;
  }
  const double prior = options.extra_quantum_cost * std::max(0, level.total_quanta - 1);
  return std::min(forbidden_cost, residual * residual + prior +
                                      intensity_cost(problem, band, level, column.tag, options) +
                                      polarization_cost(band, level, options));
}

Eigen::MatrixXd cost_matrix(const Problem& problem, double scale, const AssignOptions& options,
                            const ParentBands* parent_bands) {
  const Eigen::Index n = static_cast<Eigen::Index>(problem.bands->size());
  Eigen::MatrixXd cost(n, static_cast<Eigen::Index>(problem.columns.size()));
  for (Eigen::Index b = 0; b < n; ++b)
    for (std::size_t c = 0; c < problem.columns.size(); ++c)
      cost(b, static_cast<Eigen::Index>(c)) =
          option_cost(problem, static_cast<int>(b), problem.columns[c], scale, options, parent_bands);
  return cost;
}

const PredictedLevel& level_of(const Problem& problem, const Column& column) {
  return (*problem.levels)[static_cast<std::size_t>(column.tag)]
      .predicted.levels[static_cast<std::size_t>(column.level)];
}

ResidualSummary summarize(const std::vector<BandAssignment>& bands) {
  ResidualSummary summary;
  double squares = 0.0;
  for (const BandAssignment& band : bands) {
    if (band.level < 0) continue;
    ++summary.assigned;
    squares += band.residual_cm1 * band.residual_cm1;
    summary.max_abs_cm1 = std::max(summary.max_abs_cm1, std::abs(band.residual_cm1));
  }
  if (summary.assigned > 0) summary.rms_cm1 = std::sqrt(squares / summary.assigned);
  return summary;
}

// Least-squares s minimizing Σ (o − s p)² over the assigned bands, and its standard error.
void fit_scale(const Problem& problem, const std::vector<int>& columns, double& scale,
               double& standard_error) {
  double op = 0.0, pp = 0.0;
  std::vector<std::pair<double, double>> pairs;
  for (std::size_t b = 0; b < columns.size(); ++b) {
    const Column& column = problem.columns[static_cast<std::size_t>(columns[b])];
    if (column.tag < 0) continue;
    const double o = (*problem.bands)[b].wavenumber_cm1, p = level_of(problem, column).position_cm1;
    pairs.emplace_back(o, p);
    op += o * p;
    pp += p * p;
  }
  if (pairs.empty() || !(pp > 0.0)) return;
  scale = op / pp;
  double squares = 0.0;
  for (const auto& [o, p] : pairs) squares += (o - scale * p) * (o - scale * p);
  standard_error = pairs.size() > 1 ? std::sqrt(squares / static_cast<double>(pairs.size() - 1) / pp) : 0.0;
}

Eigen::Index unassigned_column(const Problem& problem, int band) {
  return static_cast<Eigen::Index>(problem.columns.size() - problem.bands->size()) + band;
}

ParentBands parent_bands_of(const Problem& problem, const std::vector<int>& columns) {
  ParentBands parent;
  for (std::size_t b = 0; b < columns.size(); ++b) {
    const Column& column = problem.columns[static_cast<std::size_t>(columns[b])];
    if (column.tag < 0 || column.tag != problem.parent_tag) continue;
    const double observed = (*problem.bands)[b].wavenumber_cm1;
    parent.by_technique.emplace(std::make_pair(column.level, column.technique), observed);
    parent.any.emplace(column.level, observed);
  }
  return parent;
}

// The minimum-cost assignment at one scale; with isotope shifts, solved again with the
// parent bands of the last solution as reference until it no longer changes. `columns` holds
// the starting solution (empty: none) and returns the final one.
Eigen::MatrixXd solve(const Problem& problem, double scale, const AssignOptions& options,
                      std::vector<int>& columns, ParentBands& parent_bands, int& shift_rounds) {
  const bool shifts = options.isotope_shifts && problem.parent_tag >= 0 && problem.levels->size() > 1;
  Eigen::MatrixXd cost = cost_matrix(problem, scale, options, nullptr);
  if (columns.empty() || !shifts) columns = minimum_cost_assignment(cost);
  if (!shifts) return cost;
  for (int round = 1; round <= options.max_shift_rounds; ++round) {
    parent_bands = parent_bands_of(problem, columns);
    cost = cost_matrix(problem, scale, options, &parent_bands);
    const std::vector<int> again = minimum_cost_assignment(cost);
    shift_rounds = round;
    const bool stable = again == columns;
    columns = again;
    if (stable) break;
  }
  // The reported costs are those of the final solution's own reference.
  parent_bands = parent_bands_of(problem, columns);
  return cost_matrix(problem, scale, options, &parent_bands);
}

std::vector<BandAssignment> describe(const Problem& problem, const Eigen::MatrixXd& cost,
                                     const std::vector<int>& columns, double scale,
                                     const ParentBands& parent_bands) {
  std::vector<BandAssignment> result;
  const double total = assignment_cost(cost, columns);
  for (std::size_t b = 0; b < columns.size(); ++b) {
    BandAssignment entry;
    entry.band = static_cast<int>(b);
    const Column& column = problem.columns[static_cast<std::size_t>(columns[b])];
    entry.isotopologue = (*problem.bands)[b].isotopologue;
    entry.cost = cost(static_cast<Eigen::Index>(b), columns[b]);
    if (column.tag >= 0) {
      entry.level = column.level;
      entry.predicted_cm1 = scale * level_of(problem, column).position_cm1;
      entry.residual_cm1 = (*problem.bands)[b].wavenumber_cm1 - entry.predicted_cm1;
      if (const auto shift = isotope_shift(problem, (*problem.bands)[b], column, scale, &parent_bands)) {
        entry.observed_shift_cm1 = shift->first;
        entry.predicted_shift_cm1 = shift->second;
      }
    }
    // The runner-up: the best other level for this band, i.e. the same problem with its
    // choice and its unassigned option forbidden.
    Eigen::MatrixXd without = cost;
    without(static_cast<Eigen::Index>(b), columns[b]) = forbidden_cost;
    without(static_cast<Eigen::Index>(b), unassigned_column(problem, static_cast<int>(b))) = forbidden_cost;
    const std::vector<int> second = minimum_cost_assignment(without);
    const Column& alternative = problem.columns[static_cast<std::size_t>(second[b])];
    const double second_total = assignment_cost(without, second);
    entry.runner_up_level = alternative.tag >= 0 ? alternative.level : -1;
    entry.margin = second_total - total;
    if (second_total >= forbidden_cost) {  // nothing else is allowed for this band
      entry.runner_up_level = no_alternative;
      entry.margin = std::numeric_limits<double>::infinity();
    }
    result.push_back(entry);
  }
  return result;
}

std::vector<FundamentalFound> fundamentals_found(const Problem& problem, const std::vector<int>& columns) {
  std::vector<FundamentalFound> found;
  for (std::size_t t = 0; t < problem.levels->size(); ++t) {
    const auto& levels = (*problem.levels)[t].predicted.levels;
    for (std::size_t l = 0; l < levels.size(); ++l) {
      if (levels[l].total_quanta != 1) continue;
      FundamentalFound entry{(*problem.levels)[t].tag, static_cast<int>(l), false, -1};
      for (std::size_t b = 0; b < columns.size(); ++b) {
        const Column& column = problem.columns[static_cast<std::size_t>(columns[b])];
        if (column.tag == static_cast<int>(t) && column.level == static_cast<int>(l)) {
          entry.found = true;
          entry.band = static_cast<int>(b);
        }
      }
      found.push_back(entry);
    }
  }
  return found;
}

}  // namespace

void validate(const AssignOptions& options) {
  const std::tuple<const char*, double> positive[] = {
      {"expected_error_cm1", options.expected_error_cm1},
      {"unassigned_cost", options.unassigned_cost},
      {"intensity_floor", options.intensity_floor},
      {"shift_error_floor_cm1", options.shift_error_floor_cm1}};
  for (const auto& [name, value] : positive)
    if (!(std::isfinite(value) && value > 0.0))
      throw Error(fmt::format("assignment option {} must be positive, got {}", name, value));
  const std::tuple<const char*, double> non_negative[] = {
      {"intensity_weight", options.intensity_weight},
      {"extra_quantum_cost", options.extra_quantum_cost},
      {"polarized_mismatch_cost", options.polarized_mismatch_cost},
      {"depolarized_mismatch_cost", options.depolarized_mismatch_cost},
      {"shift_relative_error", options.shift_relative_error}};
  for (const auto& [name, value] : non_negative)
    if (!(std::isfinite(value) && value >= 0.0))
      throw Error(fmt::format("assignment option {} must be at least 0, got {}", name, value));
  for (const auto& [name, value] : {std::pair<const char*, int>{"max_scale_rounds", options.max_scale_rounds},
                                    {"max_shift_rounds", options.max_shift_rounds}})
    if (value < 1) throw Error(fmt::format("assignment option {} must be at least 1, got {}", name, value));
}

AssignResult assign_bands(const std::vector<ObservedBand>& bands,
                          const std::vector<IsotopologueLevels>& levels, const AssignOptions& options) {
  validate(options);
  if (bands.empty()) throw Error("assignment: expected at least one observed band, got none");
  const Problem problem = set_up(bands, levels);
  AssignResult result;
  ParentBands parent_bands;
  std::vector<int> columns;
  Eigen::MatrixXd cost = solve(problem, 1.0, options, columns, parent_bands, result.shift_rounds);
  result.bands = describe(problem, cost, columns, 1.0, parent_bands);
  result.unscaled = summarize(result.bands);
  fit_scale(problem, columns, result.scale, result.scale_standard_error);
  if (options.fit_scale) {
    result.scale_fitted = true;
    for (result.scale_rounds = 1; result.scale_rounds <= options.max_scale_rounds; ++result.scale_rounds) {
      const std::vector<int> before = columns;
      solve(problem, result.scale, options, columns, parent_bands, result.shift_rounds);
      fit_scale(problem, columns, result.scale, result.scale_standard_error);
      if (columns == before) break;
    }
    cost = solve(problem, result.scale, options, columns, parent_bands, result.shift_rounds);
    result.bands = describe(problem, cost, columns, result.scale, parent_bands);
    result.scaled = summarize(result.bands);
  } else {
    result.scale = 1.0;
    result.scale_standard_error = 0.0;
  }
  result.total_cost = assignment_cost(cost, columns);
  result.fundamentals = fundamentals_found(problem, columns);
  return result;
}

}  // namespace overtone
