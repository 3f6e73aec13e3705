#pragma once
// Chooses a potential from what the user typed: a force-field name (case-insensitive)
// or the path of a potential file shipped in potentials/ or written by the user
// (valence force field or Taylor expansion, both TOML).
//   MMFF94, MMFF94s                      compiled (MmffPotential; Open Babel types it)
//   MMFF94-openbabel, MMFF94s-openbabel  the same force field evaluated by Open Babel
//   UFF, GAFF, Ghemical                  evaluated by Open Babel
#include <memory>
#include <string>

#include "core/molecule.hpp"
#include "potential/potential.hpp"

namespace overtone {

inline constexpr const char* default_force_field = "MMFF94";
// Appended to an MMFF variant to ask for Open Babel's evaluation of it.
inline constexpr const char* openbabel_variant_suffix = "-openbabel";

// "MMFF94-openbabel" / "MMFF94s-openbabel" as spelled canonically for a case-insensitive
// match of either, else empty.
std::string openbabel_mmff_name(const std::string& name);

// Throws Error when the text is neither a supported force-field name nor a readable
// potential file, or when the potential cannot be set up for this molecule.
std::unique_ptr<Potential> make_potential(const std::string& name_or_path, const Molecule& molecule);

}  // namespace overtone
