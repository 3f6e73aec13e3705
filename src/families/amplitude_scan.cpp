#include "families/amplitude_scan.hpp"

#include <fmt/format.h>

#include <cmath>

#include "core/error.hpp"
#include "core/option_checks.hpp"
#include "core/units.hpp"
#include "harmonic/normal_coordinates.hpp"

namespace overtone {

void AmplitudeScanOptions::validate() const {
  using namespace option_checks;
  const char* owner = "amplitude scan";
  require_positive(owner, "max_quanta", max_quanta);
  require_at_least(owner, "points", points, 2);
  require_non_negative(owner, "tolerance_cm1", tolerance_cm1);
}

AmplitudeScanResult scan_normal_coordinates(const Potential& potential, const HarmonicResult& harmonic,
                                            const AmplitudeScanOptions& options) {
  options.validate();
  if (harmonic.coordinates_angstrom.size() != static_cast<Eigen::Index>(3 * potential.atom_count()))
    throw Error(fmt::format("the harmonic result has {} coordinates but the potential '{}' has {} atoms",
                            harmonic.coordinates_angstrom.size(), potential.description(),
                            potential.atom_count()));
  const detail::NormalCoordinateFrame frame(harmonic);
  const int m = static_cast<int>(harmonic.mode_count());
  const double q_max = std::sqrt(2.0 * options.max_quanta + 1.0);
  AmplitudeScanResult result;
  const std::size_t before = potential.counts().energies;
  const double reference = potential.energy(harmonic.coordinates_angstrom);
  for (int k = 0; k < m; ++k) {
    if (!(harmonic.frequencies_cm1[k] > 0.0)) continue;  // no dimensionless coordinate for it
    for (int direction : {1, -1}) {
      double previous = 0.0, highest = 0.0, highest_q = 0.0;
      bool turned = false;
      TurnoverFinding finding;
      for (int p = 1; p <= options.points; ++p) {
        const double q = direction * q_max * p / options.points;
        Eigen::VectorXd displacement = Eigen::VectorXd::Zero(m);
        displacement[k] = q;
        double energy_cm1 = 0.0;
        std::string refused;
        try {
          energy_cm1 =
              (potential.energy(frame.cartesian(displacement)) - reference) * units::cm1_per_kcal_mol;
        } catch (const Error& e) {
          refused = e.what();
        }
        if (!turned && (!refused.empty() || energy_cm1 < previous - options.tolerance_cm1)) {
          turned = true;
          finding.mode = k;
          finding.direction = direction;
          finding.turning_q = highest_q;
          finding.turning_quanta = std::max(0.0, (highest_q * highest_q - 1.0) / 2.0);
          finding.barrier_cm1 = highest;
        }
        // Past the turn, keep going only to see whether the surface falls into a hole.
        if (turned && (!refused.empty() || energy_cm1 < -options.tolerance_cm1)) {
          finding.hole = true;
          finding.note = refused;
          break;
        }
        if (!turned && energy_cm1 > highest) {
          highest = energy_cm1;
          highest_q = q;
        }
        previous = energy_cm1;
      }
      if (turned) {
        result.findings.push_back(finding);
        result.lowest_barrier_cm1 = std::min(result.lowest_barrier_cm1, finding.barrier_cm1);
      }
    }
  }
  result.energy_evaluations = potential.counts().energies - before;
  result.turns_over = !result.findings.empty();
  if (!result.turns_over) {
    result.message =
        fmt::format("every mode rises monotonically out to {} quanta in both directions", options.max_quanta);
  } else {
    const TurnoverFinding* lowest = &result.findings.front();
    for (const auto& f : result.findings)
      if (f.barrier_cm1 < lowest->barrier_cm1) lowest = &f;
    result.message = fmt::format(
        "{} of {} mode directions turn over within {} quanta; the lowest barrier is {:.0f} cm-1 above the "
        "minimum "
        "(mode {} in ascending order, direction {}, about {:.1f} quanta): results above that energy are not "
        "physical",
        result.findings.size(), 2 * m, options.max_quanta, lowest->barrier_cm1, lowest->mode + 1,
        lowest->direction > 0 ? "+" : "-", lowest->turning_quanta);
  }
  return result;
}

}  // namespace overtone
