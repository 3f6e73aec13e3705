#include "families/families.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <chrono>
#include <cmath>
#include <numeric>

#include "core/error.hpp"

namespace overtone {

void FamiliesOptions::validate() const {
  const bool by_energy = energy_max_cm1 > 0.0;
  const bool by_quanta = quanta > 0.0;
  if (!std::isfinite(energy_max_cm1) || energy_max_cm1 < 0.0)
    throw Error(
        fmt::format("families option energy_max_cm1 = {} must be a non-negative energy", energy_max_cm1));
  if (!std::isfinite(quanta) || quanta < 0.0)
    throw Error(fmt::format("families option quanta = {} must be non-negative", quanta));
  if (continue_families && by_energy == by_quanta)
    throw Error(
        fmt::format("families options need exactly one of energy_max_cm1 (got {}) and quanta (got {}) to be "
                    "positive",
                    energy_max_cm1, quanta));
  if (encounter_max_ratio < 1)
    throw Error(
        fmt::format("families option encounter_max_ratio = {} must be at least 1", encounter_max_ratio));
  if (threads < 0) throw Error(fmt::format("families option threads = {} must be non-negative", threads));
  if (!(enumeration.resonance_window_cm1 >= 0.0))
    throw Error(fmt::format("families option enumeration.resonance_window_cm1 = {} must be non-negative",
                            enumeration.resonance_window_cm1));
  for (const int k : enumeration.resonance_orders)
    if (k < 1)
      throw Error(fmt::format("families option enumeration.resonance_orders contains {}, expected >= 1", k));
}

namespace {

// ω of a family as a function of energy along its first monotone stretch.
struct Backbone {
  std::vector<double> energies, frequencies;
  bool covers(double e) const { return !energies.empty() && e >= energies.front() && e <= energies.back(); }
  double frequency_at(double e) const {
    const auto upper = std::upper_bound(energies.begin(), energies.end(), e);
    if (upper == energies.begin()) return frequencies.front();
    if (upper == energies.end()) return frequencies.back();
    const std::size_t k = static_cast<std::size_t>(upper - energies.begin());
    const double w = (e - energies[k - 1]) / (energies[k] - energies[k - 1]);
    return (1.0 - w) * frequencies[k - 1] + w * frequencies[k];
  }
};

Backbone monotone_backbone(const ContinuationResult& result) {
  Backbone backbone;
  for (const OrbitPoint& point : result.points) {
    if (point.energy_direction < 0) break;
    if (!backbone.energies.empty() && point.energy <= backbone.energies.back()) continue;
    backbone.energies.push_back(point.energy);
    backbone.frequencies.push_back(point.angular_frequency);
  }
  return backbone;
}

std::string family_name(const FamiliesResult& result, int index) {
  const FamilyType& type = result.families[index].type;
  return fmt::format("family {} (modes {}{}{})", index + 1, fmt::join(type.mode_numbers, ","),
                     type.species.empty() ? "" : " ", type.species);
}

void add_resonance_encounters(FamiliesResult& result, int max_ratio) {
  const int count = static_cast<int>(result.families.size());
  std::vector<Backbone> backbones;
  for (const FamilyResult& family : result.families) backbones.push_back(monotone_backbone(family.backbone));
  for (int a = 0; a < count; ++a) {
    const Backbone& mine = backbones[a];
    if (mine.energies.size() < 2) continue;
    std::vector<FamilyEvent> found;
    for (int b = 0; b < count; ++b) {
      if (b == a || backbones[b].energies.size() < 2) continue;
      const Backbone& other = backbones[b];
      for (int p = 1; p <= max_ratio; ++p)
        for (int q = 1; q <= max_ratio; ++q) {
          if (std::gcd(p, q) != 1) continue;
          // Families of one block start at the same frequency; their 1:1 crossings are
          // differences between two motions of one mode, not a resonance.
          if (p == 1 && q == 1 && result.families[a].type.block == result.families[b].type.block) continue;
          // f = q·ω_this − p·ω_other changes sign where ω_this : ω_other passes p : q.
          double previous_f = 0.0, previous_e = 0.0;
          bool have_previous = false;
          for (std::size_t i = 0; i < mine.energies.size(); ++i) {
            const double e = mine.energies[i];
            if (!other.covers(e)) {
              have_previous = false;
              continue;
            }
            const double f = q * mine.frequencies[i] - p * other.frequency_at(e);
            // Ignore values within round-off of zero (families of one block start equal).
            constexpr double relative_floor = 1e-9;
            if (std::abs(f) <= relative_floor * q * mine.frequencies[i]) continue;
            if (have_previous && (f > 0.0) != (previous_f > 0.0)) {
              FamilyEvent event;
              event.kind = FamilyEventKind::resonance_encounter;
              event.point_index = static_cast<int>(i);
              event.energy = previous_e + (e - previous_e) * previous_f / (previous_f - f);
              event.energy_cm1 = event.energy * result.units.cm1_per_energy;
              event.partner_family = b;
              event.ratio_numerator = p;
              event.ratio_denominator = q;
              event.message =
                  fmt::format("the frequency ratio with {} passes {}:{} near {:.6g} {}",
                              family_name(result, b), p, q, event.energy_cm1, result.units.energy_label);
              found.push_back(std::move(event));
            }
            previous_f = f;
            previous_e = e;
            have_previous = true;
          }
        }
    }
    auto& events = result.families[a].backbone.events;
    events.insert(events.end(), found.begin(), found.end());
    std::stable_sort(events.begin(), events.end(),
                     [](const FamilyEvent& x, const FamilyEvent& y) { return x.energy < y.energy; });
  }
}

}  // namespace

FamiliesResult compute_families(const VibrationalSystem& system, const std::vector<ModeBlock>& blocks,
                                const CoordinateSymmetry& symmetry, const FamiliesOptions& options) {
  options.validate();
  const auto started = std::chrono::steady_clock::now();
  FamiliesResult result;
  result.system_description = system.description();
  result.units = system.units();
  const int n = system.dimension();
  if (!symmetry.matrices.empty() && symmetry.matrices.front().rows() != n)
    throw Error(fmt::format("the coordinate symmetry acts on {} coordinates, the system has {}",
                            symmetry.matrices.front().rows(), n));
  FamilyEnumeration enumeration = enumerate_families(blocks, symmetry, result.units, options.enumeration);
  result.blocks = enumeration.blocks;
  result.warnings = enumeration.warnings;
  if (!options.mode_numbers.empty()) {
    for (const int number : options.mode_numbers) {
      const bool known = std::any_of(result.blocks.begin(), result.blocks.end(), [&](const ModeBlock& block) {
        return std::find(block.mode_numbers.begin(), block.mode_numbers.end(), number) !=
               block.mode_numbers.end();
      });
      if (!known) throw Error(fmt::format("mode number {} is not among the system's modes", number));
    }
  }
  for (FamilyType& type : enumeration.families) {
    FamilyResult family;
    family.type = std::move(type);
    const ModeBlock& block = result.blocks[family.type.block];
    bool selected = options.continue_families;
    if (selected && !options.mode_numbers.empty()) {
      selected = std::any_of(block.mode_numbers.begin(), block.mode_numbers.end(), [&](int number) {
        return std::find(options.mode_numbers.begin(), options.mode_numbers.end(), number) !=
               options.mode_numbers.end();
      });
    }
    if (selected) {
      family.energy_max = options.energy_max_cm1 > 0.0
                              ? options.energy_max_cm1 / result.units.cm1_per_energy
                              : (options.quanta + 1.0) * result.units.hbar * block.angular_frequency;
      family.energy_max_cm1 = family.energy_max * result.units.cm1_per_energy;
      ContinuationOptions continuation = options.continuation;
      continuation.energy_max = family.energy_max;
      family.backbone = continue_family(system, family.type.seed, continuation);
      family.continued = true;
      result.points += static_cast<int>(family.backbone.points.size());
      result.newton_iterations += family.backbone.newton_iterations;
      result.variational_integrations += family.backbone.variational_integrations;
      result.orbit_integrations += family.backbone.orbit_integrations;
      result.gradient_evaluations += family.backbone.gradient_evaluations;
      result.hessian_evaluations += family.backbone.hessian_evaluations;
      result.hessian_vector_products += family.backbone.hessian_vector_products;
    }
    result.families.push_back(std::move(family));
  }
  add_resonance_encounters(result, options.encounter_max_ratio);
  result.seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - started).count();
  return result;
}

FamiliesResult compute_molecular_families(const Potential& potential, const HarmonicResult& harmonic,
                                          const PointGroupResult& group, const ModeSymmetryResult& species,
                                          const std::vector<int>& mode_order, const FamiliesOptions& options,
                                          const MolecularSystemOptions& system_options) {
  const MolecularVibrationalSystem system(potential, harmonic, system_options);
  const ModeSymmetry mode_symmetry_of_modes = mode_symmetry(group, species, harmonic.mass_weighted_modes);
  const std::vector<ModeBlock> blocks = molecular_mode_blocks(mode_symmetry_of_modes, harmonic, mode_order);
  std::string fallback;
  CoordinateSymmetry symmetry;
  try {
    symmetry = molecular_coordinate_symmetry(group, mode_symmetry_of_modes, harmonic);
    // Enumeration alone is cheap; it also checks that every block is invariant.
    enumerate_families(blocks, symmetry, molecular_unit_conventions(), options.enumeration);
  } catch (const Error& error) {
    // The group does not act cleanly on these normal modes (a loose minimum, an
    // ambiguous species assignment): continue without symmetry so that nondegenerate
    // modes still get their families, and say so.
    fallback = error.what();
    symmetry = trivial_symmetry(system.dimension());
  }
  FamiliesResult result = compute_families(system, blocks, symmetry, options);
  if (!fallback.empty())
    result.warnings.push_back("the point group was not used for the families (" + fallback +
                              "); degenerate modes get no predicted families");
  if (species.status != ModeSymmetryStatus::Assigned)
    result.warnings.push_back("the mode species are ambiguous (" + species.message +
                              "); family labels may be wrong");
  result.notes.push_back(
      "rotation-vibration coupling is neglected: the orbits are those of H = P^2/2 + V(Q) in the rectilinear "
      "normal "
      "coordinates of the non-rotating molecule");
  if (harmonic.linear)
    result.notes.push_back(
        fmt::format("linear molecule: the finite group {} stands in for {}; families that a "
                    "rotation about the axis maps onto each other are reported once",
                    group.group.finite_name, group.group.name));
  // The removed linear term is harmless when far below the forces of the orbits.
  constexpr double residual_gradient_warning = 1e-3;  // kcal/mol/(Å·Da^½)
  if (system.residual_gradient_norm() > residual_gradient_warning)
    result.warnings.push_back(
        fmt::format("the geometry is not a tight minimum (normal-coordinate gradient {:.3g} kcal/mol/(A "
                    "Da^1/2)); it was removed "
                    "as a linear term",
                    system.residual_gradient_norm()));
  return result;
}

}  // namespace overtone
