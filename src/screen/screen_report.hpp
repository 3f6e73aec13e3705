#pragma once
// Answers out of a screening store: per molecule, the resonances whose upper level lies
// in a wavenumber window (flagged ones, or every candidate above a criterion), with their
// partners, gap, coupling and symmetry status, then the failures; and any table as CSV.
#include <optional>
#include <string>
#include <vector>

namespace overtone {

struct ScreenReportOptions {
  // Window on the upper level of a resonance (cm⁻¹): its VPT2 position where known,
  // else its harmonic one. Both empty: no window.
  std::optional<double> window_min_cm1;
  std::optional<double> window_max_cm1;
  // Empty: the flagged resonances. Given: every candidate whose criterion value
  // (Fermi W⁴/|Δ|³, overtone-overtone W, both cm⁻¹) is at least this, flagged or not.
  std::optional<double> min_criterion;
  std::optional<long long> run_id;  // empty: every run of the store
  void validate() const;            // throws Error naming the field: a reversed window, a negative criterion
};

struct ReportedResonance {
  std::string molecule;
  std::string origin;
  std::string variant;
  std::string kind;
  std::string label;
  std::string lower_label;
  std::string upper_label;
  std::string partner_species;
  std::optional<double> band_cm1;
  double upper_harmonic_cm1 = 0.0;
  double gap_cm1 = 0.0;
  double coupling_cm1 = 0.0;
  double criterion_value = 0.0;
  bool symmetry_allowed = false;
  bool flagged = false;
};

struct ReportedFailure {
  std::string molecule;
  std::string origin;
  std::string variant;
  std::string stage;
  std::string message;
};

struct ReportedRun {
  long long run_id = 0;
  std::string settings_hash;
  std::string potential;
  std::string stages;
  std::string created;
  std::size_t molecules = 0;  // with at least one result in this run
  std::size_t done = 0;       // results by status
  std::size_t failed = 0;
  std::size_t not_applicable = 0;
  std::vector<ReportedResonance> resonances;  // by molecule name, variant, band
  std::vector<ReportedFailure> failures;
};

struct ScreenReport {
  std::string store_path;
  ScreenReportOptions options;
  std::vector<ReportedRun> runs;
};

// Throws Error for a file that is not a store, invalid options or a run the store lacks.
ScreenReport screen_report(const std::string& store_path, const ScreenReportOptions& options = {});

std::string screen_report_text(const ScreenReport& report);
// One row per listed resonance (header row first).
std::string screen_report_csv(const ScreenReport& report);

// A table or view of the store (store_table_names) as CSV: a header row, NULL as an empty
// field, numbers with the digits that read back to the same double. Throws Error for an
// unknown table, naming the tables.
std::string store_table_csv(const std::string& store_path, const std::string& table);

// RFC 4180 quoting: a field holding a comma, a quote or a line break goes in double
// quotes with its quotes doubled.
std::string csv_field(const std::string& text);

}  // namespace overtone
