#include "anharmonic/vpt2.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdint>
#include <map>
#include <numeric>
#include <set>
#include <tuple>
#include <unordered_map>

#include "anharmonic/effective_hamiltonian.hpp"
#include "core/error.hpp"
#include "core/option_checks.hpp"
#include "core/units.hpp"
#include "harmonic/inertia.hpp"

namespace overtone {

std::string to_string(Vpt2Status status) {
  switch (status) {
    case Vpt2Status::ok:
      return "ok";
    case Vpt2Status::polyad_truncated:
      return "polyad_truncated";
  }
  return "unknown";
}

std::string to_string(ResonanceKind kind) {
  switch (kind) {
    case ResonanceKind::fermi_1:
      return "overtone-fundamental";
    case ResonanceKind::fermi_2:
      return "combination-fundamental";
    case ResonanceKind::darling_dennison:
      return "overtone-overtone";
  }
  return "unknown";
}

std::string to_string(LevelKind kind) {
  switch (kind) {
    case LevelKind::fundamental:
      return "fundamental";
    case LevelKind::overtone:
      return "overtone";
    case LevelKind::combination:
      return "combination";
    case LevelKind::other:
      return "other";
  }
  return "unknown";
}

void Vpt2Options::validate() const {
  using namespace option_checks;
  const char* owner = "vpt2";
  require_positive(owner, "fermi_gap_cm1", fermi_gap_cm1);
  require_positive(owner, "fermi_criterion_cm1", fermi_criterion_cm1);
  require_positive(owner, "darling_dennison_gap_cm1", darling_dennison_gap_cm1);
  require_positive(owner, "darling_dennison_coupling_cm1", darling_dennison_coupling_cm1);
  require_positive(owner, "level_degeneracy_tolerance_cm1", level_degeneracy_tolerance_cm1);
  require_at_least(owner, "polyad_max_quanta", polyad_max_quanta, 2);
  require_at_least(owner, "polyad_max_states", polyad_max_states, 2);
  require_positive(owner, "perturbation_ratio_limit", perturbation_ratio_limit);
  require_non_negative(owner, "exclude_below_cm1", exclude_below_cm1);
}

namespace detail {

namespace {

// The ratios of PerturbationCheck, for one term of mode i.
constexpr double turning_point_q2_fundamental = 3.0;  // q² at the turning point of v = 1: 2v + 1
struct TermRatio {
  double ratio = 0.0;
  std::vector<int> modes;
};

void keep_larger(TermRatio& best, double ratio, std::vector<int> modes) {
  if (ratio > best.ratio) best = {ratio, std::move(modes)};
}

}  // namespace

std::vector<PerturbationCheck> perturbation_checks(const ForceConstantTensors& constants,
                                                   const Eigen::VectorXd& omega,
                                                   const std::vector<DegenerateSet>& sets,
                                                   double ratio_limit) {
  const int m = constants.mode_count();
  std::vector<TermRatio> per_mode(static_cast<std::size_t>(m));
  const double root = std::sqrt(turning_point_q2_fundamental);
  for (const auto& e : constants.cubic_entries(0.0)) {
    const double v = std::abs(e.value);
    if (e.i == e.j && e.j == e.k) {
      keep_larger(per_mode[static_cast<std::size_t>(e.i)], root * v / (3.0 * omega[e.i]), {e.i, e.j, e.k});
    } else if (e.i == e.j || e.j == e.k) {  // φ_iij: i the repeated index
      const int i = e.j;
      keep_larger(per_mode[static_cast<std::size_t>(i)], v / omega[i], {e.i, e.j, e.k});
    }
  }
  for (const auto& e : constants.quartic_entries(0.0)) {
    const double v = std::abs(e.value);
    if (e.i == e.l) {
      keep_larger(per_mode[static_cast<std::size_t>(e.i)],
                  turning_point_q2_fundamental * v / (12.0 * omega[e.i]), {e.i, e.j, e.k, e.l});
    } else if (e.i == e.j && e.k == e.l) {  // φ_iijj: both modes see it
      for (int i : {e.i, e.k})
        keep_larger(per_mode[static_cast<std::size_t>(i)], v / (2.0 * omega[i]), {e.i, e.j, e.k, e.l});
    }
  }
  std::vector<PerturbationCheck> checks;
  for (std::size_t s = 0; s < sets.size(); ++s) {
    PerturbationCheck check;
    check.set = static_cast<int>(s);
    check.harmonic_cm1 = sets[s].harmonic_cm1;
    for (int mode : sets[s].modes)
      if (per_mode[static_cast<std::size_t>(mode)].ratio >= check.anharmonic_ratio) {
        check.anharmonic_ratio = per_mode[static_cast<std::size_t>(mode)].ratio;
        check.largest_term = per_mode[static_cast<std::size_t>(mode)].modes;
      }
    check.beyond_perturbation = check.anharmonic_ratio >= ratio_limit;
    checks.push_back(std::move(check));
  }
  return checks;
}

ForceConstantTensors without_modes(const ForceConstantTensors& constants, const std::vector<bool>& excluded) {
  auto out = [&](int mode) { return excluded[static_cast<std::size_t>(mode)]; };
  ForceConstantTensors kept(constants.mode_count());
  for (const auto& e : constants.cubic_entries(0.0))
    if (!out(e.i) && !out(e.j) && !out(e.k)) kept.set_cubic(e.i, e.j, e.k, e.value);
  for (const auto& e : constants.computed_quartic_entries())
    if (!out(e.i) && !out(e.j) && !out(e.k) && !out(e.l)) kept.set_quartic(e.i, e.j, e.k, e.l, e.value);
  return kept;
}

}  // namespace detail

SparseQuanta sparse_quanta(const std::vector<int>& set_quanta) {
  SparseQuanta quanta;
  for (std::size_t s = 0; s < set_quanta.size(); ++s)
    if (set_quanta[s] != 0) quanta.emplace_back(static_cast<int>(s), set_quanta[s]);
  return quanta;
}

std::vector<int> dense_quanta(const SparseQuanta& quanta, std::size_t set_count) {
  std::vector<int> set_quanta(set_count, 0);
  for (const auto& [set, count] : quanta) set_quanta.at(static_cast<std::size_t>(set)) = count;
  return set_quanta;
}

namespace detail {

Eigen::MatrixXd anharmonicity_constants(const ForceConstantTensors& constants, const Eigen::VectorXd& omega,
                                        const std::function<bool(int, int, int)>& resonant) {
  const int m = static_cast<int>(omega.size());
  auto dropped = [&](int a, int b, int c) { return resonant && resonant(a, b, c); };
  Eigen::MatrixXd x = Eigen::MatrixXd::Zero(m, m);
  for (int i = 0; i < m; ++i) {
    double value = constants.quartic(i, i, i, i) / 16.0;
    for (int k = 0; k < m; ++k) {
      const double phi = constants.cubic(i, i, k);
      if (phi == 0.0) continue;
      const double p2 = phi * phi;
      value += p2 * (-1.0 / (8.0 * omega[k]) - 1.0 / (32.0 * (2.0 * omega[i] + omega[k])));
      if (!dropped(i, i, k)) value += p2 / (32.0 * (2.0 * omega[i] - omega[k]));
    }
    x(i, i) = value;
  }
  for (int i = 0; i < m; ++i)
    for (int j = i + 1; j < m; ++j) {
      double value = constants.quartic(i, i, j, j) / 4.0;
      for (int k = 0; k < m; ++k)
        value -= constants.cubic(i, i, k) * constants.cubic(j, j, k) / (4.0 * omega[k]);
      for (int k = 0; k < m; ++k) {
        const double phi = constants.cubic(i, j, k);
        if (phi == 0.0) continue;
        double bracket = -1.0 / (omega[i] + omega[j] + omega[k]);
        // For k = i or k = j the second and fourth (or third) fractions cancel exactly;
        // skip both rather than subtract two large equal numbers.
        if (k != i && k != j) {
          if (!dropped(i, j, k)) bracket += 1.0 / (omega[i] + omega[j] - omega[k]);
          if (!dropped(i, k, j)) bracket -= 1.0 / (omega[i] + omega[k] - omega[j]);
          if (!dropped(j, k, i)) bracket -= 1.0 / (omega[j] + omega[k] - omega[i]);
        } else {
          const int other = k == i ? j : i;  // the index not repeated: φ_kk,other
          if (!dropped(k, k, other)) bracket -= 1.0 / (2.0 * omega[k] - omega[other]);
        }
        value += phi * phi / 8.0 * bracket;
      }
      x(i, j) = x(j, i) = value;
    }
  return x;
}

void coriolis_constants(const HarmonicResult& harmonic, std::vector<Eigen::MatrixXd>& zeta,
                        Eigen::Vector3d& rotational_constants_cm1) {
  const Eigen::VectorXd& masses = harmonic.masses_da;
  const Eigen::VectorXd& x = harmonic.coordinates_angstrom;
  const Eigen::Index atoms = masses.size();
  const Eigen::SelfAdjointEigenSolver<Eigen::Matrix3d> principal(inertia_tensor(x, masses));
  const Eigen::Vector3d& moments = principal.eigenvalues();
  const Eigen::Matrix3d& axes = principal.eigenvectors();
  // A moment this small relative to the largest is the axis of a linear molecule.
  constexpr double vanishing_moment = 1e-8;
  for (int alpha = 0; alpha < 3; ++alpha)
    rotational_constants_cm1[alpha] =
        moments[alpha] > vanishing_moment * moments.maxCoeff()
            ? units::hbar_internal * units::hbar_internal / (2.0 * moments[alpha]) * units::cm1_per_kcal_mol
            : 0.0;
  const Eigen::MatrixXd& l = harmonic.mass_weighted_modes;
  const Eigen::Index m = l.cols();
  Eigen::MatrixXd rotated(l.rows(), m);
  for (Eigen::Index a = 0; a < atoms; ++a)
    rotated.middleRows(3 * a, 3) = axes.transpose() * l.middleRows(3 * a, 3);
  zeta.assign(3, Eigen::MatrixXd::Zero(m, m));
  for (int alpha = 0; alpha < 3; ++alpha) {
    const int beta = (alpha + 1) % 3, gamma = (alpha + 2) % 3;
    for (Eigen::Index a = 0; a < atoms; ++a) {
      const auto lb = rotated.row(3 * a + beta);
      const auto lg = rotated.row(3 * a + gamma);
      zeta[static_cast<std::size_t>(alpha)] += lb.transpose() * lg - lg.transpose() * lb;
    }
  }
}

double term_value(const Eigen::VectorXd& omega, const Eigen::MatrixXd& x, const std::vector<int>& quanta) {
  const Eigen::Index m = omega.size();
  double e = 0.0;
  for (Eigen::Index i = 0; i < m; ++i) {
    const double ni = quanta[static_cast<std::size_t>(i)];
    e += omega[i] * ni;
    for (Eigen::Index j = i; j < m; ++j) {
      const double nj = quanta[static_cast<std::size_t>(j)];
      e += x(i, j) * ((ni + 0.5) * (nj + 0.5) - 0.25);
    }
  }
  return e;
}

}  // namespace detail

namespace {

using detail::Quanta;

// All component states of a manifold: the quanta of each set distributed over its modes.
std::vector<Quanta> manifold_states(const std::vector<int>& set_quanta,
                                    const std::vector<DegenerateSet>& sets, int m) {
  std::vector<Quanta> states{Quanta(static_cast<std::size_t>(m), 0)};
  for (std::size_t s = 0; s < sets.size(); ++s) {
    const int v = set_quanta[s];
    if (v == 0) continue;
    const auto& modes = sets[s].modes;
    std::vector<Quanta> next;
    for (const auto& base : states) {
      // Distribute v quanta over the modes of the set (compositions).
      std::vector<int> counts(modes.size(), 0);
      std::function<void(std::size_t, int)> distribute = [&](std::size_t index, int left) {
        if (index + 1 == modes.size()) {
          counts[index] = left;
          Quanta state = base;
          for (std::size_t c = 0; c < modes.size(); ++c)
            state[static_cast<std::size_t>(modes[c])] = counts[c];
          next.push_back(state);
          return;
        }
        for (int here = left; here >= 0; --here) {
          counts[index] = here;
          distribute(index + 1, left - here);
        }
      };
      distribute(0, v);
    }
    states.swap(next);
  }
  return states;
}

double factorial(int n) {
  double f = 1.0;
  for (int k = 2; k <= n; ++k) f *= k;
  return f;
}

// How operation R acts on the span of the given states (products of oscillator states):
// |n⟩ = Π (a_i†)^{n_i}/sqrt(n_i!) |0⟩ and a_i† transforms like q_i. Only valid when the
// span is invariant (R block-diagonal over sets and the states a union of manifolds).
Eigen::MatrixXd state_representation(const std::vector<Quanta>& states, const Eigen::MatrixXd& r) {
  std::map<Quanta, int> position;
  for (std::size_t s = 0; s < states.size(); ++s) position[states[s]] = static_cast<int>(s);
  const Eigen::Index size = static_cast<Eigen::Index>(states.size());
  Eigen::MatrixXd d = Eigen::MatrixXd::Zero(size, size);
  const int m = static_cast<int>(r.rows());
  for (Eigen::Index col = 0; col < size; ++col) {
    const Quanta& n = states[static_cast<std::size_t>(col)];
    std::map<Quanta, double> polynomial{{Quanta(static_cast<std::size_t>(m), 0), 1.0}};
    double norm = 1.0;
    for (int i = 0; i < m; ++i) {
      norm *= std::sqrt(factorial(n[static_cast<std::size_t>(i)]));
      for (int copy = 0; copy < n[static_cast<std::size_t>(i)]; ++copy) {
        std::map<Quanta, double> next;
        for (const auto& [monomial, coefficient] : polynomial)
          for (int j = 0; j < m; ++j) {
            const double factor = r(j, i);
            if (factor == 0.0) continue;
            Quanta raised = monomial;
            ++raised[static_cast<std::size_t>(j)];
            next[raised] += coefficient * factor;
          }
        polynomial.swap(next);
      }
    }
    for (const auto& [monomial, coefficient] : polynomial) {
      const auto it = position.find(monomial);
      if (it == position.end()) continue;
      double monomial_norm = 1.0;
      for (int e : monomial) monomial_norm *= std::sqrt(factorial(e));
      d(it->second, col) += coefficient * monomial_norm / norm;
    }
  }
  return d;
}

// Eigenvalues (ascending) grouped into clusters of near-equal values.
std::vector<std::vector<int>> cluster_eigenvalues(const Eigen::VectorXd& values, double tolerance) {
  std::vector<std::vector<int>> clusters;
  for (Eigen::Index k = 0; k < values.size(); ++k) {
    if (!clusters.empty() && values[k] - values[clusters.back().back()] <= tolerance)
      clusters.back().push_back(static_cast<int>(k));
    else
      clusters.push_back({static_cast<int>(k)});
  }
  return clusters;
}

// The states of one manifold are consecutive in a group's basis, so a sublevel's vectors
// are kept on those rows only: the work on a polyad stays proportional to its states times
// the states of each manifold, not to the square of its size per sublevel.
struct Sublevel {
  int manifold = 0;            // index within the group
  double energy = 0.0;         // deperturbed
  Eigen::Index first_row = 0;  // of the manifold's states in the group's basis
  Eigen::MatrixXd vectors;     // columns on the manifold's rows (first_row onwards)
};

// ---------------------------------------------------------------------------------------
// Phases of run_vpt2

// Quanta per set, from (set, count) entries.
std::vector<int> set_quanta(int set_count, std::initializer_list<std::pair<int, int>> entries) {
  std::vector<int> v(static_cast<std::size_t>(set_count), 0);
  for (const auto& [s, count] : entries) v[static_cast<std::size_t>(s)] += count;
  return v;
}

// What the phases share.
struct Vpt2Context {
  const ForceConstantTensors& constants;
  const ModeSymmetry& symmetry;
  const Vpt2Options& options;
  Eigen::VectorXd omega;
  bool group_known;  // the group is used for rules and species
  int m;
  const std::vector<DegenerateSet>& sets;
  detail::AnharmonicOperator op;
  // R(g) exactly block-diagonal over the sets, for the action on oscillator states.
  std::vector<Eigen::MatrixXd> block_operations;
  // Per set: dropped from the treatment (reduced-dimensional VPT2).
  std::vector<bool> excluded_sets;

  bool kept(std::initializer_list<int> set_indices) const {
    for (int s : set_indices)
      if (excluded_sets[static_cast<std::size_t>(s)]) return false;
    return true;
  }

  int set_count() const { return static_cast<int>(sets.size()); }
  std::vector<int> unit(std::initializer_list<std::pair<int, int>> entries) const {
    return set_quanta(set_count(), entries);
  }
};

std::vector<DegenerateSet> degenerate_sets(const ModeSymmetry& symmetry, const Eigen::VectorXd& omega) {
  std::vector<DegenerateSet> sets;
  for (int s = 0; s < symmetry.set_count(); ++s) {
    const auto& members = symmetry.sets()[static_cast<std::size_t>(s)];
    DegenerateSet set;
    set.modes = members;
    for (int mode : members) set.harmonic_cm1 += omega[mode] / static_cast<double>(members.size());
    set.species = symmetry.set_species(s);
    sets.push_back(set);
  }
  return sets;
}

// x(Coriolis) between modes of different sets; between degenerate sets the component
// values depend on the basis within each set and would break the symmetry of the levels,
// so the set average (the basis-invariant part) is kept and the l-dependent terms neglected.
void coriolis_terms(const HarmonicResult& harmonic, const Vpt2Context& c, Vpt2Result& result) {
  detail::coriolis_constants(harmonic, result.coriolis_zeta, result.rotational_constants_cm1);
  result.x_coriolis_cm1 = Eigen::MatrixXd::Zero(c.m, c.m);
  if (!c.options.include_coriolis) return;
  const auto& set_of = result.set_of_mode;
  for (int i = 0; i < c.m; ++i)
    for (int j = 0; j < c.m; ++j) {
      if (set_of[static_cast<std::size_t>(i)] == set_of[static_cast<std::size_t>(j)]) continue;
      double sum = 0.0;
      for (int alpha = 0; alpha < 3; ++alpha) {
        const double z = result.coriolis_zeta[static_cast<std::size_t>(alpha)](i, j);
        sum += result.rotational_constants_cm1[alpha] * z * z;
      }
      result.x_coriolis_cm1(i, j) = sum * (c.omega[i] / c.omega[j] + c.omega[j] / c.omega[i]);
    }
  for (int s = 0; s < c.set_count(); ++s)
    for (int t = 0; t < c.set_count(); ++t) {
      const auto& a = c.sets[static_cast<std::size_t>(s)].modes;
      const auto& b = c.sets[static_cast<std::size_t>(t)].modes;
      if (s == t || (a.size() == 1 && b.size() == 1)) continue;
      double mean = 0.0;
      for (int i : a)
        for (int j : b) mean += result.x_coriolis_cm1(i, j) / static_cast<double>(a.size() * b.size());
      for (int i : a)
        for (int j : b) result.x_coriolis_cm1(i, j) = mean;
    }
}

double largest_singular_value(const Eigen::MatrixXd& block) {
  if (block.size() == 0) return 0.0;
  return Eigen::JacobiSVD<Eigen::MatrixXd>(block).singularValues()[0];
}

// W between two manifolds: the largest singular value of the coupling block, first order
// (cubic) or second order (quartic plus the Van Vleck term, both manifolds excluded).
double manifold_coupling(const Vpt2Context& c, const std::vector<int>& lower, const std::vector<int>& upper,
                         bool first_order) {
  const auto a = manifold_states(lower, c.sets, c.m), b = manifold_states(upper, c.sets, c.m);
  detail::StateSet excluded;
  if (!first_order) {
    excluded.insert(a.begin(), a.end());
    excluded.insert(b.begin(), b.end());
  }
  Eigen::MatrixXd block(static_cast<Eigen::Index>(a.size()), static_cast<Eigen::Index>(b.size()));
  for (std::size_t i = 0; i < a.size(); ++i)
    for (std::size_t j = 0; j < b.size(); ++j)
      block(static_cast<Eigen::Index>(i), static_cast<Eigen::Index>(j)) =
          first_order ? c.op.cubic_element(a[i], b[j])
                      : c.op.quartic_element(a[i], b[j]) + c.op.second_order(a[i], b[j], excluded);
  return largest_singular_value(block);
}

// Martin's criterion W⁴/|Δ|³ and the flag of a Fermi candidate.
void flag_fermi(const Vpt2Options& options, Resonance& r) {
  r.criterion_value = r.gap_cm1 == 0.0 ? std::numeric_limits<double>::infinity()
                                       : std::pow(r.coupling_cm1, 4) / std::pow(std::abs(r.gap_cm1), 3);
  r.flagged = options.treat_resonances && r.criterion_value >= options.fermi_criterion_cm1 &&
              (r.symmetry_allowed || !options.require_symmetry_allowed);
}

// Fermi type 1 (2ω_s ≈ ω_t), type 2 (ω_s + ω_t ≈ ω_u) and Darling–Dennison (2ω_s ≈ 2ω_t)
// candidates within their gaps, with couplings, symmetry rule and flags.
void resonance_candidates(const Vpt2Context& c, Vpt2Result& result) {
  const int n = c.set_count();
  auto omega = [&](int s) { return c.sets[static_cast<std::size_t>(s)].harmonic_cm1; };
  for (int s = 0; s < n; ++s)
    for (int t = 0; t < n; ++t) {
      if (s == t || std::abs(2.0 * omega(s) - omega(t)) > c.options.fermi_gap_cm1 || !c.kept({s, t}))
        continue;
      Resonance r;
      r.kind = ResonanceKind::fermi_1;
      r.sets = std::vector<int>{s, t};
      r.gap_cm1 = 2.0 * omega(s) - omega(t);
      r.coupling_cm1 = manifold_coupling(c, c.unit({{s, 2}}), c.unit({{t, 1}}), true);
      r.symmetry_allowed = !c.group_known || c.symmetry.overtone_couples(s, t);
      flag_fermi(c.options, r);
      result.resonances.push_back(r);
    }
  for (int s = 0; s < n; ++s)
    for (int t = s + 1; t < n; ++t)
      for (int u = 0; u < n; ++u) {
        if (u == s || u == t || std::abs(omega(s) + omega(t) - omega(u)) > c.options.fermi_gap_cm1 ||
            !c.kept({s, t, u}))
          continue;
        Resonance r;
        r.kind = ResonanceKind::fermi_2;
        r.sets = std::vector<int>{s, t, u};
        r.gap_cm1 = omega(s) + omega(t) - omega(u);
        r.coupling_cm1 = manifold_coupling(c, c.unit({{s, 1}, {t, 1}}), c.unit({{u, 1}}), true);
        r.symmetry_allowed = !c.group_known || c.symmetry.combination_couples(s, t, u);
        flag_fermi(c.options, r);
        result.resonances.push_back(r);
      }
  for (int s = 0; s < n; ++s)
    for (int t = s + 1; t < n; ++t) {
      if (std::abs(2.0 * omega(s) - 2.0 * omega(t)) > c.options.darling_dennison_gap_cm1 || !c.kept({s, t}))
        continue;
      Resonance r;
      r.kind = ResonanceKind::darling_dennison;
      r.sets = std::vector<int>{s, t};
      r.gap_cm1 = 2.0 * omega(s) - 2.0 * omega(t);
      r.coupling_cm1 = manifold_coupling(c, c.unit({{s, 2}}), c.unit({{t, 2}}), false);
      r.criterion_value = r.coupling_cm1;
      r.symmetry_allowed = !c.group_known || c.symmetry.overtones_couple(s, t);
      r.flagged = c.options.treat_resonances && r.coupling_cm1 >= c.options.darling_dennison_coupling_cm1 &&
                  (r.symmetry_allowed || !c.options.require_symmetry_allowed);
      result.resonances.push_back(r);
    }
}

// Deperturbed constants: the flagged Fermi triads (sets a ≤ b, c for ω_a + ω_b ≈ ω_c)
// dropped from x.
void deperturbed_constants(const Vpt2Context& c, Vpt2Result& result) {
  std::set<std::array<int, 3>> resonant_sets;
  for (const auto& r : result.resonances) {
    if (!r.flagged) continue;
    if (r.kind == ResonanceKind::fermi_1) resonant_sets.insert({r.sets[0], r.sets[0], r.sets[1]});
    if (r.kind == ResonanceKind::fermi_2)
      resonant_sets.insert({std::min(r.sets[0], r.sets[1]), std::max(r.sets[0], r.sets[1]), r.sets[2]});
  }
  const auto& set_of = result.set_of_mode;
  auto resonant = [&](int a, int b, int k) {
    const int sa = set_of[static_cast<std::size_t>(a)], sb = set_of[static_cast<std::size_t>(b)];
    return resonant_sets.count({std::min(sa, sb), std::max(sa, sb), set_of[static_cast<std::size_t>(k)]}) > 0;
  };
  result.x_vibrational_cm1 = resonant_sets.empty()
                                 ? result.x_vibrational_plain_cm1
                                 : detail::anharmonicity_constants(c.constants, c.omega, resonant);
  result.x_cm1 = result.x_vibrational_cm1 + result.x_coriolis_cm1;
}

// A move between manifolds made by a flagged resonance (set-quanta difference).
struct Move {
  std::vector<std::pair<int, int>> entries;  // (set, change of quanta), ascending set
  int resonance;
  bool first_order;
};

std::vector<Move> flagged_moves(const Vpt2Result& result) {
  std::vector<Move> moves;
  for (std::size_t k = 0; k < result.resonances.size(); ++k) {
    const auto& r = result.resonances[k];
    if (!r.flagged) continue;
    std::map<int, int> change;
    if (r.kind == ResonanceKind::fermi_1) change = {{r.sets[0], 2}, {r.sets[1], -1}};
    if (r.kind == ResonanceKind::fermi_2) change = {{r.sets[0], 1}, {r.sets[1], 1}, {r.sets[2], -1}};
    if (r.kind == ResonanceKind::darling_dennison) change = {{r.sets[0], 2}, {r.sets[1], -2}};
    moves.push_back(
        {{change.begin(), change.end()}, static_cast<int>(k), r.kind != ResonanceKind::darling_dennison});
  }
  return moves;
}

// Line-list manifolds: fundamentals, overtones, binary combinations (when asked), in
// report order.
using WantedManifolds = std::vector<std::pair<std::vector<int>, LevelKind>>;

WantedManifolds line_list_manifolds(const Vpt2Context& c) {
  WantedManifolds wanted;
  const int n = c.set_count();
  for (int s = 0; s < n; ++s)
    if (c.kept({s})) wanted.push_back({c.unit({{s, 1}}), LevelKind::fundamental});
  for (int s = 0; s < n; ++s)
    if (c.kept({s})) wanted.push_back({c.unit({{s, 2}}), LevelKind::overtone});
  if (!c.options.include_combination_levels) return wanted;
  for (int s = 0; s < n; ++s)
    for (int t = s + 1; t < n; ++t)
      if (c.kept({s, t})) wanted.push_back({c.unit({{s, 1}, {t, 1}}), LevelKind::combination});
  return wanted;
}

// A flagged coupling inside a group: manifold `upper` is manifold `lower` moved by the
// move's delta.
struct GroupCoupling {
  int lower;
  int upper;
  int move;
};

// Manifolds diagonalized together: a connected component of the graph whose nodes are the
// manifolds with at most polyad_max_quanta quanta and whose edges are the flagged moves,
// explored from the line-list manifolds. The work is the manifolds reached times the
// flagged moves; candidates that were not flagged cost nothing here.
struct ResonanceGroup {
  std::vector<std::vector<int>> manifolds;  // breadth-first from a line-list manifold
  std::vector<GroupCoupling> couplings;
  bool beyond_quanta = false;  // a flagged move leads to a manifold with too many quanta
  bool beyond_states = false;  // the component was cut at polyad_max_states
  bool truncated() const { return beyond_quanta || beyond_states; }
};

// A manifold as its nonzero (set, quanta) entries in ascending set order, packed one per
// integer: a polyad manifold has a handful of quanta, so keys stay a few integers long
// whatever the number of modes.
using ManifoldKey = std::vector<std::uint32_t>;
constexpr int quanta_bits = 8;

struct ManifoldKeyHash {
  std::size_t operator()(const ManifoldKey& key) const {
    std::size_t h = key.size();
    for (std::uint32_t e : key)
      h ^= static_cast<std::size_t>(e) + 0x9e3779b97f4a7c15ULL + (h << 6) + (h >> 2);
    return h;
  }
};
template <class Value>
using ManifoldMap = std::unordered_map<ManifoldKey, Value, ManifoldKeyHash>;

ManifoldKey key_of(const std::vector<int>& manifold) {
  ManifoldKey key;
  for (std::size_t s = 0; s < manifold.size(); ++s)
    if (manifold[s] != 0)
      key.push_back(static_cast<std::uint32_t>(s) << quanta_bits | static_cast<std::uint32_t>(manifold[s]));
  return key;
}

std::vector<int> manifold_of(const ManifoldKey& key, int set_count) {
  std::vector<int> manifold(static_cast<std::size_t>(set_count), 0);
  for (std::uint32_t e : key) manifold[e >> quanta_bits] = static_cast<int>(e & ((1u << quanta_bits) - 1));
  return manifold;
}

// `from` moved by a flagged move (sign +1 or −1); false if a set would go negative.
bool moved(const ManifoldKey& from, const Move& move, int sign, ManifoldKey& to) {
  to.clear();
  std::size_t f = 0;
  for (const auto& [set, change] : move.entries) {
    for (; f < from.size() && static_cast<int>(from[f] >> quanta_bits) < set; ++f) to.push_back(from[f]);
    int quanta = sign * change;
    if (f < from.size() && static_cast<int>(from[f] >> quanta_bits) == set)
      quanta += static_cast<int>(from[f++] & ((1u << quanta_bits) - 1));
    if (quanta < 0) return false;
    if (quanta > 0)
      to.push_back(static_cast<std::uint32_t>(set) << quanta_bits | static_cast<std::uint32_t>(quanta));
  }
  for (; f < from.size(); ++f) to.push_back(from[f]);
  return true;
}

int key_quanta(const ManifoldKey& key) {
  int total = 0;
  for (std::uint32_t e : key) total += static_cast<int>(e & ((1u << quanta_bits) - 1));
  return total;
}

// A component grows one layer of graph distance at a time, so that one larger than
// polyad_max_states keeps whole layers nearest to the line-list manifold it started from,
// whatever the order of the moves. A line-list manifold belongs to one group only; the
// line-list manifolds a cut left out start groups of their own, which may share other
// manifolds with the cut one.
std::vector<ResonanceGroup> resonance_groups(const Vpt2Context& c, const WantedManifolds& wanted,
                                             const std::vector<Move>& moves) {
  ManifoldMap<int> group_of_wanted;  // the group that holds each line-list manifold
  for (const auto& w : wanted) group_of_wanted.emplace(key_of(w.first), -1);
  std::vector<ResonanceGroup> groups;
  ManifoldKey next;
  const auto state_limit = static_cast<std::size_t>(c.options.polyad_max_states);
  for (const auto& seed : wanted) {
    const ManifoldKey seed_key = key_of(seed.first);
    if (group_of_wanted.at(seed_key) >= 0) continue;
    const int id = static_cast<int>(groups.size());
    ResonanceGroup group;
    std::vector<ManifoldKey> keys{seed_key};
    group_of_wanted[seed_key] = id;
    ManifoldMap<int> position{{seed_key, 0}};
    std::size_t states = manifold_states(seed.first, c.sets, c.m).size();
    for (std::size_t layer_begin = 0; layer_begin < keys.size();) {
      const std::size_t layer_end = keys.size();
      std::size_t layer_states = 0;
      for (std::size_t head = layer_begin; head < layer_end; ++head)
        for (const auto& move : moves)
          for (int sign : {1, -1}) {
            if (!moved(keys[head], move, sign, next)) continue;
            if (key_quanta(next) > c.options.polyad_max_quanta) {
              group.beyond_quanta = true;
              continue;
            }
            // A whole component is explored from its first line-list manifold, so another
            // group can hold a line-list manifold of this one only if that group was cut.
            const auto line_list = group_of_wanted.find(next);
            if (line_list != group_of_wanted.end() && line_list->second >= 0 && line_list->second != id) {
              group.beyond_states = true;
              continue;
            }
            if (!position.emplace(next, static_cast<int>(keys.size())).second) continue;
            layer_states += manifold_states(manifold_of(next, c.set_count()), c.sets, c.m).size();
            keys.push_back(next);
          }
      if (states + layer_states > state_limit) {
        group.beyond_states = true;
        for (std::size_t k = layer_end; k < keys.size(); ++k) position.erase(keys[k]);
        keys.resize(layer_end);
        break;
      }
      states += layer_states;
      for (std::size_t k = layer_end; k < keys.size(); ++k)
        if (const auto line_list = group_of_wanted.find(keys[k]); line_list != group_of_wanted.end())
          line_list->second = id;
      layer_begin = layer_end;
    }
    for (std::size_t v = 0; v < keys.size(); ++v) {
      group.manifolds.push_back(manifold_of(keys[v], c.set_count()));
      for (std::size_t k = 0; k < moves.size(); ++k) {
        if (!moved(keys[v], moves[k], 1, next)) continue;
        const auto found = position.find(next);
        if (found != position.end())
          group.couplings.push_back({static_cast<int>(v), found->second, static_cast<int>(k)});
      }
    }
    groups.push_back(std::move(group));
  }
  return groups;
}

// One group's component states, the effective Hamiltonian on them and what is derived.
struct GroupStates {
  std::vector<Quanta> states;            // manifold by manifold
  std::vector<std::size_t> first_state;  // of each manifold, then the end
  std::vector<int> manifold_of_state;
  Eigen::MatrixXd h;
  std::vector<Sublevel> sublevels;
  std::vector<std::vector<int>> sublevels_of_manifold;
  std::vector<std::string> species;                 // per sublevel
  std::vector<std::vector<double>> multiplicities;  // per sublevel; empty without a table
  std::vector<std::string> tags;                    // per sublevel
  std::vector<double> corrected;                    // per sublevel, NaN outside a polyad
  std::vector<std::vector<double>> composition;     // per sublevel: weight of each sublevel
  std::vector<bool> coupled;                        // per sublevel
};

// Diagonal from the deperturbed term values; within a manifold the second-order
// couplings, between manifolds those of the connecting flagged resonance.
void group_hamiltonian(const Vpt2Context& c, const ResonanceGroup& group, const std::vector<Move>& moves,
                       const Eigen::MatrixXd& x_cm1, GroupStates& g) {
  const auto& manifolds = group.manifolds;
  std::vector<std::size_t>& first_state = g.first_state;
  for (std::size_t v = 0; v < manifolds.size(); ++v) {
    first_state.push_back(g.states.size());
    for (const auto& state : manifold_states(manifolds[v], c.sets, c.m)) {
      g.states.push_back(state);
      g.manifold_of_state.push_back(static_cast<int>(v));
    }
  }
  first_state.push_back(g.states.size());
  const detail::StateSet excluded(g.states.begin(), g.states.end());
  const auto size = static_cast<Eigen::Index>(g.states.size());
  g.h = Eigen::MatrixXd::Zero(size, size);
  auto second_order = [&](std::size_t a, std::size_t b) {
    return c.op.quartic_element(g.states[a], g.states[b]) +
           c.op.second_order(g.states[a], g.states[b], excluded);
  };
  auto set = [&](std::size_t a, std::size_t b, double value) {
    g.h(static_cast<Eigen::Index>(a), static_cast<Eigen::Index>(b)) = value;
    g.h(static_cast<Eigen::Index>(b), static_cast<Eigen::Index>(a)) = value;
  };
  for (std::size_t v = 0; v < manifolds.size(); ++v)
    for (std::size_t a = first_state[v]; a < first_state[v + 1]; ++a) {
      g.h(static_cast<Eigen::Index>(a), static_cast<Eigen::Index>(a)) =
          detail::term_value(c.omega, x_cm1, g.states[a]);
      for (std::size_t b = a + 1; b < first_state[v + 1]; ++b) set(a, b, second_order(a, b));
    }
  for (const GroupCoupling& coupling : group.couplings) {
    const bool first_order = moves[static_cast<std::size_t>(coupling.move)].first_order;
    const auto lower = static_cast<std::size_t>(coupling.lower),
               upper = static_cast<std::size_t>(coupling.upper);
    for (std::size_t a = first_state[lower]; a < first_state[lower + 1]; ++a)
      for (std::size_t b = first_state[upper]; b < first_state[upper + 1]; ++b)
        set(a, b, first_order ? c.op.cubic_element(g.states[a], g.states[b]) : second_order(a, b));
  }
}

// Deperturbed sublevels: each manifold's block alone, eigenvalues clustered into levels.
void deperturbed_sublevels(const Vpt2Context& c, std::size_t manifold_count, GroupStates& g) {
  g.sublevels_of_manifold.assign(manifold_count, {});
  for (std::size_t v = 0; v < manifold_count; ++v) {
    const auto first = static_cast<Eigen::Index>(g.first_state[v]);
    const auto rows = static_cast<Eigen::Index>(g.first_state[v + 1] - g.first_state[v]);
    const Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> solver(g.h.block(first, first, rows, rows));
    for (const auto& cluster :
         cluster_eigenvalues(solver.eigenvalues(), c.options.level_degeneracy_tolerance_cm1)) {
      Sublevel sub;
      sub.manifold = static_cast<int>(v);
      sub.first_row = first;
      sub.vectors.resize(rows, static_cast<Eigen::Index>(cluster.size()));
      for (std::size_t k = 0; k < cluster.size(); ++k) {
        sub.energy += solver.eigenvalues()[cluster[k]] / static_cast<double>(cluster.size());
        sub.vectors.col(static_cast<Eigen::Index>(k)) = solver.eigenvectors().col(cluster[k]);
      }
      g.sublevels_of_manifold[v].push_back(static_cast<int>(g.sublevels.size()));
      g.sublevels.push_back(std::move(sub));
    }
  }
}

// Species of each sublevel from the group's action on its states, and the tags that
// distinguish the sublevels of one manifold.
void sublevel_species(const Vpt2Context& c, GroupStates& g) {
  g.species.assign(g.sublevels.size(), "");
  g.multiplicities.assign(g.sublevels.size(), {});
  if (c.group_known && c.symmetry.has_character_table()) {
    // Each manifold spans a representation of its own (the operations keep the sets).
    for (std::size_t v = 0; v < g.sublevels_of_manifold.size(); ++v) {
      const std::vector<Quanta> states(g.states.begin() + static_cast<std::ptrdiff_t>(g.first_state[v]),
                                       g.states.begin() + static_cast<std::ptrdiff_t>(g.first_state[v + 1]));
      std::vector<Eigen::MatrixXd> representation;
      for (const auto& r : c.block_operations) representation.push_back(state_representation(states, r));
      for (int k : g.sublevels_of_manifold[v]) {
        std::vector<double> characters;
        const Eigen::MatrixXd& basis = g.sublevels[static_cast<std::size_t>(k)].vectors;
        for (const auto& d : representation) characters.push_back((basis.transpose() * d * basis).trace());
        g.species[static_cast<std::size_t>(k)] = c.symmetry.species_label(characters);
        g.multiplicities[static_cast<std::size_t>(k)] = c.symmetry.multiplicities(characters);
      }
    }
  }
  g.tags.assign(g.sublevels.size(), "");
  for (const auto& subs : g.sublevels_of_manifold) {
    if (subs.size() < 2) continue;
    for (std::size_t k = 0; k < subs.size(); ++k) {
      const std::string& species = g.species[static_cast<std::size_t>(subs[k])];
      const auto repeats = std::count_if(subs.begin(), subs.end(), [&](int other) {
        return g.species[static_cast<std::size_t>(other)] == species;
      });
      g.tags[static_cast<std::size_t>(subs[k])] = species.empty() ? std::to_string(k + 1)
                                                  : repeats > 1   ? species + "#" + std::to_string(k + 1)
                                                                  : species;
    }
  }
}

// Above this weight in a resonance-corrected state a sublevel takes part in the
// resonance (and is listed in the mixing): an intensity share of 1e-6 is far below
// anything a spectrum shows.
constexpr double coupled_weight = 1e-6;

// Resonance-corrected states: the whole group diagonalized, its eigenvalue clusters
// assigned one to one to the sublevels by overlap (largest first, equal degeneracy
// preferred). A sublevel takes part in the resonance only if its corrected state mixes with
// another sublevel, or another's mixes into it (a Δ level beside a Σ dyad does not).
void resonance_corrected_states(const Vpt2Context& c, GroupStates& g) {
  const std::size_t count = g.sublevels.size();
  g.corrected.assign(count, std::numeric_limits<double>::quiet_NaN());
  g.composition.assign(count, {});
  g.coupled.assign(count, false);
  const Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> solver(g.h);
  const auto clusters = cluster_eigenvalues(solver.eigenvalues(), c.options.level_degeneracy_tolerance_cm1);
  Eigen::MatrixXd overlap(static_cast<Eigen::Index>(clusters.size()), static_cast<Eigen::Index>(count));
  for (std::size_t k = 0; k < clusters.size(); ++k)
    for (std::size_t s = 0; s < count; ++s) {
      double w = 0.0;
      for (int e : clusters[k])
        w += (g.sublevels[s].vectors.transpose() *
              solver.eigenvectors().col(e).segment(g.sublevels[s].first_row, g.sublevels[s].vectors.rows()))
                 .squaredNorm();
      overlap(static_cast<Eigen::Index>(k), static_cast<Eigen::Index>(s)) =
          w / static_cast<double>(clusters[k].size());
    }
  std::vector<std::tuple<double, int, int>> pairs;
  for (std::size_t k = 0; k < clusters.size(); ++k)
    for (std::size_t s = 0; s < count; ++s) {
      const bool same_size = static_cast<Eigen::Index>(clusters[k].size()) == g.sublevels[s].vectors.cols();
      pairs.emplace_back(
          (same_size ? 1.0 : 0.0) + overlap(static_cast<Eigen::Index>(k), static_cast<Eigen::Index>(s)),
          static_cast<int>(k), static_cast<int>(s));
    }
  std::sort(pairs.begin(), pairs.end(),
            [](const auto& a, const auto& b) { return std::get<0>(a) > std::get<0>(b); });
  std::vector<bool> cluster_used(clusters.size(), false), sublevel_used(count, false);
  for (const auto& [score, k, s] : pairs) {
    if (cluster_used[static_cast<std::size_t>(k)] || sublevel_used[static_cast<std::size_t>(s)]) continue;
    cluster_used[static_cast<std::size_t>(k)] = sublevel_used[static_cast<std::size_t>(s)] = true;
    double energy = 0.0;
    for (int e : clusters[static_cast<std::size_t>(k)]) energy += solver.eigenvalues()[e];
    g.corrected[static_cast<std::size_t>(s)] =
        energy / static_cast<double>(clusters[static_cast<std::size_t>(k)].size());
    for (std::size_t t = 0; t < count; ++t)
      g.composition[static_cast<std::size_t>(s)].push_back(overlap(k, static_cast<Eigen::Index>(t)));
  }
  for (std::size_t s = 0; s < count; ++s)
    for (std::size_t t = 0; t < count; ++t)
      if (s != t && g.composition[s].size() == count && g.composition[s][t] > coupled_weight)
        g.coupled[s] = g.coupled[t] = true;
}

// The line-list level of one sublevel (without polyad data).
VibrationalLevel sublevel_level(const Vpt2Context& c, const GroupStates& g, const std::vector<int>& manifold,
                                LevelKind kind, const std::vector<int>& subs, std::size_t k) {
  const auto index = static_cast<std::size_t>(subs[k]);
  VibrationalLevel level;
  level.kind = kind;
  level.set_quanta = manifold;
  level.sublevel = static_cast<int>(k);
  level.sublevel_count = static_cast<int>(subs.size());
  level.degeneracy = static_cast<int>(g.sublevels[index].vectors.cols());
  for (int s = 0; s < c.set_count(); ++s)
    level.harmonic_cm1 +=
        manifold[static_cast<std::size_t>(s)] * c.sets[static_cast<std::size_t>(s)].harmonic_cm1;
  level.anharmonic_cm1 = g.sublevels[index].energy;
  level.species = g.species[index];
  const auto& multiplicities = g.multiplicities[index];
  if (!multiplicities.empty()) {
    level.activity_known = true;
    for (std::size_t irrep = 0; irrep < multiplicities.size(); ++irrep)
      if (as_multiplicity(multiplicities[irrep]).count >= 1) {
        level.ir_active = level.ir_active || c.symmetry.irreps()[irrep].ir_active;
        level.raman_active = level.raman_active || c.symmetry.irreps()[irrep].raman_active;
      }
  }
  return level;
}

// The composition of a sublevel's resonance-corrected state, largest weight first.
std::vector<LevelComponent> level_mixing(const ResonanceGroup& group, const GroupStates& g,
                                         std::size_t index) {
  std::vector<LevelComponent> mixing;
  const auto& weights = g.composition[index];
  for (std::size_t t = 0; t < weights.size(); ++t) {
    if (!(weights[t] > coupled_weight)) continue;
    const Sublevel& other = g.sublevels[t];
    const auto& other_subs = g.sublevels_of_manifold[static_cast<std::size_t>(other.manifold)];
    const int other_index = static_cast<int>(
        std::find(other_subs.begin(), other_subs.end(), static_cast<int>(t)) - other_subs.begin());
    mixing.push_back({sparse_quanta(group.manifolds[static_cast<std::size_t>(other.manifold)]), other_index,
                      static_cast<int>(other_subs.size()), g.species[t], g.tags[t], weights[t]});
  }
  std::sort(mixing.begin(), mixing.end(),
            [](const LevelComponent& a, const LevelComponent& b) { return a.weight > b.weight; });
  return mixing;
}

// Levels of the line list in one group; returns their indices in result.levels.
std::vector<int> add_group_levels(const Vpt2Context& c, const ResonanceGroup& group, const GroupStates& g,
                                  const WantedManifolds& wanted, const ManifoldMap<int>& wanted_index,
                                  bool is_polyad, Vpt2Result& result) {
  std::vector<int> group_levels;
  for (std::size_t v = 0; v < group.manifolds.size(); ++v) {
    const auto found = wanted_index.find(key_of(group.manifolds[v]));
    if (found == wanted_index.end()) continue;
    const LevelKind kind = wanted[static_cast<std::size_t>(found->second)].second;
    const auto& subs = g.sublevels_of_manifold[v];
    for (std::size_t k = 0; k < subs.size(); ++k) {
      VibrationalLevel level = sublevel_level(c, g, group.manifolds[v], kind, subs, k);
      const auto index = static_cast<std::size_t>(subs[k]);
      if (is_polyad && g.coupled[index]) {
        level.resonance_corrected_cm1 = g.corrected[index];
        level.polyad = static_cast<int>(result.polyads.size());
        level.mixing = level_mixing(group, g, index);
      }
      group_levels.push_back(static_cast<int>(result.levels.size()));
      result.levels.push_back(std::move(level));
    }
  }
  return group_levels;
}

// The polyad record of a group: its resonances, member levels and their partners (levels
// that appear in each other's mixing).
void add_polyad(const ResonanceGroup& group, const std::vector<Move>& moves,
                const std::vector<int>& group_levels, int state_count, Vpt2Result& result) {
  Polyad polyad;
  for (const auto& manifold : group.manifolds) polyad.manifolds.push_back(sparse_quanta(manifold));
  polyad.state_count = state_count;
  polyad.truncated = group.truncated();
  polyad.reached_quanta_limit = group.beyond_quanta;
  polyad.cut_at_state_limit = group.beyond_states;
  for (const GroupCoupling& coupling : group.couplings)
    polyad.resonances.push_back(moves[static_cast<std::size_t>(coupling.move)].resonance);
  polyad.resonances.erase(
      std::unique((std::sort(polyad.resonances.begin(), polyad.resonances.end()), polyad.resonances.begin()),
                  polyad.resonances.end()),
      polyad.resonances.end());
  auto weight_of = [&](const VibrationalLevel& in, const VibrationalLevel& of) {
    const SparseQuanta quanta = sparse_quanta(of.set_quanta);
    for (const auto& component : in.mixing)
      if (component.quanta == quanta && component.sublevel == of.sublevel) return component.weight;
    return 0.0;
  };
  for (int level : group_levels)
    for (int other : group_levels) {
      auto& a = result.levels[static_cast<std::size_t>(level)];
      const auto& b = result.levels[static_cast<std::size_t>(other)];
      if (other != level && a.in_polyad() && b.in_polyad() &&
          (weight_of(a, b) > coupled_weight || weight_of(b, a) > coupled_weight))
        a.partners.push_back(other);
    }
  for (int level : group_levels)
    if (result.levels[static_cast<std::size_t>(level)].in_polyad()) polyad.levels.push_back(level);
  if (polyad.truncated) result.status = Vpt2Status::polyad_truncated;
  result.polyads.push_back(std::move(polyad));
}

// Line-list order: fundamentals, overtones, combinations, each by set; partner and polyad
// indices follow the levels.
void sort_levels(const ManifoldMap<int>& wanted_index, Vpt2Result& result) {
  std::vector<int> order_index(result.levels.size());
  std::iota(order_index.begin(), order_index.end(), 0);
  std::vector<std::pair<int, int>> rank;
  for (const VibrationalLevel& level : result.levels)
    rank.emplace_back(wanted_index.at(key_of(level.set_quanta)), level.sublevel);
  std::stable_sort(order_index.begin(), order_index.end(), [&](int a, int b) {
    return rank[static_cast<std::size_t>(a)] < rank[static_cast<std::size_t>(b)];
  });
  std::vector<int> new_position(result.levels.size());
  for (std::size_t k = 0; k < order_index.size(); ++k)
    new_position[static_cast<std::size_t>(order_index[k])] = static_cast<int>(k);
  std::vector<VibrationalLevel> sorted;
  sorted.reserve(result.levels.size());
  for (int k : order_index) sorted.push_back(std::move(result.levels[static_cast<std::size_t>(k)]));
  for (auto& level : sorted)
    for (int& partner : level.partners) partner = new_position[static_cast<std::size_t>(partner)];
  for (auto& polyad : result.polyads)
    for (int& level : polyad.levels) level = new_position[static_cast<std::size_t>(level)];
  result.levels = std::move(sorted);
}

// x_tt and g_tt of doubly degenerate sets whose overtone splits into a single and a double.
void degenerate_set_constants(const Vpt2Context& c, Vpt2Result& result) {
  for (int s = 0; s < c.set_count(); ++s) {
    const auto& modes = c.sets[static_cast<std::size_t>(s)].modes;
    if (modes.size() != 2) continue;
    double single = 0.0, pair = 0.0;
    int singles = 0, pairs = 0;
    for (const auto& level : result.levels) {
      if (level.set_quanta != c.unit({{s, 2}})) continue;
      if (level.degeneracy == 1) {
        single = level.anharmonic_cm1;
        ++singles;
      } else if (level.degeneracy == 2) {
        pair = level.anharmonic_cm1;
        ++pairs;
      }
    }
    if (singles != 1 || pairs != 1) continue;
    double cross = 0.0;
    for (int k = 0; k < c.m; ++k)
      if (result.set_of_mode[static_cast<std::size_t>(k)] != s)
        cross += 0.5 * (result.x_cm1(k, modes[0]) + result.x_cm1(k, modes[1]));
    DegenerateSetConstants constants_of_set;
    constants_of_set.set = s;
    constants_of_set.g_cm1 = (pair - single) / 4.0;
    constants_of_set.x_cm1 = (single - 2.0 * c.sets[static_cast<std::size_t>(s)].harmonic_cm1 - cross) / 8.0;
    result.degenerate_constants.push_back(constants_of_set);
  }
}

// Every resonance group: its Hamiltonian, sublevels, species, corrected states, the line-list
// levels it holds and, for a polyad, the polyad record.
// Tells options.progress, when set, how far the stage is.
class Vpt2Progress {
 public:
  explicit Vpt2Progress(const ProgressCallback& callback) : callback_(callback) {}
  void operator()(int done, int total, const std::string& detail) const {
    if (!callback_) return;
    callback_({"VPT2", done, total, detail,
               std::chrono::duration<double>(std::chrono::steady_clock::now() - start_).count()});
  }

 private:
  const ProgressCallback& callback_;
  std::chrono::steady_clock::time_point start_ = std::chrono::steady_clock::now();
};

void diagonalize_groups(const Vpt2Context& c, const WantedManifolds& wanted,
                        const ManifoldMap<int>& wanted_index, const Vpt2Progress& progress,
                        Vpt2Result& result) {
  const std::vector<Move> moves = flagged_moves(result);
  std::size_t beyond_quanta = 0, beyond_states = 0;
  const std::vector<ResonanceGroup> groups = resonance_groups(c, wanted, moves);
  const int group_count = static_cast<int>(groups.size());
  for (int done = 0; done < group_count; ++done) {
    progress(done, group_count, "levels and resonance polyads");
    const ResonanceGroup& group = groups[static_cast<std::size_t>(done)];
    if (group.manifolds.empty()) continue;
    GroupStates g;
    group_hamiltonian(c, group, moves, result.x_cm1, g);
    deperturbed_sublevels(c, group.manifolds.size(), g);
    sublevel_species(c, g);
    const bool is_polyad = group.manifolds.size() > 1;
    if (is_polyad) resonance_corrected_states(c, g);
    const std::vector<int> group_levels =
        add_group_levels(c, group, g, wanted, wanted_index, is_polyad, result);
    if (!is_polyad) continue;
    add_polyad(group, moves, group_levels, static_cast<int>(g.states.size()), result);
    beyond_quanta += group.beyond_quanta ? 1 : 0;
    beyond_states += group.beyond_states ? 1 : 0;
  }
  progress(group_count, group_count, "levels and resonance polyads");
  // One warning per limit, with a count: a molecule with many resonances reaches them often.
  const std::size_t polyads = result.polyads.size();
  if (beyond_quanta > 0)
    result.warnings.push_back(fmt::format(
        "{} of {} resonance polyads reach the limit of {} quanta: flagged couplings to states with more "
        "quanta were left out",
        beyond_quanta, polyads, c.options.polyad_max_quanta));
  if (beyond_states > 0)
    result.warnings.push_back(fmt::format(
        "{} of {} resonance polyads were cut at {} component states (the states farthest from the line-list "
        "level, by number of flagged couplings, were left out)",
        beyond_states, polyads, c.options.polyad_max_states));
}

// Modes (whole sets) below exclude_below_cm1; a warning names the modes beyond
// perturbation theory and says what excluding them would take.
std::vector<bool> excluded_modes(const Vpt2Options& options, Vpt2Result& result) {
  std::vector<bool> excluded(static_cast<std::size_t>(result.harmonic_cm1.size()), false);
  result.exclude_below_cm1 = options.exclude_below_cm1;
  result.perturbation_ratio_limit = options.perturbation_ratio_limit;
  std::size_t kept = 0;
  double highest_flagged = 0.0;
  std::size_t flagged = 0;
  for (PerturbationCheck& check : result.perturbation_checks) {
    check.excluded = check.harmonic_cm1 < options.exclude_below_cm1;
    for (int mode : result.sets[static_cast<std::size_t>(check.set)].modes)
      excluded[static_cast<std::size_t>(mode)] = check.excluded;
    kept += check.excluded ? 0 : 1;
    if (check.beyond_perturbation && !check.excluded) {
      ++flagged;
      highest_flagged = std::max(highest_flagged, check.harmonic_cm1);
    }
  }
  if (kept == 0)
    throw Error(
        fmt::format("vpt2 option exclude_below_cm1 ({} cm-1) excludes every mode (the highest is {:.2f} "
                    "cm-1)",
                    options.exclude_below_cm1, result.harmonic_cm1.maxCoeff()));
  if (flagged > 0)
    result.warnings.push_back(fmt::format(
        "{} {} beyond perturbation theory (an anharmonic term at least {} times the harmonic one at the "
        "turning point of the fundamental); their levels and their couplings to the others are unreliable; "
        "reduced-dimensional VPT2 without them: --vpt2-exclude-below {:.0f}",
        flagged, flagged == 1 ? "mode is" : "modes are", options.perturbation_ratio_limit,
        std::floor(highest_flagged) + 1.0));
  return excluded;
}

std::vector<bool> excluded_sets(const Vpt2Result& result) {
  std::vector<bool> sets;
  for (const PerturbationCheck& check : result.perturbation_checks) sets.push_back(check.excluded);
  return sets;
}

}  // namespace

Vpt2Result run_vpt2(const ForceConstantResult& force_constants, const HarmonicResult& harmonic,
                    const Vpt2Options& options) {
  options.validate();
  if (!force_constants.ok())
    throw Error("vpt2 needs force constants with status ok, got " + to_string(force_constants.status) + ": " +
                force_constants.message);
  const int m = static_cast<int>(force_constants.mode_count());
  if (static_cast<int>(harmonic.mode_count()) != m)
    throw Error(fmt::format("the force constants are for {} modes but the harmonic result has {}", m,
                            harmonic.mode_count()));
  const ModeSymmetry& symmetry = force_constants.symmetry;
  const Eigen::VectorXd omega = force_constants.frequencies_cm1;

  Vpt2Result result;
  result.harmonic_cm1 = omega;
  result.point_group = symmetry.point_group();
  result.set_of_mode = symmetry.degenerate_set();
  result.sets = degenerate_sets(symmetry, omega);
  result.perturbation_checks = detail::perturbation_checks(force_constants.constants, omega, result.sets,
                                                           options.perturbation_ratio_limit);
  const std::vector<bool> excluded = excluded_modes(options, result);
  const bool reduce = result.exclude_below_cm1 > 0.0;
  const ForceConstantTensors reduced =
      reduce ? detail::without_modes(force_constants.constants, excluded) : ForceConstantTensors();
  const ForceConstantTensors& constants = reduce ? reduced : force_constants.constants;
  const Vpt2Context c{constants,
                      symmetry,
                      options,
                      omega,
                      force_constants.symmetry_used && symmetry.has_group(),
                      m,
                      result.sets,
                      detail::AnharmonicOperator(constants, omega),
                      symmetry.block_operations(),
                      excluded_sets(result)};

  const Vpt2Progress progress(options.progress);
  progress(0, 0, "anharmonicity constants");
  coriolis_terms(harmonic, c, result);
  for (int i = 0; i < m; ++i)
    if (excluded[static_cast<std::size_t>(i)]) {
      result.x_coriolis_cm1.row(i).setZero();
      result.x_coriolis_cm1.col(i).setZero();
    }
  result.x_vibrational_plain_cm1 = detail::anharmonicity_constants(constants, omega);
  progress(0, 0, "resonance candidates");
  resonance_candidates(c, result);
  deperturbed_constants(c, result);
  const WantedManifolds wanted = line_list_manifolds(c);
  ManifoldMap<int> wanted_index;  // position in the line-list order
  for (std::size_t k = 0; k < wanted.size(); ++k)
    wanted_index.emplace(key_of(wanted[k].first), static_cast<int>(k));
  diagonalize_groups(c, wanted, wanted_index, progress, result);
  sort_levels(wanted_index, result);
  degenerate_set_constants(c, result);

  std::size_t flagged = 0;
  for (const auto& r : result.resonances) flagged += r.flagged ? 1 : 0;
  if (result.message.empty())
    result.message =
        fmt::format("{} levels, {} resonance candidates ({} flagged), {} polyads", result.levels.size(),
                    result.resonances.size(), flagged, result.polyads.size());
  return result;
}

}  // namespace overtone
