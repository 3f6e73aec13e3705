#include "potential/detail_uff_torsions.hpp"

#include <fmt/format.h>
#include <openbabel/atom.h>
#include <openbabel/bond.h>
#include <openbabel/forcefield.h>
#include <openbabel/generic.h>
#include <openbabel/mol.h>
#include <openbabel/obiter.h>
#include <openbabel/obutil.h>
#include <openbabel/tokenst.h>

#include <cmath>
#include <fstream>
#include <map>
#include <sstream>
#include <string>
#include <unsupported/Eigen/AutoDiff>

#include "core/error.hpp"
#include "core/units.hpp"
#include "potential/detail_internal_coordinates.hpp"

namespace overtone::detail {

namespace {

struct UffTypeParameters {
  int coordination = 1;      // 1 linear, 2 trigonal or resonant, 3 tetrahedral, … (third character)
  double sp3_barrier = 0.0;  // V_i, kcal/mol
  double sp2_barrier = 0.0;  // U_j, kcal/mol
};

// The "param" lines of UFF.prm: type, r1, θ0, x1, D1, ζ, Z1, Vi, Uj, Xi, Hard, Radius. The
// coordination is read from the type's third character as Open Babel does (an unknown
// character counts as linear).
std::map<std::string, UffTypeParameters> read_uff_parameters() {
  std::ifstream stream;
  OpenBabel::OpenDatafile(stream, "UFF.prm", "BABEL_DATADIR");
  std::map<std::string, UffTypeParameters> table;
  std::string line;
  while (std::getline(stream, line)) {
    if (line.rfind("param", 0) != 0) continue;
    std::istringstream fields(line);
    std::string keyword, type;
    double values[11];
    fields >> keyword >> type;
    bool complete = true;
    for (double& value : values) complete = complete && static_cast<bool>(fields >> value);
    if (!complete || type.size() < 2) continue;
    UffTypeParameters parameters;
    parameters.sp3_barrier = values[6];
    parameters.sp2_barrier = values[7];
    const char coordination = type.size() > 2 ? type[2] : '\0';
    switch (coordination) {
      case '2':
      case 'R':
        parameters.coordination = 2;
        break;
      case '3':
        parameters.coordination = 3;
        break;
      case '4':
      case '5':
      case '6':
      case '7':
        parameters.coordination = coordination - '0';
        break;
      default:
        parameters.coordination = 1;
    }
    table[type] = parameters;
  }
  return table;
}

std::string uff_type(OpenBabel::OBAtom* atom) {
  auto* data = dynamic_cast<OpenBabel::OBPairData*>(atom->GetData("FFAtomType"));
  if (!data) throw Error(fmt::format("atom {} has no UFF atom type", atom->GetIdx()));
  return data->GetValue();
}

bool in_oxygen_group(int atomic_number) {
  return atomic_number == 8 || atomic_number == 16 || atomic_number == 34 || atomic_number == 52 ||
         atomic_number == 84;
}

// V_i of an oxygen-group sp3 atom in a sp3–sp3 torsion (Open Babel's UFF exception).
double oxygen_group_sp3_barrier(int atomic_number) { return atomic_number == 8 ? 2.0 : 6.8; }

// The force field's zero test for a barrier (Open Babel's IsNearZero default).
constexpr double zero_barrier = 2e-6;

}  // namespace

std::vector<UffTorsion> uff_torsions(OpenBabel::OBMol& mol) {
  static const std::map<std::string, UffTypeParameters> table = read_uff_parameters();
  auto parameters_of = [&](OpenBabel::OBAtom* atom) {
    const std::string type = uff_type(atom);
    const auto found = table.find(type);
    if (found == table.end()) throw Error(fmt::format("UFF.prm has no parameters for atom type '{}'", type));
    return found->second;
  };
  std::vector<UffTorsion> torsions;
  FOR_BONDS_OF_MOL(central, mol) {
    OpenBabel::OBAtom* b = central->GetBeginAtom();
    OpenBabel::OBAtom* c = central->GetEndAtom();
    const UffTypeParameters pb = parameters_of(b);
    const UffTypeParameters pc = parameters_of(c);
    double bond_order = central->GetBondOrder();
    if (central->IsAromatic()) bond_order = 1.5;
    if (central->IsAmide()) bond_order = 1.41;
    const int zb = static_cast<int>(b->GetAtomicNum());
    const int zc = static_cast<int>(c->GetAtomicNum());

    UffTorsion term;
    double phase_degrees = 0.0;
    if (pb.coordination == 3 && pc.coordination == 3) {
      term.periodicity = 3;
      phase_degrees = 60.0;
      double vb = pb.sp3_barrier;
      double vc = pc.sp3_barrier;
      if (in_oxygen_group(zb)) {
        vb = oxygen_group_sp3_barrier(zb);
        term.periodicity = 2;
        phase_degrees = 90.0;
      }
      if (in_oxygen_group(zc)) {
        vc = oxygen_group_sp3_barrier(zc);
        term.periodicity = 2;
        phase_degrees = 90.0;
      }
      term.barrier = 0.5 * OpenBabel::KCAL_TO_KJ * std::sqrt(vb * vc);
    } else if (pb.coordination == 2 && pc.coordination == 2) {
      term.periodicity = 2;
      phase_degrees = 180.0;
      term.barrier = 0.5 * OpenBabel::KCAL_TO_KJ * 5.0 * std::sqrt(pb.sp2_barrier * pc.sp2_barrier) *
                     (1.0 + 4.18 * std::log(bond_order));
    } else if ((pb.coordination == 2 && pc.coordination == 3) ||
               (pb.coordination == 3 && pc.coordination == 2)) {
      term.periodicity = 6;
      phase_degrees = 0.0;
      term.barrier = 0.5 * OpenBabel::KCAL_TO_KJ * 1.0;
      if ((pc.coordination == 3 && in_oxygen_group(zc)) || (pb.coordination == 3 && in_oxygen_group(zb))) {
        term.periodicity = 2;
        phase_degrees = 90.0;
      }
    } else {
      continue;  // an sp atom, a metal centre, …: no torsion in UFF
    }
    if (std::abs(term.barrier) < zero_barrier) continue;
    term.cos_n_phase = std::cos(term.periodicity * phase_degrees * units::pi / 180.0);
    FOR_NBORS_OF_ATOM(a, b) {
      if (&*a == c) continue;
      FOR_NBORS_OF_ATOM(d, c) {
        if (&*d == b || &*d == &*a) continue;
        term.atoms = {static_cast<int>(a->GetIdx()) - 1, static_cast<int>(b->GetIdx()) - 1,
                      static_cast<int>(c->GetIdx()) - 1, static_cast<int>(d->GetIdx()) - 1};
        torsions.push_back(term);
      }
    }
  }
  return torsions;
}

double uff_torsion_energy(const std::vector<UffTorsion>& torsions, const Eigen::VectorXd& x,
                          Eigen::VectorXd* gradient) {
  using Derivatives = Eigen::Matrix<double, 12, 1>;
  using Scalar = Eigen::AutoDiffScalar<Derivatives>;
  double energy = 0.0;
  for (const UffTorsion& t : torsions) {
    if (!gradient) {
      Vec3<double> p[4];
      for (int k = 0; k < 4; ++k) {
        const int g = 3 * t.atoms[static_cast<std::size_t>(k)];
        p[k] = {x[g], x[g + 1], x[g + 2]};
      }
      const double phi = dihedral_angle(p[0], p[1], p[2], p[3]);
      energy += t.barrier * (1.0 - t.cos_n_phase * std::cos(t.periodicity * phi));
      continue;
    }
    Vec3<Scalar> p[4];
    for (int k = 0; k < 4; ++k) {
      const int g = 3 * t.atoms[static_cast<std::size_t>(k)];
      p[k] = {Scalar(x[g], 12, 3 * k), Scalar(x[g + 1], 12, 3 * k + 1), Scalar(x[g + 2], 12, 3 * k + 2)};
    }
    using std::cos;
    const Scalar e =
        t.barrier *
        (1.0 - t.cos_n_phase * cos(double(t.periodicity) * dihedral_angle(p[0], p[1], p[2], p[3])));
    energy += e.value();
    if (!e.derivatives().allFinite()) continue;  // collinear atoms: no defined direction
    for (int k = 0; k < 4; ++k)
      gradient->segment<3>(3 * t.atoms[static_cast<std::size_t>(k)]) += e.derivatives().segment<3>(3 * k);
  }
  return energy;
}

}  // namespace overtone::detail
