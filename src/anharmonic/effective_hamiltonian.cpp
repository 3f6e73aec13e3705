#include "anharmonic/effective_hamiltonian.hpp"

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <functional>
#include <utility>

namespace overtone::detail {

double coordinate_power_element(int a, int b, int power) {
  if (a < 0 || b < 0 || power < 0 || std::abs(a - b) > power || (a - b - power) % 2 != 0) return 0.0;
  // Closed forms of the ladder-operator products for the powers the cubic terms use
  // (q = (a + a†)/√2; the q³ elements count the three orderings of two raises and one lower).
  const double n = b;
  if (power == 1) return a > b ? std::sqrt((n + 1.0) / 2.0) : std::sqrt(n / 2.0);
  if (power == 2) {
    if (a == b) return n + 0.5;
    return a > b ? std::sqrt((n + 1.0) * (n + 2.0)) / 2.0 : std::sqrt(n * (n - 1.0)) / 2.0;
  }
  if (power == 3) {
    const double scale = 1.0 / (2.0 * std::sqrt(2.0));
    switch (a - b) {
      case 3:
        return std::sqrt((n + 1.0) * (n + 2.0) * (n + 3.0)) * scale;
      case 1:
        return 3.0 * (n + 1.0) * std::sqrt(n + 1.0) * scale;
      case -1:
        return 3.0 * n * std::sqrt(n) * scale;
      default:
        return std::sqrt(n * (n - 1.0) * (n - 2.0)) * scale;
    }
  }
  std::vector<double> state(static_cast<std::size_t>(b + power + 2), 0.0);
  state[static_cast<std::size_t>(b)] = 1.0;
  for (int step = 0; step < power; ++step) {
    std::vector<double> next(state.size(), 0.0);
    for (std::size_t level = 0; level + 1 < state.size(); ++level) {
      if (state[level] == 0.0) continue;
      const double value = state[level] / std::sqrt(2.0);
      if (level > 0) next[level - 1] += value * std::sqrt(static_cast<double>(level));
      next[level + 1] += value * std::sqrt(static_cast<double>(level + 1));
    }
    state.swap(next);
  }
  return static_cast<std::size_t>(a) < state.size() ? state[static_cast<std::size_t>(a)] : 0.0;
}

namespace {

double factorial(int n) {
  double f = 1.0;
  for (int k = 2; k <= n; ++k) f *= k;
  return f;
}

// The quanta one cubic term moves: at most three modes, by at most three quanta each.
// Packed into one integer (16 bits of mode and 4 of change per entry) so that the
// contributions of different terms that reach the same intermediate state can be summed
// before that state's other matrix element is computed.
struct Step {
  std::array<int, 3> modes{};
  std::array<int, 3> changes{};
  int count = 0;
};

constexpr int mode_bits = 16;
constexpr int change_offset = 8;  // changes −3…3 stored as 5…11 in 4 bits

std::uint64_t pack(const Step& step) {
  std::uint64_t key = 0;
  for (int f = 0; f < step.count; ++f)
    key = (key << (mode_bits + 4)) |
          (static_cast<std::uint64_t>(step.modes[static_cast<std::size_t>(f)]) << 4) |
          static_cast<std::uint64_t>(step.changes[static_cast<std::size_t>(f)] + change_offset);
  return key;
}

Step unpack(std::uint64_t key) {
  Step step;
  std::array<int, 3> modes{}, changes{};
  int count = 0;
  while (key != 0) {
    changes[static_cast<std::size_t>(count)] = static_cast<int>(key & 0xF) - change_offset;
    modes[static_cast<std::size_t>(count)] = static_cast<int>((key >> 4) & ((1u << mode_bits) - 1));
    ++count;
    key >>= mode_bits + 4;
  }
  for (int f = 0; f < count; ++f) {  // back to the packing order
    step.modes[static_cast<std::size_t>(f)] = modes[static_cast<std::size_t>(count - 1 - f)];
    step.changes[static_cast<std::size_t>(f)] = changes[static_cast<std::size_t>(count - 1 - f)];
  }
  step.count = count;
  return step;
}

}  // namespace

AnharmonicOperator::AnharmonicOperator(const ForceConstantTensors& constants,
                                       const Eigen::VectorXd& frequencies_cm1)
    : constants_(constants), omega_(frequencies_cm1) {
  const auto modes = static_cast<std::size_t>(mode_count());
  terms_of_mode_.assign(modes, {});
  paired_terms_of_mode_.assign(modes, {});
  std::vector<std::vector<int>> triples_of_pair(modes * modes);
  for (const auto& entry : constants.cubic_entries(0.0)) {
    // V₃ = (1/6) Σ_unrestricted φ q q q = Σ_sorted φ Π q_i^{p_i} / p_i!.
    CubicTerm t;
    for (int mode : {entry.i, entry.j, entry.k}) {
      if (t.factor_count > 0 && t.modes[static_cast<std::size_t>(t.factor_count - 1)] == mode) {
        ++t.powers[static_cast<std::size_t>(t.factor_count - 1)];
        continue;
      }
      t.modes[static_cast<std::size_t>(t.factor_count)] = mode;
      t.powers[static_cast<std::size_t>(t.factor_count)] = 1;
      ++t.factor_count;
    }
    double denominator = 1.0;
    for (int f = 0; f < t.factor_count; ++f) denominator *= factorial(t.powers[static_cast<std::size_t>(f)]);
    t.value = entry.value / denominator;
    const int index = static_cast<int>(cubic_terms_.size());
    for (int f = 0; f < t.factor_count; ++f)
      terms_of_mode_[static_cast<std::size_t>(t.modes[static_cast<std::size_t>(f)])].push_back(index);
    if (t.factor_count < 3) {
      single_quantum_terms_.push_back(index);
      for (int f = 0; f < t.factor_count; ++f)
        paired_terms_of_mode_[static_cast<std::size_t>(t.modes[static_cast<std::size_t>(f)])].push_back(
            index);
    } else {
      for (int a = 0; a < 3; ++a)
        for (int b = a + 1; b < 3; ++b)
          triples_of_pair[static_cast<std::size_t>(t.modes[static_cast<std::size_t>(a)]) * modes +
                          static_cast<std::size_t>(t.modes[static_cast<std::size_t>(b)])]
              .push_back(index);
    }
    cubic_terms_.push_back(t);
  }
  pair_start_.reserve(modes * modes + 1);
  for (const auto& terms : triples_of_pair) {
    pair_start_.push_back(static_cast<int>(terms_of_pair_.size()));
    terms_of_pair_.insert(terms_of_pair_.end(), terms.begin(), terms.end());
  }
  pair_start_.push_back(static_cast<int>(terms_of_pair_.size()));
}

double AnharmonicOperator::zeroth_order(const Quanta& n) const {
  double e = 0.0;
  for (int i = 0; i < mode_count(); ++i) e += omega_[i] * (n[static_cast<std::size_t>(i)] + 0.5);
  return e;
}

double AnharmonicOperator::constant(const std::vector<int>& indices) const {
  if (indices.size() == 3) return constants_.cubic(indices[0], indices[1], indices[2]);
  return constants_.quartic(indices[0], indices[1], indices[2], indices[3]);
}

double AnharmonicOperator::term(const std::vector<int>& counts, const Quanta& m, const Quanta& n,
                                int rank) const {
  std::vector<int> indices;
  for (std::size_t i = 0; i < counts.size(); ++i)
    for (int c = 0; c < counts[i]; ++c) indices.push_back(static_cast<int>(i));
  if (static_cast<int>(indices.size()) != rank) return 0.0;
  const double phi = constant(indices);
  if (phi == 0.0) return 0.0;
  double product = phi;
  for (std::size_t i = 0; i < counts.size(); ++i)
    if (counts[i] > 0) product *= coordinate_power_element(m[i], n[i], counts[i]) / factorial(counts[i]);
  return product;
}

namespace {

// ⟨m|V_rank|n⟩ by enumerating the index multisets that can connect m and n: each mode
// with Δ ≠ 0 needs |Δ| factors (plus pairs), the remaining factors come in pairs q_k².
template <class Term>
double rank_element(const Quanta& m, const Quanta& n, int rank, int mode_count, Term term) {
  std::vector<int> counts(static_cast<std::size_t>(mode_count), 0);
  int used = 0;
  for (int i = 0; i < mode_count; ++i) {
    const int d = std::abs(m[static_cast<std::size_t>(i)] - n[static_cast<std::size_t>(i)]);
    counts[static_cast<std::size_t>(i)] = d;
    used += d;
  }
  if (used > rank || (rank - used) % 2 != 0) return 0.0;
  const int pairs = (rank - used) / 2;
  double total = 0.0;
  std::function<void(int, int)> place = [&](int remaining, int first) {
    if (remaining == 0) {
      total += term(counts);
      return;
    }
    for (int k = first; k < mode_count; ++k) {
      counts[static_cast<std::size_t>(k)] += 2;
      place(remaining - 1, k);
      counts[static_cast<std::size_t>(k)] -= 2;
    }
  };
  place(pairs, 0);
  return total;
}

}  // namespace

double AnharmonicOperator::cubic_element(const Quanta& m, const Quanta& n) const {
  return rank_element(m, n, 3, mode_count(), [&](const std::vector<int>& c) { return term(c, m, n, 3); });
}

double AnharmonicOperator::quartic_element(const Quanta& m, const Quanta& n) const {
  return rank_element(m, n, 4, mode_count(), [&](const std::vector<int>& c) { return term(c, m, n, 4); });
}

double AnharmonicOperator::cubic_between(const Quanta& n,
                                         const std::vector<std::pair<int, int>>& difference) const {
  // k = n + difference. Three quanta apart: only the constant whose indices are those
  // quanta. One quantum apart (mode a): φ_aaa and every φ_abb, q_b² diagonal in b.
  int distance = 0;
  for (const auto& [mode, change] : difference) distance += std::abs(change);
  if (distance == 3) {
    std::vector<int> indices;
    double product = 1.0;
    for (const auto& [mode, change] : difference) {
      if (change == 0) continue;
      const int power = std::abs(change);
      const int from = n[static_cast<std::size_t>(mode)];
      product *= coordinate_power_element(from + change, from, power) / factorial(power);
      for (int c = 0; c < power; ++c) indices.push_back(mode);
    }
    std::sort(indices.begin(), indices.end());
    return product * constants_.cubic(indices[0], indices[1], indices[2]);
  }
  if (distance != 1) return 0.0;
  const auto it =
      std::find_if(difference.begin(), difference.end(), [](const auto& d) { return d.second != 0; });
  const int a = it->first;
  const int from = n[static_cast<std::size_t>(a)], to = from + it->second;
  double sum = constants_.cubic(a, a, a) / 6.0 * coordinate_power_element(to, from, 3);
  double pairs = 0.0;
  for (int b = 0; b < mode_count(); ++b)
    if (b != a) pairs += constants_.cubic(a, b, b) * (n[static_cast<std::size_t>(b)] + 0.5);
  sum += pairs / 2.0 * coordinate_power_element(to, from, 1);
  return sum;
}

double AnharmonicOperator::second_order(const Quanta& m, const Quanta& n, const StateSet& excluded) const {
  const int modes = mode_count();
  std::vector<int> delta(static_cast<std::size_t>(modes), 0);  // n − m
  std::vector<int> differing;
  int distance = 0;
  double gap = 0.0;  // E_n − E_m
  for (int i = 0; i < modes; ++i) {
    const int d = n[static_cast<std::size_t>(i)] - m[static_cast<std::size_t>(i)];
    if (d == 0) continue;
    delta[static_cast<std::size_t>(i)] = d;
    differing.push_back(i);
    distance += std::abs(d);
    gap += omega_[i] * d;
  }
  // Two cubic steps move an even number of quanta, at most six.
  if (distance % 2 != 0 || distance > 6) return 0.0;

  // The terms that can reach an intermediate within one cubic step of n: those touching
  // a mode where m and n differ; when they differ by two quanta or less, also every term
  // that moves one quantum; when they are equal, all. Four or more quanta apart, a term of
  // three different modes moves each by one quantum and must bring two of them closer to
  // n. Each term is visited once.
  std::vector<int> candidates;
  auto touches_earlier = [&](const CubicTerm& t, std::size_t position) {
    for (std::size_t p = 0; p < position; ++p)
      for (int f = 0; f < t.factor_count; ++f)
        if (t.modes[static_cast<std::size_t>(f)] == differing[p]) return true;
    return false;
  };
  if (distance == 0) {
    candidates.resize(cubic_terms_.size());
    for (std::size_t t = 0; t < cubic_terms_.size(); ++t) candidates[t] = static_cast<int>(t);
  } else if (distance == 2) {
    for (std::size_t p = 0; p < differing.size(); ++p)
      for (int t : terms_of_mode_[static_cast<std::size_t>(differing[p])])
        if (!touches_earlier(cubic_terms_[static_cast<std::size_t>(t)], p)) candidates.push_back(t);
    for (int t : single_quantum_terms_)
      if (!touches_earlier(cubic_terms_[static_cast<std::size_t>(t)], differing.size()))
        candidates.push_back(t);
  } else {
    for (std::size_t p = 0; p < differing.size(); ++p)
      for (int t : paired_terms_of_mode_[static_cast<std::size_t>(differing[p])])
        if (!touches_earlier(cubic_terms_[static_cast<std::size_t>(t)], p)) candidates.push_back(t);
    // A term touching three of the differing modes is listed under three pairs: take it
    // from the pair of its first two.
    const auto modes = static_cast<std::size_t>(mode_count());
    for (std::size_t p = 0; p < differing.size(); ++p)
      for (std::size_t q = p + 1; q < differing.size(); ++q) {
        const auto [low, high] = std::minmax(differing[p], differing[q]);
        const std::size_t pair = static_cast<std::size_t>(low) * modes + static_cast<std::size_t>(high);
        for (int e = pair_start_[pair]; e < pair_start_[pair + 1]; ++e) {
          const int t = terms_of_pair_[static_cast<std::size_t>(e)];
          const CubicTerm& term = cubic_terms_[static_cast<std::size_t>(t)];
          bool first_pair = true;
          for (std::size_t r = 0; r < q && first_pair; ++r)
            if (r != p)
              for (int f = 0; f < 3; ++f)
                first_pair = first_pair && term.modes[static_cast<std::size_t>(f)] != differing[r];
          if (first_pair) candidates.push_back(t);
        }
      }
  }

  // ⟨k|V₃|m⟩ summed over terms per intermediate k = m + step.
  std::vector<std::pair<std::uint64_t, double>> reached;
  for (int index : candidates) {
    const CubicTerm& t = cubic_terms_[static_cast<std::size_t>(index)];
    std::array<int, 3> change{};
    for (int f = 0; f < t.factor_count; ++f)
      change[static_cast<std::size_t>(f)] = -t.powers[static_cast<std::size_t>(f)];
    // Odometer over the changes −p, −p+2, …, p of each factor.
    while (true) {
      int moved_distance = distance;
      double amplitude = t.value;
      Step step;
      for (int f = 0; f < t.factor_count && amplitude != 0.0; ++f) {
        const auto fi = static_cast<std::size_t>(f);
        const int mode = t.modes[fi];
        const int from = m[static_cast<std::size_t>(mode)];
        const int d = delta[static_cast<std::size_t>(mode)];
        moved_distance += std::abs(change[fi] - d) - std::abs(d);
        amplitude *=
            from + change[fi] < 0 ? 0.0 : coordinate_power_element(from + change[fi], from, t.powers[fi]);
        if (change[fi] != 0) {
          step.modes[static_cast<std::size_t>(step.count)] = mode;
          step.changes[static_cast<std::size_t>(step.count)] = change[fi];
          ++step.count;
        }
      }
      if (amplitude != 0.0 && moved_distance <= 3 && step.count > 0)
        reached.emplace_back(pack(step), amplitude);
      int f = 0;
      for (; f < t.factor_count; ++f) {
        const auto fi = static_cast<std::size_t>(f);
        if (change[fi] + 2 <= t.powers[fi]) {
          change[fi] += 2;
          break;
        }
        change[fi] = -t.powers[fi];
      }
      if (f == t.factor_count) break;
    }
  }
  std::sort(reached.begin(), reached.end(), [](const auto& a, const auto& b) { return a.first < b.first; });

  double total = 0.0;
  Quanta k = m;
  std::vector<std::pair<int, int>> to_n;  // k − n, mode by mode
  for (std::size_t r = 0; r < reached.size();) {
    const std::uint64_t key = reached[r].first;
    double from_m = 0.0;
    for (; r < reached.size() && reached[r].first == key; ++r) from_m += reached[r].second;
    if (from_m == 0.0) continue;
    const Step step = unpack(key);
    double step_energy = 0.0;  // E_k − E_m
    for (int f = 0; f < step.count; ++f) {
      const auto fi = static_cast<std::size_t>(f);
      k[static_cast<std::size_t>(step.modes[fi])] += step.changes[fi];
      step_energy += omega_[step.modes[fi]] * step.changes[fi];
    }
    if (!excluded.count(k)) {
      to_n.clear();
      for (int i : differing)
        to_n.emplace_back(i, k[static_cast<std::size_t>(i)] - n[static_cast<std::size_t>(i)]);
      for (int f = 0; f < step.count; ++f) {
        const int mode = step.modes[static_cast<std::size_t>(f)];
        if (delta[static_cast<std::size_t>(mode)] == 0)
          to_n.emplace_back(mode, k[static_cast<std::size_t>(mode)] - n[static_cast<std::size_t>(mode)]);
      }
      const double from_n = cubic_between(n, to_n);
      if (from_n != 0.0) total += from_m * from_n * 0.5 * (1.0 / (-step_energy) + 1.0 / (gap - step_energy));
    }
    for (int f = 0; f < step.count; ++f)
      k[static_cast<std::size_t>(step.modes[static_cast<std::size_t>(f)])] -=
          step.changes[static_cast<std::size_t>(f)];
  }
  return total;
}

double AnharmonicOperator::element(const Quanta& m, const Quanta& n, const StateSet& excluded) const {
  double value = cubic_element(m, n) + quartic_element(m, n) + second_order(m, n, excluded);
  if (m == n) value += zeroth_order(m);
  return value;
}

}  // namespace overtone::detail
