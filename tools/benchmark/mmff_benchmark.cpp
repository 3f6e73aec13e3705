// MMFF94 benchmark: the compiled force field against Open Babel's evaluation of the same
// force field, in the same process, per molecule: time per energy+gradient, per Hessian
// (compiled: analytic; Open Babel: central differences of its gradients, the harmonic
// stage's default for a potential without a Hessian), per Hessian–vector product, and the
// harmonic stage (Hessian + normal modes) with each. Also the compiled analytic Hessian
// against central differences of the compiled gradient, to show what the analytic
// Hessian saves. Prints tables; no pass/fail.
#include <fmt/format.h>
#include <time.h>

#include <algorithm>
#include <cstdio>
#include <string>
#include <vector>

#include "harmonic/harmonic.hpp"
#include "molecule/read_molecule.hpp"
#include "optimize/minimize.hpp"
#include "potential/make_potential.hpp"

namespace {

// CPU time of this thread: on a machine shared with other work, wall-clock time counts
// the waits for a core, CPU time only the work.
double cpu_seconds() {
  timespec now{};
  clock_gettime(CLOCK_THREAD_CPUTIME_ID, &now);
  return static_cast<double>(now.tv_sec) + 1e-9 * static_cast<double>(now.tv_nsec);
}

// Best over repetitions of the mean CPU time per call, each repetition running for at
// least min_seconds.
template <class Function>
double time_per_call(const Function& f, double min_seconds = 0.05, int repetitions = 5) {
  double best = 1e300;
  for (int r = 0; r < repetitions; ++r) {
    int calls = 0;
    const double start = cpu_seconds();
    do {
      f();
      ++calls;
    } while (cpu_seconds() - start < min_seconds);
    best = std::min(best, (cpu_seconds() - start) / calls);
  }
  return best;
}

struct Case {
  const char* name;
  const char* smiles;
};

std::string si(double seconds) {
  if (seconds < 1e-3) return fmt::format("{:.1f} us", seconds * 1e6);
  if (seconds < 1.0) return fmt::format("{:.2f} ms", seconds * 1e3);
  return fmt::format("{:.2f} s", seconds);
}

}  // namespace

int main(int argc, char** argv) {
  using namespace overtone;
  const std::string variant = argc > 1 ? argv[1] : "MMFF94";
  const std::vector<Case> cases = {
      {"water", "O"},
      {"formaldehyde", "C=O"},
      {"benzene", "c1ccccc1"},
      {"paracetamol", "CC(=O)Nc1ccc(O)cc1"},
      {"diphenhydramine", "CN(C)CCOC(c1ccccc1)c1ccccc1"},  // 40 atoms
      {"ritonavir",
       "CC(C)c1nc(cs1)CN(C)C(=O)NC(C(C)C)C(=O)NC(Cc1ccccc1)CC(O)C(Cc1ccccc1)NC(=O)OCc1cncs1"},  // 98 atoms
  };
  std::printf("%s compiled against %s%s (same process, CPU time per call, best of 5)\n\n", variant.c_str(),
              variant.c_str(), openbabel_variant_suffix);
  std::printf("%s\n",
              fmt::format("{:<16} {:>5} | {:>10} {:>10} {:>6} | {:>10} {:>10} {:>6} | {:>10} {:>10} | {:>10} "
                          "{:>10} {:>6}",
                          "molecule", "atoms", "grad", "grad OB", "ratio", "hess", "hess OB", "ratio", "H.v",
                          "hess FD", "harmonic", "harm. OB", "ratio")
                  .c_str());
  for (const Case& c : cases) {
    ReadOptions read;
    read.input_is_smiles = true;
    Molecule molecule = read_molecule(c.smiles, read).molecule;
    const auto compiled = make_potential(variant, molecule);
    const auto bridge = make_potential(variant + openbabel_variant_suffix, molecule);
    const MinimizeResult minimum = minimize(*compiled, molecule.coordinates());
    const Eigen::VectorXd x = minimum.coordinates_angstrom;
    const Eigen::VectorXd masses = molecule.masses();
    Eigen::VectorXd gradient;
    const Eigen::VectorXd direction = Eigen::VectorXd::Ones(x.size()).normalized();

    const double grad = time_per_call([&] { compiled->energy_and_gradient(x, gradient); });
    const double grad_ob = time_per_call([&] { bridge->energy_and_gradient(x, gradient); });
    const double hess = time_per_call([&] { compiled->hessian(x); });
    HessianOptions differenced;
    differenced.prefer_analytic = false;
    const double hess_ob = time_per_call([&] { compute_hessian(*bridge, x); }, 0.05, 3);
    const double hess_fd = time_per_call([&] { compute_hessian(*compiled, x, differenced); }, 0.05, 3);
    const double product = time_per_call([&] { compiled->hessian_vector_product(x, direction); });
    const double harmonic = time_per_call(
        [&] { analyze_normal_modes(x, masses, compute_hessian(*compiled, x).hessian); }, 0.05, 3);
    const double harmonic_ob =
        time_per_call([&] { analyze_normal_modes(x, masses, compute_hessian(*bridge, x).hessian); }, 0.05, 3);
    std::printf(
        "%s\n",
        fmt::format("{:<16} {:>5} | {:>10} {:>10} {:>6.1f} | {:>10} {:>10} {:>6.1f} | {:>10} {:>10} | "
                    "{:>10} {:>10} {:>6.1f}{}",
                    c.name, molecule.atom_count(), si(grad), si(grad_ob), grad_ob / grad, si(hess),
                    si(hess_ob), hess_ob / hess, si(product), si(hess_fd), si(harmonic), si(harmonic_ob),
                    harmonic_ob / harmonic,
                    minimum.converged() ? "" : "  (not converged: " + minimum.message + ")")
            .c_str());
  }
  std::printf(
      "\ngrad: energy+gradient; hess: compiled analytic Hessian; hess OB: central differences of Open "
      "Babel's\n"
      "gradients (6N gradients); H.v: compiled Hessian-vector product; hess FD: central differences of the\n"
      "compiled gradient; harmonic: Hessian + normal modes (the harmonic stage). ratio = Open Babel / "
      "compiled.\n");
  return 0;
}
