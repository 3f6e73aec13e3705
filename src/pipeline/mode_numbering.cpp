#include "pipeline/mode_numbering.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <numeric>

#include "core/error.hpp"

namespace overtone {

namespace {

// Groups of mode indices: the symmetry sets when species were assigned, else single
// modes.
struct ModeGroup {
  std::vector<int> members;
  int irrep = -1;  // -1: unknown species
};

constexpr std::size_t triatomic_atoms = 3;
constexpr std::size_t bend_partners = 2;

bool is_bend_of_linear_triatomic(const HarmonicResult& harmonic, std::size_t atom_count,
                                 const ModeGroup& group) {
  return harmonic.linear && atom_count == triatomic_atoms && group.members.size() == bend_partners;
}

std::vector<ModeGroup> groups_in_report_order(const HarmonicResult& harmonic,
                                              const ModeSymmetryResult* species, std::size_t atom_count) {
  std::vector<ModeGroup> groups;
  if (species) {
    for (const auto& set : species->sets) groups.push_back({set.modes, set.irrep});
  } else {
    for (std::size_t k = 0; k < harmonic.mode_count(); ++k) groups.push_back({{static_cast<int>(k)}, -1});
  }
  auto wavenumber = [&](const ModeGroup& g) { return harmonic.frequencies_cm1[g.members.front()]; };
  std::stable_sort(groups.begin(), groups.end(), [&](const ModeGroup& a, const ModeGroup& b) {
    if (a.irrep != b.irrep) return a.irrep < b.irrep;
    return wavenumber(a) > wavenumber(b);
  });
  // Customary exception: the bend of a linear triatomic is ν2 (CO2, HCN).
  if (species && groups.size() == 3) {
    auto bend = std::find_if(groups.begin(), groups.end(), [&](const ModeGroup& g) {
      return is_bend_of_linear_triatomic(harmonic, atom_count, g);
    });
    if (bend != groups.end() && bend != groups.begin() + 1) {
      const ModeGroup moved = *bend;
      groups.erase(bend);
      groups.insert(groups.begin() + 1, moved);
    }
  }
  return groups;
}

const ModeLabel& label_with_number(const std::vector<ModeLabel>& modes, int number) {
  for (const ModeLabel& mode : modes)
    if (mode.number == number) return mode;
  throw Error(
      fmt::format("there is no mode number {} (the modes are numbered 1 to {})", number, modes.size()));
}

}  // namespace

std::vector<ModeLabel> number_modes(const HarmonicResult& harmonic, const ModeSymmetryResult* species,
                                    std::size_t atom_count) {
  if (species && species->sets.empty()) species = nullptr;
  const std::vector<ModeGroup> groups = groups_in_report_order(harmonic, species, atom_count);
  std::vector<ModeLabel> labels;
  int number = 0;
  for (std::size_t g = 0; g < groups.size(); ++g) {
    for (const int index : groups[g].members) {
      ModeLabel label;
      label.harmonic_index = index;
      label.number = ++number;
      label.fundamental = static_cast<int>(g) + 1;
      label.degenerate_set = static_cast<int>(g) + 1;
      label.set_size = static_cast<int>(groups[g].members.size());
      if (species) {
        const ModeSpecies& mode_species = species->modes[static_cast<std::size_t>(index)];
        label.species = mode_species.species;
        label.display_species = mode_species.display_species;
        label.ir_active = mode_species.ir_active;
        label.raman_active = mode_species.raman_active;
        label.activity_known = mode_species.irrep >= 0;
      }
      labels.push_back(label);
    }
  }
  return labels;
}

std::vector<int> report_mode_order(const std::vector<ModeLabel>& modes) {
  std::vector<int> order;
  order.reserve(modes.size());
  for (const ModeLabel& mode : modes) order.push_back(mode.harmonic_index);
  return order;
}

std::vector<int> mode_number_of_index(const std::vector<ModeLabel>& modes) {
  std::vector<int> number(modes.size(), 0);
  for (const ModeLabel& mode : modes) number.at(static_cast<std::size_t>(mode.harmonic_index)) = mode.number;
  return number;
}

int fundamental_of_mode_number(const std::vector<ModeLabel>& modes, int number) {
  return label_with_number(modes, number).fundamental;
}

std::vector<int> fundamentals_of_mode_numbers(const std::vector<ModeLabel>& modes,
                                              const std::vector<int>& numbers) {
  std::vector<int> fundamentals;
  for (const int number : numbers) fundamentals.push_back(fundamental_of_mode_number(modes, number));
  std::sort(fundamentals.begin(), fundamentals.end());
  fundamentals.erase(std::unique(fundamentals.begin(), fundamentals.end()), fundamentals.end());
  return fundamentals;
}

std::vector<int> mode_numbers_of_fundamentals(const std::vector<ModeLabel>& modes,
                                              const std::vector<int>& fundamentals) {
  std::vector<int> numbers;
  for (const int fundamental : fundamentals) {
    const std::size_t before = numbers.size();
    for (const ModeLabel& mode : modes)
      if (mode.fundamental == fundamental) numbers.push_back(mode.number);
    if (numbers.size() == before) {
      const int highest = modes.empty() ? 0 : modes.back().fundamental;
      throw Error(
          fmt::format("there is no fundamental ν{} (this molecule has ν1 to ν{})", fundamental, highest));
    }
  }
  return numbers;
}

std::vector<int> set_numbers_from_mode_order(const Vpt2Result& vpt2, const std::vector<int>& mode_order) {
  const int m = static_cast<int>(vpt2.set_of_mode.size());
  std::vector<int> sorted = mode_order;
  std::sort(sorted.begin(), sorted.end());
  bool permutation = static_cast<int>(sorted.size()) == m;
  for (int k = 0; permutation && k < m; ++k) permutation = sorted[static_cast<std::size_t>(k)] == k;
  if (!permutation)
    throw Error(fmt::format("the mode order must list each of the {} modes once, got {} entries", m,
                            mode_order.size()));
  std::vector<int> numbers(vpt2.sets.size(), 0);
  int next = 1;
  for (int mode : mode_order) {
    int& number = numbers[static_cast<std::size_t>(vpt2.set_of_mode[static_cast<std::size_t>(mode)])];
    if (number == 0) number = next++;
  }
  return numbers;
}

std::vector<int> default_set_numbers(const Vpt2Result& vpt2) {
  std::vector<int> order(vpt2.sets.size());
  std::iota(order.begin(), order.end(), 0);
  std::stable_sort(order.begin(), order.end(), [&](int a, int b) {
    return vpt2.sets[static_cast<std::size_t>(a)].harmonic_cm1 >
           vpt2.sets[static_cast<std::size_t>(b)].harmonic_cm1;
  });
  std::vector<int> numbers(vpt2.sets.size());
  for (std::size_t k = 0; k < order.size(); ++k)
    numbers[static_cast<std::size_t>(order[k])] = static_cast<int>(k) + 1;
  return numbers;
}

}  // namespace overtone
