#pragma once
// MMFF94 and MMFF94s parameter tables as Open Babel installs them (mmff*.par, the files
// published with Halgren, J. Comput. Chem. 17, 490–641 (1996), parts I–V, and Halgren,
// J. Comput. Chem. 20, 720 (1999) for MMFF94s), read by our own parser. Not part of
// the promised API (namespace detail); used by MmffPotential.
//
// Lookups reproduce Open Babel 3.1.1's (src/forcefields/forcefieldmmff94.cpp): a table
// is searched in file order and the first line that matches wins; bond, angle and
// stretch-bend lines match in either atom order, torsion lines only in the order
// asked for (the caller chooses the order by Open Babel's canonical-index rule).
#include <array>
#include <cstdint>
#include <string>
#include <unordered_map>
#include <vector>

namespace overtone::detail {

enum class MmffVariant { mmff94, mmff94s };

// One line of mmffprop.par (Halgren V, Table I).
struct MmffTypeProperties {
  int atomic_number = 0;
  int coordination = 0;   // crd: number of bonded neighbours
  int valence = 0;        // val
  int pi_lone_pair = 0;   // pilp
  int multiple_bond = 0;  // mltb: 1 double/triple partner in a delocalized system, 2 double, 3 triple
  int aromatic = 0;       // arom
  int linear = 0;         // lin: bends about this centre use the linear form
  int single_between_multiple = 0;  // sbmb
};

struct MmffBondParameter {
  double force_constant = 0.0;  // kb, md/Å
  double length = 0.0;          // r0, Å
};

// mmffbndk.par: reference length and force constant for the empirical bond rule
// (Halgren V, eq. 4: kb = kb_ref (r_ref / r0)^6).
struct MmffBondRuleParameter {
  double reference_length = 0.0;
  double reference_force_constant = 0.0;
};

struct MmffAngleParameter {
  double force_constant = 0.0;  // ka, md Å/rad²; 0 asks for the empirical rule
  double angle_deg = 0.0;       // θ0
};

// Stretch–bend (mmffstbn.par) or default by periodic-table rows (mmffdfsb.par): the
// first constant couples the first-listed end's bond, the second the other's.
struct MmffStretchBendParameter {
  int first = 0;                 // type (or row) listed first in the file line
  double first_constant = 0.0;   // md/rad
  double second_constant = 0.0;  // md/rad
};

struct MmffTorsionParameter {
  double v1 = 0.0, v2 = 0.0, v3 = 0.0;  // kcal/mol
};

// One line of mmffoop.par / mmffs_oop.par: centre type and the three neighbour types
// (0 in all three = any neighbours).
struct MmffOutOfPlaneParameter {
  int first = 0, centre = 0, third = 0, fourth = 0;
  double force_constant = 0.0;  // koop, md Å/rad²
};

// One line of mmffvdw.par (Halgren II): α_i, N_i, A_i, G_i and the donor/acceptor class.
struct MmffVdwParameter {
  double polarizability = 0.0;   // α, Å³
  double electron_number = 0.0;  // N (effective number of valence electrons)
  double scale_a = 0.0;          // A
  double scale_g = 0.0;          // G
  enum class Role { none, donor, acceptor } role = Role::none;
};

class MmffParameters {
 public:
  // The tables of one variant from Open Babel's data directory, read once per process.
  // Throws Error when a file cannot be opened or read.
  static const MmffParameters& installed(MmffVariant variant);

  // Reads the installed files of the variant (prefer installed(), which caches).
  explicit MmffParameters(MmffVariant variant);

  MmffVariant variant() const { return variant_; }
  // nullptr when the type is not in mmffprop.par.
  const MmffTypeProperties* properties(int type) const;
  // Step-down equivalence of mmffdef.par (Halgren I, Table IV): level 1–5; a type
  // without a line is its own equivalent.
  int equivalent_type(int type, int level) const;

  const MmffBondParameter* bond(int bond_class, int a, int b) const;
  const MmffBondRuleParameter* bond_rule(int atomic_number_a, int atomic_number_b) const;
  const MmffAngleParameter* angle(int angle_class, int a, int centre, int c) const;
  const MmffStretchBendParameter* stretch_bend(int stretch_bend_class, int a, int centre, int c) const;
  const MmffStretchBendParameter* default_stretch_bend(int row_a, int row_centre, int row_c) const;
  const MmffTorsionParameter* torsion(int torsion_class, int a, int b, int c, int d) const;
  // Out-of-plane lines in file order, grouped by centre type (order kept within a group).
  const std::vector<MmffOutOfPlaneParameter>& out_of_plane(int centre_type) const;
  const MmffVdwParameter* vdw(int type) const;

 private:
  void read_all();

  MmffVariant variant_;
  std::unordered_map<int, MmffTypeProperties> properties_;
  std::unordered_map<int, std::array<int, 5>> equivalences_;
  std::unordered_map<std::uint64_t, MmffBondParameter> bonds_;
  std::unordered_map<std::uint64_t, MmffBondRuleParameter> bond_rules_;
  std::unordered_map<std::uint64_t, MmffAngleParameter> angles_;
  std::unordered_map<std::uint64_t, MmffStretchBendParameter> stretch_bends_;
  std::unordered_map<std::uint64_t, MmffStretchBendParameter> default_stretch_bends_;
  std::unordered_map<std::uint64_t, MmffTorsionParameter> torsions_;
  std::unordered_map<int, std::vector<MmffOutOfPlaneParameter>> out_of_plane_;
  std::unordered_map<int, MmffVdwParameter> vdw_;
};

// Name used in messages: "MMFF94" or "MMFF94s".
const char* mmff_variant_name(MmffVariant variant);

}  // namespace overtone::detail
