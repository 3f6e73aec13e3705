#include "screen/inputs.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <cctype>
#include <filesystem>
#include <fstream>
#include <set>
#include <sstream>

#include "core/error.hpp"
#include "core/option_checks.hpp"
#include "core/text.hpp"
#include "molecule/read_records.hpp"
#include "screen/hashing.hpp"

namespace overtone {

namespace {

namespace fs = std::filesystem;

std::string lower(std::string text) {
  for (char& c : text) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  return text;
}

std::string trimmed(const std::string& text) {
  const auto first = text.find_first_not_of(" \t\r\n");
  if (first == std::string::npos) return {};
  const auto last = text.find_last_not_of(" \t\r\n");
  return text.substr(first, last - first + 1);
}

bool is_smiles_extension(const std::string& extension) {
  return extension == "smi" || extension == "smiles" || extension == "can" || extension == "ism";
}

std::string extension_of(const std::string& path) {
  std::string extension = fs::path(path).extension().string();
  if (!extension.empty() && extension.front() == '.') extension.erase(0, 1);
  return lower(extension);
}

std::string read_text(const std::string& path) {
  std::ifstream stream(path, std::ios::binary);
  if (!stream) throw Error(fmt::format("input file '{}' cannot be opened for reading", path));
  std::ostringstream text;
  text << stream.rdbuf();
  return text.str();
}

std::string origin_of(const std::string& path, int number) { return fmt::format("{}#{}", path, number); }

ScreenRecord smiles_record(const std::string& path, int line, const std::string& smiles,
                           const std::string& name) {
  ScreenRecord record;
  record.origin = origin_of(path, line);
  record.id = name.empty() ? record.origin : name;
  record.format = smiles_record_format;
  record.text = smiles;
  record.content_hash = smiles_content_hash(smiles);
  return record;
}

std::vector<ScreenRecord> smiles_file_records(const std::string& path) {
  std::istringstream lines(read_text(path));
  std::vector<ScreenRecord> records;
  std::string line;
  int number = 0;
  while (std::getline(lines, line)) {
    ++number;
    const std::string text = trimmed(line);
    if (text.empty() || text.front() == '#') continue;
    const auto split = text.find_first_of(" \t");
    const std::string smiles = text.substr(0, split);
    const std::string name = split == std::string::npos ? std::string() : trimmed(text.substr(split));
    // A header line such as "SMILES Name" is not a molecule.
    if (records.empty() && lower(smiles) == "smiles") continue;
    records.push_back(smiles_record(path, number, smiles, name));
  }
  return records;
}

// RFC 4180 fields: separated by commas, optionally in double quotes ("" for a quote);
// a quoted field may span lines.
std::vector<std::vector<std::string>> csv_rows(const std::string& text, std::vector<int>& row_lines) {
  std::vector<std::vector<std::string>> rows;
  std::vector<std::string> row;
  std::string field;
  bool quoted = false;
  bool field_started = false;
  int line = 1;
  int row_line = 1;
  auto end_field = [&] {
    row.push_back(field);
    field.clear();
    field_started = false;
  };
  auto end_row = [&] {
    end_field();
    const bool empty = row.size() == 1 && trimmed(row[0]).empty();
    if (!empty) {
      rows.push_back(row);
      row_lines.push_back(row_line);
    }
    row.clear();
  };
  for (std::size_t i = 0; i < text.size(); ++i) {
    const char c = text[i];
    if (quoted) {
      if (c == '"' && i + 1 < text.size() && text[i + 1] == '"') {
        field.push_back('"');
        ++i;
      } else if (c == '"') {
        quoted = false;
      } else {
        if (c == '\n') ++line;
        field.push_back(c);
      }
      continue;
    }
    if (c == '"' && !field_started) {
      quoted = true;
      field_started = true;
    } else if (c == ',') {
      end_field();
    } else if (c == '\n') {
      end_row();
      ++line;
      row_line = line;
    } else if (c != '\r') {
      field.push_back(c);
      field_started = true;
    }
  }
  if (!field.empty() || !row.empty()) end_row();
  return rows;
}

std::vector<ScreenRecord> csv_records(const std::string& path, const InputOptions& options) {
  std::vector<int> row_lines;
  const std::vector<std::vector<std::string>> rows = csv_rows(read_text(path), row_lines);
  if (rows.empty()) throw Error(fmt::format("csv file '{}' has no header row", path));
  auto column = [&](const std::string& wanted, const char* option) {
    for (std::size_t c = 0; c < rows[0].size(); ++c)
      if (lower(trimmed(rows[0][c])) == lower(wanted)) return c;
    std::string names;
    for (const std::string& name : rows[0]) names += (names.empty() ? "" : ", ") + trimmed(name);
    throw Error(fmt::format("csv file '{}' has no column '{}' ({}); its columns are: {}", path, wanted,
                            option, names));
  };
  const std::size_t smiles_column = column(options.smiles_column, "--smiles-column");
  const std::size_t id_column = column(options.id_column, "--id-column");
  std::vector<ScreenRecord> records;
  for (std::size_t r = 1; r < rows.size(); ++r) {
    const std::vector<std::string>& row = rows[r];
    const std::string smiles = smiles_column < row.size() ? trimmed(row[smiles_column]) : std::string();
    const std::string id = id_column < row.size() ? trimmed(row[id_column]) : std::string();
    records.push_back(smiles_record(path, row_lines[r], smiles, id));
  }
  return records;
}

std::string format_family(const std::string& format) {
  const std::string name = lower(format);
  if (name == "sd" || name == "mol" || name == "mdl") return "sdf";
  if (name == "ml2") return "mol2";
  return name;
}

std::vector<ScreenRecord> molecule_file_records(const std::string& path, const std::string& format) {
  std::vector<ScreenRecord> records;
  for (const MoleculeFileRecord& entry : read_records(path, format)) {
    ScreenRecord record;
    record.origin = origin_of(path, entry.number);
    record.id = entry.name.empty() ? record.origin : valid_utf8(entry.name);
    record.format = entry.format;
    record.text = entry.text;
    record.content_hash = file_content_hash(entry.format, entry.content);
    records.push_back(std::move(record));
  }
  return records;
}

std::vector<ScreenRecord> file_records(const std::string& path, const InputOptions& options) {
  const std::string extension = options.format.empty() ? extension_of(path) : lower(options.format);
  if (is_smiles_extension(extension)) return smiles_file_records(path);
  if (extension == "csv") return csv_records(path, options);
  return molecule_file_records(path, options.format);
}

bool is_screen_input(const fs::path& path) {
  const std::string extension = extension_of(path.string());
  // Open Babel reads any text file as titles ("txt"): not a molecule file in a folder.
  if (extension == "txt") return false;
  return is_smiles_extension(extension) || extension == "csv" || is_readable_format(extension);
}

}  // namespace

std::string smiles_content_hash(const std::string& smiles) { return sha256_hex("smiles\n" + smiles); }

std::string file_content_hash(const std::string& format, const std::string& content) {
  return sha256_hex(format_family(format) + "\n" + content);
}

void InputOptions::validate() const {
  option_checks::require(!smiles_column.empty(), "screen input", "smiles_column", "a column name",
                         "an empty name");
  option_checks::require(!id_column.empty(), "screen input", "id_column", "a column name", "an empty name");
}

CollectedInputs collect_records(const std::vector<std::string>& inputs, const InputOptions& options) {
  options.validate();
  CollectedInputs collected;
  std::set<std::string> seen;
  auto add = [&](std::vector<ScreenRecord> records) {
    for (ScreenRecord& record : records) {
      ++collected.listed;
      if (!seen.insert(record.content_hash).second) {
        ++collected.duplicates;
        continue;
      }
      collected.records.push_back(std::move(record));
    }
  };
  for (const std::string& input : inputs) {
    std::error_code ec;
    if (!fs::exists(input, ec)) throw Error(fmt::format("input '{}' does not exist", input));
    if (!fs::is_directory(input, ec)) {
      add(file_records(input, options));
      continue;
    }
    std::vector<fs::path> files;
    for (auto it = fs::recursive_directory_iterator(input, fs::directory_options::skip_permission_denied, ec);
         it != fs::recursive_directory_iterator(); it.increment(ec)) {
      if (ec) break;
      const std::string name = it->path().filename().string();
      if (!name.empty() && name.front() == '.') {
        if (it->is_directory(ec)) it.disable_recursion_pending();
        continue;
      }
      if (!it->is_regular_file(ec)) continue;
      if (is_screen_input(it->path()) || !options.format.empty())
        files.push_back(it->path());
      else
        collected.warnings.push_back(
            fmt::format("'{}' skipped: not a molecule file by its extension", it->path().string()));
    }
    if (ec) throw Error(fmt::format("directory '{}' cannot be listed: {}", input, ec.message()));
    std::sort(files.begin(), files.end());
    for (const fs::path& file : files) add(file_records(file.string(), options));
  }
  return collected;
}

}  // namespace overtone
