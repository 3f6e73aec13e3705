#include "potential/detail_linear_limit.hpp"

#include <fmt/format.h>

#include <random>
#include <set>

#include "core/error.hpp"
#include "core/option_checks.hpp"

namespace overtone::detail {

double triple_sine(const Eigen::VectorXd& x, const BondedTriple& triple) {
  const Eigen::Vector3d centre = x.segment<3>(3 * triple.centre);
  const Eigen::Vector3d u = x.segment<3>(3 * triple.first) - centre;
  const Eigen::Vector3d v = x.segment<3>(3 * triple.second) - centre;
  const double lengths = u.norm() * v.norm();
  // Coincident atoms have no angle at all; count them as degenerate (sine 0).
  if (!(lengths > 0.0)) return 0.0;
  return u.cross(v).norm() / lengths;
}

void LinearLimitOptions::validate() const {
  option_checks::require_in_open("linear-limit", "band_sine", band_sine, 0.0, 1.0);
  option_checks::require_positive("linear-limit", "step_angstrom", step_angstrom);
  option_checks::require_at_least("linear-limit", "attempts", attempts, 1);
}

LinearLimit::LinearLimit(std::vector<BondedTriple> triples, const LinearLimitOptions& options)
    : triples_(std::move(triples)), options_(options) {
  options_.validate();
}

std::vector<int> LinearLimit::degenerate_triples(const Eigen::VectorXd& x) const {
  std::vector<int> degenerate;
  for (std::size_t t = 0; t < triples_.size(); ++t)
    if (!(triple_sine(x, triples_[t]) >= options_.band_sine)) degenerate.push_back(static_cast<int>(t));
  return degenerate;
}

bool LinearLimit::all_outside_band(const Eigen::VectorXd& x) const {
  for (const auto& triple : triples_)
    if (!(triple_sine(x, triple) >= options_.band_sine)) return false;
  return true;
}

Eigen::VectorXd LinearLimit::displacement_pattern(const Eigen::VectorXd& x,
                                                  const std::vector<int>& degenerate) const {
  std::set<int> centres;
  for (const int t : degenerate) centres.insert(triples_[static_cast<std::size_t>(t)].centre);
  // The same seed every call: the pattern depends only on x, so the limit is a function.
  std::mt19937 generator(options_.seed);
  std::normal_distribution<double> normal(0.0, 1.0);
  for (int attempt = 0; attempt < options_.attempts; ++attempt) {
    Eigen::VectorXd pattern = Eigen::VectorXd::Zero(x.size());
    for (const int centre : centres) {
      Eigen::Vector3d direction(normal(generator), normal(generator), normal(generator));
      pattern.segment<3>(3 * centre) = direction.normalized();
    }
    bool usable = true;
    for (int m = 1; m <= 3 && usable; ++m)
      for (const double sign : {1.0, -1.0})
        usable = usable && all_outside_band(x + sign * m * options_.step_angstrom * pattern);
    if (usable) return pattern;
  }
  throw Error(fmt::format(
      "no displacement takes the {} linear or coincident bonded triple(s) of this geometry out of the "
      "degenerate band in {} attempts (atoms overlapping?)",
      degenerate.size(), options_.attempts));
}

double LinearLimit::evaluate(const Eigen::VectorXd& x, const std::vector<int>& degenerate,
                             const ValueAndGradient& f, Eigen::VectorXd* gradient,
                             double* one_sided_slope) const {
  const Eigen::VectorXd pattern = displacement_pattern(x, degenerate);
  // Weights of A(h), A(2h), A(3h): they sum to 1 and cancel the h and h² terms.
  constexpr double weights[3] = {3.0, -3.0, 1.0};
  constexpr double slope_weights[3] = {-2.5, 4.0, -1.5};
  double value = 0.0;
  double slope = 0.0;
  if (gradient) gradient->setZero(x.size());
  Eigen::VectorXd side_gradient;
  for (int m = 1; m <= 3; ++m) {
    double average = 0.0;
    for (const double sign : {1.0, -1.0}) {
      const Eigen::VectorXd y = x + sign * m * options_.step_angstrom * pattern;
      average += 0.5 * f(y, gradient ? &side_gradient : nullptr);
      if (gradient) *gradient += 0.5 * weights[m - 1] * side_gradient;
    }
    value += weights[m - 1] * average;
    slope += slope_weights[m - 1] * average;
  }
  if (one_sided_slope) *one_sided_slope = slope / options_.step_angstrom;
  return value;
}

}  // namespace overtone::detail
