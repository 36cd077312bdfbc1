// Timed driver for the self-consistent electrostatics (not a test): grid sizes 256^2 ... 2048^2 on
// the collider demo; operator applications, wall time, one operator application (a forward and an
// inverse FFT of the padded grid plus O(N) work), their ratio, the memory estimate and the peak
// resident memory, and the saving of a warm start after a 1 mV step.
//   hallway_electrostatics_bench DESIGN.yaml [N ...]
#include <sys/resource.h>

#include <chrono>
#include <cstdio>
#include <cstdlib>
#include <vector>

#include "hallway/design_loader.hpp"
#include "hallway/electrostatics.hpp"
#include "hallway/geometry/polygon.hpp"

int main(int argc, char** argv) {
  if (argc < 2) {
    std::fprintf(stderr, "usage: %s DESIGN.yaml [N ...]\n", argv[0]);
    return 2;
  }
  const hallway::Design d = hallway::LoadDesign(argv[1]);
  std::vector<int> sizes;
  for (int i = 2; i < argc; ++i) sizes.push_back(std::atoi(argv[i]));
  if (sizes.empty()) sizes = {256, 512, 1024, 2048};
  std::vector<double> volts;
  for (const auto& g : d.gates) volts.push_back(g.voltage_V);
  const auto bb = hallway::geometry::bounding_box(d.mesa.outline);
  std::printf("%6s %9s %6s %8s %9s %11s %7s %9s %9s %10s\n", "N", "cell_nm", "apps", "solve_s", "apply_ms",
              "solve/apply", "warm", "est_MiB", "rss_MiB", "converged");
  for (int n : sizes) {
    hallway::ElectrostaticsOptions o;
    o.margin_m = 3.0 * d.heterostructure.depth_m;
    o.grid_m = (std::max(bb.width(), bb.height()) + 2.0 * o.margin_m) / n;
    const hallway::ElectrostaticProblem p(d, o);
    const auto t0 = std::chrono::steady_clock::now();
    const hallway::DensityMap m = p.Solve(volts);
    const double solve = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
    std::vector<double> u(m.density_per_m2.size(), 0.5);
    const int reps = 5;
    const auto t1 = std::chrono::steady_clock::now();
    for (int r = 0; r < reps; ++r) u = p.ApplyOperator(u);
    const double apply = std::chrono::duration<double>(std::chrono::steady_clock::now() - t1).count() / reps;
    std::vector<double> step = volts;
    for (double& v : step) v -= 1e-3;
    const hallway::DensityMap warm = p.Solve(step, &m);
    rusage ru{};
    getrusage(RUSAGE_SELF, &ru);
    std::printf("%6d %9.2f %6d %8.3f %9.2f %11.1f %7d %9.1f %9.1f %10s\n", n, o.grid_m * 1e9,
                m.stats.operator_applications, solve, apply * 1e3, solve / apply, warm.stats.operator_applications,
                p.memory_bytes() / 1048576.0, ru.ru_maxrss / 1024.0,
                m.stats.converged && warm.stats.converged ? "yes" : "NO");
  }
  return 0;
}
