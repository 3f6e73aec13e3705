#include "potential/openbabel_potential.hpp"

#include <fmt/format.h>
#include <openbabel/atom.h>
#include <openbabel/forcefield.h>
#include <openbabel/generic.h>
#include <openbabel/mol.h>
#include <openbabel/oberror.h>
#include <openbabel/obfunctions.h>
#include <openbabel/obiter.h>
#include <openbabel/tokenst.h>

#include <algorithm>
#include <cctype>
#include <cmath>
#include <fstream>
#include <map>
#include <sstream>

#include "core/error.hpp"
#include "core/option_checks.hpp"
#include "core/units.hpp"
#include "molecule/openbabel_bridge.hpp"
#include "potential/detail_force_field_applicability.hpp"
#include "potential/detail_uff_torsions.hpp"

namespace overtone {

namespace {

std::string lower(std::string text) {
  for (auto& c : text) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  return text;
}

double kcal_mol_per_openbabel_unit(const std::string& unit, const std::string& name) {
  if (unit == "kcal/mol") return 1.0;
  if (unit == "kJ/mol") return units::kcal_mol_per_kj_mol;
  throw Error(fmt::format("force field {} reports energies in '{}', which this program does not convert",
                          name, unit));
}

struct MmffTypeProperties {
  int atomic_number = 0;
  int neighbours = 0;
};

// MMFF94's atom-type table (mmffprop.par, shipped with Open Babel): element and
// number of bonded neighbours of each numeric type.
std::map<int, MmffTypeProperties> read_mmff_type_properties() {
  std::ifstream stream;
  OpenBabel::OpenDatafile(stream, "mmffprop.par", "BABEL_DATADIR");
  std::map<int, MmffTypeProperties> table;
  std::string line;
  while (std::getline(stream, line)) {
    if (line.empty() || line[0] == '*' || line[0] == '$') continue;
    std::istringstream fields(line);
    int type = 0;
    MmffTypeProperties properties;
    if (fields >> type >> properties.atomic_number >> properties.neighbours) table[type] = properties;
  }
  return table;
}

// Open Babel's MMFF94 falls back to a default type when no rule matches (for example
// hexavalent sulfur) and then computes energies with unsuitable parameters. A type
// whose element or neighbour count disagrees with the atom is such a fallback.
void check_mmff_atom_types(OpenBabel::OBForceField& field, OpenBabel::OBMol& mol, const std::string& name) {
  static const std::map<int, MmffTypeProperties> table = read_mmff_type_properties();
  if (table.empty() || !field.GetAtomTypes(mol)) return;
  FOR_ATOMS_OF_MOL(atom, mol) {
    auto* data = dynamic_cast<OpenBabel::OBPairData*>(atom->GetData("FFAtomType"));
    if (!data) continue;
    const int type = std::atoi(data->GetValue().c_str());
    const auto found = table.find(type);
    const int neighbours = static_cast<int>(atom->GetExplicitDegree());
    if (found == table.end() || found->second.atomic_number != static_cast<int>(atom->GetAtomicNum()) ||
        found->second.neighbours != neighbours)
      throw Error(fmt::format(
          "force field {} has no atom type for atom {} ({} with {} bonded neighbours); "
          "try UFF or a potential file",
          name, atom->GetIdx(), element_symbol(static_cast<int>(atom->GetAtomicNum())), neighbours));
  }
}

}  // namespace

const std::vector<std::string>& supported_openbabel_force_fields() {
  static const std::vector<std::string> names{"MMFF94", "MMFF94s", "UFF", "GAFF", "Ghemical"};
  return names;
}

std::string canonical_openbabel_force_field(const std::string& name) {
  for (const auto& known : supported_openbabel_force_fields())
    if (lower(known) == lower(name)) return known;
  return {};
}

void OpenBabelPotentialOptions::validate() const {
  option_checks::require_positive("open babel potential", "out_of_plane_difference_step_angstrom",
                                  out_of_plane_difference_step_angstrom);
  option_checks::require_positive("open babel potential", "linear_cusp_slope_kcal_mol_per_angstrom",
                                  linear_cusp_slope_kcal_mol_per_angstrom);
  linear_limit.validate();
}

OpenBabelPotential::OpenBabelPotential(const std::string& force_field_name, const Molecule& molecule,
                                       const OpenBabelPotentialOptions& options)
    : options_(options) {
  options_.validate();
  name_ = canonical_openbabel_force_field(force_field_name);
  if (name_.empty())
    throw Error(
        fmt::format("'{}' is not a supported force field; choose one of MMFF94, MMFF94s, UFF, GAFF, "
                    "Ghemical or give a potential file",
                    force_field_name));
  atom_count_ = molecule.atom_count();
  if (atom_count_ == 0) throw Error("cannot set up a force field for a molecule without atoms");

  const OpenBabelLogCapture log;
  run_openbabel_on_one_thread();

  OpenBabel::OBForceField* prototype = OpenBabel::OBForceField::FindForceField(name_);
  if (!prototype)
    throw Error(fmt::format("open babel on this machine does not provide the {} force field", name_));
  field_.reset(prototype->MakeNewInstance());
  // A new instance starts with an unset log stream and level; silence it explicitly.
  static std::ostream discard(nullptr);
  field_->SetLogFile(&discard);
  field_->SetLogLevel(OBFF_LOGLVL_NONE);
  mol_ = std::make_unique<OpenBabel::OBMol>();
  openbabel_from_molecule(molecule, *mol_);
  if (!field_->Setup(*mol_)) {
    const std::string detail = log.first_message();
    std::string elements;
    for (const auto& atom : molecule.atoms) elements += element_symbol(atom.atomic_number) + " ";
    throw Error(fmt::format("force field {} cannot assign atom types or parameters to {} ({}){}", name_,
                            molecule.formula(), elements.substr(0, elements.size() - 1),
                            detail.empty() ? "" : "; open babel says: " + detail));
  }
  kcal_mol_per_unit_ = kcal_mol_per_openbabel_unit(field_->GetUnit(), name_);
  setup_warnings_ = detail::force_field_applicability_warnings(*mol_, name_);
  // Every bonded triple carries an angle term in these force fields.
  std::vector<detail::BondedTriple> triples;
  FOR_ATOMS_OF_MOL(centre, *mol_) {
    std::vector<int> neighbours;
    FOR_NBORS_OF_ATOM(neighbour, &*centre) neighbours.push_back(static_cast<int>(neighbour->GetIdx()) - 1);
    for (std::size_t a = 0; a < neighbours.size(); ++a)
      for (std::size_t b = a + 1; b < neighbours.size(); ++b)
        triples.push_back({neighbours[a], static_cast<int>(centre->GetIdx()) - 1, neighbours[b]});
  }
  linear_limit_ = detail::LinearLimit(std::move(triples), options_.linear_limit);
  if (name_ == "MMFF94" || name_ == "MMFF94s") check_mmff_atom_types(*field_, *mol_, name_);
  if (name_ == "UFF") {
    // Open Babel's UFF torsions about a central bond with an sp atom read a stale or
    // uninitialized barrier (detail_uff_torsions.hpp); the whole torsion term is ours.
    if (!field_->GetAtomTypes(*mol_)) throw Error("force field UFF did not report its atom types");
    uff_torsions_ = detail::uff_torsions(*mol_);
    replaces_torsions_ = true;
  }

  // Atoms taking part in out-of-plane terms: those whose displacement changes the
  // out-of-plane energy at a generic geometry.
  const Eigen::VectorXd x = molecule.coordinates();
  constexpr double probe_angstrom = 0.05;
  const Eigen::Vector3d probe_direction = Eigen::Vector3d(0.6, -0.48, 0.64).normalized();
  const double reference = openbabel_out_of_plane_energy(x);
  for (std::size_t atom = 0; atom < atom_count_; ++atom) {
    Eigen::VectorXd displaced = x;
    displaced.segment<3>(3 * static_cast<Eigen::Index>(atom)) += probe_angstrom * probe_direction;
    if (openbabel_out_of_plane_energy(displaced) != reference)
      out_of_plane_atoms_.push_back(static_cast<int>(atom));
  }
  if (!out_of_plane_atoms_.empty()) set_up_out_of_plane_model(x);
  load_coordinates(x);  // leave Open Babel at the input geometry, not the last probe
}

void OpenBabelPotential::set_up_out_of_plane_model(const Eigen::VectorXd& x) {
  using detail::OutOfPlaneForm;
  OutOfPlaneForm form;
  if (name_ == "MMFF94" || name_ == "MMFF94s")
    form = OutOfPlaneForm::squared_wilson_angle;
  else if (name_ == "UFF")
    form = OutOfPlaneForm::cosine_series;
  else {
    // The model covers only MMFF94's and UFF's forms; GAFF and Ghemical keep the
    // differenced gradient they have always had.
    out_of_plane_note_ = name_ + "'s out-of-plane terms have no fitted model; differenced";
    return;
  }
  if (!options_.analytic_out_of_plane) {
    out_of_plane_note_ = "analytic out-of-plane gradient turned off by option; differenced";
    return;
  }
  // Candidate centres: atoms in out-of-plane terms with exactly three neighbours. A
  // candidate without terms of its own (a neighbour of a real centre) fits to zero.
  std::vector<detail::OutOfPlaneCentre> centres;
  for (const int atom : out_of_plane_atoms_) {
    OpenBabel::OBAtom* centre = mol_->GetAtom(atom + 1);
    if (centre->GetExplicitDegree() != 3) continue;
    detail::OutOfPlaneCentre entry;
    entry.atom = atom;
    int k = 0;
    FOR_NBORS_OF_ATOM(neighbour, centre) entry.neighbours[k++] = static_cast<int>(neighbour->GetIdx()) - 1;
    centres.push_back(entry);
  }
  if (centres.empty()) {
    out_of_plane_note_ =
        "no atom in out-of-plane terms has three neighbours, so the model does not apply; differenced";
    return;
  }
  const detail::OutOfPlaneFit fit = detail::fit_out_of_plane_model(
      form, centres, x, [this](const Eigen::VectorXd& y) { return openbabel_out_of_plane_energy(y); });
  out_of_plane_fit_residual_ = fit.relative_residual;
  if (!fit.accepted) {
    out_of_plane_note_ = fit.reason + "; differenced";
    return;
  }
  out_of_plane_model_ = std::make_unique<detail::OutOfPlaneModel>(fit.model);
}

double OpenBabelPotential::modelled_out_of_plane_energy(const Eigen::VectorXd& x) const {
  if (!out_of_plane_model_)
    throw Error(fmt::format("the {} potential has no analytic out-of-plane model ({})", name_,
                            out_of_plane_note_.empty() ? "no out-of-plane terms" : out_of_plane_note_));
  return out_of_plane_model_->energy(x);
}

OpenBabelPotential::~OpenBabelPotential() = default;

std::string OpenBabelPotential::description() const { return name_ + " (Open Babel)"; }

std::vector<std::string> OpenBabelPotential::warnings() const {
  std::vector<std::string> all = setup_warnings_;
  if (!cusp_angles_.empty()) {
    std::string angles;
    for (const auto& angle : cusp_angles_) angles += (angles.empty() ? "" : ", ") + angle;
    all.push_back(fmt::format(
        "{}'s energy has a cusp where the angle {} {} exactly linear: the force field's reference for "
        "such an angle is not 180°, so a linear arrangement there is a kinked maximum, not a minimum, and "
        "bending "
        "frequencies through it are not defined (the force field's own minimum is slightly bent)",
        name_, angles, cusp_angles_.size() == 1 ? "is" : "are"));
  }
  return all;
}

void OpenBabelPotential::load_coordinates(const Eigen::VectorXd& x) const {
  std::copy(x.data(), x.data() + x.size(), mol_->GetCoordinates());
  field_->SetCoordinates(*mol_);
}

double OpenBabelPotential::openbabel_out_of_plane_energy(const Eigen::VectorXd& x) const {
  load_coordinates(x);
  return field_->E_OOP(false) * kcal_mol_per_unit_;
}

double OpenBabelPotential::uff_torsion_energy(const Eigen::VectorXd& x) const {
  if (!replaces_torsions_) throw Error("only the UFF potential evaluates its own torsion term");
  return detail::uff_torsion_energy(uff_torsions_, x, nullptr) * kcal_mol_per_unit_;
}

double OpenBabelPotential::openbabel_torsion_energy(const Eigen::VectorXd& x) const {
  load_coordinates(x);
  return field_->E_Torsion(true) * kcal_mol_per_unit_;
}

double OpenBabelPotential::raw_openbabel_energy(const Eigen::VectorXd& x) const {
  load_coordinates(x);
  return field_->Energy(true) * kcal_mol_per_unit_;
}

bool OpenBabelPotential::uses_linear_limit(const Eigen::VectorXd& x) const {
  return !linear_limit_.degenerate_triples(x).empty();
}

double OpenBabelPotential::compute_energy(const Eigen::VectorXd& x) const { return evaluate(x, nullptr); }

Eigen::VectorXd OpenBabelPotential::raw_openbabel_gradient(const Eigen::VectorXd& x) const {
  load_coordinates(x);
  field_->Energy(true);
  const double* forces = field_->GetGradientPtr();
  return -kcal_mol_per_unit_ * Eigen::Map<const Eigen::VectorXd>(forces, x.size());
}

double OpenBabelPotential::compute_energy_and_gradient(const Eigen::VectorXd& x,
                                                       Eigen::VectorXd& gradient) const {
  return evaluate(x, &gradient);
}

double OpenBabelPotential::evaluate(const Eigen::VectorXd& x, Eigen::VectorXd* gradient) const {
  const std::vector<int> degenerate = linear_limit_.degenerate_triples(x);
  if (degenerate.empty()) return ordinary_evaluation(x, gradient, TermGroup::all);
  // Only the terms that depend on bond angles (angle, stretch–bend, torsion) go wrong at a
  // linear triple; the rest are evaluated once, at x.
  Eigen::VectorXd bending_gradient;
  double slope = 0.0;
  double energy = linear_limit_.evaluate(
      x, degenerate,
      [this](const Eigen::VectorXd& y, Eigen::VectorXd* g) {
        return ordinary_evaluation(y, g, TermGroup::angle_dependent);
      },
      gradient ? &bending_gradient : nullptr, &slope);
  energy += ordinary_evaluation(x, gradient, TermGroup::angle_independent);
  if (gradient) *gradient += bending_gradient;
  if (std::abs(slope) > options_.linear_cusp_slope_kcal_mol_per_angstrom)
    for (const int t : degenerate) {
      const auto& triple = linear_limit_.triples()[static_cast<std::size_t>(t)];
      // A triple folded to 0° (a wild trial step of an optimizer) has a cusp in every
      // force field; only the ones at 180° say something about the force field's reference.
      const Eigen::Vector3d centre = x.segment<3>(3 * triple.centre);
      if ((x.segment<3>(3 * triple.first) - centre).dot(x.segment<3>(3 * triple.second) - centre) >= 0.0)
        continue;
      std::string text;
      for (const int atom : {triple.first, triple.centre, triple.second})
        text += (text.empty() ? "" : "–") +
                element_symbol(static_cast<int>(mol_->GetAtom(atom + 1)->GetAtomicNum())) +
                std::to_string(atom + 1);
      cusp_angles_.insert(text);
    }
  load_coordinates(x);  // leave Open Babel at the geometry asked for
  return energy;
}

double OpenBabelPotential::ordinary_evaluation(const Eigen::VectorXd& x, Eigen::VectorXd* gradient,
                                               TermGroup group) const {
  load_coordinates(x);
  // Open Babel 3.1's MMFF94 takes about 100 times longer for Energy(false) than for
  // Energy(true) (measured: 56 ms against 0.56 ms for acetaldehyde), and UFF's angle
  // energy differs between the two paths, so the gradient is always computed along.
  double* forces = field_->GetGradientPtr();
  const Eigen::Index n = x.size();
  const bool angle_dependent = group != TermGroup::angle_independent;
  const bool angle_independent = group != TermGroup::angle_dependent;
  double energy = 0.0;
  if (group == TermGroup::all && !replaces_torsions_) {
    energy = field_->Energy(true);
  } else {
    // Energy(true) is exactly the sum of the seven terms (checked for every supported
    // force field), so they can be taken in groups; UFF's torsions are this program's.
    std::fill(forces, forces + n, 0.0);
    if (angle_independent)
      energy +=
          field_->E_Bond(true) + field_->E_OOP(true) + field_->E_VDW(true) + field_->E_Electrostatic(true);
    if (angle_dependent) {
      energy += field_->E_Angle(true) + field_->E_StrBnd(true);
      energy += replaces_torsions_ ? detail::uff_torsion_energy(uff_torsions_, x, nullptr)
                                   : field_->E_Torsion(true);
    }
  }
  energy *= kcal_mol_per_unit_;
  if (!gradient) return energy;
  *gradient = -kcal_mol_per_unit_ * Eigen::Map<const Eigen::VectorXd>(forces, n);
  if (replaces_torsions_ && angle_dependent) {
    Eigen::VectorXd torsion_gradient = Eigen::VectorXd::Zero(n);
    detail::uff_torsion_energy(uff_torsions_, x, &torsion_gradient);
    *gradient += kcal_mol_per_unit_ * torsion_gradient;
  }
  if (!angle_independent) return energy;
  if (out_of_plane_atoms_.empty()) return energy;

  // Remove Open Babel's out-of-plane contribution, then add the model's or the
  // differenced one.
  std::fill(forces, forces + n, 0.0);
  field_->E_OOP(true);
  *gradient += kcal_mol_per_unit_ * Eigen::Map<const Eigen::VectorXd>(forces, n);
  if (out_of_plane_model_) {
    out_of_plane_model_->add_gradient(x, *gradient);
    return energy;
  }
  const double step = options_.out_of_plane_difference_step_angstrom;
  Eigen::VectorXd displaced = x;
  for (const int atom : out_of_plane_atoms_)
    for (int axis = 0; axis < 3; ++axis) {
      const Eigen::Index k = 3 * atom + axis;
      displaced[k] = x[k] + step;
      const double plus = openbabel_out_of_plane_energy(displaced);
      displaced[k] = x[k] - step;
      const double minus = openbabel_out_of_plane_energy(displaced);
      displaced[k] = x[k];
      (*gradient)[k] += (plus - minus) / (2.0 * step);
    }
  load_coordinates(x);
  return energy;
}

}  // namespace overtone
