#pragma once
// Chooses a potential from what the user typed: an Open Babel force-field name
// (MMFF94, MMFF94s, UFF, GAFF, Ghemical; case-insensitive) or the path of a potential
// file shipped in potentials/ or written by the user (valence force field or Taylor
// expansion, both TOML).
#include <memory>
#include <string>

#include "core/molecule.hpp"
#include "potential/potential.hpp"

namespace overtone {

inline constexpr const char* default_force_field = "MMFF94";

// Throws Error when the text is neither a supported force-field name nor a readable
// potential file, or when the potential cannot be set up for this molecule.
std::unique_ptr<Potential> make_potential(const std::string& name_or_path, const Molecule& molecule);

}  // namespace overtone
