#pragma once
// How many geometrically distinct periodic orbits the continued families give on each
// energy level, against the number of degrees of freedom: near a minimum with a definite
// Hessian every energy level carries at least that many (Weinstein, Invent. Math. 20, 47
// (1973)), so a count below it means a family was not found or not continued.
#include <string>
#include <vector>

#include "families/family_types.hpp"

namespace overtone {

// One band of energies [energy_low, energy_high] (system units) and the orbits on its
// levels. The count at one energy E: for every continued family, the number of its
// backbone segments that cross E (two or more past a fold), times its geometrically
// distinct copies (time-reversed partners once: copies / 2 when the reverse is among the
// copies, copies when it is a separate partner or the orbit itself). Lyapunov families
// count from E = 0 (their first point is the small-amplitude end of a family that reaches
// the minimum); a family born at a bifurcation counts from its birth energy.
struct OrbitCountBand {
  double energy_low = 0.0;
  double energy_high = 0.0;
  double energy_low_cm1 = 0.0;
  double energy_high_cm1 = 0.0;
  // Smallest and largest finite count at any energy of the band, and where the smallest is.
  int fewest = 0;
  int most = 0;
  double fewest_energy_cm1 = 0.0;
  // Families with continuous copies present on every level of the band (each stands for
  // a continuum of orbits; not in the finite count).
  int continuous_families = 0;
  int families_present = 0;  // continued families with at least one orbit in the band
  // fewest + (a continuum counts as enough) ≥ degrees of freedom.
  bool meets_lower_bound = true;
};

struct OrbitCount {
  int degrees_of_freedom = 0;  // the lower bound
  // False when some families were not continued (the default selection, --mode): the
  // count is partial and no warning is raised.
  bool complete = true;
  std::vector<OrbitCountBand> bands;
};

struct OrbitCountOptions {
  // Equal bands from 0 to the smallest energy_max of the continued families (the range
  // every family was asked to cover).
  int bands = 8;

  void validate() const;  // throws Error naming the field that is out of range
};

// Geometrically distinct orbits one orbit of the family stands for (see OrbitCountBand).
int distinct_orbits_per_family_orbit(const FamilyType& type);

struct FamilyResult;  // families.hpp

// The orbit count of the families of one result (the bound: degrees_of_freedom); one
// warning per band below the bound goes to `warnings` when the count is complete.
// energy_label names the unit of the converted energies in the warnings. Throws Error
// when options.bands < 1 or degrees_of_freedom < 1.
OrbitCount count_orbits(const std::vector<FamilyResult>& families, int degrees_of_freedom,
                        double cm1_per_energy, const std::string& energy_label,
                        const OrbitCountOptions& options, std::vector<std::string>& warnings);

}  // namespace overtone
