#include "report/symmetry_report.hpp"

#include <algorithm>
#include <cmath>
#include <sstream>

#include "core/option_checks.hpp"

namespace overtone {

std::size_t display_width(const std::string& utf8) {
  std::size_t width = 0;
  for (unsigned char c : utf8) width += (c & 0xC0) != 0x80;
  return width;
}

namespace {

std::string pad_right(const std::string& text, std::size_t width) {
  const std::size_t w = display_width(text);
  return w >= width ? text : text + std::string(width - w, ' ');
}

std::string pad_left(const std::string& text, std::size_t width) {
  const std::size_t w = display_width(text);
  return w >= width ? text : std::string(width - w, ' ') + text;
}

std::string fixed(double v, int decimals) {
  if (std::abs(v) < 0.5 * std::pow(10.0, -decimals)) v = 0.0;  // no "-0.000"
  std::ostringstream out;
  out.setf(std::ios::fixed);
  out.precision(decimals);
  out << v;
  return out.str();
}

// Characters are integers or a few irrationals (golden ratio, √2, 2cos(2π/n)).
std::string character_text(double v) {
  if (std::abs(v - std::round(v)) < 1e-9) return std::to_string(static_cast<long>(std::lround(v)));
  return fixed(v, 3);
}

std::string short_number(double v) {
  std::ostringstream out;
  out.precision(3);
  out << v;
  return out.str();
}

std::string join(const std::vector<std::string>& parts, const std::string& separator) {
  std::string out;
  for (std::size_t k = 0; k < parts.size(); ++k) out += (k ? separator : "") + parts[k];
  return out;
}

std::string symmetry_frame_axes(const PointGroup& g) {
  switch (g.family) {
    case PointGroupFamily::C1:
    case PointGroupFamily::Ci:
      return "x, y, z along the axes of inertia (increasing moment)";
    case PointGroupFamily::Cs:
      return "mirror plane xy";
    case PointGroupFamily::Cnv:
      return g.axis_order == 2 ? "C₂ along z; the mirror plane with more atoms is yz (x perpendicular to it)"
                               : "principal axis z; x in a σv plane";
    case PointGroupFamily::Dn:
    case PointGroupFamily::Dnh:
      return g.axis_order == 2
                 ? "z along the C₂ through most atoms; planar molecules: x perpendicular to the plane"
                 : "principal axis z; x along a C₂′ (the class through more atoms)";
    case PointGroupFamily::Dnd:
      return "principal axis z; x along a C₂′";
    case PointGroupFamily::T:
    case PointGroupFamily::Th:
    case PointGroupFamily::Td:
      return "x, y, z along the three twofold axes";
    case PointGroupFamily::O:
    case PointGroupFamily::Oh:
      return "x, y, z along the fourfold axes";
    case PointGroupFamily::I:
    case PointGroupFamily::Ih:
      return "x, y, z along three perpendicular twofold axes; a fivefold axis along (0, 1, φ)";
    case PointGroupFamily::Cinfv:
    case PointGroupFamily::Dinfh:
      return "molecular axis z";
    default:
      return "principal axis z";
  }
}

std::string atom_list(const std::vector<int>& atoms) {
  std::vector<std::string> parts;
  for (int a : atoms) parts.push_back(std::to_string(a + 1));
  return "{" + join(parts, ", ") + "}";
}

}  // namespace

void SymmetryReportOptions::validate() const {
  option_checks::require_at_least("symmetry report", "max_operations_listed", max_operations_listed, 0);
}

std::string format_symmetry_report(const PointGroupResult& result, const ModeSymmetryResult* modes,
                                   const SymmetryReportOptions& options) {
  options.validate();
  const PointGroup& g = result.group;
  const CharacterTable& table = g.character_table;
  std::ostringstream out;
  out << "Point group " << g.display_name << " (" << g.name << "), order " << g.order();
  if (g.linear) out << " — operations of the finite subgroup " << g.finite_name;
  out << "\n";
  out << "  symmetrization moved atoms by at most " << short_number(result.max_deviation_angstrom)
      << " Å (tolerance " << short_number(result.tolerance_angstrom) << " Å, as given)\n";
  out << "  symmetry frame: " << symmetry_frame_axes(g) << "\n";
  for (const auto& note : result.notes)
    if (note.rfind("tolerance ", 0) != 0) out << "  note: " << note << "\n";
  std::vector<std::string> orbits;
  for (const auto& orbit : result.atom_orbits) orbits.push_back(atom_list(orbit));
  out << "  symmetry-equivalent atoms: " << join(orbits, " ") << "\n";

  if (options.show_operations) {
    out << "\nOperations (symmetry frame; axis of the rotation, or normal of the plane)\n";
    if (g.order() <= options.max_operations_listed) {
      out << "    #  operation  class        axis                      atoms moved to\n";
      for (int k = 0; k < g.order(); ++k) {
        const SymmetryOperation& op = g.operations[k];
        std::string axis = "—";
        if (!op.axis.isZero())
          axis =
              "(" + fixed(op.axis.x(), 3) + ", " + fixed(op.axis.y(), 3) + ", " + fixed(op.axis.z(), 3) + ")";
        std::vector<int> images(result.permutations[k].begin(), result.permutations[k].end());
        out << "  " << pad_left(std::to_string(k + 1), 3) << "  " << pad_right(op.name, 9) << "  "
            << pad_right(table.class_labels[op.class_index], 11) << "  " << pad_right(axis, 24) << "  "
            << atom_list(images) << "\n";
      }
    } else {
      out << "  " << g.order() << " operations in " << g.classes.size()
          << " classes: " << join(table.class_labels, ", ") << "\n";
    }
  }

  if (options.show_character_table) {
    out << "\nCharacter table of "
        << (g.linear ? g.finite_name + " with the species of " + g.display_name : g.display_name) << "\n";
    std::size_t label_width = 4;
    for (const auto& irrep : table.irreps)
      label_width = std::max(label_width, display_width(irrep.display_label));
    std::vector<std::size_t> widths;
    for (std::size_t c = 0; c < table.class_labels.size(); ++c) {
      std::size_t w = display_width(table.class_labels[c]);
      for (const auto& irrep : table.irreps) w = std::max(w, character_text(irrep.characters[c]).size());
      widths.push_back(w);
    }
    out << "  " << pad_right("", label_width);
    for (std::size_t c = 0; c < widths.size(); ++c) out << "  " << pad_left(table.class_labels[c], widths[c]);
    out << "   functions; activity\n";
    bool any_pair = false;
    for (const auto& irrep : table.irreps) {
      out << "  " << pad_right(irrep.display_label, label_width);
      for (std::size_t c = 0; c < widths.size(); ++c)
        out << "  " << pad_left(character_text(irrep.characters[c]), widths[c]);
      std::vector<std::string> functions = irrep.linear_functions;
      functions.insert(functions.end(), irrep.rotations.begin(), irrep.rotations.end());
      functions.insert(functions.end(), irrep.quadratic_functions.begin(), irrep.quadratic_functions.end());
      std::vector<std::string> activity;
      if (irrep.ir_active) activity.push_back("IR");
      if (irrep.raman_active) activity.push_back("Raman");
      out << "   " << join(functions, ", ");
      if (!activity.empty()) out << (functions.empty() ? "" : "; ") << join(activity, " + ");
      if (irrep.complex_pair) {
        out << "  *";
        any_pair = true;
      }
      out << "\n";
    }
    if (any_pair)
      out << "  * real species made of a pair of complex-conjugate one-dimensional representations\n";
  }

  const std::vector<int> counts = vibrational_decomposition(result);
  int mode_total = 0;
  std::vector<int> ir(counts.size(), 0), raman(counts.size(), 0);
  for (std::size_t k = 0; k < counts.size(); ++k) {
    mode_total += counts[k] * table.irreps[k].dimension;
    if (table.irreps[k].ir_active) ir[k] = counts[k];
    if (table.irreps[k].raman_active) raman[k] = counts[k];
  }
  out << "\nVibrational representation (from the geometry: 3N displacements minus translations and "
         "rotations)\n";
  out << "  Γvib = " << format_decomposition(g, counts, true) << "   (" << mode_total << " modes)\n";
  out << "  IR active: " << format_decomposition(g, ir, true) << "\n";
  out << "  Raman active: " << format_decomposition(g, raman, true) << "\n";

  if (modes) {
    out << "\nNormal modes by species (" << (modes->frame == CoordinateFrame::File ? "file" : "symmetry")
        << " frame)\n";
    out << "    set  wavenumber/cm⁻¹  species  modes          IR  Raman  purity\n";
    for (std::size_t s = 0; s < modes->sets.size(); ++s) {
      const ModeSet& set = modes->sets[s];
      std::vector<std::string> members;
      for (int m : set.modes) members.push_back(std::to_string(m + 1));
      out << "  " << pad_left(std::to_string(s + 1), 5) << "  " << pad_left(fixed(set.frequency_cm1, 2), 15)
          << "  " << pad_right(set.display_species, 7) << "  " << pad_right(join(members, ","), 13) << "  "
          << pad_right(set.ir_active ? "yes" : "no", 3) << " "
          << pad_right(set.raman_active ? "yes" : "no", 5) << "  " << fixed(set.purity, 4) << "\n";
    }
    out << "  " << modes->message << "\n";
    for (const auto& warning : modes->warnings) out << "  warning: " << warning << "\n";
  }
  return out.str();
}

}  // namespace overtone
