#include "families/families.hpp"

#include <fmt/format.h>
#include <omp.h>

#include <algorithm>
#include <atomic>
#include <chrono>
#include <cmath>
#include <exception>
#include <mutex>
#include <numeric>
#include <set>
#include <thread>

#include "core/error.hpp"
#include "core/option_checks.hpp"
#include "families/bond_amplitudes.hpp"

namespace overtone {

void FamiliesOptions::validate() const {
  using namespace option_checks;
  const char* owner = "families";
  require_non_negative(owner, "energy_max_cm1", energy_max_cm1);
  require_non_negative(owner, "quanta", quanta);
  if (continue_families)
    require((energy_max_cm1 > 0.0) != (quanta > 0.0), owner, "energy_max_cm1 and quanta",
            "exactly one of the two positive", fmt::format("{} and {}", energy_max_cm1, quanta));
  require(!all_modes || mode_numbers.empty(), owner, "mode_numbers", "none with all_modes set",
          fmt::format("{} mode number(s)", mode_numbers.size()));
  require_at_least(owner, "all_modes_up_to", all_modes_up_to, 0);
  require_non_negative(owner, "selection_min_cm1", selection_min_cm1);
  require_non_negative(owner, "selection_floor_cm1", selection_floor_cm1);
  require_at_least(owner, "encounter_max_ratio", encounter_max_ratio, 1);
  require_at_least(owner, "threads", threads, 0);
  enumeration.validate();
  // energy_max is set per family; any positive value lets the other fields be checked now.
  ContinuationOptions per_family = continuation;
  per_family.energy_max = 1.0;
  per_family.validate();
  branches.validate();
  resonant_seeds.validate();
  orbit_count.validate();
}

std::string to_string(FamiliesStatus status) {
  switch (status) {
    case FamiliesStatus::ok:
      return "ok";
    case FamiliesStatus::not_converged:
      return "not_converged";
    case FamiliesStatus::not_a_minimum:
      return "not_a_minimum";
    case FamiliesStatus::no_modes:
      return "no_modes";
    case FamiliesStatus::no_point_group:
      return "no_point_group";
  }
  return "unknown";
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

namespace {

bool block_has_mode(const ModeBlock& block, const std::vector<int>& numbers) {
  return std::any_of(block.mode_numbers.begin(), block.mode_numbers.end(), [&](int number) {
    return std::find(numbers.begin(), numbers.end(), number) != numbers.end();
  });
}

void require_known_modes(const std::vector<ModeBlock>& blocks, const std::vector<int>& numbers) {
  for (const int number : numbers) {
    const bool known = std::any_of(blocks.begin(), blocks.end(),
                                   [&](const ModeBlock& block) { return block_has_mode(block, {number}); });
    if (!known) throw Error(fmt::format("mode number {} is not among the system's modes", number));
  }
}

// Which blocks get their families continued (FamiliesOptions: mode_numbers, all_modes and
// the default selection); records what the default selection left out.
std::vector<bool> select_blocks(const FamiliesOptions& options, int dimension, FamiliesResult& result) {
  const std::vector<ModeBlock>& blocks = result.blocks;
  std::vector<bool> selected(blocks.size(), options.continue_families);
  if (!options.continue_families || options.all_modes) return selected;
  if (!options.mode_numbers.empty()) {
    for (std::size_t b = 0; b < blocks.size(); ++b)
      selected[b] = block_has_mode(blocks[b], options.mode_numbers);
    return selected;
  }
  if (dimension <= options.all_modes_up_to) return selected;
  std::set<int> left_out;
  for (std::size_t b = 0; b < blocks.size(); ++b) {
    const double wavenumber = blocks[b].angular_frequency * result.units.cm1_per_angular_frequency;
    const bool resonant = wavenumber >= options.selection_floor_cm1 &&
                          block_has_mode(blocks[b], options.resonance_mode_numbers);
    selected[b] = wavenumber >= options.selection_min_cm1 || resonant;
    if (!selected[b]) left_out.insert(blocks[b].mode_numbers.begin(), blocks[b].mode_numbers.end());
  }
  result.left_out_mode_numbers.assign(left_out.begin(), left_out.end());
  if (!left_out.empty())
    result.selection_note = fmt::format(
        "the families of {} of the {} modes were not continued: above {} modes only the modes at or above "
        "{:.0f} {} and those of flagged resonances at or above {:.0f} {} are continued unless other modes or "
        "all "
        "modes are asked for",
        left_out.size(), dimension, options.all_modes_up_to, options.selection_min_cm1,
        result.units.energy_label, options.selection_floor_cm1, result.units.energy_label);
  return selected;
}

// Serializes the progress reports of the worker threads; accepted points are reported at
// most every report_interval.
class ProgressReporter {
 public:
  ProgressReporter(const FamiliesOptions& options, const FamiliesResult& result, int total,
                   std::chrono::steady_clock::time_point started)
      : callback_(options.progress), result_(result), total_(total), started_(started), last_(started) {}

  void point(int family, double energy) {
    if (!callback_) return;
    const std::lock_guard<std::mutex> lock(mutex_);
    const auto now = std::chrono::steady_clock::now();
    constexpr std::chrono::milliseconds report_interval{250};  // a few times per second
    if (now - last_ < report_interval) return;
    last_ = now;
    emit(family, energy, "at", now);
  }
  void family_done(int family) {
    if (!callback_) return;
    const std::lock_guard<std::mutex> lock(mutex_);
    ++done_;
    const auto& points = result_.families[static_cast<std::size_t>(family)].backbone.points;
    const auto now = std::chrono::steady_clock::now();
    last_ = now;
    emit(family, points.empty() ? 0.0 : points.back().energy, "done at", now);
  }

 private:
  void emit(int family, double energy, const char* verb, std::chrono::steady_clock::time_point now) {
    ProgressEvent event;
    event.stage = "families";
    event.done = done_;
    event.total = total_;
    const FamilyType& type = result_.families[static_cast<std::size_t>(family)].type;
    event.detail =
        fmt::format("family {} of {} (modes {}{}{}) {} {:.0f} {}", family + 1, result_.families.size(),
                    fmt::join(type.mode_numbers, ","), type.species.empty() ? "" : " ", type.species, verb,
                    energy * result_.units.cm1_per_energy, result_.units.energy_label);
    event.seconds = std::chrono::duration<double>(now - started_).count();
    callback_(event);
  }

  const ProgressCallback& callback_;
  const FamiliesResult& result_;
  int total_ = 0, done_ = 0;
  std::chrono::steady_clock::time_point started_, last_;
  std::mutex mutex_;
};

int worker_count(const VibrationalSystem& system, const FamiliesOptions& options, std::size_t jobs) {
  if (jobs <= 1 || !system.supports_concurrent_evaluation()) return 1;
  const int cores = static_cast<int>(std::max(1u, std::thread::hardware_concurrency()));
  const int wanted = options.threads > 0 ? options.threads : cores;
  return std::max(1, std::min(wanted, static_cast<int>(jobs)));
}

// Continues the families listed in `jobs` (indices into result.families, energy_max set),
// each on one thread; every family's computation is the same whatever the thread count.
void continue_families(const VibrationalSystem& system, const FamiliesOptions& options,
                       const std::vector<int>& jobs, std::chrono::steady_clock::time_point started,
                       FamiliesResult& result) {
  ProgressReporter reporter(options, result, static_cast<int>(jobs.size()), started);
  std::atomic<std::size_t> next{0};
  std::atomic<bool> failed{false};
  std::vector<std::exception_ptr> errors(jobs.size());
  auto work = [&] {
    for (std::size_t k = next++; k < jobs.size() && !failed; k = next++) {
      const int index = jobs[k];
      FamilyResult& family = result.families[static_cast<std::size_t>(index)];
      try {
        ContinuationOptions continuation = options.continuation;
        continuation.energy_max = family.energy_max;
        if (options.progress)
          continuation.on_point = [&reporter, index](double energy) { reporter.point(index, energy); };
        family.backbone = continue_family(system, family.type.seed, continuation);
        family.continued = true;
      } catch (...) {
        errors[k] = std::current_exception();
        failed = true;
        continue;
      }
      reporter.family_done(index);
    }
  };
  result.threads_used = worker_count(system, options, jobs.size());
  // Eigen hands larger matrix products to OpenMP teams; next to the family workers those
  // would put more threads than cores to work (and spinning), so each worker keeps to one.
  // The setting is per thread; the calling thread gets its own back.
  const bool parallel = result.threads_used > 1;
  const int caller_openmp_threads = omp_get_max_threads();
  auto worker = [&work] {
    omp_set_num_threads(1);
    work();
  };
  std::vector<std::thread> pool;
  for (int t = 1; t < result.threads_used; ++t) pool.emplace_back(worker);
  if (parallel) omp_set_num_threads(1);
  work();
  if (parallel) omp_set_num_threads(caller_openmp_threads);
  for (std::thread& thread : pool) thread.join();
  for (const std::exception_ptr& error : errors)
    if (error) std::rethrow_exception(error);
}

// Families born at the period doublings and branch points of the families `parents`
// (indices into result.families, continued); returns the indices of those appended.
std::vector<int> add_born_families(const VibrationalSystem& system, const CoordinateSymmetry& symmetry,
                                   const FamiliesOptions& options, const std::vector<int>& parents,
                                   FamiliesResult& result) {
  const auto started = std::chrono::steady_clock::now();
  std::vector<FamilyResult> newborn;
  for (const int index : parents) {
    const FamilyResult& parent = result.families[static_cast<std::size_t>(index)];
    if (!parent.continued) continue;
    ContinuationOptions continuation = options.continuation;
    continuation.energy_max = parent.energy_max;
    int births = 0;
    for (const FamilyEvent& event : parent.backbone.events) {
      if (event.kind != FamilyEventKind::period_doubling && event.kind != FamilyEventKind::branch_point)
        continue;
      if (births >= options.branches.max_births_per_family) break;
      std::string failure;
      const std::optional<BirthSite> site = locate_bifurcation(
          system, parent.type.seed, continuation, parent.backbone, event, options.branches, failure);
      std::optional<FamilyType> type;
      if (site) {
        result.birth_probes += site->probes;
        type = born_family_type(parent.type, index + 1, result.blocks, symmetry, *site, result.units,
                                options.branches, failure);
      }
      if (!type) {
        result.birth_failures.push_back(fmt::format("family {}, {} near {:.6g} {}: {}", index + 1,
                                                    to_string(event.kind), event.energy_cm1,
                                                    result.units.energy_label, failure));
        continue;
      }
      FamilyResult family;
      family.type = std::move(*type);
      family.energy_max = parent.energy_max;
      family.energy_max_cm1 = parent.energy_max_cm1;
      family.parent_family = index;
      family.birth_kind = event.kind;
      family.birth_energy = site->point.energy;
      family.birth_energy_cm1 = site->point.energy_cm1;
      family.generation = parent.generation + 1;
      newborn.push_back(std::move(family));
      ++births;
    }
  }
  std::vector<int> born;
  for (FamilyResult& family : newborn) {
    born.push_back(static_cast<int>(result.families.size()));
    result.families.push_back(std::move(family));
  }
  result.birth_seconds += std::chrono::duration<double>(std::chrono::steady_clock::now() - started).count();
  return born;
}

// The share of the stretch among equivalent bonds along every born family of a molecule.
void add_bond_amplitude_ratios(const MolecularVibrationalSystem& system, const HarmonicResult& harmonic,
                               FamiliesResult& result) {
  const auto bonds = nearest_neighbour_bonds(harmonic.coordinates_angstrom);
  for (FamilyResult& family : result.families) {
    if (family.parent_family < 0 || !family.continued) continue;
    for (const OrbitPoint& point : family.backbone.points) {
      const Eigen::VectorXd amplitudes =
          bond_stretch_amplitudes(system, harmonic.coordinates_angstrom, bonds, point.initial_positions,
                                  point.initial_momenta, point.period);
      family.bond_amplitude_ratio.push_back(equivalent_bond_ratio(amplitudes, bonds, harmonic.masses_da));
    }
  }
}

// A born family that returns onto its parent (a bubble between two bifurcations of the
// parent, or a fold that leads back) would continue along the parent: its backbone ends
// at the first point that lies in the parent's invariant subspace again.
void end_at_return_to_parent(FamilyResult& family, const FamilyResult& parent,
                             const std::string& energy_label) {
  const Eigen::MatrixXd& basis = parent.type.seed.invariant_basis;
  auto& points = family.backbone.points;
  if (basis.size() == 0 || basis.cols() == basis.rows() || points.size() < 2) return;
  constexpr double on_parent = 1e-6;  // relative distance; born orbits differ at O(step) = O(1e-2)
  for (std::size_t k = 1; k < points.size(); ++k) {
    const OrbitPoint& point = points[k];
    const Eigen::VectorXd q = point.initial_positions, p = point.initial_momenta / point.angular_frequency;
    const double outside =
        (q - basis * (basis.transpose() * q)).norm() + (p - basis * (basis.transpose() * p)).norm();
    if (outside > on_parent * (q.norm() + p.norm())) continue;
    ContinuationResult& backbone = family.backbone;
    const double energy_cm1 = point.energy_cm1;
    points.erase(points.begin() + static_cast<std::ptrdiff_t>(k), points.end());
    const int kept = static_cast<int>(k);
    backbone.events.erase(std::remove_if(backbone.events.begin(), backbone.events.end(),
                                         [kept](const FamilyEvent& e) { return e.point_index >= kept; }),
                          backbone.events.end());
    double low = points.front().energy, high = low;
    for (const OrbitPoint& kept_point : points) {
      low = std::min(low, kept_point.energy);
      high = std::max(high, kept_point.energy);
    }
    backbone.ladder.erase(
        std::remove_if(backbone.ladder.begin(), backbone.ladder.end(),
                       [&](const LadderLevel& l) { return l.energy < low || l.energy > high; }),
        backbone.ladder.end());
    backbone.status = ContinuationStatus::rejoined_parent;
    backbone.message = fmt::format("returned onto family {} near {:.6g} {}", family.parent_family + 1,
                                   energy_cm1, energy_label);
    return;
  }
}

void add_totals(FamiliesResult& result) {
  for (const FamilyResult& family : result.families) {
    if (!family.continued) continue;
    result.points += static_cast<int>(family.backbone.points.size());
    result.newton_iterations += family.backbone.newton_iterations;
    result.variational_integrations += family.backbone.variational_integrations;
    result.orbit_integrations += family.backbone.orbit_integrations;
    result.gradient_evaluations += family.backbone.gradient_evaluations;
    result.hessian_evaluations += family.backbone.hessian_evaluations;
    result.hessian_vector_products += family.backbone.hessian_vector_products;
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
  require_known_modes(result.blocks, options.mode_numbers);
  require_known_modes(result.blocks, options.resonance_mode_numbers);
  const std::vector<bool> selected = select_blocks(options, n, result);
  std::vector<int> jobs;
  for (FamilyType& type : enumeration.families) {
    FamilyResult family;
    family.type = std::move(type);
    const ModeBlock& block = result.blocks[family.type.block];
    if (selected[static_cast<std::size_t>(family.type.block)]) {
      family.energy_max = options.energy_max_cm1 > 0.0
                              ? options.energy_max_cm1 / result.units.cm1_per_energy
                              : (options.quanta + 1.0) * result.units.hbar * block.angular_frequency;
      family.energy_max_cm1 = family.energy_max * result.units.cm1_per_energy;
      std::vector<ResonantFamily> mixed =
          options.continue_families
              ? resonant_families(system, result.blocks, family.type,
                                  options.continuation.start_energy_fraction * family.energy_max,
                                  options.resonant_seeds)
              : std::vector<ResonantFamily>{};
      for (ResonantFamily& seeded : mixed) {
        FamilyResult replacement = family;
        replacement.type = std::move(seeded.type);
        replacement.resonance_note = std::move(seeded.note);
        replacement.resonance_shift_coefficient = seeded.shift_coefficient;
        jobs.push_back(static_cast<int>(result.families.size()));
        result.families.push_back(std::move(replacement));
      }
      if (!mixed.empty()) continue;
      jobs.push_back(static_cast<int>(result.families.size()));
    }
    result.families.push_back(std::move(family));
  }
  continue_families(system, options, jobs, started, result);
  if (options.branches.enabled)
    for (int generation = 0; generation < options.branches.depth && !jobs.empty(); ++generation) {
      jobs = add_born_families(system, symmetry, options, jobs, result);
      continue_families(system, options, jobs, started, result);
      for (const int index : jobs) {
        FamilyResult& family = result.families[static_cast<std::size_t>(index)];
        end_at_return_to_parent(family, result.families[static_cast<std::size_t>(family.parent_family)],
                                result.units.energy_label);
      }
    }
  add_totals(result);
  add_resonance_encounters(result, options.encounter_max_ratio);
  if (options.continue_families)
    result.orbit_count = count_orbits(result.families, n, result.units.cm1_per_energy,
                                      result.units.energy_label, options.orbit_count, result.warnings);
  result.seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - started).count();
  const auto continued = std::count_if(result.families.begin(), result.families.end(),
                                       [](const FamilyResult& family) { return family.continued; });
  result.message = fmt::format("{} families, {} continued", result.families.size(), continued);
  return result;
}

FamiliesResult compute_molecular_families(const Potential& potential, const HarmonicResult& harmonic,
                                          const PointGroupResult& group, const ModeSymmetryResult& species,
                                          const std::vector<int>& mode_order, const FamiliesOptions& options,
                                          const MolecularSystemOptions& system_options) {
  options.validate();
  system_options.validate();
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
  add_bond_amplitude_ratios(system, harmonic, result);
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
