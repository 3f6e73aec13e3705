#include "anharmonic/effective_hamiltonian.hpp"

#include <cmath>
#include <functional>

namespace overtone::detail {

double coordinate_power_element(int a, int b, int power) {
  if (a < 0 || b < 0 || power < 0 || std::abs(a - b) > power || (a - b - power) % 2 != 0) return 0.0;
  std::vector<double> state(static_cast<std::size_t>(b + power + 2), 0.0);
  state[static_cast<std::size_t>(b)] = 1.0;
  for (int step = 0; step < power; ++step) {
    std::vector<double> next(state.size(), 0.0);
    for (std::size_t n = 0; n + 1 < state.size(); ++n) {
      if (state[n] == 0.0) continue;
      const double value = state[n] / std::sqrt(2.0);
      if (n > 0) next[n - 1] += value * std::sqrt(static_cast<double>(n));
      next[n + 1] += value * std::sqrt(static_cast<double>(n + 1));
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

}  // namespace

AnharmonicOperator::AnharmonicOperator(const ForceConstantTensors& constants,
                                       const Eigen::VectorXd& frequencies_cm1)
    : constants_(constants), omega_(frequencies_cm1) {
  for (const auto& entry : constants.cubic_entries(0.0)) {
    CubicTerm t;
    std::map<int, int> powers;
    ++powers[entry.i];
    ++powers[entry.j];
    ++powers[entry.k];
    // V₃ = (1/6) Σ_unrestricted φ q q q = Σ_sorted φ Π q_i^{p_i} / p_i!.
    double denominator = 1.0;
    for (const auto& [mode, power] : powers) {
      t.factors.emplace_back(mode, power);
      denominator *= factorial(power);
    }
    t.value = entry.value / denominator;
    cubic_terms_.push_back(std::move(t));
  }
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

const std::map<Quanta, double>& AnharmonicOperator::apply_cubic(const Quanta& n) const {
  if (const auto cached = applied_.find(n); cached != applied_.end()) return cached->second;
  std::map<Quanta, double>& result = applied_[n];
  for (const auto& t : cubic_terms_) {
    Quanta target = n;
    std::function<void(std::size_t, double)> expand = [&](std::size_t factor, double amplitude) {
      if (factor == t.factors.size()) {
        result[target] += amplitude;
        return;
      }
      const auto [mode, power] = t.factors[factor];
      const int from = n[static_cast<std::size_t>(mode)];
      for (int delta = -power; delta <= power; delta += 2) {
        const int to = from + delta;
        if (to < 0) continue;
        target[static_cast<std::size_t>(mode)] = to;
        expand(factor + 1, amplitude * coordinate_power_element(to, from, power));
      }
      target[static_cast<std::size_t>(mode)] = from;
    };
    expand(0, t.value);
  }
  return result;
}

double AnharmonicOperator::second_order(const Quanta& m, const Quanta& n,
                                        const std::set<Quanta>& excluded) const {
  const auto& from_m = apply_cubic(m);
  const auto& from_n = apply_cubic(n);
  const double em = zeroth_order(m), en = zeroth_order(n);
  double total = 0.0;
  for (const auto& [k, a] : from_m) {
    if (a == 0.0 || excluded.count(k)) continue;
    const auto it = from_n.find(k);
    if (it == from_n.end() || it->second == 0.0) continue;
    const double ek = zeroth_order(k);
    total += a * it->second * 0.5 * (1.0 / (em - ek) + 1.0 / (en - ek));
  }
  return total;
}

double AnharmonicOperator::element(const Quanta& m, const Quanta& n, const std::set<Quanta>& excluded) const {
  double value = cubic_element(m, n) + quartic_element(m, n) + second_order(m, n, excluded);
  if (m == n) value += zeroth_order(m);
  return value;
}

Eigen::MatrixXd AnharmonicOperator::block(const std::vector<Quanta>& states) const {
  const std::set<Quanta> excluded(states.begin(), states.end());
  const Eigen::Index size = static_cast<Eigen::Index>(states.size());
  Eigen::MatrixXd h(size, size);
  for (Eigen::Index a = 0; a < size; ++a)
    for (Eigen::Index b = a; b < size; ++b) {
      h(a, b) = element(states[static_cast<std::size_t>(a)], states[static_cast<std::size_t>(b)], excluded);
      h(b, a) = h(a, b);
    }
  return h;
}

}  // namespace overtone::detail
