// Gate potentials and the self-consistent Thomas-Fermi density; model in electrostatics.hpp.
#include "hallway/electrostatics.hpp"

#include <fftw3.h>

#include <algorithm>
#include <functional>
#include <chrono>
#include <cmath>
#include <mutex>
#include <numbers>
#include <stdexcept>
#include <thread>
#include <utility>

#include "hallway/check.hpp"
#include "hallway/constants.hpp"
#include "hallway/heterostructure.hpp"

namespace hallway {

using geometry::Point;
using geometry::Polygon;

double GatePotentialPerVolt(const Polygon& p, Point q, double d) {
  // Each edge's term atan2(y_k, x_k) has x_k >= d (R_a + R_b) + d^2 > 0, since R_a R_b >= |a||b| >= -a.b.
  // Their sum is the argument of the product of the x_k + i y_k: one atan2 per gate instead of one per
  // edge. The sum lies in (-pi, pi) (half the solid angle, below 2 pi at d > 0), where the argument is
  // single-valued, and its sign is the ring's orientation (a simple polygon's solid angle has one
  // sign), so |sum| / pi needs no orientation test. Factors are taken as 1 + i y_k / x_k (same
  // argument) and the product is rescaled before it can overflow.
  const auto& v = p.vertices;
  const std::size_t n = v.size();
  if (n == 0) return 0.0;
  const double d2 = d * d;
  double re = 1.0, im = 0.0;
  Point a{v[0].x - q.x, v[0].y - q.y};
  double ra = std::sqrt(a.x * a.x + a.y * a.y + d2);
  const double r0 = ra;
  for (std::size_t k = 0; k < n; ++k) {
    const bool last = k + 1 == n;
    const Point b = last ? Point{v[0].x - q.x, v[0].y - q.y} : Point{v[k + 1].x - q.x, v[k + 1].y - q.y};
    const double rb = last ? r0 : std::sqrt(b.x * b.x + b.y * b.y + d2);
    const double t = (a.x * b.y - a.y * b.x) / (ra * rb + d * (ra + rb) + a.x * b.x + a.y * b.y + d2);
    const double re_next = re - im * t;
    im += re * t;
    re = re_next;
    if (std::abs(re) + std::abs(im) > 1e100) {
      const double scale = 1.0 / (std::abs(re) + std::abs(im));
      re *= scale;
      im *= scale;
    }
    a = b;
    ra = rb;
  }
  return std::abs(std::atan2(im, re)) / std::numbers::pi;
}

bool ElectrostaticsOptions::IsValid(std::string* why) const {
  auto bad = [&](const char* w) {
    if (why) *why = w;
    return false;
  };
  if (!(grid_m >= 0.0) || !std::isfinite(grid_m)) return bad("grid_m must be >= 0 (0: automatic)");
  if (!(margin_m >= 0.0) || !std::isfinite(margin_m)) return bad("margin_m must be >= 0 (0: automatic)");
  if (!(tolerance > 0.0 && tolerance < 1.0)) return bad("tolerance must lie in (0, 1)");
  if (max_operator_applications < 1) return bad("max_operator_applications must be >= 1");
  if (max_active_set_steps < 1) return bad("max_active_set_steps must be >= 1");
  if (threads < 1 || threads > 256) return bad("threads must lie in [1, 256]");
  return true;
}

std::size_t ElectrostaticMemoryEstimate(int nx, int ny, int gates) {
  const std::size_t n = static_cast<std::size_t>(nx) * static_cast<std::size_t>(ny);
  const std::size_t px = 2 * static_cast<std::size_t>(nx) + 16, py = 2 * static_cast<std::size_t>(ny) + 16;
  const std::size_t half = py * (px / 2 + 1);
  return px * py * sizeof(double) + half * sizeof(fftw_complex) + 2 * half * sizeof(double) +
         (13 + static_cast<std::size_t>(gates)) * n * sizeof(double);
}

namespace {
std::once_flag fftw_threads_once;

int fft_size(int n) {
  for (int m = n;; ++m) {
    int r = m;
    for (int p : {2, 3, 5, 7})
      while (r % p == 0) r /= p;
    if (r == 1) return m;
  }
}
std::mutex fftw_planner_mutex;  // FFTW planning is not thread-safe
}  // namespace

namespace {

// The image kernel h^2 K on a grid of nx x ny cells of size h, applied by a zero-padded FFT. The
// self cell and its near neighbours hold the cell average of the kernel; farther cells the point value.
struct KernelGrid {
  int nx = 0, ny = 0, px = 0, py = 0;
  double h = 0.0;
  std::vector<double> khat;  // transform of the kernel (real: the kernel is even)
  mutable std::vector<double> real;
  fftw_complex* spec = nullptr;
  fftw_plan forward = nullptr, backward = nullptr;

  KernelGrid() = default;
  KernelGrid(const KernelGrid&) = delete;
  KernelGrid& operator=(const KernelGrid&) = delete;
  ~KernelGrid() {
    std::lock_guard<std::mutex> lock(fftw_planner_mutex);
    if (forward) fftw_destroy_plan(forward);
    if (backward) fftw_destroy_plan(backward);
    if (spec) fftw_free(spec);
  }

  std::size_t half() const { return static_cast<std::size_t>(py) * static_cast<std::size_t>(px / 2 + 1); }
  std::size_t n() const { return static_cast<std::size_t>(nx) * static_cast<std::size_t>(ny); }

  // Kernel h^2 K(r) of cell offset (di, dj), in V m^2 / C times 1 / (4 pi eps) already applied.
  static double Kernel(int di, int dj, double h, double depth, double eps) {
    const double pref = 1.0 / (4.0 * std::numbers::pi * eps);
    auto point_kernel = [&](double r) { return 1.0 / r - 1.0 / std::sqrt(r * r + 4.0 * depth * depth); };
    if (di == 0 && dj == 0) {
      // The self cell exactly: the integral of 1/r over a square of side h is 4 h ln(1 + sqrt 2); that of
      // 1/sqrt(r^2 + c^2), c = 2d, is 4 Q with Q its integral over the quarter [0, h/2]^2, from the
      // antiderivative x ln(y + R) + y ln(x + R) - c atan(x y / (c R)), R = sqrt(x^2 + y^2 + c^2). The
      // difference stays positive for any cell size (the expansion h^2 / 2d turned negative beyond about
      // seven depths and with it the operator).
      const double a = 0.5 * h, c = 2.0 * depth;
      const double r_aa = std::sqrt(2.0 * a * a + c * c), r_a0 = std::sqrt(a * a + c * c);
      const double quarter =
          2.0 * a * std::log(a + r_aa) - c * std::atan(a * a / (c * r_aa)) - 2.0 * a * std::log(r_a0);
      return pref * (4.0 * h * std::log(1.0 + std::numbers::sqrt2) - 4.0 * quarter);
    }
    if (std::abs(di) <= 3 && std::abs(dj) <= 3) {
      // Near cells: the cell average of the kernel by an 8 x 8 midpoint rule.
      double sum = 0.0;
      for (int a = 0; a < 8; ++a)
        for (int b = 0; b < 8; ++b)
          sum += point_kernel(h * std::hypot(di + (a + 0.5) / 8.0 - 0.5, dj + (b + 0.5) / 8.0 - 0.5));
      return pref * h * h * sum / 64.0;
    }
    // Farther cells: the cell average to fourth order, point value + (h^2 / 24) laplacian (the midpoint
    // rule's leading correction). The point value alone would miss about h / (144 d) of the kernel's
    // integral d / eps (1/r is convex), which moves every depletion voltage by that fraction.
    const double r = h * std::hypot(static_cast<double>(di), static_cast<double>(dj));
    const double r2 = r * r, big2 = r2 + 4.0 * depth * depth, big = std::sqrt(big2);
    const double laplacian = 1.0 / (r2 * r) - (r2 - 8.0 * depth * depth) / (big2 * big2 * big);
    return pref * h * h * (point_kernel(r) + h * h / 24.0 * laplacian);
  }

  // Plans the transforms and transforms the kernel; `direct`, when given, receives the kernel by
  // offset, (2 ny - 1) x (2 nx - 1), for the direct sum of the tests.
  void Build(int nx_, int ny_, double h_, double depth, double eps, int threads, std::vector<double>* direct) {
    nx = nx_;
    ny = ny_;
    h = h_;
    // Zero padding to at least twice the grid makes the circular convolution an aperiodic one; pad
    // to a size with small prime factors, for which FFTW is fastest.
    px = fft_size(2 * nx);
    py = fft_size(2 * ny);
    real.assign(static_cast<std::size_t>(px) * py, 0.0);
    if (direct) direct->assign(static_cast<std::size_t>(2 * nx - 1) * static_cast<std::size_t>(2 * ny - 1), 0.0);
    for (int dj = -(ny - 1); dj <= ny - 1; ++dj)
      for (int di = -(nx - 1); di <= nx - 1; ++di) {
        const double k = Kernel(di, dj, h, depth, eps);
        if (direct) (*direct)[static_cast<std::size_t>(dj + ny - 1) * (2 * nx - 1) + (di + nx - 1)] = k;
        const int wi = (di + px) % px, wj = (dj + py) % py;
        real[static_cast<std::size_t>(wj) * px + wi] = k;
      }
    {
      std::call_once(fftw_threads_once, [] { fftw_init_threads(); });
      std::lock_guard<std::mutex> lock(fftw_planner_mutex);
      fftw_plan_with_nthreads(threads);
      spec = fftw_alloc_complex(half());
      std::vector<double> scratch(real.size());
      forward = fftw_plan_dft_r2c_2d(py, px, scratch.data(), spec, FFTW_ESTIMATE);
      backward = fftw_plan_dft_c2r_2d(py, px, spec, scratch.data(), FFTW_ESTIMATE);
    }
    fftw_execute_dft_r2c(forward, real.data(), spec);
    khat.resize(half());
    for (std::size_t k = 0; k < half(); ++k) khat[k] = spec[k][0];
  }

  // out = (transform^-1 (weights * transform(pad(in))))[crop]
  void Convolve(const std::vector<double>& in, const std::vector<double>& weights, std::vector<double>& out) const {
    std::fill(real.begin(), real.end(), 0.0);
    for (int j = 0; j < ny; ++j)
      for (int i = 0; i < nx; ++i)
        real[static_cast<std::size_t>(j) * px + i] = in[static_cast<std::size_t>(j) * nx + i];
    fftw_execute_dft_r2c(forward, real.data(), spec);
    const double norm = 1.0 / (static_cast<double>(px) * py);
    for (std::size_t k = 0; k < half(); ++k) {
      spec[k][0] *= weights[k] * norm;
      spec[k][1] *= weights[k] * norm;
    }
    fftw_execute_dft_c2r(backward, spec, real.data());
    out.resize(n());
    for (int j = 0; j < ny; ++j)
      for (int i = 0; i < nx; ++i)
        out[static_cast<std::size_t>(j) * nx + i] = real[static_cast<std::size_t>(j) * px + i];
  }
};

// The bare gate potential sum_g V_g phi_g / V at the sample points of a grid (cell (i, j) at
// (x0 + i h, y0 + j h); only where `use` is set, 0 elsewhere), for any voltages. One array per gate
// would cost gates x cells doubles (4 GB for 500 gates on a million cells); kept instead are the total
// at the design voltages, computed when first needed, and the arrays of the gates whose voltage
// differs from the design's (a pinch-off search moves two gates), as many as set_budget() allows;
// beyond that a gate's potential is evaluated afresh at each call. A call sums whichever is shorter:
// the gates whose voltage differs from the design's (added to the stored total), or the gates at a
// non-zero voltage. From zero, or at the design voltages, the sum is the same sequence of floating-point
// operations per cell as a sum over all gates, so the result does not depend on what is stored.
class GatePotentials {
 public:
  GatePotentials(const Design& d, int nx, int ny, double x0, double y0, double h, std::vector<char> use,
                 int threads)
      : nx_(nx), ny_(ny), x0_(x0), y0_(y0), h_(h), depth_(d.heterostructure.depth_m), threads_(threads),
        use_(std::move(use)), unit_(d.gates.size()) {
    for (const Gate& g : d.gates) {
      outlines_.push_back(g.outline);
      design_V_.push_back(g.voltage_V);
    }
  }
  std::size_t cells() const { return static_cast<std::size_t>(nx_) * static_cast<std::size_t>(ny_); }
  std::size_t gates() const { return outlines_.size(); }
  void set_budget(std::size_t bytes) { max_stored_ = bytes / std::max<std::size_t>(1, cells() * sizeof(double)); }

  std::vector<double> Total(const std::vector<double>& volts) const {
    std::lock_guard<std::mutex> lock(mutex_);
    std::vector<std::pair<std::size_t, double>> from_zero, from_design;
    for (std::size_t g = 0; g < gates(); ++g) {
      if (volts[g] != 0.0) from_zero.emplace_back(g, volts[g]);
      if (volts[g] != design_V_[g]) from_design.emplace_back(g, volts[g] - design_V_[g]);
    }
    std::vector<double> phi(cells(), 0.0);
    if (from_design.size() < from_zero.size()) {
      if (design_total_.empty()) {
        design_total_.assign(cells(), 0.0);
        for (std::size_t g = 0; g < gates(); ++g)
          if (design_V_[g] != 0.0) Add(g, design_V_[g], design_total_, false);
      }
      phi = design_total_;
      for (const auto& [g, v] : from_design) Add(g, v, phi, true);
    } else {
      for (const auto& [g, v] : from_zero) Add(g, v, phi, true);
    }
    return phi;
  }

 private:
  // phi += v phi_g / V, from the stored array of gate g, or evaluated (and stored when `keep` and the
  // budget allow).
  void Add(std::size_t g, double v, std::vector<double>& phi, bool keep) const {
    if (unit_[g].empty() && keep && stored_ < max_stored_) {
      unit_[g].assign(cells(), 0.0);
      std::vector<double>& u = unit_[g];
      ForCells([&](std::size_t c, Point q) { u[c] = GatePotentialPerVolt(outlines_[g], q, depth_); });
      ++stored_;
    }
    if (!unit_[g].empty()) {
      const std::vector<double>& u = unit_[g];
      for (std::size_t c = 0; c < cells(); ++c) phi[c] += v * u[c];
      return;
    }
    ForCells([&](std::size_t c, Point q) { phi[c] += v * GatePotentialPerVolt(outlines_[g], q, depth_); });
  }
  // f(cell, point) on every used cell; rows shared among the threads (each cell is written by one).
  template <class F>
  void ForCells(const F& f) const {
    auto rows = [&](int j0, int j1) {
      for (int j = j0; j < j1; ++j)
        for (int i = 0; i < nx_; ++i) {
          const std::size_t c = static_cast<std::size_t>(j) * nx_ + i;
          if (use_.empty() || use_[c]) f(c, Point{x0_ + i * h_, y0_ + j * h_});
        }
    };
    const int workers = std::clamp(threads_, 1, std::max(1, ny_ / 16));
    std::vector<std::thread> pool;
    for (int t = 1; t < workers; ++t) pool.emplace_back(rows, ny_ * t / workers, ny_ * (t + 1) / workers);
    rows(0, ny_ / workers);
    for (std::thread& t : pool) t.join();
  }

  int nx_, ny_;
  double x0_, y0_, h_, depth_;
  int threads_;
  std::vector<char> use_;
  std::vector<Polygon> outlines_;
  std::vector<double> design_V_;
  std::size_t max_stored_ = 0;
  mutable std::mutex mutex_;
  mutable std::vector<double> design_total_;
  mutable std::vector<std::vector<double>> unit_;
  mutable std::size_t stored_ = 0;
};

// The 2DEG outside a window, held at its local-capacitance density u = [1 - phi_g / V_dep]_+ (the
// Thomas-Fermi density of a uniform gate, physics of the plate capacitor with quantum capacitance;
// exact far from edges) on a coarse grid of the whole mesa, whose cells tile the window exactly.
// Its net charge (u - chi) outside the window acts on the window through the image kernel.
struct Exterior {
  KernelGrid grid;
  double x0 = 0.0, y0 = 0.0;                  // centre of coarse cell (0, 0)
  std::vector<char> outside;                  // coarse cell outside the window
  std::vector<char> free;                     // may hold electrons
  std::vector<double> chi;                    // background on the mesa
  std::unique_ptr<GatePotentials> phi;        // bare gate potential at the cells outside the window
  double vdep = 0.0;
};

}  // namespace

struct ElectrostaticProblem::Impl {
  int nx = 0, ny = 0;
  double h = 0.0, x0 = 0.0, y0 = 0.0;
  double beta = 0.0;                          // e^2 D
  double ef0 = 0.0, ns = 0.0;                 // E_F0, n_s
  std::vector<char> free;                     // cell may hold electrons
  std::vector<double> chi;                    // background on the mesa
  std::unique_ptr<GatePotentials> phi;        // bare gate potential
  std::vector<double> k_direct;               // kernel by offset, (2ny-1) x (2nx-1), for the direct sum
  std::vector<double> phat;                   // 1 / (1 + beta khat)
  KernelGrid grid;
  std::unique_ptr<Exterior> exterior;  // windows only
  mutable int applications = 0;
  ElectrostaticsOptions opt;

  std::size_t n() const { return grid.n(); }
  void convolve(const std::vector<double>& in, const std::vector<double>& weights, std::vector<double>& out) const {
    grid.Convolve(in, weights, out);
  }

  // H u = u + beta K u.
  void apply(const std::vector<double>& u, std::vector<double>& out) const {
    ++applications;
    convolve(u, grid.khat, out);
    for (std::size_t i = 0; i < n(); ++i) out[i] = u[i] + beta * out[i];
  }

  // beta K (chi - u) of the charge outside the window, at the window's cells (empty without one).
  std::vector<double> ExteriorTerm(const std::vector<double>& volts) const;
};

std::vector<double> ElectrostaticProblem::Impl::ExteriorTerm(const std::vector<double>& volts) const {
  if (!exterior) return {};
  const Exterior& e = *exterior;
  const std::size_t nc = e.grid.n();
  std::vector<double> sigma(nc, 0.0), pot;
  const std::vector<double> phi = e.phi->Total(volts);
  for (std::size_t c = 0; c < nc; ++c) {
    if (!e.outside[c]) continue;
    const double u = e.free[c] ? std::max(0.0, 1.0 - phi[c] / e.vdep) : 0.0;
    sigma[c] = e.chi[c] - u;
  }
  e.grid.Convolve(sigma, e.grid.khat, pot);
  std::vector<double> out(n(), 0.0);
  for (int j = 0; j < ny; ++j)
    for (int i = 0; i < nx; ++i) {
      // Bilinear interpolation between coarse cell centres.
      const double fx = (x0 + i * h - e.x0) / e.grid.h, fy = (y0 + j * h - e.y0) / e.grid.h;
      const int ci = std::clamp(static_cast<int>(std::floor(fx)), 0, e.grid.nx - 2);
      const int cj = std::clamp(static_cast<int>(std::floor(fy)), 0, e.grid.ny - 2);
      const double tx = std::clamp(fx - ci, 0.0, 1.0), ty = std::clamp(fy - cj, 0.0, 1.0);
      auto at = [&](int a, int b) { return pot[static_cast<std::size_t>(b) * e.grid.nx + a]; };
      out[static_cast<std::size_t>(j) * nx + i] =
          beta * ((1 - tx) * (1 - ty) * at(ci, cj) + tx * (1 - ty) * at(ci + 1, cj) + (1 - tx) * ty * at(ci, cj + 1) +
                  tx * ty * at(ci + 1, cj + 1));
    }
  return out;
}

namespace {

struct Box {
  double xmin, ymin, xmax, ymax;
};

// The cell size, number of cells and origin of the grid over `box` (plus `margin` on every side).
struct GridChoice {
  double h = 0.0;
  double cells_x = 0.0, cells_y = 0.0;
};

GridChoice ChooseGrid(const Design& d, const ElectrostaticsOptions& opt, double w, double hgt) {
  GridChoice c;
  if (opt.grid_m > 0.0) {
    c.h = opt.grid_m;
  } else {
    // Resolve the 2DEG depth and every constriction gap with a few cells, within a million cells.
    double h = d.heterostructure.depth_m / 3.0;
    for (const Constriction& k : d.constrictions)
      if (const auto gap = FindGap(d, k, nullptr)) h = std::min(h, gap->distance_m / 6.0);
    c.h = std::max({h, 5e-9, std::sqrt(w * hgt / 1e6)});
  }
  c.cells_x = std::ceil(w / c.h);
  c.cells_y = std::ceil(hgt / c.h);
  return c;
}

// Throws GridTooLarge when nx x ny cells (with `extra` bytes besides) exceed the limit.
void CheckMemory(double cells_x, double cells_y, double h, int gates, std::size_t extra, std::size_t limit) {
  auto fitting_cell = [&](double need) { return h * std::sqrt(need / static_cast<double>(limit)) * 1.05; };
  auto mib = [](double bytes) { return std::to_string(static_cast<long long>(std::ceil(bytes / 1048576.0))); };
  if (cells_x > 1e5 || cells_y > 1e5) {
    const double need =
        static_cast<double>(ElectrostaticMemoryEstimate(100000, 100000, gates)) * (cells_x / 1e5) * (cells_y / 1e5);
    throw GridTooLarge("the electrostatic grid of " + std::to_string(static_cast<long long>(cells_x)) + " x " +
                           std::to_string(static_cast<long long>(cells_y)) +
                           " cells is too large (more than 100000 a side)",
                       0, 0, h, static_cast<std::size_t>(std::min(need, 1e19)), limit, fitting_cell(need));
  }
  const int nx = std::max(4, static_cast<int>(cells_x)), ny = std::max(4, static_cast<int>(cells_y));
  const std::size_t need = ElectrostaticMemoryEstimate(nx, ny, gates) + extra;
  if (need > limit)
    throw GridTooLarge("the electrostatic grid of " + std::to_string(nx) + " x " + std::to_string(ny) +
                           " cells needs about " + mib(static_cast<double>(need)) + " MiB, above the limit of " +
                           mib(static_cast<double>(limit)) + " MiB",
                       nx, ny, h, need, limit, fitting_cell(static_cast<double>(need)));
}

}  // namespace

ElectrostaticProblem::ElectrostaticProblem(const Design& d, const ElectrostaticsOptions& opt)
    : ElectrostaticProblem(d, opt, nullptr) {}

ElectrostaticProblem::ElectrostaticProblem(const Design& d, const ElectrostaticsOptions& opt,
                                           const ElectrostaticWindow& window)
    : ElectrostaticProblem(d, opt, &window) {}

ElectrostaticProblem::ElectrostaticProblem(const Design& d, const ElectrostaticsOptions& opt,
                                           const ElectrostaticWindow* window)
    : impl_(std::make_unique<Impl>()) {
  std::string why;
  if (!opt.IsValid(&why)) throw std::invalid_argument("ElectrostaticsOptions: " + why);
  if (window && !(window->half_x_m > 0.0 && window->half_y_m > 0.0))
    throw std::invalid_argument("ElectrostaticWindow: the half sizes must be > 0");
  Impl& m = *impl_;
  m.opt = opt;
  const auto& hs = d.heterostructure;
  const double depth = hs.depth_m;
  const double eps = hs.permittivity * constants::kVacuumPermittivity_F_per_m;
  const WaferQuantities fig = DeriveWaferQuantities(hs, d.conditions.field_T, d.conditions.temperature_K);
  m.ns = hs.density_per_m2;
  m.ef0 = fig.fermi_energy_J;
  m.beta = constants::kElementaryCharge_C * constants::kElementaryCharge_C * fig.density_of_states_per_J_m2;
  const auto bb = geometry::bounding_box(d.mesa.outline);
  Box box{bb.xmin, bb.ymin, bb.xmax, bb.ymax};
  double margin = opt.margin_m > 0.0 ? opt.margin_m : 3.0 * depth;
  if (window) {
    box = {window->centre.x - window->half_x_m, window->centre.y - window->half_y_m,
           window->centre.x + window->half_x_m, window->centre.y + window->half_y_m};
    margin = 0.0;
  }
  const double w = box.xmax - box.xmin + 2 * margin, hgt = box.ymax - box.ymin + 2 * margin;
  const GridChoice grid = ChooseGrid(d, opt, w, hgt);
  m.h = grid.h;
  CheckMemory(grid.cells_x, grid.cells_y, m.h, 0, 0, opt.max_memory_bytes);
  m.nx = std::max(4, static_cast<int>(grid.cells_x));
  m.ny = std::max(4, static_cast<int>(grid.cells_y));
  // A window's cells tile it exactly (square cells, the finer of the two fits), so that no charge is
  // counted both inside and outside it.
  if (window) m.h = std::min(w / m.nx, hgt / m.ny);
  // Centre the grid on the box, so that a mirror-symmetric layout has a mirror-symmetric grid.
  m.x0 = 0.5 * (box.xmin + box.xmax) - 0.5 * (m.nx - 1) * m.h;
  m.y0 = 0.5 * (box.ymin + box.ymax) - 0.5 * (m.ny - 1) * m.h;

  const std::size_t n = static_cast<std::size_t>(m.nx) * static_cast<std::size_t>(m.ny);
  m.free.assign(n, 0);
  m.chi.assign(n, 0.0);
  for (int j = 0; j < m.ny; ++j)
    for (int i = 0; i < m.nx; ++i) {
      const Point q{m.x0 + i * m.h, m.y0 + j * m.h};
      const std::size_t c = static_cast<std::size_t>(j) * m.nx + i;
      if (geometry::contains(d.mesa.outline, q)) {
        m.chi[c] = 1.0;
        m.free[c] = geometry::distance_to_boundary(d.mesa.outline, q) >= d.mesa.etch_depletion_m;
      }
    }
  m.phi = std::make_unique<GatePotentials>(d, m.nx, m.ny, m.x0, m.y0, m.h, std::vector<char>{}, opt.threads);
  m.grid.Build(m.nx, m.ny, m.h, depth, eps, opt.threads, &m.k_direct);
  m.phat.resize(m.grid.half());
  for (std::size_t k = 0; k < m.grid.half(); ++k) m.phat[k] = 1.0 / (1.0 + m.beta * std::max(0.0, m.grid.khat[k]));
  if (window) BuildExterior(d, *window);
  // Single-gate arrays may use what the limit leaves, shared evenly with the window's exterior.
  const std::size_t fixed = memory_bytes();
  const std::size_t spare = opt.max_memory_bytes > fixed ? opt.max_memory_bytes - fixed : 0;
  m.phi->set_budget(m.exterior ? spare / 2 : spare);
  if (m.exterior) m.exterior->phi->set_budget(spare / 2);
}

void ElectrostaticProblem::BuildExterior(const Design& d, const ElectrostaticWindow& win) {
  Impl& m = *impl_;
  const double depth = d.heterostructure.depth_m;
  const double eps = d.heterostructure.permittivity * constants::kVacuumPermittivity_F_per_m;
  auto e = std::make_unique<Exterior>();
  e->vdep = DeriveWaferQuantities(d.heterostructure, d.conditions.field_T, d.conditions.temperature_K).depletion_voltage_V;
  // Coarse cells of about a depth (the exterior acts from at least a window's half size away), a whole
  // number of them across the window, and at most about 1.5e5 cells (or 1e7 cell-gates), over the mesa
  // within max(10 um, 16 half sizes) of the window. Farther out the held 2DEG is neutral except under
  // gates and along etched edges, whose potential falls off as (depth / distance)^2 or faster.
  auto bb = geometry::bounding_box(d.mesa.outline);
  const double reach = std::max(10e-6, 16.0 * std::max(win.half_x_m, win.half_y_m));
  bb.xmin = std::max(bb.xmin, win.centre.x - win.half_x_m - reach);
  bb.xmax = std::min(bb.xmax, win.centre.x + win.half_x_m + reach);
  bb.ymin = std::max(bb.ymin, win.centre.y - win.half_y_m - reach);
  bb.ymax = std::min(bb.ymax, win.centre.y + win.half_y_m + reach);
  const double area =
      (std::max(bb.xmax, win.centre.x + win.half_x_m) - std::min(bb.xmin, win.centre.x - win.half_x_m)) *
      (std::max(bb.ymax, win.centre.y + win.half_y_m) - std::min(bb.ymin, win.centre.y - win.half_y_m));
  const double cap = std::min(1.5e5, 1e7 / static_cast<double>(std::max<std::size_t>(1, d.gates.size())));
  const double hc = std::max({depth, m.h, std::sqrt(area / cap)});
  const int mx = std::max(1, static_cast<int>(std::round(2.0 * win.half_x_m / hc)));
  const int my = std::max(1, static_cast<int>(std::round(2.0 * win.half_y_m / hc)));
  const double hx = 2.0 * win.half_x_m / mx, hy = 2.0 * win.half_y_m / my;
  const double h = std::max(hx, hy);  // square cells; the window's far side may be cut a fraction short
  const double wx0 = win.centre.x - win.half_x_m, wy0 = win.centre.y - win.half_y_m;
  const int left = static_cast<int>(std::ceil(std::max(0.0, wx0 - bb.xmin) / h)) + 1;
  const int below = static_cast<int>(std::ceil(std::max(0.0, wy0 - bb.ymin) / h)) + 1;
  const int right = static_cast<int>(std::ceil(std::max(0.0, bb.xmax - (win.centre.x + win.half_x_m)) / h)) + 1;
  const int above = static_cast<int>(std::ceil(std::max(0.0, bb.ymax - (win.centre.y + win.half_y_m)) / h)) + 1;
  const int nx = left + mx + right, ny = below + my + above;
  CheckMemory(nx, ny, h, 0, ElectrostaticMemoryEstimate(m.nx, m.ny, 0), m.opt.max_memory_bytes);
  e->x0 = wx0 - (left - 0.5) * h;
  e->y0 = wy0 - (below - 0.5) * h;
  const std::size_t n = static_cast<std::size_t>(nx) * static_cast<std::size_t>(ny);
  e->outside.assign(n, 1);
  e->free.assign(n, 0);
  e->chi.assign(n, 0.0);
  std::vector<char> sampled(n, 0);
  for (int j = 0; j < ny; ++j)
    for (int i = 0; i < nx; ++i) {
      const std::size_t c = static_cast<std::size_t>(j) * nx + i;
      if (i >= left && i < left + mx && j >= below && j < below + my) {
        e->outside[c] = 0;
        continue;
      }
      const Point q{e->x0 + i * h, e->y0 + j * h};
      if (!geometry::contains(d.mesa.outline, q)) continue;
      e->chi[c] = 1.0;
      e->free[c] = geometry::distance_to_boundary(d.mesa.outline, q) >= d.mesa.etch_depletion_m;
      sampled[c] = 1;
    }
  e->phi = std::make_unique<GatePotentials>(d, nx, ny, e->x0, e->y0, h, std::move(sampled), m.opt.threads);
  e->grid.Build(nx, ny, h, depth, eps, m.opt.threads, nullptr);
  m.exterior = std::move(e);
}

ElectrostaticProblem::~ElectrostaticProblem() = default;
int ElectrostaticProblem::nx() const {
  return impl_->nx;
}
int ElectrostaticProblem::ny() const {
  return impl_->ny;
}
double ElectrostaticProblem::cell_m() const {
  return impl_->h;
}
std::size_t ElectrostaticProblem::memory_bytes() const {
  std::size_t bytes = ElectrostaticMemoryEstimate(impl_->nx, impl_->ny, 0);
  if (impl_->exterior) bytes += ElectrostaticMemoryEstimate(impl_->exterior->grid.nx, impl_->exterior->grid.ny, 0);
  return bytes;
}

std::vector<double> ElectrostaticProblem::ApplyOperator(const std::vector<double>& u) const {
  std::vector<double> out;
  impl_->apply(u, out);
  return out;
}

std::vector<double> ElectrostaticProblem::ApplyOperatorDirect(const std::vector<double>& u) const {
  const Impl& m = *impl_;
  std::vector<double> out(m.n(), 0.0);
  for (int j = 0; j < m.ny; ++j)
    for (int i = 0; i < m.nx; ++i) {
      double s = 0.0;
      for (int q = 0; q < m.ny; ++q)
        for (int p = 0; p < m.nx; ++p)
          s += m.k_direct[static_cast<std::size_t>(j - q + m.ny - 1) * (2 * m.nx - 1) + (i - p + m.nx - 1)] *
               u[static_cast<std::size_t>(q) * m.nx + p];
      const std::size_t c = static_cast<std::size_t>(j) * m.nx + i;
      out[c] = u[c] + m.beta * s;
    }
  return out;
}

namespace {

// The operators a face solve needs: H applied on the whole grid, the circulant preconditioner, and
// whether the operator budget allows another application.
struct FaceOperators {
  std::function<void(const std::vector<double>&, std::vector<double>&)> apply, precondition;
  std::function<bool()> budget_left;
};

// Conjugate gradients on the cells of `face` (those that hold electrons), preconditioned by the
// circulant inverse of H, from x with gradient grad = Hx - b. H x is carried along on the whole grid
// (H p is computed there anyway), so neither the start nor the end of a face solve costs an extra
// operator application. Returns the iterate, with H times it in *hx; the caller decides whether to
// keep them.
std::vector<double> FaceSolve(const FaceOperators& ops, std::vector<double> x, const std::vector<double>& grad,
                              const std::vector<double>& b, const std::vector<char>& face, double goal,
                              std::vector<double>* hx_out) {
  const std::size_t n = x.size();
  std::vector<double>& hx = *hx_out;
  std::vector<double> r(n), z, p, q;
  hx.resize(n);
  for (std::size_t c = 0; c < n; ++c) {
    hx[c] = grad[c] + b[c];
    r[c] = face[c] ? -grad[c] : 0.0;
  }
  ops.precondition(r, z);
  for (std::size_t c = 0; c < n; ++c)
    if (!face[c]) z[c] = 0.0;
  p = z;
  double rz = 0.0;
  for (std::size_t c = 0; c < n; ++c) rz += r[c] * z[c];
  for (int it = 0; it < 200 && ops.budget_left(); ++it) {
    double rmax = 0.0;
    for (std::size_t c = 0; c < n; ++c) rmax = std::max(rmax, std::abs(r[c]));
    if (rmax < goal) break;
    ops.apply(p, q);
    double pq = 0.0;
    for (std::size_t c = 0; c < n; ++c)
      if (face[c]) pq += p[c] * q[c];
    if (!(pq > 0.0)) break;
    const double alpha = rz / pq;
    for (std::size_t c = 0; c < n; ++c) {
      hx[c] += alpha * q[c];
      if (face[c]) {
        x[c] += alpha * p[c];
        r[c] -= alpha * q[c];
      }
    }
    ops.precondition(r, z);
    double rz_new = 0.0;
    for (std::size_t c = 0; c < n; ++c) {
      if (!face[c]) z[c] = 0.0;
      rz_new += r[c] * z[c];
    }
    const double beta_cg = rz_new / rz;
    rz = rz_new;
    for (std::size_t c = 0; c < n; ++c) p[c] = face[c] ? z[c] + beta_cg * p[c] : 0.0;
  }
  return x;
}

}  // namespace

DensityMap ElectrostaticProblem::Solve(const std::vector<double>& volts, const DensityMap* start) const {
  const Impl& m = *impl_;
  if (volts.size() != m.phi->gates()) throw std::invalid_argument("Solve: one voltage per gate is needed");
  const auto t0 = std::chrono::steady_clock::now();
  const std::size_t n = m.n();
  m.applications = 0;
  // b = 1 + e phi_g / E_F0 + beta K chi.
  // A window adds beta K (chi - u) of the 2DEG held outside it.
  std::vector<double> b;
  m.convolve(m.chi, m.grid.khat, b);
  const std::vector<double> outside = m.ExteriorTerm(volts);
  const std::vector<double> phi = m.phi->Total(volts);
  for (std::size_t c = 0; c < n; ++c) {
    b[c] = 1.0 + constants::kElementaryCharge_C * phi[c] / m.ef0 + m.beta * b[c] + (outside.empty() ? 0.0 : outside[c]);
  }
  std::vector<double> u(n, 0.0);
  if (start && start->density_per_m2.size() == n) {
    for (std::size_t c = 0; c < n; ++c) u[c] = m.free[c] ? std::max(0.0, start->density_per_m2[c] / m.ns) : 0.0;
  } else {
    std::vector<double> z;
    m.convolve(b, m.phat, z);  // unconstrained solution of the circulant problem
    for (std::size_t c = 0; c < n; ++c) u[c] = m.free[c] ? std::max(0.0, z[c]) : 0.0;
  }
  const ElectrostaticsOptions& opt = m.opt;
  DensityMap out;
  std::vector<double> g, y(n), gy, u_prev = u;
  double residual = HUGE_VAL;
  int steps = 0;
  // Spectrum of H on the padded grid: 1 + beta min(khat) <= lambda <= 1 + beta max(khat).
  double kmax = 0.0, kmin = HUGE_VAL;
  for (double k : m.grid.khat) {
    kmax = std::max(kmax, k);
    kmin = std::min(kmin, k);
  }
  const double lip = 1.0 + m.beta * kmax, mu = std::max(1.0, 1.0 + m.beta * kmin);
  const double momentum = (std::sqrt(lip / mu) - 1.0) / (std::sqrt(lip / mu) + 1.0);
  auto natural_residual = [&](const std::vector<double>& x, const std::vector<double>& grad) {
    double res = 0.0;
    for (std::size_t c = 0; c < n; ++c)
      if (m.free[c]) res = std::max(res, std::abs(x[c] - std::max(0.0, x[c] - grad[c])));
    return res;
  };
  std::vector<double> hx;
  const FaceOperators ops{[&](const std::vector<double>& x, std::vector<double>& y) { m.apply(x, y); },
                          [&](const std::vector<double>& x, std::vector<double>& y) { m.convolve(x, m.phat, y); },
                          [&] { return m.applications < opt.max_operator_applications; }};
  auto face_solve = [&](std::vector<double> x, const std::vector<double>& grad, const std::vector<char>& face,
                        double goal) { return FaceSolve(ops, std::move(x), grad, b, face, goal, &hx); };
  std::vector<char> face(n, 0);
  m.apply(u, g);
  for (std::size_t c = 0; c < n; ++c) g[c] -= b[c];
  residual = natural_residual(u, g);
  while (residual >= opt.tolerance && steps < opt.max_active_set_steps &&
         m.applications < opt.max_operator_applications) {
    ++steps;
    // A face step: solve on the cells that hold electrons (or want to); keep it if it stays feasible
    // enough to lower the residual.
    for (std::size_t c = 0; c < n; ++c) face[c] = m.free[c] && (u[c] > 0.0 || g[c] < 0.0);
    std::vector<double> v = face_solve(u, g, face, std::max(0.1 * opt.tolerance, 0.05 * residual));
    bool clipped = false;
    for (std::size_t c = 0; c < n; ++c)
      if (v[c] < 0.0) {
        v[c] = 0.0;
        clipped = true;
      }
    std::vector<double> gv;
    if (clipped) {
      m.apply(v, gv);
    } else {
      gv = hx;
    }
    for (std::size_t c = 0; c < n; ++c) gv[c] -= b[c];
    const double rv = natural_residual(v, gv);
    if (rv < residual) {
      u = std::move(v);
      g = std::move(gv);
      residual = rv;
      continue;
    }
    // Otherwise accelerated projected gradient steps (Nesterov, constant momentum for a strongly
    // convex quadratic) until the set of occupied cells settles; these always converge.
    u_prev = u;
    for (int it = 0; it < 25 && m.applications < opt.max_operator_applications; ++it) {
      for (std::size_t c = 0; c < n; ++c) y[c] = u[c] + momentum * (u[c] - u_prev[c]);
      m.apply(y, gy);
      u_prev = u;
      for (std::size_t c = 0; c < n; ++c) u[c] = m.free[c] ? std::max(0.0, y[c] - (gy[c] - b[c]) / lip) : 0.0;
    }
    m.apply(u, g);
    for (std::size_t c = 0; c < n; ++c) g[c] -= b[c];
    residual = natural_residual(u, g);
  }
  out.nx = m.nx;
  out.ny = m.ny;
  out.x0_m = m.x0;
  out.y0_m = m.y0;
  out.cell_m = m.h;
  out.density_per_m2.resize(n);
  out.energy_over_fermi.resize(n);
  for (std::size_t c = 0; c < n; ++c) {
    out.density_per_m2[c] = u[c] * m.ns;
    out.energy_over_fermi[c] = 1.0 - u[c] + g[c];
  }
  out.stats.converged = residual < opt.tolerance;
  out.stats.residual = residual;
  out.stats.operator_applications = m.applications;
  out.stats.active_set_steps = steps;
  out.stats.seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
  return out;
}

namespace {
double bilinear(const DensityMap& mp, const std::vector<double>& f, Point p, double outside) {
  const double fx = (p.x - mp.x0_m) / mp.cell_m, fy = (p.y - mp.y0_m) / mp.cell_m;
  const int i = static_cast<int>(std::floor(fx)), j = static_cast<int>(std::floor(fy));
  if (i < 0 || j < 0 || i + 1 >= mp.nx || j + 1 >= mp.ny) return outside;
  const double tx = fx - i, ty = fy - j;
  auto at = [&](int a, int b) { return f[static_cast<std::size_t>(b) * mp.nx + a]; };
  return (1 - tx) * (1 - ty) * at(i, j) + tx * (1 - ty) * at(i + 1, j) + (1 - tx) * ty * at(i, j + 1) +
         tx * ty * at(i + 1, j + 1);
}
}  // namespace

DensityMap ExtrapolatedStart(const DensityMap& older, const DensityMap& newer) {
  if (older.nx != newer.nx || older.ny != newer.ny || older.density_per_m2.size() != newer.density_per_m2.size())
    throw std::invalid_argument("ExtrapolatedStart: the two maps are on different grids");
  DensityMap out = newer;
  for (std::size_t c = 0; c < out.density_per_m2.size(); ++c)
    out.density_per_m2[c] = std::max(0.0, 2.0 * newer.density_per_m2[c] - older.density_per_m2[c]);
  out.stats = {};
  return out;
}

double DensityMap::At(Point p) const {
  return bilinear(*this, density_per_m2, p, 0.0);
}
double DensityMap::EnergyAt(Point p) const {
  return bilinear(*this, energy_over_fermi, p, 1.0);
}

}  // namespace hallway
