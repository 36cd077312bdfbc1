// Generates the n_h(x) table of solver/src/fractionalized_collider.cpp (docs/models.md, Collider at
// filling 2: fractionalized pulses): exact finite-size bosonization at several level counts p,
// Richardson-extrapolated in 1/p^2 (FractionalizedHolesExtrapolated, fractionalized_collider.hpp).
//
//   hallway_fractionalization_table [p1 p2 p3 ...]      (default: 30 40 50)
//
// Prints, per x of the table grid, the finite-size values, the extrapolation and its error estimate
// (to stderr), and the C++ rows {x, n_h, error} (to stdout).
#include <cstdio>
#include <cstdlib>
#include <exception>
#include <vector>

#include "hallway/fractionalized_collider.hpp"

namespace {

// x grid: 0 to 60 in steps of 0.25. n_h(x) has steps of period about 2 pi in x (the phase eps delta_t / hbar
// between the two pulses), so the grid is uniform, a few dozen points per period.
std::vector<double> TableGrid() {
  std::vector<double> grid;
  for (int i = 0; i <= 240; ++i) grid.push_back(0.25 * i);
  return grid;
}

}  // namespace

int main(int argc, char** argv) {
  std::vector<int> levels;
  for (int i = 1; i < argc; ++i) levels.push_back(std::atoi(argv[i]));
  if (levels.empty()) levels = {30, 40, 50};
  try {
    for (double x : TableGrid()) {
      std::fprintf(stderr, "x = %8.4f:", x);
      const hallway::FractionalizationEstimate e = hallway::FractionalizedHolesExtrapolated(x, levels);
      for (const hallway::FractionalizationSample& s : e.samples)
        std::fprintf(stderr, "  p=%d %.10f (norm-1 %.1e, cauchy %.1e)", s.levels, s.holes, s.norm - 1.0,
                     s.cauchy_deviation);
      std::fprintf(stderr, "  -> %.10f +- %.1e\n", e.holes, e.error);
      std::printf("    {%.2f, %.10e, %.1e},\n", x, e.holes, e.error);
      std::fflush(stdout);
    }
  } catch (const std::exception& ex) {
    std::fprintf(stderr, "hallway_fractionalization_table: %s\n", ex.what());
    return 1;
  }
  return 0;
}
