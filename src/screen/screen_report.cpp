#include "screen/screen_report.hpp"

#include <SQLiteCpp/Database.h>
#include <SQLiteCpp/Statement.h>
#include <fmt/format.h>

#include <algorithm>
#include <cmath>

#include "core/error.hpp"
#include "core/option_checks.hpp"
#include "core/text.hpp"
#include "screen/store.hpp"

namespace overtone {

namespace {

std::optional<double> optional_real(const SQLite::Column& column) {
  if (column.isNull()) return std::nullopt;
  return column.getDouble();
}

std::string text_of(const SQLite::Column& column) {
  return column.isNull() ? std::string() : column.getString();
}

std::string number_text(const std::optional<double>& value, int decimals) {
  return value ? fmt::format("{:.{}f}", *value, decimals) : std::string("-");
}

std::string padded(const std::string& text, std::size_t width) {
  // Widths count code points, so that UTF-8 names line up.
  std::size_t length = 0;
  for (unsigned char c : text)
    if ((c & 0xC0) != 0x80) ++length;
  return length >= width ? text : text + std::string(width - length, ' ');
}

std::string window_text(const ScreenReportOptions& options) {
  if (!options.window_min_cm1 && !options.window_max_cm1) return "any wavenumber";
  return fmt::format("{} to {} cm-1", number_text(options.window_min_cm1, 0),
                     options.window_max_cm1 ? number_text(options.window_max_cm1, 0) : std::string("∞"));
}

}  // namespace

void ScreenReportOptions::validate() const {
  using namespace option_checks;
  const char* owner = "screen report";
  if (window_min_cm1)
    require(std::isfinite(*window_min_cm1), owner, "window_min_cm1", "a finite wavenumber", *window_min_cm1);
  if (window_max_cm1) {
    require(std::isfinite(*window_max_cm1), owner, "window_max_cm1", "a finite wavenumber", *window_max_cm1);
    if (window_min_cm1)
      require(*window_min_cm1 <= *window_max_cm1, owner, "window_max_cm1",
              fmt::format("a wavenumber >= window_min_cm1 ({})", *window_min_cm1), *window_max_cm1);
  }
  if (min_criterion) require_non_negative(owner, "min_criterion", *min_criterion);
}

ScreenReport screen_report(const std::string& store_path, const ScreenReportOptions& options) {
  options.validate();
  const std::unique_ptr<SQLite::Database> database = open_store_for_reading(store_path);
  SQLite::Database& db = *database;
  ScreenReport report;
  report.store_path = store_path;
  report.options = options;
  SQLite::Statement runs(
      db, "SELECT run_id, settings_hash, potential, stages, created FROM runs ORDER BY run_id");
  while (runs.executeStep()) {
    ReportedRun run;
    run.run_id = runs.getColumn(0).getInt64();
    if (options.run_id && *options.run_id != run.run_id) continue;
    run.settings_hash = runs.getColumn(1).getString();
    run.potential = runs.getColumn(2).getString();
    run.stages = runs.getColumn(3).getString();
    run.created = runs.getColumn(4).getString();
    report.runs.push_back(run);
  }
  if (options.run_id && report.runs.empty())
    throw Error(fmt::format("store '{}' has no run {}", store_path, *options.run_id));
  for (ReportedRun& run : report.runs) {
    SQLite::Statement counts(
        db,
        "SELECT count(DISTINCT molecule_id), sum(status = 'done'), sum(status = 'failed'), "
        "sum(status = 'not_applicable') FROM results WHERE run_id = ?");
    counts.bind(1, static_cast<int64_t>(run.run_id));
    if (counts.executeStep()) {
      run.molecules = static_cast<std::size_t>(counts.getColumn(0).getInt64());
      run.done = static_cast<std::size_t>(counts.getColumn(1).getInt64());
      run.failed = static_cast<std::size_t>(counts.getColumn(2).getInt64());
      run.not_applicable = static_cast<std::size_t>(counts.getColumn(3).getInt64());
    }
    SQLite::Statement resonances(
        db,
        "SELECT m.name, m.origin, r.variant, s.kind, s.label, s.lower_label, s.upper_label, "
        "s.partner_species, "
        "s.band_cm1, s.upper_harmonic_cm1, s.gap_cm1, s.coupling_cm1, s.criterion_value, s.symmetry_allowed, "
        "s.flagged FROM resonances s JOIN results r ON r.result_id = s.result_id "
        "JOIN molecules m ON m.molecule_id = r.molecule_id "
        "WHERE r.run_id = ?1 AND (CASE WHEN ?2 IS NULL THEN s.flagged = 1 ELSE s.criterion_value >= ?2 END) "
        "AND (?3 IS NULL OR COALESCE(s.band_cm1, s.upper_harmonic_cm1) >= ?3) "
        "AND (?4 IS NULL OR COALESCE(s.band_cm1, s.upper_harmonic_cm1) <= ?4) "
        "ORDER BY m.name, m.origin, r.variant, COALESCE(s.band_cm1, s.upper_harmonic_cm1), s.resonance");
    resonances.bind(1, static_cast<int64_t>(run.run_id));
    auto bind_optional = [&](int index, const std::optional<double>& value) {
      if (value)
        resonances.bind(index, *value);
      else
        resonances.bind(index);
    };
    bind_optional(2, options.min_criterion);
    bind_optional(3, options.window_min_cm1);
    bind_optional(4, options.window_max_cm1);
    while (resonances.executeStep()) {
      ReportedResonance row;
      row.molecule = resonances.getColumn(0).getString();
      row.origin = resonances.getColumn(1).getString();
      row.variant = resonances.getColumn(2).getString();
      row.kind = resonances.getColumn(3).getString();
      row.label = resonances.getColumn(4).getString();
      row.lower_label = resonances.getColumn(5).getString();
      row.upper_label = resonances.getColumn(6).getString();
      row.partner_species = text_of(resonances.getColumn(7));
      row.band_cm1 = optional_real(resonances.getColumn(8));
      row.upper_harmonic_cm1 = resonances.getColumn(9).getDouble();
      row.gap_cm1 = resonances.getColumn(10).getDouble();
      row.coupling_cm1 = resonances.getColumn(11).getDouble();
      row.criterion_value = resonances.getColumn(12).getDouble();
      row.symmetry_allowed = resonances.getColumn(13).getInt() != 0;
      row.flagged = resonances.getColumn(14).getInt() != 0;
      run.resonances.push_back(row);
    }
    SQLite::Statement failures(db,
                               "SELECT name, origin, variant, stage, message FROM failures WHERE run_id = ? "
                               "ORDER BY name, origin, variant");
    failures.bind(1, static_cast<int64_t>(run.run_id));
    while (failures.executeStep())
      run.failures.push_back({failures.getColumn(0).getString(), failures.getColumn(1).getString(),
                              failures.getColumn(2).getString(), text_of(failures.getColumn(3)),
                              text_of(failures.getColumn(4))});
  }
  return report;
}

std::string screen_report_text(const ScreenReport& report) {
  std::string text = fmt::format("store {}: {} run{}\n", printable_text(report.store_path),
                                 report.runs.size(), report.runs.size() == 1 ? "" : "s");
  const std::string selection =
      report.options.min_criterion
          ? fmt::format("resonance candidates with criterion >= {:g} cm-1", *report.options.min_criterion)
          : std::string("flagged resonances");
  for (const ReportedRun& run : report.runs) {
    text += fmt::format(
        "\nrun {} ({}, {} stages; settings {}; started {}): {} molecules, {} results done, {} failed, "
        "{} not applicable\n",
        run.run_id, printable_text(run.potential), run.stages, run.settings_hash.substr(0, 12), run.created,
        run.molecules, run.done, run.failed, run.not_applicable);
    text += fmt::format("{} with the upper level at {}: {}\n", selection, window_text(report.options),
                        run.resonances.size());
    if (!run.resonances.empty()) {
      text += fmt::format("  {} {} {} {} {:>9} {:>9} {:>9} {:>10}  {}\n", padded("molecule", 20),
                          padded("variant", 14), padded("levels", 16), padded("kind", 24), "band", "gap",
                          "coupling", "criterion", "symmetry");
      std::string last_molecule;
      for (const ReportedResonance& row : run.resonances) {
        const std::string molecule = printable_text(row.molecule);
        const std::string shown = molecule == last_molecule ? std::string() : molecule;
        last_molecule = molecule;
        text += fmt::format("  {} {} {} {} {:>9} {:>9.1f} {:>9.2f} {:>10.3g}  {}{}\n", padded(shown, 20),
                            padded(row.variant.empty() ? "parent" : printable_text(row.variant), 14),
                            padded(row.label, 16), padded(row.kind, 24), number_text(row.band_cm1, 1),
                            row.gap_cm1, row.coupling_cm1, row.criterion_value,
                            row.symmetry_allowed ? "allowed" : "forbidden",
                            row.partner_species.empty() ? "" : " (" + row.partner_species + ")");
      }
      text +=
          "  band: VPT2 position of the upper level (cm-1); gap: harmonic (cm-1); coupling W (cm-1); "
          "criterion: W^4/|gap|^3 (Fermi) or W (overtone-overtone), cm-1\n";
    }
    text += fmt::format("failures: {}\n", run.failures.size());
    for (const ReportedFailure& failure : run.failures)
      text +=
          fmt::format("  {}{}{} at {}: {}\n", printable_text(failure.molecule),
                      failure.origin == failure.molecule ? "" : " [" + printable_text(failure.origin) + "]",
                      failure.variant.empty() ? "" : " variant " + printable_text(failure.variant),
                      failure.stage, printable_text(failure.message));
  }
  return text;
}

std::string csv_field(const std::string& text) {
  if (text.find_first_of(",\"\r\n") == std::string::npos) return text;
  std::string quoted = "\"";
  for (char c : text) {
    if (c == '"') quoted += '"';
    quoted += c;
  }
  return quoted + "\"";
}

std::string screen_report_csv(const ScreenReport& report) {
  std::string text =
      "run_id,molecule,origin,variant,kind,label,lower_label,upper_label,partner_species,band_cm1,"
      "upper_harmonic_cm1,gap_cm1,coupling_cm1,criterion_value,symmetry_allowed,flagged\n";
  for (const ReportedRun& run : report.runs)
    for (const ReportedResonance& row : run.resonances)
      text +=
          fmt::format("{},{},{},{},{},{},{},{},{},{},{},{},{},{},{},{}\n", run.run_id,
                      csv_field(valid_utf8(row.molecule)), csv_field(valid_utf8(row.origin)),
                      csv_field(valid_utf8(row.variant)), row.kind, csv_field(row.label),
                      csv_field(row.lower_label), csv_field(row.upper_label), csv_field(row.partner_species),
                      row.band_cm1 ? fmt::format("{}", *row.band_cm1) : std::string(), row.upper_harmonic_cm1,
                      row.gap_cm1, row.coupling_cm1, row.criterion_value, row.symmetry_allowed ? 1 : 0,
                      row.flagged ? 1 : 0);
  return text;
}

std::string store_table_csv(const std::string& store_path, const std::string& table) {
  const std::vector<std::string>& names = store_table_names();
  if (std::find(names.begin(), names.end(), table) == names.end()) {
    std::string list;
    for (const std::string& name : names) list += (list.empty() ? "" : ", ") + name;
    throw Error(fmt::format("the store has no table '{}'; its tables are: {}", table, list));
  }
  const std::unique_ptr<SQLite::Database> database = open_store_for_reading(store_path);
  SQLite::Statement query(*database, "SELECT * FROM " + table);
  std::string text;
  for (int c = 0; c < query.getColumnCount(); ++c) text += (c ? "," : "") + csv_field(query.getColumnName(c));
  text += "\n";
  while (query.executeStep()) {
    for (int c = 0; c < query.getColumnCount(); ++c) {
      const SQLite::Column column = query.getColumn(c);
      std::string field;
      if (column.isFloat())
        field = fmt::format("{}", column.getDouble());
      else if (!column.isNull())
        field = csv_field(valid_utf8(column.getString()));
      text += (c ? "," : "") + field;
    }
    text += "\n";
  }
  return text;
}

}  // namespace overtone
