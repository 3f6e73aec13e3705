#pragma once
// The shipped examples run through the pipeline, for the report tests.
#include <memory>
#include <string>

#include "molecule/read_molecule.hpp"
#include "pipeline/analysis.hpp"
#include "potential/make_potential.hpp"

namespace overtone::testing {

struct Analysed {
  std::unique_ptr<Potential> potential;
  AnalysisResult analysis;
};

// molecules/NAME.xyz on potentials/NAME.toml; the title may be replaced (hostile titles).
inline Analysed run_example(const std::string& name, const std::string* title = nullptr) {
  const std::string source_dir = OVERTONE_SOURCE_DIR;
  Molecule molecule = read_molecule(source_dir + "/molecules/" + name + ".xyz").molecule;
  if (title) molecule.title = *title;
  Analysed result;
  const std::string potential = name == "hcl" ? "hcl-morse" : name;
  result.potential = make_potential(source_dir + "/potentials/" + potential + ".toml", molecule);
  result.analysis = analyze_molecule(molecule, *result.potential);
  return result;
}

}  // namespace overtone::testing
