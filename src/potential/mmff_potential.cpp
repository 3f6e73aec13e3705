#include "potential/mmff_potential.hpp"

#include <fmt/format.h>
#include <openbabel/forcefield.h>
#include <openbabel/mol.h>

#include <array>
#include <cctype>
#include <cmath>

#include "core/error.hpp"
#include "core/option_checks.hpp"
#include "molecule/openbabel_bridge.hpp"
#include "potential/detail_force_field_applicability.hpp"
#include "potential/detail_mmff_kernels.hpp"

namespace overtone {

namespace {

using detail::Dual;
using detail::Vec3;

std::string lower(std::string text) {
  for (auto& c : text) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  return text;
}

// Open Babel 3.1.1 hands out partial charges only as text with six significant digits
// (OBForceField::GetPartialCharges), too coarse for energies that must agree to 1e-10;
// its own typed copy of the molecule holds them as doubles but is a protected member.
// A pointer to that member, formed in a derived class, reads it without copying or
// changing anything (standard C++: the access check applies where the pointer is named).
struct TypedMoleculeAccess : OpenBabel::OBForceField {
  static OpenBabel::OBMol OpenBabel::OBForceField::*typed_molecule() { return &TypedMoleculeAccess::_mol; }
};

Vec3<double> position(const double* x, int atom) { return {x[3 * atom], x[3 * atom + 1], x[3 * atom + 2]}; }

void add(double* gradient, int atom, const Vec3<double>& g) {
  gradient[3 * atom] += g.x;
  gradient[3 * atom + 1] += g.y;
  gradient[3 * atom + 2] += g.z;
}

template <class S>
S& component(Vec3<S>& v, int c) {
  return c == 0 ? v.x : c == 1 ? v.y : v.z;
}

// Runs a term's closed-form gradient on dual numbers seeded with its 3K local
// coordinates: the lanes of the gradient are the rows of the term's Hessian.
template <int K, class Kernel>
void add_local_hessian(const std::array<int, K>& atoms, const double* x, Eigen::MatrixXd& hessian,
                       const Kernel& kernel) {
  constexpr int lanes = 3 * K;
  using D = Dual<lanes>;
  std::array<Vec3<D>, K> p;
  std::array<Vec3<D>, K> g;
  for (int k = 0; k < K; ++k) {
    p[k] = {D(x[3 * atoms[k]]), D(x[3 * atoms[k] + 1]), D(x[3 * atoms[k] + 2])};
    for (int c = 0; c < 3; ++c) component(p[k], c).d[3 * k + c] = 1.0;
    g[k] = {D(0.0), D(0.0), D(0.0)};
  }
  kernel(p.data(), g.data());
  for (int k = 0; k < K; ++k)
    for (int c = 0; c < 3; ++c) {
      const D& row = component(g[k], c);
      const Eigen::Index i = 3 * atoms[k] + c;
      for (int m = 0; m < lanes; ++m) hessian(i, 3 * atoms[m / 3] + m % 3) += row.d[m];
    }
}

// The same with one lane seeded by the direction: the lane of the gradient is H·v.
template <int K, class Kernel>
void add_local_hessian_product(const std::array<int, K>& atoms, const double* x, const double* v,
                               double* product, const Kernel& kernel) {
  using D = Dual<1>;
  std::array<Vec3<D>, K> p;
  std::array<Vec3<D>, K> g;
  for (int k = 0; k < K; ++k) {
    for (int c = 0; c < 3; ++c) {
      D& coordinate = component(p[k], c);
      coordinate = D(x[3 * atoms[k] + c]);
      coordinate.d[0] = v[3 * atoms[k] + c];
    }
    g[k] = {D(0.0), D(0.0), D(0.0)};
  }
  kernel(p.data(), g.data());
  for (int k = 0; k < K; ++k)
    for (int c = 0; c < 3; ++c) product[3 * atoms[k] + c] += component(g[k], c).d[0];
}

// Hessian block of a function of one distance: E'' ûûᵀ + (E'/r)(1 − ûûᵀ).
Eigen::Matrix3d radial_block(const Vec3<double>& d, double r, double first, double second) {
  const Eigen::Vector3d u(d.x / r, d.y / r, d.z / r);
  const Eigen::Matrix3d uu = u * u.transpose();
  return second * uu + (first / r) * (Eigen::Matrix3d::Identity() - uu);
}

void add_radial_hessian(Eigen::MatrixXd& hessian, int a, int b, const Eigen::Matrix3d& block) {
  hessian.block<3, 3>(3 * a, 3 * a) += block;
  hessian.block<3, 3>(3 * b, 3 * b) += block;
  hessian.block<3, 3>(3 * a, 3 * b) -= block;
  hessian.block<3, 3>(3 * b, 3 * a) -= block;
}

void add_radial_product(int a, int b, const Vec3<double>& d, double r, double first, double second,
                        const double* v, double* product) {
  const double ux = d.x / r, uy = d.y / r, uz = d.z / r;
  const double dx = v[3 * a] - v[3 * b], dy = v[3 * a + 1] - v[3 * b + 1], dz = v[3 * a + 2] - v[3 * b + 2];
  const double along = ux * dx + uy * dy + uz * dz;
  const double transverse = first / r;
  const double px = second * along * ux + transverse * (dx - along * ux);
  const double py = second * along * uy + transverse * (dy - along * uy);
  const double pz = second * along * uz + transverse * (dz - along * uz);
  product[3 * a] += px;
  product[3 * a + 1] += py;
  product[3 * a + 2] += pz;
  product[3 * b] -= px;
  product[3 * b + 1] -= py;
  product[3 * b + 2] -= pz;
}

}  // namespace

std::string canonical_mmff_variant(const std::string& name) {
  if (lower(name) == "mmff94") return "MMFF94";
  if (lower(name) == "mmff94s") return "MMFF94s";
  return {};
}

void MmffOptions::validate() const {
  option_checks::require_positive("mmff", "dielectric_constant", dielectric_constant);
}

MmffPotential::MmffPotential(const std::string& variant_name, const Molecule& molecule,
                             const MmffOptions& options)
    : options_(options) {
  options_.validate();
  const std::string canonical = canonical_mmff_variant(variant_name);
  if (canonical.empty())
    throw Error(fmt::format("'{}' is not an MMFF variant; expected MMFF94 or MMFF94s", variant_name));
  variant_ = canonical == "MMFF94" ? detail::MmffVariant::mmff94 : detail::MmffVariant::mmff94s;
  if (molecule.atom_count() == 0) throw Error("cannot set up a force field for a molecule without atoms");
  const detail::MmffParameters& parameters = detail::MmffParameters::installed(variant_);

  const OpenBabelLogCapture log;
  run_openbabel_on_one_thread();
  OpenBabel::OBForceField* prototype = OpenBabel::OBForceField::FindForceField(canonical);
  if (!prototype)
    throw Error(fmt::format("open babel on this machine does not provide the {} force field", canonical));
  std::unique_ptr<OpenBabel::OBForceField> field(prototype->MakeNewInstance());
  static std::ostream discard(nullptr);
  field->SetLogFile(&discard);
  field->SetLogLevel(OBFF_LOGLVL_NONE);
  OpenBabel::OBMol mol;
  openbabel_from_molecule(molecule, mol);
  const bool set_up = field->Setup(mol);
  applicability_warnings_ = detail::force_field_applicability_warnings(mol, canonical);
  OpenBabel::OBMol& typed = (*field).*TypedMoleculeAccess::typed_molecule();
  if (typed.NumAtoms() != molecule.atom_count()) {
    const std::string detail = log.first_message();
    throw Error(fmt::format("{} cannot assign atom types to {}{}", canonical, molecule.formula(),
                            detail.empty() ? "" : "; open babel says: " + detail));
  }
  // Types first: a wrong type explains a missing parameter better than the parameter does.
  detail::check_mmff_atom_types(typed, parameters);
  detail::MmffAssignmentOptions assignment;
  assignment.dielectric_constant = options_.dielectric_constant;
  terms_ = detail::assign_mmff_terms(typed, parameters, assignment);
  if (!set_up) {
    // Our assignment found every parameter but Open Babel's did not: say so rather than
    // run a force field Open Babel itself rejects.
    const std::string detail = log.first_message();
    throw Error(fmt::format("{} cannot assign parameters to {}{}", canonical, molecule.formula(),
                            detail.empty() ? "" : "; open babel says: " + detail));
  }
}

std::string MmffPotential::variant_name() const { return detail::mmff_variant_name(variant_); }

std::string MmffPotential::description() const {
  std::string text = variant_name() + " (compiled";
  if (options_.dielectric_constant != 1.0 || options_.distance_dependent_dielectric)
    text += fmt::format(", dielectric {}{}", options_.dielectric_constant,
                        options_.distance_dependent_dielectric ? "·r" : "");
  return text + ")";
}

template <bool Gradient>
double MmffPotential::evaluate(const Eigen::VectorXd& coordinates, double* gradient,
                               MmffTermEnergies* energies) const {
  namespace mmff = detail::mmff;
  const double* x = coordinates.data();
  MmffTermEnergies e;

  for (const auto& t : terms_.bonds) {
    const Vec3<double> d = position(x, t.a) - position(x, t.b);
    const double r = norm(d);
    const mmff::Radial radial = mmff::bond_radial(t, r);
    e.bond_stretch += radial.energy;
    if constexpr (Gradient) {
      add(gradient, t.a, scaled(d, radial.first / r));
      add(gradient, t.b, scaled(d, -radial.first / r));
    }
  }
  for (const auto& t : terms_.angles) {
    const Vec3<double> p[3] = {position(x, t.a), position(x, t.centre), position(x, t.c)};
    Vec3<double> g[3] = {};
    double stretch_bend = 0.0;
    e.angle_bend += mmff::angle_energy<Gradient>(t, p, g, stretch_bend);
    e.stretch_bend += stretch_bend;
    if constexpr (Gradient) {
      add(gradient, t.a, g[0]);
      add(gradient, t.centre, g[1]);
      add(gradient, t.c, g[2]);
    }
  }
  for (const auto& t : terms_.torsions) {
    const Vec3<double> p[4] = {position(x, t.a), position(x, t.b), position(x, t.c), position(x, t.d)};
    Vec3<double> g[4] = {};
    e.torsion += mmff::torsion_energy<Gradient>(t, p, g);
    if constexpr (Gradient) {
      add(gradient, t.a, g[0]);
      add(gradient, t.b, g[1]);
      add(gradient, t.c, g[2]);
      add(gradient, t.d, g[3]);
    }
  }
  for (const auto& t : terms_.out_of_plane) {
    const Vec3<double> p[4] = {position(x, t.a), position(x, t.centre), position(x, t.c), position(x, t.d)};
    Vec3<double> g[4] = {};
    e.out_of_plane += mmff::out_of_plane_energy<Gradient>(t, p, g);
    if constexpr (Gradient) {
      add(gradient, t.a, g[0]);
      add(gradient, t.centre, g[1]);
      add(gradient, t.c, g[2]);
      add(gradient, t.d, g[3]);
    }
  }
  const bool distance_dependent = options_.distance_dependent_dielectric;
  for (const auto& t : terms_.pairs) {
    const Vec3<double> d = position(x, t.a) - position(x, t.b);
    const mmff::PairRadial p = mmff::pair_radial<false>(t, std::sqrt(dot(d, d)), distance_dependent);
    e.van_der_waals += p.vdw_energy;
    e.electrostatic += p.coulomb_energy;
    if constexpr (Gradient) {
      const double factor = p.first * p.inverse_r;
      add(gradient, t.a, scaled(d, factor));
      add(gradient, t.b, scaled(d, -factor));
    }
  }
  if (energies) *energies = e;
  return e.total();
}

MmffTermEnergies MmffPotential::term_energies(const Eigen::VectorXd& x) const {
  if (x.size() != static_cast<Eigen::Index>(3 * atom_count()))
    throw Error(fmt::format("potential '{}' is for {} atoms but got a coordinate vector of length {}",
                            description(), atom_count(), x.size()));
  MmffTermEnergies energies;
  evaluate<false>(x, nullptr, &energies);
  return energies;
}

double MmffPotential::compute_energy(const Eigen::VectorXd& x) const {
  return evaluate<false>(x, nullptr, nullptr);
}

double MmffPotential::compute_energy_and_gradient(const Eigen::VectorXd& x, Eigen::VectorXd& gradient) const {
  gradient.setZero();
  return evaluate<true>(x, gradient.data(), nullptr);
}

Eigen::MatrixXd MmffPotential::compute_hessian(const Eigen::VectorXd& coordinates) const {
  namespace mmff = detail::mmff;
  const double* x = coordinates.data();
  const Eigen::Index n = coordinates.size();
  Eigen::MatrixXd hessian = Eigen::MatrixXd::Zero(n, n);
  for (const auto& t : terms_.bonds) {
    const Vec3<double> d = position(x, t.a) - position(x, t.b);
    const double r = norm(d);
    const mmff::Radial radial = mmff::bond_radial(t, r);
    add_radial_hessian(hessian, t.a, t.b, radial_block(d, r, radial.first, radial.second));
  }
  for (const auto& t : terms_.angles)
    add_local_hessian<3>({t.a, t.centre, t.c}, x, hessian, [&t](auto* p, auto* g) {
      decltype(p->x) stretch_bend;
      mmff::angle_energy<true>(t, p, g, stretch_bend);
    });
  for (const auto& t : terms_.torsions)
    add_local_hessian<4>({t.a, t.b, t.c, t.d}, x, hessian,
                         [&t](auto* p, auto* g) { mmff::torsion_energy<true>(t, p, g); });
  for (const auto& t : terms_.out_of_plane)
    add_local_hessian<4>({t.a, t.centre, t.c, t.d}, x, hessian,
                         [&t](auto* p, auto* g) { mmff::out_of_plane_energy<true>(t, p, g); });
  const bool distance_dependent = options_.distance_dependent_dielectric;
  for (const auto& t : terms_.pairs) {
    const Vec3<double> d = position(x, t.a) - position(x, t.b);
    const double r = norm(d);
    const mmff::PairRadial p = mmff::pair_radial<true>(t, r, distance_dependent);
    add_radial_hessian(hessian, t.a, t.b, radial_block(d, r, p.first, p.second));
  }
  // The dual-number rows are exact derivatives of the gradient, symmetric up to rounding.
  const Eigen::MatrixXd symmetric = 0.5 * (hessian + hessian.transpose());
  return symmetric;
}

Eigen::VectorXd MmffPotential::compute_hessian_vector_product(const Eigen::VectorXd& coordinates,
                                                              const Eigen::VectorXd& direction) const {
  namespace mmff = detail::mmff;
  const double* x = coordinates.data();
  const double* v = direction.data();
  Eigen::VectorXd product = Eigen::VectorXd::Zero(coordinates.size());
  double* out = product.data();
  for (const auto& t : terms_.bonds) {
    const Vec3<double> d = position(x, t.a) - position(x, t.b);
    const double r = norm(d);
    const mmff::Radial radial = mmff::bond_radial(t, r);
    add_radial_product(t.a, t.b, d, r, radial.first, radial.second, v, out);
  }
  for (const auto& t : terms_.angles)
    add_local_hessian_product<3>({t.a, t.centre, t.c}, x, v, out, [&t](auto* p, auto* g) {
      decltype(p->x) stretch_bend;
      mmff::angle_energy<true>(t, p, g, stretch_bend);
    });
  for (const auto& t : terms_.torsions)
    add_local_hessian_product<4>({t.a, t.b, t.c, t.d}, x, v, out,
                                 [&t](auto* p, auto* g) { mmff::torsion_energy<true>(t, p, g); });
  for (const auto& t : terms_.out_of_plane)
    add_local_hessian_product<4>({t.a, t.centre, t.c, t.d}, x, v, out,
                                 [&t](auto* p, auto* g) { mmff::out_of_plane_energy<true>(t, p, g); });
  const bool distance_dependent = options_.distance_dependent_dielectric;
  for (const auto& t : terms_.pairs) {
    const Vec3<double> d = position(x, t.a) - position(x, t.b);
    const double r = norm(d);
    const mmff::PairRadial p = mmff::pair_radial<true>(t, r, distance_dependent);
    add_radial_product(t.a, t.b, d, r, p.first, p.second, v, out);
  }
  return product;
}

}  // namespace overtone
