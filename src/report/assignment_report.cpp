#include "report/assignment_report.hpp"

#include <fmt/format.h>

#include <cmath>

#include "core/error.hpp"

namespace overtone {

namespace {

using nlohmann::json;

const PredictedLevel* level_for(const AssignmentReportInput& input, const std::string& tag, int level) {
  if (level < 0) return nullptr;
  for (const IsotopologueLevels& entry : *input.levels)
    if (entry.tag == tag) return &entry.predicted.levels[static_cast<std::size_t>(level)];
  return nullptr;
}

std::string level_name(const PredictedLevel* level) {
  if (!level) return "unassigned";
  return level->sublevel > 1 ? fmt::format("{} ({})", level->label, level->species) : level->label;
}

std::string runner_up_name(const AssignmentReportInput& input, const BandAssignment& band) {
  if (band.runner_up_level == no_alternative) return "none";
  return level_name(level_for(input, band.isotopologue, band.runner_up_level));
}

std::string technique_name(Technique technique) {
  return technique == Technique::infrared ? "IR" : technique == Technique::raman ? "Raman" : "";
}

void check(const AssignmentReportInput& input) {
  if (!input.bands || !input.levels || !input.result || !input.options)
    throw Error("an assignment report needs the bands, levels, result and options");
}

json nullable(double value) { return std::isfinite(value) ? json(value) : json(nullptr); }

std::string quanta_text(const std::vector<int>& quanta) {
  std::string out;
  for (const int q : quanta) out += (out.empty() ? "" : " ") + std::to_string(q);
  return out;
}

}  // namespace

std::string assignment_text(const AssignmentReportInput& input) {
  check(input);
  const AssignResult& result = *input.result;
  std::string out = fmt::format(
      "Band assignment: {} observed bands, minimum total cost {:.3f} (squared σ; σ = {} cm-1 per "
      "quantum)\n\n",
      input.bands->size(), result.total_cost, input.options->expected_error_cm1);
  out += fmt::format("  {:>10}  {:<6} {:<8} {:<14} {:<9} {:>10} {:>9} {:>7}  {:<14} {:>8}  {}\n", "observed",
                     "tech.", "isotop.", "level", "species", "predicted", "residual", "cost", "runner-up",
                     "margin", "polyad");
  for (const BandAssignment& band : result.bands) {
    const ObservedBand& observed = (*input.bands)[static_cast<std::size_t>(band.band)];
    const PredictedLevel* level = level_for(input, band.isotopologue, band.level);
    out += fmt::format("  {:>10.2f}  {:<6} {:<8} {:<14} {:<9} {:>10} {:>9} {:>7.2f}  {:<14} {:>8}  {}\n",
                       observed.wavenumber_cm1, technique_name(observed.technique),
                       band.isotopologue.empty() ? "parent" : band.isotopologue, level_name(level),
                       level ? level->species : "", level ? fmt::format("{:.2f}", band.predicted_cm1) : "",
                       level ? fmt::format("{:+.2f}", band.residual_cm1) : "", band.cost,
                       runner_up_name(input, band),
                       std::isfinite(band.margin) ? fmt::format("{:.2f}", band.margin) : "-",
                       level && level->polyad > 0 ? std::to_string(level->polyad) : "");
  }
  out += "\nFundamentals:";
  for (const FundamentalFound& entry : result.fundamentals) {
    const PredictedLevel* level = level_for(input, entry.isotopologue, entry.level);
    out += fmt::format(" {}{}{}", entry.isotopologue.empty() ? "" : entry.isotopologue + ":", level->label,
                       entry.found ? " found," : " not found,");
  }
  out.back() = '\n';
  out += fmt::format("Residuals: {} assigned, rms {:.2f} cm-1, largest {:.2f} cm-1\n",
                     result.unscaled.assigned, result.unscaled.rms_cm1, result.unscaled.max_abs_cm1);
  if (result.scale_fitted)
    out += fmt::format(
        "Scale factor {:.5f} ± {:.5f} (least squares, {} rounds): rms {:.2f} cm-1, largest {:.2f} cm-1\n",
        result.scale, result.scale_standard_error, result.scale_rounds, result.scaled.rms_cm1,
        result.scaled.max_abs_cm1);
  for (const std::string& warning : result.warnings) out += "warning: " + warning + "\n";
  return out;
}

nlohmann::json assignment_json(const AssignmentReportInput& input) {
  check(input);
  const AssignResult& result = *input.result;
  json bands = json::array();
  for (const BandAssignment& band : result.bands) {
    const ObservedBand& observed = (*input.bands)[static_cast<std::size_t>(band.band)];
    const PredictedLevel* level = level_for(input, band.isotopologue, band.level);
    const PredictedLevel* runner =
        band.runner_up_level >= 0 ? level_for(input, band.isotopologue, band.runner_up_level) : nullptr;
    bands.push_back(
        {{"observed_cm1", observed.wavenumber_cm1},
         {"label", observed.label},
         {"technique", technique_name(observed.technique).empty() ? json(nullptr)
                                                                  : json(technique_name(observed.technique))},
         {"isotopologue", band.isotopologue},
         {"assigned", level != nullptr},
         {"level", level ? json(level->label) : json(nullptr)},
         {"quanta", level ? json(level->quanta) : json(nullptr)},
         {"sublevel", level ? json(level->sublevel) : json(nullptr)},
         {"species", level ? json(level->species) : json(nullptr)},
         {"predicted_cm1", level ? json(band.predicted_cm1) : json(nullptr)},
         {"residual_cm1", level ? json(band.residual_cm1) : json(nullptr)},
         {"observed_shift_cm1", band.observed_shift_cm1 ? json(*band.observed_shift_cm1) : json(nullptr)},
         {"predicted_shift_cm1", band.predicted_shift_cm1 ? json(*band.predicted_shift_cm1) : json(nullptr)},
         {"cost", band.cost},
         {"runner_up", band.runner_up_level == no_alternative ? json(nullptr)
                       : runner                               ? json(runner->label)
                                                              : json("unassigned")},
         {"margin", nullable(band.margin)},
         {"polyad", level && level->polyad > 0 ? json(level->polyad) : json(nullptr)}});
  }
  json fundamentals = json::array();
  for (const FundamentalFound& entry : result.fundamentals)
    fundamentals.push_back(
        {{"isotopologue", entry.isotopologue},
         {"level", level_for(input, entry.isotopologue, entry.level)->label},
         {"found", entry.found},
         {"observed_cm1", entry.found
                              ? json((*input.bands)[static_cast<std::size_t>(entry.band)].wavenumber_cm1)
                              : json(nullptr)}});
  json summary = {{"total_cost", result.total_cost},
                  {"assigned", result.unscaled.assigned},
                  {"rms_cm1", result.unscaled.rms_cm1},
                  {"max_abs_residual_cm1", result.unscaled.max_abs_cm1},
                  {"expected_error_cm1", input.options->expected_error_cm1},
                  {"unassigned_cost", input.options->unassigned_cost}};
  if (result.scale_fitted)
    summary["scaled"] = {{"scale", result.scale},
                         {"standard_error", result.scale_standard_error},
                         {"rounds", result.scale_rounds},
                         {"assigned", result.scaled.assigned},
                         {"rms_cm1", result.scaled.rms_cm1},
                         {"max_abs_residual_cm1", result.scaled.max_abs_cm1}};
  return {
      {"bands", bands}, {"fundamentals", fundamentals}, {"summary", summary}, {"warnings", result.warnings}};
}

std::string assignment_csv(const AssignmentReportInput& input) {
  check(input);
  std::string out =
      "observed_cm1,technique,isotopologue,label,level,quanta,species,predicted_cm1,residual_cm1,cost,runner_"
      "up,margin,polyad\n";
  auto cell = [](const std::string& text) {
    if (text.find_first_of(",\"") == std::string::npos) return text;
    std::string quoted = "\"";
    for (const char c : text) quoted += c == '"' ? std::string("\"\"") : std::string(1, c);
    return quoted + "\"";
  };
  for (const BandAssignment& band : input.result->bands) {
    const ObservedBand& observed = (*input.bands)[static_cast<std::size_t>(band.band)];
    const PredictedLevel* level = level_for(input, band.isotopologue, band.level);
    out += fmt::format(
        "{:.2f},{},{},{},{},{},{},{},{},{:.3f},{},{},{}\n", observed.wavenumber_cm1,
        technique_name(observed.technique), cell(band.isotopologue), cell(observed.label),
        cell(level ? level->label : ""), level ? quanta_text(level->quanta) : "",
        cell(level ? level->species : ""), level ? fmt::format("{:.2f}", band.predicted_cm1) : "",
        level ? fmt::format("{:.2f}", band.residual_cm1) : "", band.cost, cell(runner_up_name(input, band)),
        std::isfinite(band.margin) ? fmt::format("{:.3f}", band.margin) : "",
        level && level->polyad > 0 ? std::to_string(level->polyad) : "");
  }
  return out;
}

}  // namespace overtone
