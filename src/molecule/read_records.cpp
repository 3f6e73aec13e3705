#include "molecule/read_records.hpp"

#include <fmt/format.h>
#include <openbabel/mol.h>
#include <openbabel/obconversion.h>

#include <algorithm>
#include <cctype>
#include <filesystem>
#include <fstream>
#include <sstream>

#include "core/error.hpp"
#include "molecule/openbabel_bridge.hpp"

namespace overtone {

namespace {

std::string lower(std::string text) {
  for (char& c : text) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  return text;
}

std::string without_carriage_return(const std::string& line) {
  return !line.empty() && line.back() == '\r' ? line.substr(0, line.size() - 1) : line;
}

std::string trimmed(const std::string& text) {
  const auto first = text.find_first_not_of(" \t\r\n");
  if (first == std::string::npos) return {};
  const auto last = text.find_last_not_of(" \t\r\n");
  return text.substr(first, last - first + 1);
}

bool is_blank(const std::string& text) { return text.find_first_not_of(" \t\r\n") == std::string::npos; }

// Lines with their end-of-line characters removed ('\r' too).
std::vector<std::string> lines_of(const std::string& text) {
  std::vector<std::string> lines;
  std::istringstream stream(text);
  std::string line;
  while (std::getline(stream, line)) lines.push_back(without_carriage_return(line));
  return lines;
}

std::string joined(const std::vector<std::string>& lines, std::size_t begin, std::size_t end) {
  std::string text;
  for (std::size_t i = begin; i < end && i < lines.size(); ++i) text += lines[i] + "\n";
  return text;
}

std::string file_text(const std::string& path) {
  std::ifstream stream(path, std::ios::binary);
  if (!stream) throw Error(fmt::format("molecule file '{}' cannot be opened for reading", path));
  std::ostringstream content;
  content << stream.rdbuf();
  return content.str();
}

MoleculeFileRecord make_record(int number, const std::string& format, const std::string& name,
                               std::string text, std::string content) {
  MoleculeFileRecord record;
  record.number = number;
  record.format = format;
  record.name = trimmed(name);
  record.text = std::move(text);
  record.content = std::move(content);
  return record;
}

// CTfile: a record is everything up to a "$$$$" line; the molecule block ends at "M  END",
// data items ("> <NAME>" and their values) follow it.
std::vector<MoleculeFileRecord> split_sdf(const std::string& text, const std::string& format) {
  const std::vector<std::string> lines = lines_of(text);
  std::vector<MoleculeFileRecord> records;
  std::size_t start = 0;
  auto close_record = [&](std::size_t end, bool delimited) {
    const std::string body = joined(lines, start, end);
    // Text after the last "$$$$" that holds nothing is not a record; an empty record
    // between two delimiters is (it fails on its own when read).
    if (!delimited && is_blank(body)) return;
    std::size_t molecule_end = end;
    for (std::size_t i = start; i < end; ++i)
      if (lines[i].rfind("M  END", 0) == 0) {
        molecule_end = i + 1;
        break;
      }
    const std::string name = start < end ? lines[start] : std::string();
    std::string record_text = body + "$$$$\n";
    records.push_back(make_record(static_cast<int>(records.size()) + 1, format, name, std::move(record_text),
                                  joined(lines, start + 1, molecule_end)));
  };
  for (std::size_t i = 0; i < lines.size(); ++i)
    if (lines[i].rfind("$$$$", 0) == 0) {
      close_record(i, true);
      start = i + 1;
    }
  close_record(lines.size(), false);
  return records;
}

std::vector<MoleculeFileRecord> split_mol2(const std::string& text, const std::string& format) {
  const std::vector<std::string> lines = lines_of(text);
  std::vector<std::size_t> starts;
  for (std::size_t i = 0; i < lines.size(); ++i)
    if (lines[i].rfind("@<TRIPOS>MOLECULE", 0) == 0) starts.push_back(i);
  std::vector<MoleculeFileRecord> records;
  for (std::size_t r = 0; r < starts.size(); ++r) {
    const std::size_t begin = starts[r];
    const std::size_t end = r + 1 < starts.size() ? starts[r + 1] : lines.size();
    const std::string name = begin + 1 < end ? lines[begin + 1] : std::string();
    std::string content = lines[begin] + "\n" + joined(lines, begin + 2, end);
    records.push_back(
        make_record(static_cast<int>(r) + 1, format, name, joined(lines, begin, end), std::move(content)));
  }
  return records;
}

// XYZ: "count / comment / count atom lines", repeated. A count line that is not a number
// makes the rest of the file one record, which then fails on its own.
std::vector<MoleculeFileRecord> split_xyz(const std::string& text, const std::string& format) {
  const std::vector<std::string> lines = lines_of(text);
  std::vector<MoleculeFileRecord> records;
  std::size_t at = 0;
  while (at < lines.size()) {
    if (is_blank(lines[at])) {
      ++at;
      continue;
    }
    std::size_t end = lines.size();
    const std::string count_text = trimmed(lines[at]);
    const bool is_count = !count_text.empty() &&
                          std::all_of(count_text.begin(), count_text.end(),
                                      [](char c) { return std::isdigit(static_cast<unsigned char>(c)); });
    if (is_count && count_text.size() < 10) end = std::min(lines.size(), at + 2 + std::stoul(count_text));
    const std::string name = at + 1 < end ? lines[at + 1] : std::string();
    std::string content = lines[at] + "\n" + joined(lines, at + 2, end);
    records.push_back(make_record(static_cast<int>(records.size()) + 1, format, name, joined(lines, at, end),
                                  std::move(content)));
    at = end;
  }
  return records;
}

std::vector<MoleculeFileRecord> split_with_openbabel(const std::string& path, const std::string& format) {
  OpenBabelLogCapture messages;
  OpenBabel::OBConversion conversion;
  if (!conversion.SetInFormat(format.c_str()))
    throw Error(fmt::format("'{}' is not a molecule format Open Babel can read (file '{}')", format, path));
  conversion.SetOutFormat("sdf");
  std::ifstream stream(path, std::ios::binary);
  if (!stream) throw Error(fmt::format("molecule file '{}' cannot be opened for reading", path));
  std::vector<MoleculeFileRecord> records;
  OpenBabel::OBMol mol;
  bool first = true;
  std::streamoff position = 0;
  while (first ? conversion.Read(&mol, &stream) : conversion.Read(&mol)) {
    first = false;
    // Some formats report success at the end of the input without reading anything.
    const std::streamoff now = stream.tellg();
    if (mol.NumAtoms() == 0 && (now < 0 || now == position)) break;
    position = now;
    const std::string name = mol.GetTitle();
    std::string text = conversion.WriteString(&mol);
    // The CTfile name line is the first one; the content is the rest of the molecule block.
    std::vector<MoleculeFileRecord> as_sdf = split_sdf(text, "sdf");
    std::string content = as_sdf.empty() ? text : as_sdf.front().content;
    records.push_back(
        make_record(static_cast<int>(records.size()) + 1, "sdf", name, std::move(text), std::move(content)));
    mol.Clear();
  }
  return records;
}

}  // namespace

std::string record_format_of(const std::string& path, const std::string& format) {
  if (!format.empty()) return lower(format);
  std::string extension = std::filesystem::path(path).extension().string();
  if (!extension.empty() && extension.front() == '.') extension.erase(0, 1);
  return lower(extension);
}

bool is_readable_format(const std::string& format) {
  if (format.empty()) return false;
  OpenBabel::OBConversion conversion;
  return conversion.FindFormat(lower(format).c_str()) != nullptr;
}

bool is_text_split_format(const std::string& format) {
  const std::string name = lower(format);
  return name == "sdf" || name == "sd" || name == "mol" || name == "mdl" || name == "mol2" || name == "ml2" ||
         name == "xyz";
}

std::vector<MoleculeFileRecord> read_records(const std::string& path, const std::string& format) {
  namespace fs = std::filesystem;
  std::error_code ec;
  if (!fs::exists(path, ec)) throw Error(fmt::format("molecule file '{}' does not exist", path));
  if (fs::is_directory(path, ec))
    throw Error(fmt::format("'{}' is a directory, expected a molecule file", path));
  const std::string name = record_format_of(path, format);
  if (name.empty())
    throw Error(fmt::format(
        "cannot tell the format of '{}': give the file an extension such as .sdf or .mol2", path));
  if (name == "sdf" || name == "sd" || name == "mol" || name == "mdl")
    return split_sdf(file_text(path), name);
  if (name == "mol2" || name == "ml2") return split_mol2(file_text(path), name);
  if (name == "xyz") return split_xyz(file_text(path), name);
  return split_with_openbabel(path, name);
}

}  // namespace overtone
