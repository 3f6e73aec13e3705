#pragma once
// Frames of the periodic orbits of the families, for animations (the HTML report and
// animations/family-NN.xyz): one period of a family's orbit, sampled at equal time steps
// and mapped to Cartesian positions of the atoms, x = x_eq + M^{-1/2} L Q(t).
//
// The orbit drawn at a requested energy is the accepted backbone point nearest to that
// energy (no new continuation): it is integrated from its stored initial conditions for
// one period with the same potential. Rotation–vibration coupling is neglected, as in the
// families stage.
#include <Eigen/Dense>
#include <string>
#include <vector>

#include "families/families.hpp"
#include "pipeline/analysis.hpp"

namespace overtone {

struct OrbitFramesOptions {
  // Energies above the minimum (cm⁻¹) at which every continued family is drawn; empty:
  // one orbit per family at default_quanta quanta of its own mode (default_quanta·ħω).
  std::vector<double> energies_cm1;
  // Two quanta: the region of the first overtone, where a backbone has usually left its
  // harmonic value visibly but is still far from any turnover of the surface.
  double default_quanta = 2.0;
  int frames_per_period = 24;  // frames of one period (the last frame is not the first again)
  // Relative and absolute error per step of the Runge–Kutta–Fehlberg 7(8) integration of
  // the scaled state; the animation needs far less than the families' own 1e-12.
  double integration_tolerance = 1e-10;
  void validate() const;  // throws Error naming the field
};

struct FamilyOrbitFrames {
  int family = 0;                     // 1-based, as in families[] of the JSON document
  double requested_energy_cm1 = 0.0;  // what was asked for
  double energy_cm1 = 0.0;            // energy of the backbone point drawn
  double frequency_cm1 = 0.0;         // its frequency 1/(cT)
  double period_fs = 0.0;
  double amplitude_angstrom = 0.0;  // largest displacement of an atom over the frames
  double closure_angstrom = 0.0;    // largest |x(T) − x(0)| of an atom after one period
  bool outside_backbone = false;    // the requested energy lies beyond the computed backbone, whose
                                    // nearest end is drawn instead
  std::vector<Eigen::VectorXd> frames_angstrom;  // 3N Cartesian positions per frame, atom-major
};

struct OrbitFramesResult {
  std::vector<FamilyOrbitFrames> orbits;  // by family, then by requested energy
  std::vector<std::string> warnings;      // e.g. an integration that failed for one family
};

// One entry per continued family (with points) and requested energy. Throws Error for
// invalid options; an orbit that cannot be integrated is left out with a warning.
OrbitFramesResult sample_family_orbits(const AnalysisResult& analysis, const Potential& potential,
                                       const FamiliesResult& families,
                                       const OrbitFramesOptions& options = {});

}  // namespace overtone
