#include "anharmonic/vpt2.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <map>
#include <numeric>
#include <set>

#include "anharmonic/effective_hamiltonian.hpp"
#include "core/error.hpp"
#include "core/units.hpp"

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

void validate(const Vpt2Options& options) {
  auto positive = [](double value, const char* name, const char* unit) {
    if (!(value > 0.0))
      throw Error(fmt::format("vpt2 option {} must be positive ({}), got {}", name, unit, value));
  };
  positive(options.fermi_gap_cm1, "fermi_gap_cm1", "cm-1");
  positive(options.fermi_criterion_cm1, "fermi_criterion_cm1", "cm-1");
  positive(options.darling_dennison_gap_cm1, "darling_dennison_gap_cm1", "cm-1");
  positive(options.darling_dennison_coupling_cm1, "darling_dennison_coupling_cm1", "cm-1");
  positive(options.level_degeneracy_tolerance_cm1, "level_degeneracy_tolerance_cm1", "cm-1");
  if (options.polyad_max_quanta < 2)
    throw Error(
        fmt::format("vpt2 option polyad_max_quanta must be at least 2, got {}", options.polyad_max_quanta));
  if (options.polyad_max_states < 2)
    throw Error(
        fmt::format("vpt2 option polyad_max_states must be at least 2, got {}", options.polyad_max_states));
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
  Eigen::Vector3d center = Eigen::Vector3d::Zero();
  for (Eigen::Index a = 0; a < atoms; ++a) center += masses[a] * x.segment<3>(3 * a);
  center /= masses.sum();
  Eigen::Matrix3d inertia = Eigen::Matrix3d::Zero();
  for (Eigen::Index a = 0; a < atoms; ++a) {
    const Eigen::Vector3d r = x.segment<3>(3 * a) - center;
    inertia += masses[a] * (r.squaredNorm() * Eigen::Matrix3d::Identity() - r * r.transpose());
  }
  const Eigen::SelfAdjointEigenSolver<Eigen::Matrix3d> principal(inertia);
  const Eigen::Vector3d moments = principal.eigenvalues();
  const Eigen::Matrix3d axes = principal.eigenvectors();
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

int total_quanta(const std::vector<int>& v) { return std::accumulate(v.begin(), v.end(), 0); }

struct Sublevel {
  int manifold = 0;         // index within the group
  double energy = 0.0;      // deperturbed
  Eigen::MatrixXd vectors;  // columns in the group's state basis
};

}  // namespace

Vpt2Result run_vpt2(const ForceConstantResult& force_constants, const HarmonicResult& harmonic,
                    const Vpt2Options& options) {
  validate(options);
  if (!force_constants.ok())
    throw Error("vpt2 needs force constants with status ok, got " + to_string(force_constants.status) + ": " +
                force_constants.message);
  const int m = static_cast<int>(force_constants.mode_count());
  if (static_cast<int>(harmonic.mode_count()) != m)
    throw Error(fmt::format("the force constants are for {} modes but the harmonic result has {}", m,
                            harmonic.mode_count()));
  const ForceConstantTensors& constants = force_constants.constants;
  const ModeSymmetry& symmetry = force_constants.symmetry;
  const Eigen::VectorXd omega = force_constants.frequencies_cm1;
  const bool group_known = force_constants.symmetry_used && symmetry.has_group();

  Vpt2Result result;
  result.harmonic_cm1 = omega;
  result.point_group = symmetry.point_group;
  result.set_of_mode = symmetry.degenerate_set;
  for (const auto& members : symmetry.sets()) {
    DegenerateSet set;
    set.modes = members;
    for (int mode : members) set.harmonic_cm1 += omega[mode] / static_cast<double>(members.size());
    set.species = symmetry.species.empty() ? "" : symmetry.species[static_cast<std::size_t>(members.front())];
    result.sets.push_back(set);
  }
  const int set_count = static_cast<int>(result.sets.size());
  const auto& sets = result.sets;

  // Coriolis term.
  detail::coriolis_constants(harmonic, result.coriolis_zeta, result.rotational_constants_cm1);
  result.x_coriolis_cm1 = Eigen::MatrixXd::Zero(m, m);
  if (options.include_coriolis)
    for (int i = 0; i < m; ++i)
      for (int j = 0; j < m; ++j) {
        if (result.set_of_mode[static_cast<std::size_t>(i)] ==
            result.set_of_mode[static_cast<std::size_t>(j)])
          continue;
        double sum = 0.0;
        for (int alpha = 0; alpha < 3; ++alpha) {
          const double z = result.coriolis_zeta[static_cast<std::size_t>(alpha)](i, j);
          sum += result.rotational_constants_cm1[alpha] * z * z;
        }
        result.x_coriolis_cm1(i, j) = sum * (omega[i] / omega[j] + omega[j] / omega[i]);
      }
  // Between degenerate sets the component values depend on the basis within each set and
  // would break the symmetry of the levels; the set average is the basis-invariant part
  // (the l-dependent Coriolis terms are neglected).
  if (options.include_coriolis)
    for (int s = 0; s < set_count; ++s)
      for (int t = 0; t < set_count; ++t) {
        const auto& a = sets[static_cast<std::size_t>(s)].modes;
        const auto& b = sets[static_cast<std::size_t>(t)].modes;
        if (s == t || (a.size() == 1 && b.size() == 1)) continue;
        double mean = 0.0;
        for (int i : a)
          for (int j : b) mean += result.x_coriolis_cm1(i, j) / static_cast<double>(a.size() * b.size());
        for (int i : a)
          for (int j : b) result.x_coriolis_cm1(i, j) = mean;
      }

  result.x_vibrational_plain_cm1 = detail::anharmonicity_constants(constants, omega);
  const detail::AnharmonicOperator op(constants, omega);

  // Characters of the sets (and of their squares) under each operation.
  const std::size_t order = group_known ? symmetry.order() : 1;
  std::vector<std::vector<double>> chi(static_cast<std::size_t>(set_count)),
      chi_square(static_cast<std::size_t>(set_count));
  for (int s = 0; s < set_count; ++s)
    for (std::size_t g = 0; g < order; ++g) {
      const Eigen::MatrixXd& r =
          group_known ? symmetry.operations[g] : Eigen::MatrixXd::Identity(m, m).eval();
      const Eigen::MatrixXd r2 = r * r;
      double c = 0.0, c2 = 0.0;
      for (int mode : sets[static_cast<std::size_t>(s)].modes) {
        c += r(mode, mode);
        c2 += r2(mode, mode);
      }
      chi[static_cast<std::size_t>(s)].push_back(c);
      chi_square[static_cast<std::size_t>(s)].push_back(c2);
    }
  auto symmetric_square = [&](int s, std::size_t g) {
    const double c = chi[static_cast<std::size_t>(s)][g];
    return 0.5 * (c * c + chi_square[static_cast<std::size_t>(s)][g]);
  };
  auto average = [&](auto f) {
    double sum = 0.0;
    for (std::size_t g = 0; g < order; ++g) sum += f(g);
    return sum / static_cast<double>(order);
  };
  constexpr double multiplicity_threshold = 0.5;  // multiplicities are integers

  auto unit = [&](std::initializer_list<std::pair<int, int>> entries) {
    std::vector<int> v(static_cast<std::size_t>(set_count), 0);
    for (const auto& [s, count] : entries) v[static_cast<std::size_t>(s)] += count;
    return v;
  };
  auto largest_singular_value = [](const Eigen::MatrixXd& block) {
    if (block.size() == 0) return 0.0;
    return Eigen::JacobiSVD<Eigen::MatrixXd>(block).singularValues()[0];
  };
  auto first_order_coupling = [&](const std::vector<int>& lower, const std::vector<int>& upper) {
    const auto a = manifold_states(lower, sets, m), b = manifold_states(upper, sets, m);
    Eigen::MatrixXd block(static_cast<Eigen::Index>(a.size()), static_cast<Eigen::Index>(b.size()));
    for (std::size_t i = 0; i < a.size(); ++i)
      for (std::size_t j = 0; j < b.size(); ++j)
        block(static_cast<Eigen::Index>(i), static_cast<Eigen::Index>(j)) = op.cubic_element(a[i], b[j]);
    return largest_singular_value(block);
  };
  auto second_order_coupling = [&](const std::vector<int>& lower, const std::vector<int>& upper) {
    const auto a = manifold_states(lower, sets, m), b = manifold_states(upper, sets, m);
    std::set<Quanta> excluded(a.begin(), a.end());
    excluded.insert(b.begin(), b.end());
    Eigen::MatrixXd block(static_cast<Eigen::Index>(a.size()), static_cast<Eigen::Index>(b.size()));
    for (std::size_t i = 0; i < a.size(); ++i)
      for (std::size_t j = 0; j < b.size(); ++j)
        block(static_cast<Eigen::Index>(i), static_cast<Eigen::Index>(j)) =
            op.quartic_element(a[i], b[j]) + op.second_order(a[i], b[j], excluded);
    return largest_singular_value(block);
  };
  auto fermi_flag = [&](Resonance& r) {
    r.criterion_value = r.gap_cm1 == 0.0 ? std::numeric_limits<double>::infinity()
                                         : std::pow(r.coupling_cm1, 4) / std::pow(std::abs(r.gap_cm1), 3);
    r.flagged = options.treat_resonances && r.criterion_value >= options.fermi_criterion_cm1 &&
                (r.symmetry_allowed || !options.require_symmetry_allowed);
  };

  // Resonance candidates.
  for (int s = 0; s < set_count; ++s)
    for (int t = 0; t < set_count; ++t) {
      if (s == t) continue;
      const double gap = 2.0 * sets[static_cast<std::size_t>(s)].harmonic_cm1 -
                         sets[static_cast<std::size_t>(t)].harmonic_cm1;
      if (std::abs(gap) > options.fermi_gap_cm1) continue;
      Resonance r;
      r.kind = ResonanceKind::fermi_1;
      r.sets = {s, t};
      r.gap_cm1 = gap;
      r.coupling_cm1 = first_order_coupling(unit({{s, 2}}), unit({{t, 1}}));
      r.symmetry_allowed = average([&](std::size_t g) {
                             return symmetric_square(s, g) * chi[static_cast<std::size_t>(t)][g];
                           }) > multiplicity_threshold;
      fermi_flag(r);
      result.resonances.push_back(r);
    }
  for (int s = 0; s < set_count; ++s)
    for (int t = s + 1; t < set_count; ++t)
      for (int u = 0; u < set_count; ++u) {
        if (u == s || u == t) continue;
        const double gap = sets[static_cast<std::size_t>(s)].harmonic_cm1 +
                           sets[static_cast<std::size_t>(t)].harmonic_cm1 -
                           sets[static_cast<std::size_t>(u)].harmonic_cm1;
        if (std::abs(gap) > options.fermi_gap_cm1) continue;
        Resonance r;
        r.kind = ResonanceKind::fermi_2;
        r.sets = {s, t, u};
        r.gap_cm1 = gap;
        r.coupling_cm1 = first_order_coupling(unit({{s, 1}, {t, 1}}), unit({{u, 1}}));
        r.symmetry_allowed = average([&](std::size_t g) {
                               return chi[static_cast<std::size_t>(s)][g] *
                                      chi[static_cast<std::size_t>(t)][g] *
                                      chi[static_cast<std::size_t>(u)][g];
                             }) > multiplicity_threshold;
        fermi_flag(r);
        result.resonances.push_back(r);
      }
  for (int s = 0; s < set_count; ++s)
    for (int t = s + 1; t < set_count; ++t) {
      const double gap = 2.0 * sets[static_cast<std::size_t>(s)].harmonic_cm1 -
                         2.0 * sets[static_cast<std::size_t>(t)].harmonic_cm1;
      if (std::abs(gap) > options.darling_dennison_gap_cm1) continue;
      Resonance r;
      r.kind = ResonanceKind::darling_dennison;
      r.sets = {s, t};
      r.gap_cm1 = gap;
      r.coupling_cm1 = second_order_coupling(unit({{s, 2}}), unit({{t, 2}}));
      r.criterion_value = r.coupling_cm1;
      r.symmetry_allowed = average([&](std::size_t g) {
                             return symmetric_square(s, g) * symmetric_square(t, g);
                           }) > multiplicity_threshold;
      r.flagged = options.treat_resonances && r.coupling_cm1 >= options.darling_dennison_coupling_cm1 &&
                  (r.symmetry_allowed || !options.require_symmetry_allowed);
      result.resonances.push_back(r);
    }

  // Deperturbed constants: the flagged Fermi triads (sets a ≤ b, c for ω_a + ω_b ≈ ω_c).
  std::set<std::array<int, 3>> resonant_sets;
  for (const auto& r : result.resonances) {
    if (!r.flagged) continue;
    if (r.kind == ResonanceKind::fermi_1) resonant_sets.insert({r.sets[0], r.sets[0], r.sets[1]});
    if (r.kind == ResonanceKind::fermi_2)
      resonant_sets.insert({std::min(r.sets[0], r.sets[1]), std::max(r.sets[0], r.sets[1]), r.sets[2]});
  }
  const auto& set_of = result.set_of_mode;
  auto resonant = [&](int a, int b, int c) {
    const int sa = set_of[static_cast<std::size_t>(a)], sb = set_of[static_cast<std::size_t>(b)];
    return resonant_sets.count({std::min(sa, sb), std::max(sa, sb), set_of[static_cast<std::size_t>(c)]}) > 0;
  };
  result.x_vibrational_cm1 = resonant_sets.empty()
                                 ? result.x_vibrational_plain_cm1
                                 : detail::anharmonicity_constants(constants, omega, resonant);
  result.x_cm1 = result.x_vibrational_cm1 + result.x_coriolis_cm1;

  // Moves between manifolds made by the flagged resonances (set-quanta differences).
  struct Move {
    std::vector<int> delta;
    int resonance;
    bool first_order;
  };
  std::vector<Move> moves;
  for (std::size_t k = 0; k < result.resonances.size(); ++k) {
    const auto& r = result.resonances[k];
    if (!r.flagged) continue;
    if (r.kind == ResonanceKind::fermi_1)
      moves.push_back({unit({{r.sets[0], 2}, {r.sets[1], -1}}), static_cast<int>(k), true});
    if (r.kind == ResonanceKind::fermi_2)
      moves.push_back({unit({{r.sets[0], 1}, {r.sets[1], 1}, {r.sets[2], -1}}), static_cast<int>(k), true});
    if (r.kind == ResonanceKind::darling_dennison)
      moves.push_back({unit({{r.sets[0], 2}, {r.sets[1], -2}}), static_cast<int>(k), false});
  }
  auto connecting_move = [&](const std::vector<int>& a, const std::vector<int>& b) -> const Move* {
    for (const auto& move : moves) {
      bool forward = true, backward = true;
      for (int s = 0; s < set_count; ++s) {
        const int d = b[static_cast<std::size_t>(s)] - a[static_cast<std::size_t>(s)];
        forward = forward && d == move.delta[static_cast<std::size_t>(s)];
        backward = backward && d == -move.delta[static_cast<std::size_t>(s)];
      }
      if (forward || backward) return &move;
    }
    return nullptr;
  };

  // Line-list manifolds: fundamentals, overtones, binary combinations.
  std::vector<std::pair<std::vector<int>, LevelKind>> wanted;
  for (int s = 0; s < set_count; ++s) wanted.push_back({unit({{s, 1}}), LevelKind::fundamental});
  for (int s = 0; s < set_count; ++s) wanted.push_back({unit({{s, 2}}), LevelKind::overtone});
  for (int s = 0; s < set_count; ++s)
    for (int t = s + 1; t < set_count; ++t)
      wanted.push_back({unit({{s, 1}, {t, 1}}), LevelKind::combination});

  // Closure of each wanted manifold under the flagged moves: the groups to diagonalize.
  std::map<std::vector<int>, int> group_of;
  std::vector<std::vector<std::vector<int>>> groups;
  std::vector<bool> group_truncated;
  auto states_in = [&](const std::vector<std::vector<int>>& manifolds) {
    std::size_t count = 0;
    for (const auto& v : manifolds) count += manifold_states(v, sets, m).size();
    return count;
  };
  for (const auto& [seed, kind] : wanted) {
    if (group_of.count(seed)) continue;
    std::vector<std::vector<int>> members{seed};
    bool truncated = false;
    for (std::size_t head = 0; head < members.size(); ++head) {
      const std::vector<int> current = members[head];
      for (const auto& move : moves)
        for (int sign : {1, -1}) {
          std::vector<int> next = current;
          bool valid = true;
          for (int s = 0; s < set_count; ++s) {
            next[static_cast<std::size_t>(s)] += sign * move.delta[static_cast<std::size_t>(s)];
            valid = valid && next[static_cast<std::size_t>(s)] >= 0;
          }
          if (!valid || std::find(members.begin(), members.end(), next) != members.end()) continue;
          if (total_quanta(next) > options.polyad_max_quanta) {
            truncated = true;
            continue;
          }
          if (group_of.count(next)) {
            // Already part of another group (reached from a different seed): merge it in.
            const int other = group_of[next];
            for (const auto& v : groups[static_cast<std::size_t>(other)])
              if (std::find(members.begin(), members.end(), v) == members.end()) members.push_back(v);
            truncated = truncated || group_truncated[static_cast<std::size_t>(other)];
            for (const auto& v : groups[static_cast<std::size_t>(other)]) group_of.erase(v);
            groups[static_cast<std::size_t>(other)].clear();
            continue;
          }
          members.push_back(next);
          if (states_in(members) > static_cast<std::size_t>(options.polyad_max_states)) {
            members.pop_back();
            truncated = true;
          }
        }
    }
    const int id = static_cast<int>(groups.size());
    for (const auto& v : members) group_of[v] = id;
    groups.push_back(members);
    group_truncated.push_back(truncated);
  }

  std::map<std::vector<int>, std::vector<int>> levels_of_manifold;  // line-list levels per manifold
  for (std::size_t g = 0; g < groups.size(); ++g) {
    const auto& manifolds = groups[g];
    if (manifolds.empty()) continue;
    std::vector<Quanta> states;
    std::vector<int> manifold_of_state;
    for (std::size_t v = 0; v < manifolds.size(); ++v)
      for (const auto& state : manifold_states(manifolds[v], sets, m)) {
        states.push_back(state);
        manifold_of_state.push_back(static_cast<int>(v));
      }
    const std::set<Quanta> excluded(states.begin(), states.end());
    const Eigen::Index size = static_cast<Eigen::Index>(states.size());
    Eigen::MatrixXd h = Eigen::MatrixXd::Zero(size, size);
    for (Eigen::Index a = 0; a < size; ++a) {
      h(a, a) = detail::term_value(omega, result.x_cm1, states[static_cast<std::size_t>(a)]);
      for (Eigen::Index b = a + 1; b < size; ++b) {
        const int va = manifold_of_state[static_cast<std::size_t>(a)],
                  vb = manifold_of_state[static_cast<std::size_t>(b)];
        const Quanta& sa = states[static_cast<std::size_t>(a)];
        const Quanta& sb = states[static_cast<std::size_t>(b)];
        double value = 0.0;
        if (va == vb) {
          value = op.quartic_element(sa, sb) + op.second_order(sa, sb, excluded);
        } else if (const Move* move = connecting_move(manifolds[static_cast<std::size_t>(va)],
                                                      manifolds[static_cast<std::size_t>(vb)])) {
          value = move->first_order ? op.cubic_element(sa, sb)
                                    : op.quartic_element(sa, sb) + op.second_order(sa, sb, excluded);
        }
        h(a, b) = h(b, a) = value;
      }
    }

    // Deperturbed sublevels: each manifold's block alone.
    std::vector<Sublevel> sublevels;
    std::vector<std::vector<int>> sublevels_of_manifold(manifolds.size());
    for (std::size_t v = 0; v < manifolds.size(); ++v) {
      std::vector<int> rows;
      for (Eigen::Index a = 0; a < size; ++a)
        if (manifold_of_state[static_cast<std::size_t>(a)] == static_cast<int>(v))
          rows.push_back(static_cast<int>(a));
      Eigen::MatrixXd block(static_cast<Eigen::Index>(rows.size()), static_cast<Eigen::Index>(rows.size()));
      for (std::size_t i = 0; i < rows.size(); ++i)
        for (std::size_t j = 0; j < rows.size(); ++j)
          block(static_cast<Eigen::Index>(i), static_cast<Eigen::Index>(j)) = h(rows[i], rows[j]);
      const Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> solver(block);
      for (const auto& cluster :
           cluster_eigenvalues(solver.eigenvalues(), options.level_degeneracy_tolerance_cm1)) {
        Sublevel sub;
        sub.manifold = static_cast<int>(v);
        sub.vectors = Eigen::MatrixXd::Zero(size, static_cast<Eigen::Index>(cluster.size()));
        for (std::size_t c = 0; c < cluster.size(); ++c) {
          sub.energy += solver.eigenvalues()[cluster[c]] / static_cast<double>(cluster.size());
          for (std::size_t i = 0; i < rows.size(); ++i)
            sub.vectors(rows[i], static_cast<Eigen::Index>(c)) =
                solver.eigenvectors()(static_cast<Eigen::Index>(i), cluster[c]);
        }
        sublevels_of_manifold[v].push_back(static_cast<int>(sublevels.size()));
        sublevels.push_back(std::move(sub));
      }
    }

    // Species of each sublevel from the group's action on its states.
    std::vector<std::string> sublevel_species(sublevels.size());
    std::vector<std::vector<double>> sublevel_multiplicities(sublevels.size());
    if (group_known && symmetry.has_character_table()) {
      std::vector<Eigen::MatrixXd> representation;
      for (const auto& r : symmetry.operations) {
        Eigen::MatrixXd clean = r;
        for (int i = 0; i < m; ++i)
          for (int j = 0; j < m; ++j)
            if (set_of[static_cast<std::size_t>(i)] != set_of[static_cast<std::size_t>(j)]) clean(i, j) = 0.0;
        representation.push_back(state_representation(states, clean));
      }
      for (std::size_t k = 0; k < sublevels.size(); ++k) {
        std::vector<double> characters;
        for (const auto& d : representation)
          characters.push_back(detail::subspace_character(d, sublevels[k].vectors));
        sublevel_species[k] = detail::species_label(symmetry, characters);
        sublevel_multiplicities[k] = detail::irrep_multiplicities(symmetry, characters);
      }
    }

    std::vector<std::string> sublevel_tags(sublevels.size());
    for (std::size_t v = 0; v < manifolds.size(); ++v) {
      const auto& subs = sublevels_of_manifold[v];
      if (subs.size() < 2) continue;
      for (std::size_t k = 0; k < subs.size(); ++k) {
        const std::string& species = sublevel_species[static_cast<std::size_t>(subs[k])];
        const auto repeats = std::count_if(subs.begin(), subs.end(), [&](int other) {
          return sublevel_species[static_cast<std::size_t>(other)] == species;
        });
        sublevel_tags[static_cast<std::size_t>(subs[k])] = species.empty() ? std::to_string(k + 1)
                                                           : repeats > 1
                                                               ? species + "#" + std::to_string(k + 1)
                                                               : species;
      }
    }

    // Resonance-corrected states: the whole group, assigned to sublevels by overlap.
    const bool is_polyad = manifolds.size() > 1;
    std::vector<double> corrected(sublevels.size(), std::numeric_limits<double>::quiet_NaN());
    std::vector<std::vector<double>> composition(sublevels.size());
    if (is_polyad) {
      const Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> solver(h);
      const auto clusters = cluster_eigenvalues(solver.eigenvalues(), options.level_degeneracy_tolerance_cm1);
      Eigen::MatrixXd overlap(static_cast<Eigen::Index>(clusters.size()),
                              static_cast<Eigen::Index>(sublevels.size()));
      for (std::size_t c = 0; c < clusters.size(); ++c)
        for (std::size_t s = 0; s < sublevels.size(); ++s) {
          double w = 0.0;
          for (int e : clusters[c])
            w += (sublevels[s].vectors.transpose() * solver.eigenvectors().col(e)).squaredNorm();
          overlap(static_cast<Eigen::Index>(c), static_cast<Eigen::Index>(s)) =
              w / static_cast<double>(clusters[c].size());
        }
      // Greedy one-to-one assignment, largest overlap first, equal degeneracy preferred.
      std::vector<std::tuple<double, int, int>> pairs;
      for (std::size_t c = 0; c < clusters.size(); ++c)
        for (std::size_t s = 0; s < sublevels.size(); ++s) {
          const bool same_size = static_cast<Eigen::Index>(clusters[c].size()) == sublevels[s].vectors.cols();
          pairs.emplace_back(
              (same_size ? 1.0 : 0.0) + overlap(static_cast<Eigen::Index>(c), static_cast<Eigen::Index>(s)),
              static_cast<int>(c), static_cast<int>(s));
        }
      std::sort(pairs.begin(), pairs.end(),
                [](const auto& a, const auto& b) { return std::get<0>(a) > std::get<0>(b); });
      std::vector<bool> cluster_used(clusters.size(), false), sublevel_used(sublevels.size(), false);
      for (const auto& [score, c, s] : pairs) {
        if (cluster_used[static_cast<std::size_t>(c)] || sublevel_used[static_cast<std::size_t>(s)]) continue;
        cluster_used[static_cast<std::size_t>(c)] = sublevel_used[static_cast<std::size_t>(s)] = true;
        double energy = 0.0;
        for (int e : clusters[static_cast<std::size_t>(c)]) energy += solver.eigenvalues()[e];
        corrected[static_cast<std::size_t>(s)] =
            energy / static_cast<double>(clusters[static_cast<std::size_t>(c)].size());
        for (std::size_t t = 0; t < sublevels.size(); ++t)
          composition[static_cast<std::size_t>(s)].push_back(overlap(c, static_cast<Eigen::Index>(t)));
      }
    }

    // A sublevel takes part in the resonance only if its corrected state mixes with
    // another sublevel, or another's mixes into it (a Δ level beside a Σ dyad does not).
    constexpr double coupled_weight = 1e-6;
    std::vector<bool> coupled(sublevels.size(), false);
    if (is_polyad)
      for (std::size_t s = 0; s < sublevels.size(); ++s)
        for (std::size_t t = 0; t < sublevels.size(); ++t)
          if (s != t && composition[s].size() == sublevels.size() && composition[s][t] > coupled_weight)
            coupled[s] = coupled[t] = true;

    // Levels of the line list in this group.
    std::vector<int> group_levels;
    for (std::size_t v = 0; v < manifolds.size(); ++v) {
      const auto found =
          std::find_if(wanted.begin(), wanted.end(), [&](const auto& w) { return w.first == manifolds[v]; });
      if (found == wanted.end()) continue;
      const auto& subs = sublevels_of_manifold[v];
      for (std::size_t k = 0; k < subs.size(); ++k) {
        const Sublevel& sub = sublevels[static_cast<std::size_t>(subs[k])];
        VibrationalLevel level;
        level.kind = found->second;
        level.set_quanta = manifolds[v];
        level.sublevel = static_cast<int>(k);
        level.sublevel_count = static_cast<int>(subs.size());
        level.degeneracy = static_cast<int>(sub.vectors.cols());
        for (int s = 0; s < set_count; ++s)
          level.harmonic_cm1 +=
              manifolds[v][static_cast<std::size_t>(s)] * sets[static_cast<std::size_t>(s)].harmonic_cm1;
        level.anharmonic_cm1 = sub.energy;
        level.species = sublevel_species[static_cast<std::size_t>(subs[k])];
        const auto& multiplicities = sublevel_multiplicities[static_cast<std::size_t>(subs[k])];
        if (!multiplicities.empty()) {
          level.activity_known = true;
          for (std::size_t irrep = 0; irrep < multiplicities.size(); ++irrep)
            if (multiplicities[irrep] > multiplicity_threshold) {
              level.ir_active = level.ir_active || symmetry.irreps[irrep].ir_active;
              level.raman_active = level.raman_active || symmetry.irreps[irrep].raman_active;
            }
        }
        if (is_polyad && coupled[static_cast<std::size_t>(subs[k])]) {
          level.resonance_corrected_cm1 = corrected[static_cast<std::size_t>(subs[k])];
          level.polyad = static_cast<int>(result.polyads.size());
          const auto& weights = composition[static_cast<std::size_t>(subs[k])];
          for (std::size_t t = 0; t < weights.size(); ++t) {
            const Sublevel& other = sublevels[t];
            const auto& other_subs = sublevels_of_manifold[static_cast<std::size_t>(other.manifold)];
            const int other_index = static_cast<int>(
                std::find(other_subs.begin(), other_subs.end(), static_cast<int>(t)) - other_subs.begin());
            constexpr double negligible_weight = 1e-10;  // below round-off of the eigenvectors' squares
            if (weights[t] > negligible_weight)
              level.mixing.push_back({manifolds[static_cast<std::size_t>(other.manifold)], other_index,
                                      static_cast<int>(other_subs.size()), sublevel_species[t],
                                      sublevel_tags[t], weights[t]});
          }
          std::sort(level.mixing.begin(), level.mixing.end(),
                    [](const LevelComponent& a, const LevelComponent& b) { return a.weight > b.weight; });
        }
        group_levels.push_back(static_cast<int>(result.levels.size()));
        result.levels.push_back(std::move(level));
      }
    }
    if (is_polyad) {
      Polyad polyad;
      polyad.manifolds = manifolds;
      polyad.levels = group_levels;
      polyad.state_count = static_cast<int>(size);
      polyad.truncated = group_truncated[g];
      for (std::size_t a = 0; a < manifolds.size(); ++a)
        for (std::size_t b = a + 1; b < manifolds.size(); ++b)
          if (const Move* move = connecting_move(manifolds[a], manifolds[b]))
            if (std::find(polyad.resonances.begin(), polyad.resonances.end(), move->resonance) ==
                polyad.resonances.end())
              polyad.resonances.push_back(move->resonance);
      std::sort(polyad.resonances.begin(), polyad.resonances.end());
      // Partners: line-list levels of the polyad that appear in each other's mixing.
      auto weight_of = [&](const VibrationalLevel& in, const VibrationalLevel& of) {
        for (const auto& c : in.mixing)
          if (c.set_quanta == of.set_quanta && c.sublevel == of.sublevel) return c.weight;
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
      std::vector<int> members;
      for (int level : group_levels)
        if (result.levels[static_cast<std::size_t>(level)].in_polyad()) members.push_back(level);
      polyad.levels = members;
      if (polyad.truncated) {
        result.status = Vpt2Status::polyad_truncated;
        result.warnings.push_back(fmt::format(
            "a resonance polyad reached the limit of {} quanta or {} states; states beyond it were left out",
            options.polyad_max_quanta, options.polyad_max_states));
      }
      result.polyads.push_back(std::move(polyad));
    }
  }
  // Line-list order: fundamentals, overtones, combinations, each by set.
  std::vector<int> order_index(result.levels.size());
  std::iota(order_index.begin(), order_index.end(), 0);
  auto rank = [&](const VibrationalLevel& level) {
    const auto it = std::find_if(wanted.begin(), wanted.end(),
                                 [&](const auto& w) { return w.first == level.set_quanta; });
    return std::make_pair(static_cast<int>(it - wanted.begin()), level.sublevel);
  };
  std::stable_sort(order_index.begin(), order_index.end(), [&](int a, int b) {
    return rank(result.levels[static_cast<std::size_t>(a)]) <
           rank(result.levels[static_cast<std::size_t>(b)]);
  });
  std::vector<int> new_position(result.levels.size());
  for (std::size_t k = 0; k < order_index.size(); ++k)
    new_position[static_cast<std::size_t>(order_index[k])] = static_cast<int>(k);
  std::vector<VibrationalLevel> sorted;
  for (int k : order_index) sorted.push_back(result.levels[static_cast<std::size_t>(k)]);
  for (auto& level : sorted)
    for (int& partner : level.partners) partner = new_position[static_cast<std::size_t>(partner)];
  for (auto& polyad : result.polyads)
    for (int& level : polyad.levels) level = new_position[static_cast<std::size_t>(level)];
  result.levels = std::move(sorted);

  // x_tt and g_tt of doubly degenerate sets whose overtone splits into a single and a double.
  for (int s = 0; s < set_count; ++s) {
    const auto& modes = sets[static_cast<std::size_t>(s)].modes;
    if (modes.size() != 2) continue;
    double single = 0.0, pair = 0.0;
    int singles = 0, pairs = 0;
    for (const auto& level : result.levels) {
      if (level.set_quanta != unit({{s, 2}})) continue;
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
    for (int c = 0; c < m; ++c)
      if (set_of[static_cast<std::size_t>(c)] != s)
        cross += 0.5 * (result.x_cm1(c, modes[0]) + result.x_cm1(c, modes[1]));
    DegenerateSetConstants constants_of_set;
    constants_of_set.set = s;
    constants_of_set.g_cm1 = (pair - single) / 4.0;
    constants_of_set.x_cm1 = (single - 2.0 * sets[static_cast<std::size_t>(s)].harmonic_cm1 - cross) / 8.0;
    result.degenerate_constants.push_back(constants_of_set);
  }

  std::size_t flagged = 0;
  for (const auto& r : result.resonances) flagged += r.flagged ? 1 : 0;
  if (result.message.empty())
    result.message =
        fmt::format("{} levels, {} resonance candidates ({} flagged), {} polyads", result.levels.size(),
                    result.resonances.size(), flagged, result.polyads.size());
  return result;
}

}  // namespace overtone
