// hallway/electrostatics.hpp: surface gates over a 2DEG at depth d, pinned surface
// (docs/models.md: "Bare gate potential", "Thomas-Fermi electrostatics", "Depletion under a wide gate").
//
// Bare potential of a polygon gate at voltage V in the 2DEG plane (solid angle of the polygon seen
// from the point, Davies, Larkin & Sukhorukov, J. Appl. Phys. 77, 4504 (1995); per-edge form of
// docs/models.md "Bare gate potential", with the Van Oosterom-Strackee triangle formula):
//   phi = (V s / pi) sum_edges atan2(a x b, R_a R_b + d (R_a + R_b) + a.b + d^2),  R = sqrt(a^2 + d^2).
// Thomas-Fermi self-consistency (docs/models.md "Thomas-Fermi electrostatics"): U = -e phi_g + e^2 K * (n - n_bg),
// n = D [E_F0 - U]_+, with the image kernel K(r) = (1/4 pi eps)(1/r - 1/sqrt(r^2 + 4 d^2)), the
// background n_bg = n_s on the mesa, and n = 0 outside the mesa eroded by the etch depletion. With
// u = n / n_s this is the bound-constrained convex quadratic programme
//   min 1/2 u^T H u - b^T u,  u >= 0,  H = 1 + e^2 D h^2 K*,  b = 1 + e phi_g / E_F0 + e^2 D h^2 K * chi_mesa,
// solved by a primal-dual active-set method whose linear solves are conjugate gradients
// preconditioned by the Fourier-diagonal inverse of H on the zero-padded grid (FFTW).
#pragma once

#include <cstddef>
#include <memory>
#include <optional>
#include <stdexcept>
#include <string>
#include <vector>

#include "hallway/design.hpp"
#include "hallway/geometry/polygon.hpp"

namespace hallway {

// phi / V at q for a gate outline p (any orientation), 2DEG depth d. Exact, finite on edges and vertices.
double GatePotentialPerVolt(const geometry::Polygon& p, geometry::Point q, double depth_m);

inline constexpr std::size_t kDefaultMaxMemoryBytes = std::size_t{4} << 30;  // 4 GiB, a laptop's spare memory

struct ElectrostaticsOptions {
  double grid_m = 0.0;      // cell size; 0: automatic, min(d / 3, smallest gap / 6), at least 5 nm,
                            // coarser only to stay within a million cells
  double margin_m = 0.0;    // grid beyond the mesa's bounding box; 0: 3 d
  double tolerance = 1e-6;  // stop when max |u - [u - (Hu - b)]_+| < tolerance (u = n / n_s)
  int max_operator_applications = 5000;
  int max_active_set_steps = 100;
  int threads = 2;  // FFTW threads
  std::size_t max_memory_bytes = kDefaultMaxMemoryBytes;
  bool IsValid(std::string* why) const;
};

struct ElectrostaticsStats {
  bool converged = false;
  double residual = 0.0;  // final max |u - [u - (Hu - b)]_+|
  int operator_applications = 0;
  int active_set_steps = 0;
  double seconds = 0.0;
};

struct DensityMap {
  int nx = 0, ny = 0;
  double x0_m = 0.0, y0_m = 0.0, cell_m = 0.0;  // centre of cell (0, 0) and spacing
  std::vector<double> density_per_m2;           // row-major, index j * nx + i
  std::vector<double> energy_over_fermi;        // U / E_F0 (0 at the Fermi level of the ungated 2DEG)
  ElectrostaticsStats stats;
  double At(geometry::Point p) const;        // bilinear interpolation of the density (0 outside)
  double EnergyAt(geometry::Point p) const;  // bilinear interpolation of U / E_F0
};

// Thrown by ElectrostaticProblem before anything is allocated when the grid would need more memory
// than ElectrostaticsOptions::max_memory_bytes (or more than 1e5 cells on a side).
class GridTooLarge : public std::length_error {
 public:
  GridTooLarge(const std::string& what, int nx, int ny, double cell_m, std::size_t need_bytes, std::size_t limit_bytes,
               double fitting_cell_m)
      : std::length_error(what),
        nx(nx),
        ny(ny),
        cell_m(cell_m),
        need_bytes(need_bytes),
        limit_bytes(limit_bytes),
        fitting_cell_m(fitting_cell_m) {}
  int nx, ny;
  double cell_m;
  std::size_t need_bytes, limit_bytes;
  double fitting_cell_m;  // about the finest cell size whose grid fits the limit
};

// A window of the mesa solved on its own finer grid (pinch-off and depletion searches). The mesa keeps
// its real outline: only its real edges are etched. The 2DEG outside the window is held at its
// local-capacitance density n = n_s [1 - phi_g / V_dep]_+ (the Thomas-Fermi density under a uniform
// gate, docs/models.md "Windows embedded in the outer 2DEG"; exact where the gates vary slowly on the scale of the depth),
// on a coarse grid of the whole mesa whose cells tile the window, and its charge acts on the window
// through the image kernel. Without it the depleted 2DEG around a window would be missing and a large
// gate would deplete early by about depth / window.
struct ElectrostaticWindow {
  geometry::Point centre;
  double half_x_m = 0.0, half_y_m = 0.0;
};

// The geometry-dependent set-up (grid, kernel transform, FFT plans) is built once; Solve() then takes
// any gate voltages and an optional starting density. The bare gate potential is not kept per gate:
// the total at the design's voltages is computed at the first Solve() that needs it, and single-gate
// arrays only for gates whose voltage differs from the design's, as many as the memory limit leaves
// room for (others are evaluated afresh at each Solve()). Solve() may be called from several threads.
class ElectrostaticProblem {
 public:
  ElectrostaticProblem(const Design& design, const ElectrostaticsOptions& options = {});
  // The window only (grid_m as above; margin_m is not used).
  ElectrostaticProblem(const Design& design, const ElectrostaticsOptions& options, const ElectrostaticWindow& window);
  ~ElectrostaticProblem();
  ElectrostaticProblem(const ElectrostaticProblem&) = delete;
  ElectrostaticProblem& operator=(const ElectrostaticProblem&) = delete;

  int nx() const;
  int ny() const;
  double cell_m() const;
  std::size_t memory_bytes() const;  // estimate made before allocating, single-gate arrays left out
  // voltages: one per design gate, in design order.
  DensityMap Solve(const std::vector<double>& gate_voltages_V, const DensityMap* start = nullptr) const;
  // H applied to a density (u = n / n_s) by FFT, and by a direct sum (for tests; O(N^2)).
  std::vector<double> ApplyOperator(const std::vector<double>& u) const;
  std::vector<double> ApplyOperatorDirect(const std::vector<double>& u) const;

 private:
  ElectrostaticProblem(const Design& design, const ElectrostaticsOptions& options, const ElectrostaticWindow* window);
  void BuildExterior(const Design& design, const ElectrostaticWindow& window);
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

// Starting density for the next point of a sweep taken in equal steps of its parameters: the linear
// predictor newer + (newer - older), cut at zero. Its error is second order in the step where the
// density varies smoothly, against first order for `newer` alone, so Solve() needs one active-set
// step fewer. Both maps must be on the same grid (std::invalid_argument otherwise).
DensityMap ExtrapolatedStart(const DensityMap& older, const DensityMap& newer);

// Estimated bytes for a grid of nx x ny cells keeping `gates` single-gate potential arrays besides the
// total (checked against the limit first, with none).
std::size_t ElectrostaticMemoryEstimate(int nx, int ny, int gates);

}  // namespace hallway
