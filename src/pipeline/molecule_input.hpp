#pragma once
// The MOLECULE of every command: a file Open Babel reads, a SMILES string, or a
// Taylor-expansion potential file (docs/taylor-expansion-format.md), which carries its
// reference geometry, elements and usually the masses its normal coordinates were
// computed with, and then is the natural potential as well.
#include <string>
#include <vector>

#include "core/molecule.hpp"
#include "molecule/read_molecule.hpp"
#include "potential/potential.hpp"
#include "potential/taylor_expansion_potential.hpp"

namespace overtone {

struct MoleculeInput {
  std::string path_or_smiles;  // a path, or the SMILES string itself when is_smiles
  bool is_smiles = false;
  std::string format;  // Open Babel format name; empty: from the extension
  std::vector<IsotopeChoice> isotopes;
  // A 2-D drawing or a structure with implicit hydrogens: completed (default) or refused.
  IncompleteStructurePolicy incomplete_structures = IncompleteStructurePolicy::complete;
};

struct LoadedMolecule {
  Molecule molecule;
  // The input is a Taylor-expansion file: the potential to use unless another is named.
  bool is_taylor_expansion = false;
  std::vector<std::string> warnings;
};

// Reads the molecule. A path ending in ".toml" whose format key names a Taylor expansion
// gives the file's reference geometry, elements and masses (reference.masses_da; the most
// abundant isotopes when absent), then the isotope choices; anything else goes to
// read_molecule. Throws Error as read_molecule and read_taylor_expansion do.
LoadedMolecule load_molecule(const MoleculeInput& input);

// The molecule a Taylor expansion describes: its elements and reference positions, with
// the file's masses where it lists them (an isotope's mass number is recorded when the
// mass is that isotope's). Adds a warning per mass that is no isotope's.
Molecule molecule_from_taylor_expansion(const TaylorExpansionData& data, const std::string& origin,
                                        std::vector<std::string>& warnings);

// Masses agree when they differ by at most this (Da). A mass difference δm moves a
// wavenumber by at most ½(δm/m)ω̃: 1e-5 Da moves a 4000 cm⁻¹ X–H stretch by 0.02 cm⁻¹,
// below any comparison with a measured band; a file written with average instead of
// isotopic masses (H 1.00794 against 1.00783) differs by 1e-4 Da and moves it by 0.2 cm⁻¹.
inline constexpr double mass_agreement_da = 1e-5;

// Warnings about a potential and the molecule it is used with: a Taylor expansion whose
// masses differ from the molecule's at an atom that carries no chosen isotope (its
// normal coordinates stay those of the file's masses, the harmonic analysis uses the
// molecule's, so the wavenumbers move away from the file's listed ones). Empty for every
// other potential.
std::vector<std::string> potential_mass_warnings(const Potential& potential, const Molecule& molecule);

}  // namespace overtone
