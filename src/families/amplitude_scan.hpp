#pragma once
// A check of a potential along each normal coordinate, for the usual trouble of quartic
// force fields (and Taylor-expansion potentials): a surface that turns over at large
// amplitude and falls into a hole. Run it before a long calculation that goes to high
// energy (families, overtone ladders); its lowest barrier is a natural escape energy.
#include <limits>
#include <string>
#include <vector>

#include "harmonic/harmonic.hpp"
#include "potential/potential.hpp"

namespace overtone {

struct AmplitudeScanOptions {
  // Each mode is scanned in both directions out to the classical turning point of this
  // many quanta of the harmonic oscillator: |q| ≤ sqrt(2v + 1) in dimensionless units.
  double max_quanta = 10.0;
  int points = 40;  // per direction, evenly spaced in q
  // The energy may dip by this much (cm⁻¹) between successive points before the mode counts
  // as turned over (numerical noise and genuinely flat regions stay below it).
  double tolerance_cm1 = 1.0;

  void validate() const;  // throws Error naming the field that is out of range
};

struct TurnoverFinding {
  int mode = 0;                 // harmonic index (ascending wavenumber)
  int direction = 1;            // +1 or −1 along the mode
  double turning_q = 0.0;       // dimensionless amplitude of the highest point before the fall
  double turning_quanta = 0.0;  // the same as (q² − 1)/2, quanta of the harmonic oscillator
  double barrier_cm1 = 0.0;     // energy at that point above the reference
  bool hole = false;            // further out (within the scan) the energy fell below the reference,
                                // or the potential refused to evaluate
  std::string note;             // the potential's message when it refused to evaluate
};

struct AmplitudeScanResult {
  bool turns_over = false;
  std::vector<TurnoverFinding> findings;  // one per mode and direction that turns over
  double lowest_barrier_cm1 = std::numeric_limits<double>::infinity();
  std::size_t energy_evaluations = 0;
  std::string message;  // one line
};

// Throws Error for invalid options or sizes; a potential that throws Error inside a hole
// (the Taylor-expansion guard) counts as a hole at that point.
AmplitudeScanResult scan_normal_coordinates(const Potential& potential, const HarmonicResult& harmonic,
                                            const AmplitudeScanOptions& options = {});

}  // namespace overtone
