#pragma once
// Where a molecule lies outside what the general force fields were parameterized for, in
// plain words for the report. Shared by every potential that sets a general force field
// up through Open Babel (its bridge and the compiled MMFF94/MMFF94s).
#include <string>
#include <vector>

namespace OpenBabel {
class OBMol;
}

namespace overtone::detail {

// Where the molecule lies outside what the general force fields were parameterized for:
// closed-shell molecules, and for MMFF94/MMFF94s, GAFF and Ghemical neutral organic
// molecules and singly charged organic ions (Halgren, J. Comput. Chem. 17, 490 (1996) for
// MMFF94; from memory for the others). Read from Open Babel's perception of the molecule
// as bound (explicit hydrogens, formal charges as given): an odd electron count, an atom
// below its typical valence (Open Babel's GetTypicalValence: a radical or carbene centre)
// or a spin multiplicity above one make it open-shell; a net charge beyond ±1, an atom
// charged beyond ±1, or an ion without carbon make it an ion those fields were not fitted
// to. Open Babel's UFF has no electrostatic term, so there any net charge is simply
// ignored, which is said instead.
// `name` is the force field's display name ("MMFF94", "UFF", ...).
std::vector<std::string> force_field_applicability_warnings(OpenBabel::OBMol& mol, const std::string& name);

}  // namespace overtone::detail
