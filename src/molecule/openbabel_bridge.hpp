#pragma once
// Conversions between the project's Molecule and Open Babel's OBMol. Kept out of the
// public headers of other stages so that only the molecule and potential stages see
// Open Babel types.
#include <openbabel/mol.h>

#include "core/molecule.hpp"

namespace overtone {

// Copies elements, isotopes (as mass numbers with Open Babel's exact masses), formal
// charges, positions and bonds. Throws Error for an atom of unknown element.
Molecule molecule_from_openbabel(OpenBabel::OBMol& mol);

// Builds an OBMol with the molecule's atoms, charges and bonds (bond orders as stored;
// when the molecule has no bonds, connectivity and orders are perceived from the
// geometry).
void openbabel_from_molecule(const Molecule& molecule, OpenBabel::OBMol& mol);

}  // namespace overtone
