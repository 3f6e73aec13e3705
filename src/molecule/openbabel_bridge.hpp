#pragma once
// Conversions between the project's Molecule and Open Babel's OBMol. Kept out of the
// public headers of other stages so that only the molecule and potential stages see
// Open Babel types.
#include <openbabel/mol.h>

#include <string>

#include "core/molecule.hpp"

namespace overtone {

// Copies elements, isotopes (as mass numbers with Open Babel's exact masses), formal
// charges, positions and bonds. Throws Error for an atom of unknown element.
Molecule molecule_from_openbabel(OpenBabel::OBMol& mol);

// Builds an OBMol with the molecule's atoms, charges and bonds (bond orders as stored;
// when the molecule has no bonds, connectivity and orders are perceived from the
// geometry). Isotopes are left out unless asked for: force-field typing does not
// depend on mass and Open Babel's typing rules fail on isotope-labelled atoms.
void openbabel_from_molecule(const Molecule& molecule, OpenBabel::OBMol& mol, bool with_isotopes = false);

// Open Babel's builder can leave angles at exactly 180° where they do not belong (O–P–C
// in a phosphonate) and puts sp centres at exactly 180°, where an angle's derivative is
// 0/0. This moves every atom by at most 0.01 Å (a fixed pattern, so that runs repeat);
// an optimization afterwards removes the displacement.
void shake_off_exact_angles(OpenBabel::OBMol& mol);

// Open Babel's force fields run OpenMP parallel loops over a few dozen terms. Thread
// start-up, barriers and (with more threads than free cores, as under a parallel test
// run) spin-waiting cost far more than the loops (measured: 83% of instructions in
// libgomp for acetaldehyde), so every Open Babel force-field call runs on one thread.
void run_openbabel_on_one_thread();

// Open Babel writes warnings and errors to one global log. This keeps them off the
// user's terminal (nothing below the command line prints) and gives back what was
// logged while an instance lived, so error messages can quote Open Babel. The sink
// lives for the whole process because Open Babel keeps a raw pointer to it.
class OpenBabelLogCapture {
 public:
  OpenBabelLogCapture();
  // The first meaningful line logged since construction (banner lines skipped).
  std::string first_message() const;

 private:
  std::size_t start_ = 0;
};

}  // namespace overtone
