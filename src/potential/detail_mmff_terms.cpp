#include "potential/detail_mmff_terms.hpp"

#include <fmt/format.h>
#include <openbabel/atom.h>
#include <openbabel/bond.h>
#include <openbabel/elements.h>
#include <openbabel/mol.h>
#include <openbabel/obiter.h>
#include <openbabel/ring.h>

#include <cmath>
#include <cstdlib>

#include "core/error.hpp"
#include "core/molecule.hpp"
#include "core/option_checks.hpp"
#include "core/units.hpp"

namespace overtone::detail {

namespace {

using OpenBabel::OBAtom;
using OpenBabel::OBBond;
using OpenBabel::OBMol;

// Halgren V, Table VI: Z (ends) and C (centre) of the empirical angle rule, by element.
double angle_rule_z(int atomic_number) {
  switch (atomic_number) {
    case 1:
      return 1.395;
    case 6:
      return 2.494;
    case 7:
      return 2.711;
    case 8:
      return 3.045;
    case 9:
      return 2.847;
    case 14:
      return 2.350;
    case 15:
      return 2.350;
    case 16:
      return 2.980;
    case 17:
      return 2.909;
    case 35:
      return 3.017;
    case 53:
      return 3.086;
    default:
      return 0.0;
  }
}

double angle_rule_c(int atomic_number) {
  switch (atomic_number) {
    case 5:
      return 0.704;
    case 6:
      return 1.016;
    case 7:
      return 1.113;
    case 8:
      return 1.337;
    case 14:
      return 0.811;
    case 15:
      return 1.068;
    case 16:
      return 1.249;
    case 17:
      return 1.078;
    case 33:
      return 0.825;
    default:
      return 0.0;
  }
}

// Halgren V, Table X: U and V of the empirical torsion rules, by element.
double torsion_rule_u(int atomic_number) {
  switch (atomic_number) {
    case 6:
    case 7:
    case 8:
      return 2.0;
    case 14:
    case 15:
    case 16:
      return 1.25;
    default:
      return 0.0;
  }
}

// Covalent radii of the empirical bond rule (Halgren V, p. 625, after Blom and Haaland,
// J. Mol. Struct. 128, 21 (1985), with Halgren's values for H and C); other elements
// take Open Babel's covalent radius, as Open Babel does.
double rule_covalent_radius(int atomic_number) {
  switch (atomic_number) {
    case 1:
      return 0.33;
    case 5:
      return 0.81;
    case 6:
      return 0.77;
    case 7:
      return 0.73;
    case 8:
      return 0.72;
    case 9:
      return 0.74;
    case 13:
      return 1.22;
    case 14:
      return 1.15;
    case 15:
      return 1.09;
    case 16:
      return 1.03;
    case 17:
      return 1.01;
    case 31:
      return 1.19;
    case 32:
      return 1.20;
    case 33:
      return 1.20;
    case 34:
      return 1.16;
    case 35:
      return 1.15;
    case 44:
      return 1.46;
    case 50:
      return 1.40;
    case 51:
      return 1.41;
    case 52:
      return 1.35;
    case 53:
      return 1.33;
    case 81:
      return 1.51;
    case 82:
      return 1.53;
    case 83:
      return 1.55;
    default:
      return OpenBabel::OBElements::GetCovalentRad(static_cast<unsigned>(atomic_number));
  }
}

// Periodic-table row as the default stretch-bend table counts it (0 for H and He).
int element_row(const OBAtom* atom) {
  const unsigned z = atom->GetAtomicNum();
  int row = 0;
  for (const unsigned last_of_row : {2u, 10u, 18u, 36u, 54u, 86u})
    if (z > last_of_row) ++row;
  return row;
}

class Typing {
 public:
  Typing(OBMol& mol, const MmffParameters& parameters) : mol_(mol), parameters_(parameters) {}

  static int type(const OBAtom* atom) { return std::atoi(const_cast<OBAtom*>(atom)->GetType()); }

  // Open Babel's lookups answer 0 (and false) for a type missing from mmffprop.par.
  MmffTypeProperties properties(int type) const {
    const MmffTypeProperties* found = parameters_.properties(type);
    return found ? *found : MmffTypeProperties{};
  }
  int coordination(int t) const { return properties(t).coordination; }
  int valence(int t) const { return properties(t).valence; }
  int multiple_bond(int t) const { return properties(t).multiple_bond; }
  bool pi_lone_pair(int t) const { return properties(t).pi_lone_pair != 0; }
  bool aromatic(int t) const { return properties(t).aromatic != 0; }
  bool linear(int t) const { return properties(t).linear != 0; }
  bool single_between_multiple(int t) const { return properties(t).single_between_multiple != 0; }

  // Both atoms in one ring of the smallest set of smallest rings (as Open Babel's
  // OBForceField::IsInSameRing, which therefore misses some bridged rings).
  bool in_same_ring(const OBAtom* a, const OBAtom* b) const {
    for (OpenBabel::OBRing* ring : mol_.GetSSSR()) {
      bool has_a = false, has_b = false;
      for (const int index : ring->_path) {
        if (static_cast<unsigned>(index) == a->GetIdx()) has_a = true;
        if (static_cast<unsigned>(index) == b->GetIdx()) has_b = true;
      }
      if (has_a && has_b) return true;
    }
    return false;
  }

  // Halgren V, p. 620: 1 for a single bond between two sbmb or two aromatic types.
  int bond_class(OBAtom* a, OBAtom* b) const {
    OBBond* bond = mol_.GetBond(a, b);
    if (bond->GetBondOrder() != 1 || bond->IsAromatic()) return 0;
    if (aromatic(type(a)) && aromatic(type(b))) return 1;
    if (single_between_multiple(type(a)) && single_between_multiple(type(b))) return 1;
    return 0;
  }

  bool in_small_ring(OBAtom* a, OBAtom* b, OBAtom* c, int size) const {
    return a->IsInRingSize(size) && b->IsInRingSize(size) && c->IsInRingSize(size) && in_same_ring(a, c);
  }

  int angle_class(OBAtom* a, OBAtom* b, OBAtom* c) const {
    const int sum = bond_class(a, b) + bond_class(b, c);
    if (in_small_ring(a, b, c, 3)) return sum == 0 ? 3 : sum == 1 ? 5 : 6;
    if (in_small_ring(a, b, c, 4)) return sum == 0 ? 4 : sum == 1 ? 7 : 8;
    return sum;
  }

  int stretch_bend_class(OBAtom* a, OBAtom* b, OBAtom* c) const {
    const int ab = bond_class(a, b);
    const int bc = bond_class(b, c);
    const bool inverse = type(a) > type(c);
    // One single-between-multiple bond: which end carries it decides the class, in the
    // orientation of the parameter line (lower type first).
    auto oriented = [&](int first, int second) {
      if (ab) return inverse ? second : first;
      if (bc) return inverse ? first : second;
      return -1;
    };
    switch (angle_class(a, b, c)) {
      case 1: {
        const int k = oriented(1, 2);
        return k >= 0 ? k : 3;
      }
      case 2:
        return 3;
      case 3:
        return 5;
      case 4:
        return 4;
      case 5: {
        const int k = oriented(6, 7);
        return k >= 0 ? k : 8;
      }
      case 6:
        return 8;
      case 7: {
        const int k = oriented(9, 10);
        return k >= 0 ? k : 11;
      }
      case 8:
        return 11;
      default:
        return 0;
    }
  }

  // Halgren IV, p. 609.
  int torsion_class(OBAtom* a, OBAtom* b, OBAtom* c, OBAtom* d) const {
    const int ab = bond_class(a, b);
    const int bc = bond_class(b, c);
    const int cd = bond_class(c, d);
    if (bc == 1) return 1;
    if (a->IsInRingSize(4) && b->IsInRingSize(4) && c->IsInRingSize(4) && d->IsInRingSize(4))
      if (in_same_ring(a, b) && in_same_ring(b, c) && in_same_ring(c, d)) return 4;
    OBBond* central = mol_.GetBond(b, c);
    if (central->GetBondOrder() == 1 && !central->IsAromatic() && (ab || cd)) return 2;
    if (a->IsInRingSize(5) && b->IsInRingSize(5) && c->IsInRingSize(5) && d->IsInRingSize(5)) {
      if (type(a) != 1 && type(b) != 1 && type(c) != 1 && type(d) != 1) return 0;
      for (OpenBabel::OBRing* ring : mol_.GetSSSR()) {
        if (ring->IsAromatic() || ring->Size() != 5) continue;
        if (ring->IsMember(a) && ring->IsMember(b) && ring->IsMember(c) && ring->IsMember(d)) return 5;
      }
    }
    return 0;
  }

  // Halgren V, p. 625 (with Open Babel's reading, see the header).
  double rule_bond_length(OBAtom* a, OBAtom* b) const {
    const int za = static_cast<int>(a->GetAtomicNum());
    const int zb = static_cast<int>(b->GetAtomicNum());
    double ra = rule_covalent_radius(za);
    double rb = rule_covalent_radius(zb);
    const double xa = OpenBabel::OBElements::GetAllredRochowElectroNeg(static_cast<unsigned>(za));
    const double xb = OpenBabel::OBElements::GetAllredRochowElectroNeg(static_cast<unsigned>(zb));
    const double c = (za == 1 || zb == 1) ? 0.050 : 0.085;
    const int ta = type(a), tb = type(b);
    auto hybridization = [&](int t) {
      if (multiple_bond(t == 3 ? 1 : 0)) return 1;  // Open Babel's test; always false
      const int m = multiple_bond(t);
      return (m == 1 || m == 2) ? 2 : 3;
    };
    const int ha = hybridization(ta), hb = hybridization(tb);
    OBBond* bond = a->GetBond(b);
    int order = static_cast<int>(bond->GetBondOrder());
    if (multiple_bond(ta) == 1 && multiple_bond(tb) == 1) order = 4;
    if ((multiple_bond(ta) == 1 && multiple_bond(tb) == 2) ||
        (multiple_bond(ta) == 2 && multiple_bond(tb) == 1))
      order = 5;
    if (bond->IsAromatic()) order = (!pi_lone_pair(ta) && !pi_lone_pair(tb)) ? 4 : 5;
    switch (order) {
      case 5:
        ra -= 0.04;
        rb -= 0.04;
        break;
      case 4:
        ra -= 0.075;
        rb -= 0.075;
        break;
      case 3:
        ra -= 0.17;
        rb -= 0.17;
        break;
      case 2:
        ra -= 0.10;
        rb -= 0.10;
        break;
      case 1:
        if (ha == 1) ra -= 0.08;
        if (ha == 2) ra -= 0.03;
        if (hb == 1) rb -= 0.08;
        if (hb == 2) rb -= 0.03;
        break;
      default:
        break;
    }
    return ra + rb - c * std::pow(std::fabs(xa - xb), 1.4) - 0.008;
  }

  double bond_length(OBAtom* a, OBAtom* b) const {
    const MmffBondParameter* p = parameters_.bond(bond_class(a, b), type(a), type(b));
    return p ? p->length : rule_bond_length(a, b);
  }

 private:
  OBMol& mol_;
  const MmffParameters& parameters_;
};

std::string describe(const OBAtom* atom) {
  return fmt::format("{} ({}, type {})", atom->GetIdx(),
                     element_symbol(static_cast<int>(atom->GetAtomicNum())), Typing::type(atom));
}

int index0(const OBAtom* atom) { return static_cast<int>(atom->GetIdx()) - 1; }

// Bonds (Halgren I; no step-down; empirical rule of Halgren V, p. 625, eq. 4).
void add_bond_terms(OBMol& mol, const Typing& typing, const MmffParameters& parameters, MmffTerms& terms) {
  const char* name = mmff_variant_name(parameters.variant());
  auto type = [](const OBAtom* atom) { return Typing::type(atom); };
  FOR_BONDS_OF_MOL(bond, mol) {
    OBAtom* a = bond->GetBeginAtom();
    OBAtom* b = bond->GetEndAtom();
    MmffBondTerm term;
    term.a = index0(a);
    term.b = index0(b);
    const int bond_class = typing.bond_class(a, b);
    if (const MmffBondParameter* p = parameters.bond(bond_class, type(a), type(b))) {
      term.force_constant = p->force_constant;
      term.length = p->length;
    } else {
      const MmffBondRuleParameter* rule =
          parameters.bond_rule(static_cast<int>(a->GetAtomicNum()), static_cast<int>(b->GetAtomicNum()));
      if (!rule)
        throw Error(
            fmt::format("{} has no bond-stretch parameter for atoms {} – {} (bond class {}) and no "
                        "empirical-rule reference for this pair of elements",
                        name, describe(a), describe(b), bond_class));
      term.length = typing.rule_bond_length(a, b);
      term.force_constant =
          rule->reference_force_constant * std::pow(rule->reference_length / term.length, 6);
      terms.empirical_notes.push_back(fmt::format("bond {}-{}: empirical rule", a->GetIdx(), b->GetIdx()));
    }
    terms.bonds.push_back(term);
  }
}

// Angles and stretch–bends (Halgren I, p. 513 step-down; Halgren V, p. 627 empirical
// rule). Open Babel lists each angle as (centre, end, end), 0-based.
void add_angle_terms(OBMol& mol, const Typing& typing, const MmffParameters& parameters, MmffTerms& terms) {
  const char* name = mmff_variant_name(parameters.variant());
  auto type = [](const OBAtom* atom) { return Typing::type(atom); };
  FOR_ANGLES_OF_MOL(angle, mol) {
    OBAtom* b = mol.GetAtom((*angle)[0] + 1);
    OBAtom* a = mol.GetAtom((*angle)[1] + 1);
    OBAtom* c = mol.GetAtom((*angle)[2] + 1);
    const int ta = type(a), tb = type(b), tc = type(c);
    const int angle_class = typing.angle_class(a, b, c);
    MmffAngleTerm term;
    term.a = index0(a);
    term.centre = index0(b);
    term.c = index0(c);
    term.linear = typing.linear(tb);

    const MmffAngleParameter* p = parameters.angle(angle_class, ta, tb, tc);
    for (const int level : {3, 4, 5}) {
      if (p) break;
      p = parameters.angle(angle_class, parameters.equivalent_type(ta, level), tb,
                           parameters.equivalent_type(tc, level));
    }
    if (p) {
      term.force_constant = p->force_constant;
      term.angle_deg = p->angle_deg;
    } else {
      // Default reference angle (Halgren V, p. 627), by the centre's coordination.
      term.force_constant = 0.0;
      term.angle_deg = 120.0;
      if (typing.coordination(tb) == 4) term.angle_deg = 109.45;
      if (typing.coordination(tb) == 2 && b->GetAtomicNum() == 8) term.angle_deg = 105.0;
      if (b->GetAtomicNum() > 10) term.angle_deg = 95.0;
      if (typing.linear(tb)) term.angle_deg = 180.0;
      if (typing.coordination(tb) == 3 && typing.valence(tb) == 3 && !typing.multiple_bond(tb))
        term.angle_deg = b->GetAtomicNum() == 7 ? 107.0 : 92.0;
      if (typing.in_small_ring(a, b, c, 3)) term.angle_deg = 60.0;
      if (typing.in_small_ring(a, b, c, 4)) term.angle_deg = 90.0;
    }
    if (term.force_constant == 0.0) {
      // Halgren V, eq. 6: ka = β Z_a C_b Z_c / ((r_ab + r_bc) θ0²) exp(−2D), θ0 in rad.
      const double za = angle_rule_z(static_cast<int>(a->GetAtomicNum()));
      const double cb = angle_rule_c(static_cast<int>(b->GetAtomicNum()));
      const double zc = angle_rule_z(static_cast<int>(c->GetAtomicNum()));
      const double r_ab = typing.bond_length(a, b);
      const double r_bc = typing.bond_length(b, c);
      const double sum = r_ab + r_bc;
      const double d = (r_ab - r_bc) / (sum * sum);
      double beta = 1.75;
      if (typing.in_small_ring(a, b, c, 4)) beta *= 0.85;
      if (typing.in_small_ring(a, b, c, 3)) beta *= 0.05;
      const double theta0_rad = term.angle_deg * units::pi / 180.0;
      term.force_constant = beta * za * cb * zc * std::exp(-2.0 * d) / (sum * theta0_rad * theta0_rad);
      terms.empirical_notes.push_back(
          fmt::format("angle {}-{}-{}: empirical force constant", a->GetIdx(), b->GetIdx(), c->GetIdx()));
    }

    if (!term.linear) {
      term.stretch_bend = true;
      const int stretch_bend_class = typing.stretch_bend_class(a, b, c);
      if (const MmffStretchBendParameter* s = parameters.stretch_bend(stretch_bend_class, ta, tb, tc)) {
        const bool forward = ta == s->first;
        term.stretch_bend_a = forward ? s->first_constant : s->second_constant;
        term.stretch_bend_c = forward ? s->second_constant : s->first_constant;
      } else {
        const int ra = element_row(a), rb = element_row(b), rc = element_row(c);
        const MmffStretchBendParameter* fallback = parameters.default_stretch_bend(ra, rb, rc);
        if (!fallback)
          throw Error(
              fmt::format("{} has no stretch-bend parameter for atoms {} – {} – {} (class {}) and no "
                          "default for periodic-table rows {}-{}-{}",
                          name, describe(a), describe(b), describe(c), stretch_bend_class, ra, rb, rc));
        const bool forward = ra == fallback->first;
        term.stretch_bend_a = forward ? fallback->first_constant : fallback->second_constant;
        term.stretch_bend_c = forward ? fallback->second_constant : fallback->first_constant;
      }
      term.length_a = typing.bond_length(a, b);
      term.length_c = typing.bond_length(b, c);
    }
    terms.angles.push_back(term);
  }
}

// Torsions (Halgren I, p. 513 step-down 3-2-2-5, 5-2-2-3, 5-2-2-5; Halgren V, p. 631
// empirical rules as Open Babel applies them, see the header).
void add_torsion_terms(OBMol& mol, const Typing& typing, const MmffParameters& parameters, MmffTerms& terms) {
  auto type = [](const OBAtom* atom) { return Typing::type(atom); };
  FOR_TORSIONS_OF_MOL(torsion, mol) {
    OBAtom* a = mol.GetAtom((*torsion)[0] + 1);
    OBAtom* b = mol.GetAtom((*torsion)[1] + 1);
    OBAtom* c = mol.GetAtom((*torsion)[2] + 1);
    OBAtom* d = mol.GetAtom((*torsion)[3] + 1);
    const int ta = type(a), tb = type(b), tc = type(c), td = type(d);
    const int torsion_class = typing.torsion_class(a, b, c, d);
    // Lines are stored in one orientation; Open Babel picks it by the canonical index
    // of Halgren's parameter files (MA = 136).
    const long order =
        (tc * 2515456L + tb * 18496L + td * 136L + ta) - (tb * 2515456L + tc * 18496L + ta * 136L + td);
    const int first = order >= 0 ? ta : td, second = order >= 0 ? tb : tc;
    const int third = order >= 0 ? tc : tb, fourth = order >= 0 ? td : ta;
    auto eq = [&](int t, int level) { return parameters.equivalent_type(t, level); };
    const MmffTorsionParameter* p = parameters.torsion(torsion_class, first, second, third, fourth);
    if (!p) p = parameters.torsion(torsion_class, eq(first, 3), second, third, eq(fourth, 5));
    if (!p) p = parameters.torsion(torsion_class, eq(first, 5), second, third, eq(fourth, 3));
    if (!p) p = parameters.torsion(torsion_class, eq(first, 5), second, third, eq(fourth, 5));

    MmffTorsionTerm term;
    term.a = index0(a);
    term.b = index0(b);
    term.c = index0(c);
    term.d = index0(d);
    if (p) {
      term.v1 = p->v1;
      term.v2 = p->v2;
      term.v3 = p->v3;
    } else {
      // Rule (a): no torsion about a linear centre.
      if (typing.linear(tb) || typing.linear(tc)) continue;
      const double ub = torsion_rule_u(static_cast<int>(b->GetAtomicNum()));
      const double uc = torsion_rule_u(static_cast<int>(c->GetAtomicNum()));
      double pi_bc = 0.0, beta = 6.0;
      if (b->GetBond(c)->IsAromatic()) {
        // Rule (b).
        pi_bc = (!typing.pi_lone_pair(tb) && !typing.pi_lone_pair(tc)) ? 0.5 : 0.3;
        const int vb = typing.valence(tb), vc = typing.valence(tc);
        beta = ((vb == 3 && vc == 4) || (vb == 4 && vc == 3)) ? 3.0 : 6.0;
      } else {
        // Rule (c), applied by Open Babel to every non-aromatic central bond.
        OBBond* ab = a->GetBond(b);
        pi_bc = (typing.multiple_bond(tb) == 2 && typing.multiple_bond(tc) == 2 && !ab->IsAromatic() &&
                 ab->GetBondOrder() == 2)
                    ? 1.0
                    : 0.4;
      }
      term.v2 = beta * pi_bc * std::sqrt(ub * uc);
      terms.empirical_notes.push_back(fmt::format("torsion {}-{}-{}-{}: empirical rule", a->GetIdx(),
                                                  b->GetIdx(), c->GetIdx(), d->GetIdx()));
    }
    // A torsion with no barrier contributes nothing anywhere (also where it is undefined,
    // about a linear centre), so it is left out.
    if (term.v1 == 0.0 && term.v2 == 0.0 && term.v3 == 0.0) continue;
    terms.torsions.push_back(term);
  }
}

// Out-of-plane bends (Halgren I, eq. 6): three Wilson angles per trivalent centre whose
// type has a line in the table, matched in any order of the neighbours; the centre's
// default line (*-b-*-*) applies only when no specific line has matched before it.
void add_out_of_plane_terms(OBMol& mol, const MmffParameters& parameters, MmffTerms& terms) {
  auto type = [](const OBAtom* atom) { return Typing::type(atom); };
  FOR_ATOMS_OF_MOL(atom, mol) {
    OBAtom* b = &*atom;
    const int tb = type(b);
    const auto& lines = parameters.out_of_plane(tb);
    if (lines.empty()) continue;
    OBAtom* n[3] = {nullptr, nullptr, nullptr};
    int count = 0;
    FOR_NBORS_OF_ATOM(neighbour, b) {
      if (count < 2)
        n[count++] = &*neighbour;
      else {
        n[2] = &*neighbour;  // Open Babel keeps the last of any further neighbours
        ++count;
      }
    }
    if (count < 3) continue;
    const int t0 = type(n[0]), t1 = type(n[1]), t2 = type(n[2]);
    bool found = false;
    auto add_three = [&](double koop) {
      // Out-of-plane atoms d, then a, then c (planes a-b-c, d-b-c, a-b-d).
      terms.out_of_plane.push_back({index0(n[0]), index0(b), index0(n[1]), index0(n[2]), koop});
      terms.out_of_plane.push_back({index0(n[2]), index0(b), index0(n[1]), index0(n[0]), koop});
      terms.out_of_plane.push_back({index0(n[0]), index0(b), index0(n[2]), index0(n[1]), koop});
    };
    for (const MmffOutOfPlaneParameter& line : lines) {
      const int x = line.first, y = line.third, z = line.fourth;
      const bool match = (t0 == x && t1 == y && t2 == z) || (t1 == x && t0 == y && t2 == z) ||
                         (t1 == x && t2 == y && t0 == z) || (t2 == x && t1 == y && t0 == z) ||
                         (t0 == x && t2 == y && t1 == z) || (t2 == x && t0 == y && t1 == z);
      if (match) {
        found = true;
        add_three(line.force_constant);
      }
      if (x == 0 && y == 0 && z == 0 && !found) add_three(line.force_constant);
    }
  }
}

// Non-bonded pairs: Open Babel's pair list (atoms neither bonded nor 1-3).
// Buffered 14-7 combination rules (Halgren II, eqs. 3–5 and the donor–acceptor
// scalings DARAD = 0.8, DAEPS = 0.5); Coulomb with 1-4 pairs scaled by 0.75.
void add_pair_terms(OBMol& mol, const MmffParameters& parameters, double dielectric_constant,
                    MmffTerms& terms) {
  const char* name = mmff_variant_name(parameters.variant());
  auto type = [](const OBAtom* atom) { return Typing::type(atom); };
  constexpr double electrostatic_kcal_angstrom_per_mol_e2 = 332.0716;  // Halgren I, eq. 8
  FOR_PAIRS_OF_MOL(pair, mol) {
    OBAtom* a = mol.GetAtom((*pair)[0]);
    OBAtom* b = mol.GetAtom((*pair)[1]);
    const MmffVdwParameter* pa = parameters.vdw(type(a));
    const MmffVdwParameter* pb = parameters.vdw(type(b));
    if (!pa || !pb)
      throw Error(fmt::format("{} has no van der Waals parameters for atom {}", name, describe(pa ? b : a)));
    MmffPairTerm term;
    term.a = index0(a);
    term.b = index0(b);
    const double r_aa = pa->scale_a * std::pow(pa->polarizability, 0.25);
    const double r_bb = pb->scale_a * std::pow(pb->polarizability, 0.25);
    const double sqrt_a = std::sqrt(pa->polarizability / pa->electron_number);
    const double sqrt_b = std::sqrt(pb->polarizability / pb->electron_number);
    using Role = MmffVdwParameter::Role;
    const double epsilon_numerator =
        181.16 * pa->scale_g * pb->scale_g * pa->polarizability * pb->polarizability / (sqrt_a + sqrt_b);
    if (pa->role == Role::donor || pb->role == Role::donor) {
      // With a donor the radii combine arithmetically (B = 0); a donor–acceptor pair has
      // its radius scaled after ε is formed from the unscaled one.
      const double radius = 0.5 * (r_aa + r_bb);
      const double r6 = std::pow(radius, 6);
      const bool donor_acceptor = (pa->role == Role::donor && pb->role == Role::acceptor) ||
                                  (pb->role == Role::donor && pa->role == Role::acceptor);
      term.vdw_epsilon = (donor_acceptor ? 0.5 : 1.0) * epsilon_numerator * (1.0 / r6);
      term.vdw_radius = donor_acceptor ? 0.8 * radius : radius;
    } else {
      const double gamma = (r_aa - r_bb) / (r_aa + r_bb);
      term.vdw_radius = 0.5 * (r_aa + r_bb) * (1.0 + 0.2 * (1.0 - std::exp(-12.0 * gamma * gamma)));
      term.vdw_epsilon = epsilon_numerator * (1.0 / std::pow(term.vdw_radius, 6));
    }
    term.vdw_radius7 = std::pow(term.vdw_radius, 7);
    double qq = electrostatic_kcal_angstrom_per_mol_e2 * a->GetPartialCharge() * b->GetPartialCharge() /
                dielectric_constant;
    if (qq != 0.0 && a->IsOneFour(b)) qq *= 0.75;
    term.charge_product = qq;
    terms.pairs.push_back(term);
  }
}

}  // namespace

void check_mmff_atom_types(OBMol& typed, const MmffParameters& parameters) {
  const char* name = mmff_variant_name(parameters.variant());
  FOR_ATOMS_OF_MOL(atom, typed) {
    const int type = Typing::type(&*atom);
    const MmffTypeProperties* p = parameters.properties(type);
    const int z = static_cast<int>(atom->GetAtomicNum());
    const int neighbours = static_cast<int>(atom->GetExplicitDegree());
    if (!p)
      throw Error(
          fmt::format("{} has no atom type for atom {} ({} with {} bonded neighbours); try UFF or a "
                      "potential file",
                      name, atom->GetIdx(), element_symbol(z), neighbours));
    if (p->atomic_number != z || p->coordination != neighbours)
      throw Error(
          fmt::format("{} has no atom type for atom {} ({} with {} bonded neighbours): the typing rules "
                      "gave type {}, which is for {} with {} neighbours; try UFF or a potential file",
                      name, atom->GetIdx(), element_symbol(z), neighbours, type,
                      element_symbol(p->atomic_number), p->coordination));
  }
}

void MmffAssignmentOptions::validate() const {
  option_checks::require_positive("mmff assignment", "dielectric_constant", dielectric_constant);
}

MmffTerms assign_mmff_terms(OBMol& mol, const MmffParameters& parameters,
                            const MmffAssignmentOptions& options) {
  options.validate();
  const Typing typing(mol, parameters);
  MmffTerms terms;
  FOR_ATOMS_OF_MOL(atom, mol) {
    terms.atom_types.push_back(Typing::type(&*atom));
    terms.partial_charges.push_back(atom->GetPartialCharge());
  }
  add_bond_terms(mol, typing, parameters, terms);
  add_angle_terms(mol, typing, parameters, terms);
  add_torsion_terms(mol, typing, parameters, terms);
  add_out_of_plane_terms(mol, parameters, terms);
  add_pair_terms(mol, parameters, options.dielectric_constant, terms);
  return terms;
}

}  // namespace overtone::detail
