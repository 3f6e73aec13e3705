#include "intensity/anharmonic_intensities.hpp"

#include <fmt/format.h>

#include <cmath>
#include <functional>
#include <map>

#include "core/error.hpp"
#include "core/units.hpp"
#include "intensity/harmonic_intensities.hpp"

namespace overtone {

namespace detail {

namespace {

// ⟨a|q^p|b⟩ of one oscillator for the changes the cubic operator makes.
double q1(int a, int b) {
  const int high = std::max(a, b);
  return std::abs(a - b) == 1 ? std::sqrt(high / 2.0) : 0.0;
}
double q2(int a, int b) {
  if (a == b) return (2.0 * a + 1.0) / 2.0;
  const int high = std::max(a, b);
  return std::abs(a - b) == 2 ? std::sqrt(high * (high - 1.0)) / 2.0 : 0.0;
}
double q3(int a, int b) {
  const int high = std::max(a, b);
  if (std::abs(a - b) == 1) return 3.0 * std::pow(high / 2.0, 1.5);
  if (std::abs(a - b) == 3) return std::sqrt(high * (high - 1.0) * (high - 2.0)) / std::pow(2.0, 1.5);
  return 0.0;
}

// The one-quantum change at mode a: the φ_aaa term and the φ_abb terms of every other mode.
double single_change(const ForceConstantTensors& phi, const std::vector<int>& m, const std::vector<int>& n,
                     int a) {
  double value = phi.cubic(a, a, a) / 6.0 * q3(m[a], n[a]);
  const double step = q1(m[a], n[a]);
  for (int b = 0; b < static_cast<int>(n.size()); ++b)
    if (b != a) value += 0.5 * phi.cubic(a, b, b) * step * q2(n[b], n[b]);
  return value;
}

}  // namespace

double cubic_matrix_element(const ForceConstantTensors& phi, const std::vector<int>& m,
                            const std::vector<int>& n) {
  std::vector<int> changed;
  int total = 0;
  for (int a = 0; a < static_cast<int>(n.size()); ++a)
    if (m[a] != n[a]) {
      changed.push_back(a);
      total += std::abs(m[a] - n[a]);
    }
  if (total != 1 && total != 3) return 0.0;
  if (changed.size() == 3)
    return phi.cubic(changed[0], changed[1], changed[2]) * q1(m[changed[0]], n[changed[0]]) *
           q1(m[changed[1]], n[changed[1]]) * q1(m[changed[2]], n[changed[2]]);
  if (changed.size() == 2) {
    const bool first_double = std::abs(m[changed[0]] - n[changed[0]]) == 2;
    const int a = first_double ? changed[0] : changed[1], b = first_double ? changed[1] : changed[0];
    return 0.5 * phi.cubic(a, a, b) * q2(m[a], n[a]) * q1(m[b], n[b]);
  }
  const int a = changed[0];
  if (total == 3) return phi.cubic(a, a, a) / 6.0 * q3(m[a], n[a]);
  return single_change(phi, m, n, a);
}

Eigen::VectorXd two_quantum_transition_moment(const ForceConstantTensors& phi, const Eigen::VectorXd& omega,
                                              const Eigen::MatrixXd& derivatives, const std::vector<int>& f,
                                              const std::function<bool(const std::vector<int>&)>& resonant) {
  const int modes = static_cast<int>(f.size());
  auto energy_of = [&](const std::vector<int>& n) {
    double e = 0.0;
    for (int k = 0; k < modes; ++k) e += omega[k] * n[static_cast<std::size_t>(k)];
    return e;
  };
  const double energy = energy_of(f);
  Eigen::VectorXd moment = Eigen::VectorXd::Zero(derivatives.rows());
  const std::vector<int> ground(f.size(), 0);
  for (int k = 0; k < modes; ++k) {
    std::vector<int> one = ground;
    one[static_cast<std::size_t>(k)] = 1;
    const double coupling = cubic_matrix_element(phi, one, f);
    if (coupling != 0.0 && !(resonant && resonant(one)))
      moment += derivatives.col(k) / std::sqrt(2.0) * coupling / (energy - omega[k]);
    for (const int change : {1, -1}) {
      std::vector<int> m = f;
      m[static_cast<std::size_t>(k)] += change;
      if (m[static_cast<std::size_t>(k)] < 0) continue;
      const double from_ground = cubic_matrix_element(phi, ground, m);
      if (from_ground == 0.0) continue;
      const int quanta = f[static_cast<std::size_t>(k)];
      const double step = change > 0 ? std::sqrt((quanta + 1) / 2.0) : std::sqrt(quanta / 2.0);
      moment -= from_ground * derivatives.col(k) * step / energy_of(m);
    }
  }
  return moment;
}

Eigen::Vector3d electrical_moment(const std::array<Eigen::MatrixXd, 3>& second, const std::vector<int>& f) {
  std::vector<int> excited;
  for (std::size_t k = 0; k < f.size(); ++k)
    for (int q = 0; q < f[k]; ++q) excited.push_back(static_cast<int>(k));
  Eigen::Vector3d moment = Eigen::Vector3d::Zero();
  if (excited.size() != 2) return moment;
  // ⟨0|½ q_i²|2_i⟩ = 1/(2√2); ⟨0|½(q_i q_j + q_j q_i)|1_i 1_j⟩ = 1/2.
  const double factor = excited[0] == excited[1] ? 1.0 / (2.0 * std::sqrt(2.0)) : 0.5;
  for (int c = 0; c < 3; ++c)
    moment[c] = factor * second[static_cast<std::size_t>(c)](excited[0], excited[1]);
  return moment;
}

}  // namespace detail

namespace {

using State = std::vector<int>;

struct Context {
  const Vpt2Result* vpt2;
  const ForceConstantTensors* phi;
  Eigen::VectorXd omega;                          // cm⁻¹ per mode
  Eigen::VectorXd length_squared;                 // λ_k = ħ/ω_k, Å² Da
  Eigen::MatrixXd dipole;                         // 3 × M: ∂μ/∂q_k (e·Å)
  std::optional<Eigen::MatrixXd> polarizability;  // 6 × M: ∂α/∂q_k (Å³)
  std::map<SparseQuanta, int> polyad_of_manifold;
  std::optional<std::array<Eigen::MatrixXd, 3>> dipole_second;  // ∂²μ_α/∂q_k∂q_l (M × M each)
};

double harmonic_energy(const Context& c, const State& n) {
  double e = 0.0;
  for (std::size_t k = 0; k < n.size(); ++k) e += c.omega[static_cast<Eigen::Index>(k)] * n[k];
  return e;
}

double length_squared_of(double wavenumber_cm1) {
  return units::hbar_internal / (wavenumber_cm1 / units::cm1_per_internal_angular_frequency);
}

SparseQuanta manifold_of(const Context& c, const State& n) {
  std::vector<int> set_quanta(c.vpt2->sets.size(), 0);
  for (std::size_t k = 0; k < n.size(); ++k)
    set_quanta[static_cast<std::size_t>(c.vpt2->set_of_mode[k])] += n[k];
  return sparse_quanta(set_quanta);
}

int polyad_of(const Context& c, const State& n) {
  const auto found = c.polyad_of_manifold.find(manifold_of(c, n));
  return found == c.polyad_of_manifold.end() ? -1 : found->second;
}

Eigen::VectorXd two_quantum_moment(const Context& c, const State& f, const Eigen::MatrixXd& g) {
  const int polyad = polyad_of(c, f);
  Eigen::VectorXd moment = detail::two_quantum_transition_moment(
      *c.phi, c.omega, g, f, [&](const State& one) { return polyad >= 0 && polyad_of(c, one) == polyad; });
  // Electrical anharmonicity: only the dipole has second derivatives here.
  if (&g == &c.dipole && c.dipole_second) moment += detail::electrical_moment(*c.dipole_second, f);
  return moment;
}

// Effective derivative D = M √(2/λ_f) of one component state.
Eigen::VectorXd effective_derivative(const Context& c, const State& n, const Eigen::MatrixXd& g) {
  int total = 0, mode = -1;
  for (std::size_t k = 0; k < n.size(); ++k) {
    total += n[k];
    if (n[k] > 0) mode = static_cast<int>(k);
  }
  const Eigen::VectorXd moment =
      total == 1 ? Eigen::VectorXd(g.col(mode) / std::sqrt(2.0)) : two_quantum_moment(c, n, g);
  return moment * std::sqrt(2.0 / length_squared_of(harmonic_energy(c, n)));
}

// Component states of a manifold (quanta per set spread over the set's modes).
void spread(const Context& c, const std::vector<int>& set_quanta, std::size_t set, State& current,
            std::vector<State>& out) {
  if (set == set_quanta.size()) {
    out.push_back(current);
    return;
  }
  const std::vector<int>& modes = c.vpt2->sets[set].modes;
  std::function<void(std::size_t, int)> place = [&](std::size_t index, int left) {
    if (index + 1 == modes.size()) {
      current[static_cast<std::size_t>(modes[index])] = left;
      spread(c, set_quanta, set + 1, current, out);
      current[static_cast<std::size_t>(modes[index])] = 0;
      return;
    }
    for (int q = 0; q <= left; ++q) {
      current[static_cast<std::size_t>(modes[index])] = q;
      place(index + 1, left - q);
    }
    current[static_cast<std::size_t>(modes[index])] = 0;
  };
  place(0, set_quanta[set]);
}

std::vector<State> components(const Context& c, const std::vector<int>& set_quanta) {
  std::vector<State> out;
  State current(static_cast<std::size_t>(c.omega.size()), 0);
  spread(c, set_quanta, 0, current, out);
  return out;
}

double ir_of(const Eigen::VectorXd& d) { return units::km_per_mol_per_e2_per_da * d.squaredNorm(); }
double raman_of(const Eigen::VectorXd& d) {
  const RamanInvariants r = raman_invariants(Eigen::Matrix<double, 6, 1>(d));
  return 45.0 * r.mean_squared + 7.0 * r.anisotropy_squared;
}

// Manifold totals of one technique, by manifold.
struct Channel {
  const Eigen::MatrixXd* derivatives;
  double (*intensity)(const Eigen::VectorXd&);
  bool VibrationalLevel::*active;
};

double manifold_total(const Context& c, const std::vector<int>& set_quanta, const Channel& t) {
  double total = 0.0;
  for (const State& n : components(c, set_quanta))
    total += t.intensity(effective_derivative(c, n, *t.derivatives));
  return total;
}

// The single (nondegenerate) state of a manifold, or empty.
State single_state(const Context& c, const SparseQuanta& manifold) {
  const std::vector<State> states = components(c, dense_quanta(manifold, c.vpt2->sets.size()));
  return states.size() == 1 ? states.front() : State();
}

const VibrationalLevel* level_of_manifold(const Vpt2Result& vpt2, const SparseQuanta& manifold) {
  for (const VibrationalLevel& level : vpt2.levels)
    if (sparse_quanta(level.set_quanta) == manifold) return &level;
  return nullptr;
}

// Coherent intensity of a member of a polyad of two manifolds, one a single state a, coupled
// at first order: the combination of the other manifold's components that a couples to is
// u = W/|W| (W_c = ⟨c|V₃|a⟩), the polyad is the two-state problem (a, u) with coupling |W|,
// and c_u/c_a = (E_ψ − E_a)/|W|. nullopt when the polyad is not of that kind.
std::optional<double> dyad_intensity(const Context& c, const VibrationalLevel& level, const Channel& t) {
  const Polyad& polyad = c.vpt2->polyads[static_cast<std::size_t>(level.polyad)];
  if (polyad.manifolds.size() != 2 || !std::isfinite(level.resonance_corrected_cm1)) return std::nullopt;
  const int single = !single_state(c, polyad.manifolds[0]).empty()   ? 0
                     : !single_state(c, polyad.manifolds[1]).empty() ? 1
                                                                     : -1;
  if (single < 0) return std::nullopt;
  const SparseQuanta& manifold_a = polyad.manifolds[static_cast<std::size_t>(single)];
  const SparseQuanta& manifold_b = polyad.manifolds[static_cast<std::size_t>(1 - single)];
  const State a = single_state(c, manifold_a);
  const VibrationalLevel* level_a = level_of_manifold(*c.vpt2, manifold_a);
  if (!level_a) return std::nullopt;
  const std::vector<State> others = components(c, dense_quanta(manifold_b, c.vpt2->sets.size()));
  Eigen::VectorXd w(static_cast<Eigen::Index>(others.size()));
  for (std::size_t k = 0; k < others.size(); ++k)
    w[static_cast<Eigen::Index>(k)] = detail::cubic_matrix_element(*c.phi, others[k], a);
  const double coupling = w.norm();
  if (coupling == 0.0) return std::nullopt;
  Eigen::VectorXd d_b = Eigen::VectorXd::Zero(t.derivatives->rows());
  for (std::size_t k = 0; k < others.size(); ++k)
    d_b += w[static_cast<Eigen::Index>(k)] / coupling * effective_derivative(c, others[k], *t.derivatives);
  double weight_a = 0.0, weight_b = 0.0;
  for (const LevelComponent& component : level.mixing)
    (component.quanta == manifold_a ? weight_a : weight_b) += component.weight;
  const double sign = level.resonance_corrected_cm1 >= level_a->anharmonic_cm1 ? 1.0 : -1.0;
  return t.intensity(std::sqrt(weight_a) * effective_derivative(c, a, *t.derivatives) +
                     sign * std::sqrt(weight_b) * d_b);
}

// Incoherent: Σ_j w_j I_j over the listed components (whole manifolds).
double mixed_intensity(const Context& c, const VibrationalLevel& level, const Channel& t) {
  double value = 0.0;
  for (const LevelComponent& component : level.mixing)
    value += component.weight * manifold_total(c, dense_quanta(component.quanta, c.vpt2->sets.size()), t) /
             std::max(1, component.sublevel_count);
  return value;
}

// A level outside polyads: its manifold's total, given to the sublevel that can carry it.
std::optional<double> plain_intensity(const Context& c, const VibrationalLevel& level, const Channel& t) {
  if (level.kind == LevelKind::other) return std::nullopt;
  const double total = manifold_total(c, level.set_quanta, t);
  if (level.sublevel_count == 1) return total;
  int active = 0;
  for (const VibrationalLevel& other : c.vpt2->levels)
    if (other.set_quanta == level.set_quanta && other.activity_known && other.*t.active) ++active;
  if (!level.activity_known || active > 1) return std::nullopt;
  return active == 0 || !(level.*t.active) ? 0.0 : total;
}

Context make_context(const Vpt2Result& vpt2, const ForceConstantResult& fc, const HarmonicResult& harmonic,
                     const DipoleSource& source) {
  Context c{&vpt2, &fc.constants, fc.frequencies_cm1, {}, {}, std::nullopt, {}, std::nullopt};
  const Eigen::Index modes = c.omega.size();
  c.length_squared.resize(modes);
  Eigen::MatrixXd displacement = harmonic.mass_weighted_modes;
  for (Eigen::Index a = 0; a < harmonic.masses_da.size(); ++a)
    displacement.middleRows(3 * a, 3) /= std::sqrt(harmonic.masses_da[a]);
  for (Eigen::Index k = 0; k < modes; ++k) {
    c.length_squared[k] = length_squared_of(c.omega[k]);
    displacement.col(k) *= std::sqrt(c.length_squared[k]);
  }
  c.dipole = source.dipole_derivatives(harmonic.coordinates_angstrom) * displacement;
  if (source.has_dipole_second_derivatives()) {
    const std::array<Eigen::MatrixXd, 3> cartesian =
        source.dipole_second_derivatives(harmonic.coordinates_angstrom);
    c.dipole_second = std::array<Eigen::MatrixXd, 3>{};
    for (std::size_t a = 0; a < 3; ++a)
      (*c.dipole_second)[a] = displacement.transpose() * cartesian[a] * displacement;
  }
  if (source.has_polarizability_derivatives())
    c.polarizability = source.polarizability_derivatives(harmonic.coordinates_angstrom) * displacement;
  for (std::size_t p = 0; p < vpt2.polyads.size(); ++p)
    for (const SparseQuanta& manifold : vpt2.polyads[p].manifolds)
      c.polyad_of_manifold[manifold] = static_cast<int>(p);
  return c;
}

std::optional<double> level_intensity(const Context& c, const VibrationalLevel& level, const Channel& t,
                                      bool& incoherent) {
  if (!level.in_polyad() || level.mixing.empty()) return plain_intensity(c, level, t);
  if (const std::optional<double> coherent = dyad_intensity(c, level, t)) return coherent;
  incoherent = true;
  return mixed_intensity(c, level, t);
}

}  // namespace

LevelIntensityResult compute_anharmonic_level_intensities(const Vpt2Result& vpt2,
                                                          const ForceConstantResult& force_constants,
                                                          const HarmonicResult& harmonic,
                                                          const DipoleSource& source) {
  if (force_constants.frequencies_cm1.size() != harmonic.mass_weighted_modes.cols() ||
      vpt2.harmonic_cm1.size() != harmonic.mass_weighted_modes.cols())
    throw Error(
        fmt::format("anharmonic intensities: {} force-constant modes, {} VPT2 modes and {} harmonic modes",
                    force_constants.frequencies_cm1.size(), vpt2.harmonic_cm1.size(),
                    harmonic.mass_weighted_modes.cols()));
  const Context c = make_context(vpt2, force_constants, harmonic, source);
  LevelIntensityResult result;
  result.treatment =
      "first-order transition moments of overtones and binary combinations (mechanical anharmonicity from "
      "the "
      "cubic constants; no second dipole derivatives: electrical anharmonicity not included), "
      "double-harmonic "
      "fundamentals, mixed inside resonance polyads (coherently for two-state Fermi polyads)";
  const Channel ir{&c.dipole, &ir_of, &VibrationalLevel::ir_active};
  std::vector<bool> warned(vpt2.polyads.size(), false);
  for (const VibrationalLevel& level : vpt2.levels) {
    bool incoherent = false;
    result.ir_km_per_mol.push_back(level_intensity(c, level, ir, incoherent));
    if (c.polarizability) {
      const Channel raman{&*c.polarizability, &raman_of, &VibrationalLevel::raman_active};
      result.raman_activity_a4_per_u.push_back(level_intensity(c, level, raman, incoherent));
    } else {
      result.raman_activity_a4_per_u.push_back(std::nullopt);
    }
    if (incoherent && !warned[static_cast<std::size_t>(level.polyad)]) {
      warned[static_cast<std::size_t>(level.polyad)] = true;
      result.warnings.push_back(fmt::format(
          "polyad {}: intensities mixed by weight (the interference of its bright states is left out)",
          level.polyad + 1));
    }
  }
  return result;
}

}  // namespace overtone
