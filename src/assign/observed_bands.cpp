#include <fmt/format.h>

#include <algorithm>
#include <cctype>
#include <cmath>
#include <fstream>
#include <map>
#include <sstream>

#include "assign/assignment.hpp"
#include "core/error.hpp"

namespace overtone {

namespace {

std::string trimmed(const std::string& text) {
  const auto first = text.find_first_not_of(" \t\r");
  if (first == std::string::npos) return "";
  return text.substr(first, text.find_last_not_of(" \t\r") - first + 1);
}

std::string lower(std::string text) {
  for (char& c : text) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  return text;
}

// Cells of one CSV row; double quotes enclose a cell with commas ("" is a quote).
std::vector<std::string> cells(const std::string& row) {
  std::vector<std::string> out(1);
  bool quoted = false;
  for (std::size_t i = 0; i < row.size(); ++i) {
    const char c = row[i];
    if (c == '"') {
      if (quoted && i + 1 < row.size() && row[i + 1] == '"') {
        out.back() += '"';
        ++i;
      } else {
        quoted = !quoted;
      }
    } else if (c == ',' && !quoted) {
      out.emplace_back();
    } else {
      out.back() += c;
    }
  }
  for (std::string& cell : out) cell = trimmed(cell);
  return out;
}

const char* const known_columns[] = {"wavenumber_cm1", "relative_intensity", "technique",
                                     "polarization",   "isotopologue",       "label"};

std::map<std::string, std::size_t> header_columns(const std::vector<std::string>& header,
                                                  const std::string& where) {
  std::map<std::string, std::size_t> columns;
  for (std::size_t c = 0; c < header.size(); ++c) {
    const std::string name = lower(header[c]);
    if (std::none_of(std::begin(known_columns), std::end(known_columns),
                     [&](const char* k) { return name == k; }))
      throw Error(
          fmt::format("{}: unknown column '{}' (expected wavenumber_cm1, relative_intensity, technique, "
                      "polarization, isotopologue, label)",
                      where, header[c]));
    if (!columns.emplace(name, c).second)
      throw Error(fmt::format("{}: column '{}' appears twice", where, header[c]));
  }
  if (!columns.count("wavenumber_cm1")) throw Error(where + ": the header must name a wavenumber_cm1 column");
  return columns;
}

double number_cell(const std::string& text, const std::string& column, const std::string& where) {
  try {
    std::size_t used = 0;
    const double value = std::stod(text, &used);
    if (used == text.size() && std::isfinite(value)) return value;
  } catch (const std::exception&) {
  }
  throw Error(fmt::format("{}: {} must be a finite number, got '{}'", where, column, text));
}

Technique technique_cell(const std::string& text, const std::string& where) {
  const std::string value = lower(text);
  if (value.empty()) return Technique::unspecified;
  if (value == "ir" || value == "infrared") return Technique::infrared;
  if (value == "raman") return Technique::raman;
  throw Error(fmt::format("{}: technique must be IR or Raman (or empty), got '{}'", where, text));
}

Polarization polarization_cell(const std::string& text, const std::string& where) {
  const std::string value = lower(text);
  if (value.empty()) return Polarization::unspecified;
  if (value == "polarized" || value == "p") return Polarization::polarized;
  if (value == "depolarized" || value == "dp") return Polarization::depolarized;
  throw Error(
      fmt::format("{}: polarization must be polarized or depolarized (or empty), got '{}'", where, text));
}

ObservedBand band_from_row(const std::vector<std::string>& row,
                           const std::map<std::string, std::size_t>& columns, const std::string& where) {
  auto cell = [&](const char* name) -> std::string {
    const auto found = columns.find(name);
    return found != columns.end() && found->second < row.size() ? row[found->second] : std::string();
  };
  if (row.size() > columns.size())
    throw Error(fmt::format("{}: {} cells, the header names {}", where, row.size(), columns.size()));
  ObservedBand band;
  band.wavenumber_cm1 = number_cell(cell("wavenumber_cm1"), "wavenumber_cm1", where);
  if (!(band.wavenumber_cm1 > 0.0))
    throw Error(fmt::format("{}: wavenumber_cm1 must be positive, got {}", where, band.wavenumber_cm1));
  if (!cell("relative_intensity").empty()) {
    band.relative_intensity = number_cell(cell("relative_intensity"), "relative_intensity", where);
    if (*band.relative_intensity < 0.0) throw Error(where + ": relative_intensity must not be negative");
  }
  band.technique = technique_cell(cell("technique"), where);
  band.polarization = polarization_cell(cell("polarization"), where);
  if (band.polarization != Polarization::unspecified && band.technique == Technique::infrared)
    throw Error(where + ": a polarization belongs to a Raman band, the row says IR");
  band.isotopologue = cell("isotopologue");
  band.label = cell("label");
  return band;
}

}  // namespace

std::vector<ObservedBand> parse_observed_bands(const std::string& csv_text, const std::string& origin) {
  std::istringstream in(csv_text);
  std::vector<ObservedBand> bands;
  std::map<std::string, std::size_t> columns;
  int line_number = 0;
  for (std::string line; std::getline(in, line);) {
    ++line_number;
    const std::string text = trimmed(line);
    if (text.empty() || text[0] == '#') continue;
    const std::string where = fmt::format("observed bands '{}' line {}", origin, line_number);
    if (columns.empty()) {
      columns = header_columns(cells(text), where);
      continue;
    }
    bands.push_back(band_from_row(cells(text), columns, where));
    bands.back().line = line_number;
  }
  if (bands.empty())
    throw Error("observed bands '" + origin + "': expected a header and at least one band, got none");
  return bands;
}

std::vector<ObservedBand> read_observed_bands(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  if (!in) throw Error("cannot read observed bands '" + path + "'");
  std::ostringstream text;
  text << in.rdbuf();
  return parse_observed_bands(text.str(), path);
}

}  // namespace overtone
