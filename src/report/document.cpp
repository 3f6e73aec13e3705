#include "report/document.hpp"

#include <fmt/format.h>

#include <cmath>
#include <memory>

#include "anharmonic/taylor_export.hpp"
#include "core/error.hpp"
#include "core/option_checks.hpp"
#include "core/text.hpp"
#include "report/anharmonic_json.hpp"
#include "report/anharmonic_report.hpp"
#include "report/families_json.hpp"
#include "report/families_report.hpp"
#include "report/harmonic_report.hpp"
#include "report/html_report.hpp"
#include "report/intensity_json.hpp"

namespace overtone {

namespace {

using nlohmann::json;

// Adds the sections of one stage writer; a key written twice is a programming error of
// the report stage, not something a user could cause.
// Sections are moved in: a document of a large molecule holds tens of megabytes.
void merge_sections(json& document, json sections) {
  for (auto item = sections.begin(); item != sections.end(); ++item) {
    if (document.contains(item.key()))
      throw Error("the report would write the JSON key '" + item.key() + "' twice");
    document[item.key()] = std::move(item.value());
  }
}

// Text from input files (titles, names, sources) may be any bytes; JSON must be UTF-8.
void make_strings_valid(json& value) {
  if (value.is_string()) {
    value = valid_utf8(value.get_ref<const std::string&>());
  } else if (value.is_structured()) {
    for (json& member : value) make_strings_valid(member);
  }
}

const AnalysisResult& analysis_of(const RunResults& results) {
  if (!results.analysis) throw Error("a report needs the results of the harmonic analysis");
  return *results.analysis;
}

AnharmonicReportOptions anharmonic_options(const AnharmonicResult& anharmonic,
                                           const IntensityResults* intensities = nullptr) {
  AnharmonicReportOptions options;
  options.set_numbers = anharmonic.set_numbers;
  if (intensities && intensities->levels) options.intensities = &*intensities->levels;
  return options;
}

// Every cross-checked pair (full), or the pairs where the stages disagree and a count.
std::string cross_check_text(const AnalysisResult& analysis, const RunResults& results, bool full) {
  std::string lines;
  int agreeing = 0;
  for (const ResonanceCrossCheck& check :
       cross_check_resonances(analysis, *results.anharmonic, *results.families)) {
    if (!full && (!check.compared || check.agree)) {
      agreeing += check.compared ? 1 : 0;
      continue;
    }
    lines += "  " + resonance_cross_check_line(check) + "\n";
  }
  if (!full) {
    if (lines.empty() && agreeing == 0) return "";
    return fmt::format(
               "\nFermi 1:2 resonances, perturbative rule against the families: pairs listed by both that "
               "agree: {}{}\n",
               agreeing, lines.empty() ? "" : "; these disagree:") +
           lines;
  }
  if (lines.empty()) return "";
  return "\nFermi 1:2 resonances, perturbative rule against the families:\n" + lines;
}

}  // namespace

nlohmann::json resonance_cross_check_to_json(const std::vector<ResonanceCrossCheck>& checks) {
  json list = json::array();
  for (const ResonanceCrossCheck& check : checks)
    list.push_back({{"lower_fundamental", check.lower_fundamental},
                    {"upper_fundamental", check.upper_fundamental},
                    {"gap_cm1", check.gap_cm1},
                    {"perturbative_listed", check.listed_by_perturbative},
                    {"perturbative_allowed", check.perturbative_allowed},
                    {"perturbative_flagged", check.perturbative_flagged},
                    {"families_listed", check.listed_by_families},
                    {"families_allowed", check.families_allowed},
                    {"families_of_lower", check.families_of_lower},
                    {"compared", check.compared},
                    {"agree", check.agree},
                    {"summary", resonance_cross_check_line(check)}});
  return {{"resonance_cross_check", list}};
}

std::string resonance_cross_check_line(const ResonanceCrossCheck& check) {
  const std::string pair_text = fmt::format("2ν{} / ν{} (gap {:.1f} cm-1)", check.lower_fundamental,
                                            check.upper_fundamental, check.gap_cm1);
  const std::string perturbative =
      check.listed_by_perturbative
          ? fmt::format("perturbative: {}{}", check.perturbative_allowed ? "allowed" : "forbidden",
                        check.perturbative_flagged ? ", treated in a polyad" : "")
          : std::string("perturbative: outside its window");
  const std::string per_family = check.listed_by_families
                                     ? fmt::format("families: allowed for {} of {} family types",
                                                   check.families_allowed, check.families_of_lower)
                                     : std::string("families: outside their window");
  return pair_text + ": " + perturbative + "; " + per_family +
         (check.compared ? (check.agree ? "; agree" : "; DISAGREE") : "");
}

nlohmann::json family_orbits_to_json(const OrbitFramesResult& orbits) {
  // 1e-5 Å: far below what a viewer shows; keeps a fifty-mode document small.
  constexpr double frame_resolution_angstrom = 1e-5;
  json entries = json::array();
  for (const FamilyOrbitFrames& orbit : orbits.orbits) {
    json frames = json::array();
    for (const Eigen::VectorXd& frame : orbit.frames_angstrom) {
      json coordinates = json::array();
      for (Eigen::Index k = 0; k < frame.size(); ++k)
        coordinates.push_back(std::round(frame(k) / frame_resolution_angstrom) * frame_resolution_angstrom);
      frames.push_back(std::move(coordinates));
    }
    entries.push_back({{"family", orbit.family},
                       {"requested_energy_cm1", orbit.requested_energy_cm1},
                       {"energy_cm1", orbit.energy_cm1},
                       {"frequency_cm1", orbit.frequency_cm1},
                       {"period_fs", orbit.period_fs},
                       {"amplitude_angstrom", orbit.amplitude_angstrom},
                       {"closure_angstrom", orbit.closure_angstrom},
                       {"outside_backbone", orbit.outside_backbone},
                       {"frames_angstrom", std::move(frames)}});
  }
  json section = {{"family_orbits", std::move(entries)}};
  if (!orbits.warnings.empty()) section["family_orbit_warnings"] = orbits.warnings;
  return section;
}

nlohmann::json analysis_document(const RunResults& results) {
  const AnalysisResult& analysis = analysis_of(results);
  json document = json::object();
  merge_sections(document, harmonic_to_json(analysis));
  if (results.anharmonic) merge_sections(document, anharmonic_to_json(analysis, *results.anharmonic));
  if (!results.anharmonic_skipped.empty())
    merge_sections(document, {{"anharmonic_skipped", results.anharmonic_skipped}});
  if (results.families) merge_sections(document, families_to_json(analysis, *results.families));
  if (!results.families_skipped.empty())
    merge_sections(document, {{"families_skipped", results.families_skipped}});
  if (results.family_orbits) merge_sections(document, family_orbits_to_json(*results.family_orbits));
  if (results.anharmonic && results.families)
    merge_sections(document, resonance_cross_check_to_json(
                                 cross_check_resonances(analysis, *results.anharmonic, *results.families)));
  if (results.intensities || !results.intensities_skipped.empty())
    add_intensity_fields(document, analysis, results.intensities, results.intensities_skipped);
  make_strings_valid(document);
  return document;
}

std::string json_text(const nlohmann::json& document) {
  return document.dump(2, ' ', false, json::error_handler_t::replace) + "\n";
}

void write_json(std::ostream& out, const nlohmann::json& document) {
  // What dump() does, into the stream instead of a string.
  nlohmann::detail::serializer<json> serializer(nlohmann::detail::output_adapter<char>(out), ' ',
                                                json::error_handler_t::replace);
  serializer.dump(document, true, false, 2);
  out << "\n";
}

void TextReportOptions::validate() const {
  option_checks::require(detail == ReportDetail::summary || detail == ReportDetail::full, "text report",
                         "detail", "summary or full", static_cast<int>(detail));
}

std::string text_report(const RunResults& results, const TextReportOptions& options) {
  options.validate();
  const AnalysisResult& analysis = analysis_of(results);
  const bool full = options.detail == ReportDetail::full;
  std::string text = modes_table(analysis);
  if (results.anharmonic) {
    AnharmonicReportOptions anharmonic = anharmonic_options(*results.anharmonic);
    anharmonic.detail = options.detail;
    anharmonic.full_lists_note = options.full_lists_note;
    text +=
        "\n" + anharmonic_report(results.anharmonic->force_constants, results.anharmonic->vpt2, anharmonic);
  }
  if (results.families)
    text += "\n" + (full ? families_text_report(*results.families, analysis.modes)
                         : families_summary_text(*results.families, analysis.modes));
  if (results.anharmonic && results.families) text += cross_check_text(analysis, results, full);
  return text;
}

std::vector<OutputFile> family_backbone_files(const AnalysisResult& analysis, const FamiliesResult& families,
                                              const std::string& subfolder) {
  std::vector<OutputFile> files;
  const std::string prefix = subfolder.empty() ? std::string() : subfolder + "/";
  for (std::size_t index = 0; index < families.families.size(); ++index) {
    if (!families.families[index].continued) continue;
    const int family = static_cast<int>(index);
    files.push_back({prefix + family_csv_file_name(families, family, analysis.modes),
                     family_points_csv(families, family)});
  }
  return files;
}

std::vector<OutputFile> analysis_files(const RunResults& results) {
  const AnalysisResult& analysis = analysis_of(results);
  std::vector<OutputFile> files;
  auto document = std::make_shared<const json>(analysis_document(results));
  files.push_back({"analysis.json", "", [document](std::ostream& out) { write_json(out, *document); }});
  TextReportOptions full;
  full.detail = ReportDetail::full;
  files.push_back({"report.txt", text_report(results, full)});
  files.push_back({"modes.csv", modes_csv(analysis)});
  if (results.anharmonic)
    files.push_back(
        {"lines.csv", line_list_csv(results.anharmonic->vpt2,
                                    anharmonic_options(*results.anharmonic, results.intensities))});
  if (results.families)
    for (OutputFile& file : family_backbone_files(analysis, *results.families, "families"))
      files.push_back(std::move(file));
  for (OutputFile& file : report_files(*document)) files.push_back(std::move(file));
  return files;
}

std::string taylor_expansion_text(const AnalysisResult& analysis, const AnharmonicResult& anharmonic) {
  const std::string name =
      analysis.molecule.title.empty() ? analysis.molecule.formula() : analysis.molecule.title;
  const TaylorExpansionData expansion = taylor_expansion_from_force_constants(
      anharmonic.force_constants, anharmonic.harmonic, analysis.molecule, ExpansionCoordinates::normal,
      name + " (quartic force field of " + analysis.potential_description + ")");
  return write_taylor_expansion(expansion);
}

}  // namespace overtone
