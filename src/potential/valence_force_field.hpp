#pragma once
// Valence force fields read from a hand-written TOML file (format: docs/valence-force-field.md).
//
// Contract of the returned Potential:
//   V(x) = Σ_terms V_t(q(x)), each term a function of a few internal coordinates q
//   (distances, angles, linear bends, dihedrals, out-of-plane coordinates) of the
//   molecule the file was bound to. Energies kcal/mol, coordinates Å, gradient dE/dx in
//   kcal/mol/Å, Hessian in kcal/mol/Å² (analytic: forward-mode automatic differentiation
//   per term, exact to round-off). has_analytic_hessian() is true.
//   Force constants in the file are Taylor derivatives: a term with powers p_k of the
//   displacements Δq_k and constant f contributes f · Π_k Δq_k^{p_k} / p_k!, so published
//   f_rr, f_rr', f_rrθ, f_rrrr enter unchanged (see the document for the factors).
#include <memory>
#include <string>
#include <vector>

#include "core/molecule.hpp"
#include "potential/potential.hpp"

namespace overtone {

// Loads a valence force field from a TOML file and binds it to the molecule. Throws Error if the
// file is missing/malformed (message names the file, the key and the line where toml++ gives it),
// or does not match the molecule (atom count or element sequence differs: say which atom).
std::unique_ptr<Potential> load_valence_force_field(const std::string& path, const Molecule& molecule);

// The same from TOML text already in memory; `origin` names it in error messages.
std::unique_ptr<Potential> parse_valence_force_field(const std::string& toml_text, const std::string& origin,
                                                     const Molecule& molecule);

// What a force-field file says about itself (the [source] table and the header keys), for
// reports and for tests that compare with the values the cited source publishes.
struct ValenceForceFieldSource {
  std::string title;
  std::vector<std::string> elements;  // element symbols in atom order
  std::string citation;               // published source of the constants
  std::string status;                 // "confirmed", "partly confirmed" or "from memory"
  std::string notes;
  std::string isotopologue;  // the isotopologue reported wavenumbers refer to, e.g. "1H2-16O"
  std::vector<double> reported_harmonic_wavenumbers_cm1;  // as published for this force field; may be empty
  // Fixed partial charges (elementary charges, atom order) for dipole intensities; empty
  // when the file lists none (optional top-level key `charges`).
  std::vector<double> partial_charges;
};

// Largest partial charge a file may give (elementary charges): no atom in a neutral or
// singly charged molecule carries more than a few (common practice, no source).
inline constexpr double max_partial_charge_e = 4.0;

// Reads and validates the file without binding it to a molecule; throws Error like
// load_valence_force_field.
ValenceForceFieldSource read_valence_force_field_source(const std::string& path);
// The same from TOML text already in memory (every check of the file format runs, none
// touches the disk); `origin` names the text in error messages.
ValenceForceFieldSource parse_valence_force_field_source(const std::string& toml_text,
                                                         const std::string& origin);

}  // namespace overtone
