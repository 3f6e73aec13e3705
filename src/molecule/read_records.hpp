#pragma once
// Splitting a multi-molecule file into records that can each be read on their own, for
// screening sets. Nothing is interpreted chemically where the format allows a plain text
// split, so one bad record (an unknown element, an empty record) cannot stop the others
// from being listed: it is read, and fails, on its own later.
//
//   SDF / MOL (sdf, sd, mol, mdl)  records end at a "$$$$" line (CTfile format); the name
//                                  is the first line; a record with nothing in it is kept
//                                  as an empty record.
//   MOL2 (mol2, ml2)               a record starts at each "@<TRIPOS>MOLECULE" line; the
//                                  name is the line after it.
//   XYZ (xyz)                      an atom count line, a comment line (the name), then
//                                  that many atom lines.
//   any other format Open Babel    read by Open Babel one structure at a time and written
//   reads                          back as an SDF record (format "sdf"), title as name.
#include <string>
#include <vector>

namespace overtone {

struct MoleculeFileRecord {
  int number = 0;      // 1-based position in the file
  std::string format;  // Open Babel format name of `text`
  std::string name;    // the record's own name (title line); empty when it has none
  std::string text;    // the record as a file of `format` holding just this molecule
  // The part that says what the molecule is: the text without its name line and (SDF)
  // without the data items after "M  END", so that a renamed or annotated copy of a
  // structure has the same content.
  std::string content;
};

// The records of a file, in file order. Throws Error for a missing or unreadable file or
// a format Open Babel does not know (format: Open Babel name; empty: from the extension).
std::vector<MoleculeFileRecord> read_records(const std::string& path, const std::string& format = "");

// Whether read_records splits this format as text (no chemistry is read while listing).
bool is_text_split_format(const std::string& format);

// Whether Open Babel reads this format (a name such as "sdf", "pdb", "cml").
bool is_readable_format(const std::string& format);

// The format name read_records uses for a path (lower-case extension unless given).
std::string record_format_of(const std::string& path, const std::string& format = "");

}  // namespace overtone
