#include "potential/detail_mmff_parameters.hpp"

#include <fmt/format.h>
#include <openbabel/tokenst.h>

#include <algorithm>
#include <cstdlib>
#include <fstream>
#include <functional>
#include <mutex>
#include <sstream>

#include "core/error.hpp"

namespace overtone::detail {

namespace {

// Keys: small non-negative integers (types ≤ 99, classes ≤ 11, rows ≤ 6) packed base 256.
std::uint64_t key(std::initializer_list<int> parts) {
  std::uint64_t packed = 0;
  for (const int part : parts) packed = (packed << 8) | static_cast<std::uint64_t>(part & 0xff);
  return packed;
}

// Calls on_fields for every data line of a parameter file. Open Babel's parser skips
// lines that start with '*' (comments) or '$' (end marker) and reads integers with atoi
// and reals with atof; the same here (the caller converts).
void for_each_line(const std::string& file,
                   const std::function<void(const std::vector<std::string>&)>& on_fields) {
  std::ifstream stream;
  const std::string path = OpenBabel::OpenDatafile(stream, file, "BABEL_DATADIR");
  if (path.empty() || !stream)
    throw Error(fmt::format("cannot open the MMFF parameter file {} in Open Babel's data directory", file));
  std::string line;
  while (std::getline(stream, line)) {
    if (line.empty() || line[0] == '*' || line[0] == '$') continue;
    std::istringstream words(line);
    std::vector<std::string> fields;
    for (std::string word; words >> word;) fields.push_back(word);
    if (!fields.empty()) on_fields(fields);
  }
}

int integer(const std::vector<std::string>& fields, std::size_t k, const std::string& file) {
  if (k >= fields.size()) throw Error(fmt::format("MMFF parameter file {}: a line has too few fields", file));
  return std::atoi(fields[k].c_str());
}

double real(const std::vector<std::string>& fields, std::size_t k, const std::string& file) {
  if (k >= fields.size()) throw Error(fmt::format("MMFF parameter file {}: a line has too few fields", file));
  return std::strtod(fields[k].c_str(), nullptr);
}

}  // namespace

const char* mmff_variant_name(MmffVariant variant) {
  return variant == MmffVariant::mmff94 ? "MMFF94" : "MMFF94s";
}

const MmffParameters& MmffParameters::installed(MmffVariant variant) {
  static std::once_flag once[2];
  static std::unique_ptr<MmffParameters> tables[2];
  const int slot = variant == MmffVariant::mmff94 ? 0 : 1;
  std::call_once(once[slot], [&] { tables[slot] = std::make_unique<MmffParameters>(variant); });
  return *tables[slot];
}

MmffParameters::MmffParameters(MmffVariant variant) : variant_(variant) { read_all(); }

void MmffParameters::read_all() {
  // MMFF94s differs from MMFF94 only in its out-of-plane and torsion tables (Halgren
  // 1999); Open Babel's mmff94s.ff lists the same files otherwise.
  const std::string out_of_plane_file = variant_ == MmffVariant::mmff94 ? "mmffoop.par" : "mmffs_oop.par";
  const std::string torsion_file = variant_ == MmffVariant::mmff94 ? "mmfftor.par" : "mmffs_tor.par";

  std::string file = "mmffprop.par";
  for_each_line(file, [&](const std::vector<std::string>& f) {
    MmffTypeProperties p;
    p.atomic_number = integer(f, 1, file);
    p.coordination = integer(f, 2, file);
    p.valence = integer(f, 3, file);
    p.pi_lone_pair = integer(f, 4, file);
    p.multiple_bond = integer(f, 5, file);
    p.aromatic = integer(f, 6, file);
    p.linear = integer(f, 7, file);
    p.single_between_multiple = integer(f, 8, file);
    properties_.try_emplace(integer(f, 0, file), p);
  });

  file = "mmffdef.par";
  for_each_line(file, [&](const std::vector<std::string>& f) {
    // symbol, then the type at levels 1 to 5
    std::array<int, 5> levels{};
    for (int level = 0; level < 5; ++level) levels[level] = integer(f, 1 + level, file);
    equivalences_.try_emplace(levels[0], levels);
  });

  file = "mmffbond.par";
  for_each_line(file, [&](const std::vector<std::string>& f) {
    const int a = integer(f, 1, file), b = integer(f, 2, file);
    bonds_.try_emplace(key({integer(f, 0, file), std::min(a, b), std::max(a, b)}),
                       MmffBondParameter{real(f, 3, file), real(f, 4, file)});
  });

  file = "mmffbndk.par";
  for_each_line(file, [&](const std::vector<std::string>& f) {
    const int a = integer(f, 0, file), b = integer(f, 1, file);
    bond_rules_.try_emplace(key({std::min(a, b), std::max(a, b)}),
                            MmffBondRuleParameter{real(f, 2, file), real(f, 3, file)});
  });

  file = "mmffang.par";
  for_each_line(file, [&](const std::vector<std::string>& f) {
    const int a = integer(f, 1, file), b = integer(f, 2, file), c = integer(f, 3, file);
    angles_.try_emplace(key({integer(f, 0, file), std::min(a, c), b, std::max(a, c)}),
                        MmffAngleParameter{real(f, 4, file), real(f, 5, file)});
  });

  file = "mmffstbn.par";
  for_each_line(file, [&](const std::vector<std::string>& f) {
    const int a = integer(f, 1, file), b = integer(f, 2, file), c = integer(f, 3, file);
    stretch_bends_.try_emplace(key({integer(f, 0, file), std::min(a, c), b, std::max(a, c)}),
                               MmffStretchBendParameter{a, real(f, 4, file), real(f, 5, file)});
  });

  file = "mmffdfsb.par";
  for_each_line(file, [&](const std::vector<std::string>& f) {
    const int a = integer(f, 0, file), b = integer(f, 1, file), c = integer(f, 2, file);
    default_stretch_bends_.try_emplace(key({std::min(a, c), b, std::max(a, c)}),
                                       MmffStretchBendParameter{a, real(f, 3, file), real(f, 4, file)});
  });

  file = out_of_plane_file;
  for_each_line(file, [&](const std::vector<std::string>& f) {
    MmffOutOfPlaneParameter p;
    p.first = integer(f, 0, file);
    p.centre = integer(f, 1, file);
    p.third = integer(f, 2, file);
    p.fourth = integer(f, 3, file);
    p.force_constant = real(f, 4, file);
    out_of_plane_[p.centre].push_back(p);
  });

  file = torsion_file;
  for_each_line(file, [&](const std::vector<std::string>& f) {
    torsions_.try_emplace(key({integer(f, 0, file), integer(f, 1, file), integer(f, 2, file),
                               integer(f, 3, file), integer(f, 4, file)}),
                          MmffTorsionParameter{real(f, 5, file), real(f, 6, file), real(f, 7, file)});
  });

  file = "mmffvdw.par";
  for_each_line(file, [&](const std::vector<std::string>& f) {
    MmffVdwParameter p;
    p.polarizability = real(f, 1, file);
    p.electron_number = real(f, 2, file);
    p.scale_a = real(f, 3, file);
    p.scale_g = real(f, 4, file);
    const char role = f.size() > 5 ? f[5][0] : '-';
    p.role = role == 'D'   ? MmffVdwParameter::Role::donor
             : role == 'A' ? MmffVdwParameter::Role::acceptor
                           : MmffVdwParameter::Role::none;
    vdw_.try_emplace(integer(f, 0, file), p);
  });

  if (properties_.empty() || bonds_.empty() || angles_.empty() || torsions_.empty() || vdw_.empty())
    throw Error(fmt::format("the {} parameter files in Open Babel's data directory are empty or unreadable",
                            mmff_variant_name(variant_)));
}

const MmffTypeProperties* MmffParameters::properties(int type) const {
  const auto found = properties_.find(type);
  return found == properties_.end() ? nullptr : &found->second;
}

int MmffParameters::equivalent_type(int type, int level) const {
  const auto found = equivalences_.find(type);
  if (found == equivalences_.end() || level < 1 || level > 5) return type;
  return found->second[level - 1];
}

const MmffBondParameter* MmffParameters::bond(int bond_class, int a, int b) const {
  const auto found = bonds_.find(key({bond_class, std::min(a, b), std::max(a, b)}));
  return found == bonds_.end() ? nullptr : &found->second;
}

const MmffBondRuleParameter* MmffParameters::bond_rule(int atomic_number_a, int atomic_number_b) const {
  const auto found = bond_rules_.find(
      key({std::min(atomic_number_a, atomic_number_b), std::max(atomic_number_a, atomic_number_b)}));
  return found == bond_rules_.end() ? nullptr : &found->second;
}

const MmffAngleParameter* MmffParameters::angle(int angle_class, int a, int centre, int c) const {
  const auto found = angles_.find(key({angle_class, std::min(a, c), centre, std::max(a, c)}));
  return found == angles_.end() ? nullptr : &found->second;
}

const MmffStretchBendParameter* MmffParameters::stretch_bend(int stretch_bend_class, int a, int centre,
                                                             int c) const {
  const auto found = stretch_bends_.find(key({stretch_bend_class, std::min(a, c), centre, std::max(a, c)}));
  return found == stretch_bends_.end() ? nullptr : &found->second;
}

const MmffStretchBendParameter* MmffParameters::default_stretch_bend(int row_a, int row_centre,
                                                                     int row_c) const {
  const auto found =
      default_stretch_bends_.find(key({std::min(row_a, row_c), row_centre, std::max(row_a, row_c)}));
  return found == default_stretch_bends_.end() ? nullptr : &found->second;
}

const MmffTorsionParameter* MmffParameters::torsion(int torsion_class, int a, int b, int c, int d) const {
  const auto found = torsions_.find(key({torsion_class, a, b, c, d}));
  return found == torsions_.end() ? nullptr : &found->second;
}

const std::vector<MmffOutOfPlaneParameter>& MmffParameters::out_of_plane(int centre_type) const {
  static const std::vector<MmffOutOfPlaneParameter> none;
  const auto found = out_of_plane_.find(centre_type);
  return found == out_of_plane_.end() ? none : found->second;
}

const MmffVdwParameter* MmffParameters::vdw(int type) const {
  const auto found = vdw_.find(type);
  return found == vdw_.end() ? nullptr : &found->second;
}

}  // namespace overtone::detail
