#pragma once
// What a screen reads: every INPUT becomes a list of records, each a molecule that can be
// read on its own, with a stable id and a content hash.
//
//   SMILES files (.smi .smiles .can .ism)  one molecule per line: the SMILES, then an
//                                          optional name after whitespace; blank lines
//                                          and lines starting with '#' are skipped.
//   CSV files (.csv)                       a header row, then one molecule per row; the
//                                          SMILES and id columns are named by options.
//   directories                            every molecule file inside (recursively, in
//                                          path order; hidden files and unknown
//                                          extensions skipped).
//   any other file                         the records of molecule/read_records.hpp
//                                          (SDF, MOL2, XYZ and any Open Babel format).
//
// Id: the record's name; without one "<file>#<n>" (n the 1-based record, or for SMILES
// and CSV the line). Content hash: SHA-256 of the record kind and its content (the SMILES
// string; for files the molecule without its name line and data items), so the same
// molecule under another name, or listed twice, is computed once.
#include <cstddef>
#include <string>
#include <vector>

namespace overtone {

inline constexpr const char* smiles_record_format = "smiles";

struct ScreenRecord {
  std::string id;
  std::string origin;  // "<file>#<n>"
  std::string format;  // smiles_record_format, or the Open Babel format of text
  std::string text;    // the SMILES string, or the record as a file of that format
  std::string content_hash;
};

struct InputOptions {
  std::string format;                    // Open Babel format of every file input; empty: from the extension
  std::string smiles_column = "smiles";  // CSV column names (compared without case)
  std::string id_column = "id";

  void validate() const;  // throws Error naming the field that is out of range
};

struct CollectedInputs {
  std::vector<ScreenRecord> records;  // unique by content hash, first occurrence kept
  std::size_t listed = 0;             // records listed, duplicates included
  std::size_t duplicates = 0;         // records whose content an earlier one had
  std::vector<std::string> warnings;  // e.g. skipped files of a directory
};

// Throws Error for an input that does not exist or cannot be read, a CSV without the
// named columns, or an unknown format.
CollectedInputs collect_records(const std::vector<std::string>& inputs, const InputOptions& options = {});

// The content hash of a SMILES record, and of a file record of this format and content.
std::string smiles_content_hash(const std::string& smiles);
std::string file_content_hash(const std::string& format, const std::string& content);

}  // namespace overtone
