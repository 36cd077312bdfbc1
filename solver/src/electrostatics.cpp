// Gate potentials and the self-consistent Thomas-Fermi density; model in electrostatics.hpp.
#include "hallway/electrostatics.hpp"

#include <fftw3.h>

#include <algorithm>
#include <chrono>
#include <cmath>
#include <mutex>
#include <numbers>
#include <stdexcept>

#include "hallway/check.hpp"
#include "hallway/constants.hpp"
#include "hallway/heterostructure.hpp"

namespace hallway {

using geometry::Point;
using geometry::Polygon;

double GatePotentialPerVolt(const Polygon& p, Point q, double d) {
  const auto& v = p.vertices;
  const double s = geometry::signed_area(p) >= 0.0 ? 1.0 : -1.0;
  const double d2 = d * d;
  double sum = 0.0;
  for (std::size_t k = 0; k < v.size(); ++k) {
    const Point a{v[k].x - q.x, v[k].y - q.y};
    const Point b{v[(k + 1) % v.size()].x - q.x, v[(k + 1) % v.size()].y - q.y};
    const double ra = std::sqrt(a.x * a.x + a.y * a.y + d2), rb = std::sqrt(b.x * b.x + b.y * b.y + d2);
    sum += std::atan2(a.x * b.y - a.y * b.x, ra * rb + d * (ra + rb) + a.x * b.x + a.y * b.y + d2);
  }
  return s * sum / std::numbers::pi;
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
         (12 + static_cast<std::size_t>(gates)) * n * sizeof(double);
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

struct ElectrostaticProblem::Impl {
  int nx = 0, ny = 0, px = 0, py = 0;
  double h = 0.0, x0 = 0.0, y0 = 0.0;
  double beta = 0.0;                          // e^2 D
  double ef0 = 0.0, ns = 0.0;                 // E_F0, n_s
  std::vector<char> free;                     // cell may hold electrons
  std::vector<double> chi;                    // background on the mesa
  std::vector<std::vector<double>> unit_phi;  // per gate, phi / V
  std::vector<double> k_direct;               // kernel by offset, (2ny-1) x (2nx-1), for the direct sum
  std::vector<double> khat, phat;             // transforms: kernel; 1 / (1 + beta khat)
  mutable std::vector<double> real;
  fftw_complex* spec = nullptr;
  fftw_plan forward = nullptr, backward = nullptr;
  mutable int applications = 0;
  ElectrostaticsOptions opt;

  ~Impl() {
    std::lock_guard<std::mutex> lock(fftw_planner_mutex);
    if (forward) fftw_destroy_plan(forward);
    if (backward) fftw_destroy_plan(backward);
    if (spec) fftw_free(spec);
  }

  std::size_t half() const { return static_cast<std::size_t>(py) * static_cast<std::size_t>(px / 2 + 1); }
  std::size_t n() const { return static_cast<std::size_t>(nx) * static_cast<std::size_t>(ny); }

  // out = (transform^-1 (weights * transform(pad(in))))[crop]
  void convolve(const std::vector<double>& in, const std::vector<double>& weights, std::vector<double>& out) const {
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

  // H u = u + beta K u.
  void apply(const std::vector<double>& u, std::vector<double>& out) const {
    ++applications;
    convolve(u, khat, out);
    for (std::size_t i = 0; i < n(); ++i) out[i] = u[i] + beta * out[i];
  }
};

ElectrostaticProblem::ElectrostaticProblem(const Design& d, const ElectrostaticsOptions& opt)
    : impl_(std::make_unique<Impl>()) {
  std::string why;
  if (!opt.IsValid(&why)) throw std::invalid_argument("ElectrostaticsOptions: " + why);
  Impl& m = *impl_;
  m.opt = opt;
  const auto& hs = d.heterostructure;
  const double depth = hs.depth_m;
  const double eps = hs.permittivity * constants::kVacuumPermittivity_F_per_m;
  const HeterostructureFigures fig = DeriveFigures(hs, d.conditions.field_T, d.conditions.temperature_K);
  m.ns = hs.density_per_m2;
  m.ef0 = fig.fermi_energy_J;
  m.beta = constants::kElementaryCharge_C * constants::kElementaryCharge_C * fig.density_of_states_per_J_m2;
  const auto bb = geometry::bounding_box(d.mesa.outline);
  const double margin = opt.margin_m > 0.0 ? opt.margin_m : 3.0 * depth;
  const double w = bb.width() + 2 * margin, hgt = bb.height() + 2 * margin;
  if (opt.grid_m > 0.0) {
    m.h = opt.grid_m;
  } else {
    // Resolve the 2DEG depth and every constriction gap with a few cells, within a million cells.
    double h = depth / 3.0;
    for (const Constriction& k : d.constrictions)
      if (const auto gap = FindGap(d, k, nullptr)) h = std::min(h, gap->distance_m / 6.0);
    m.h = std::max({h, 5e-9, std::sqrt(w * hgt / 1e6)});
  }
  const double cells_x = std::ceil(w / m.h), cells_y = std::ceil(hgt / m.h);
  const int gates = static_cast<int>(d.gates.size());
  // The cell size whose grid fits the limit: the estimate grows with the number of cells.
  auto fitting_cell = [&](double need) {
    return m.h * std::sqrt(need / static_cast<double>(opt.max_memory_bytes)) * 1.05;
  };
  auto mib = [](double bytes) { return std::to_string(static_cast<long long>(std::ceil(bytes / 1048576.0))); };
  if (cells_x > 1e5 || cells_y > 1e5) {
    const double need =
        static_cast<double>(ElectrostaticMemoryEstimate(100000, 100000, gates)) * (cells_x / 1e5) * (cells_y / 1e5);
    throw GridTooLarge(
        "the electrostatic grid of " + std::to_string(static_cast<long long>(cells_x)) + " x " +
            std::to_string(static_cast<long long>(cells_y)) + " cells is too large (more than 100000 a side)",
        0, 0, m.h, static_cast<std::size_t>(std::min(need, 1e19)), opt.max_memory_bytes, fitting_cell(need));
  }
  m.nx = std::max(4, static_cast<int>(cells_x));
  m.ny = std::max(4, static_cast<int>(cells_y));
  const std::size_t need = ElectrostaticMemoryEstimate(m.nx, m.ny, gates);
  if (need > opt.max_memory_bytes)
    throw GridTooLarge("the electrostatic grid of " + std::to_string(m.nx) + " x " + std::to_string(m.ny) +
                           " cells needs about " + mib(static_cast<double>(need)) + " MiB, above the limit of " +
                           mib(static_cast<double>(opt.max_memory_bytes)) + " MiB",
                       m.nx, m.ny, m.h, need, opt.max_memory_bytes, fitting_cell(static_cast<double>(need)));
  // Zero padding to at least twice the grid makes the circular convolution an aperiodic one; pad to
  // a size with small prime factors, for which FFTW is fastest.
  m.px = fft_size(2 * m.nx);
  m.py = fft_size(2 * m.ny);
  // Centre the grid on the mesa, so that a mirror-symmetric layout has a mirror-symmetric grid.
  m.x0 = 0.5 * (bb.xmin + bb.xmax) - 0.5 * (m.nx - 1) * m.h;
  m.y0 = 0.5 * (bb.ymin + bb.ymax) - 0.5 * (m.ny - 1) * m.h;

  const std::size_t n = m.n();
  m.free.assign(n, 0);
  m.chi.assign(n, 0.0);
  m.unit_phi.assign(d.gates.size(), std::vector<double>(n, 0.0));
  for (int j = 0; j < m.ny; ++j)
    for (int i = 0; i < m.nx; ++i) {
      const Point q{m.x0 + i * m.h, m.y0 + j * m.h};
      const std::size_t c = static_cast<std::size_t>(j) * m.nx + i;
      if (geometry::contains(d.mesa.outline, q)) {
        m.chi[c] = 1.0;
        m.free[c] = geometry::distance_to_boundary(d.mesa.outline, q) >= d.mesa.etch_depletion_m;
      }
      for (std::size_t g = 0; g < d.gates.size(); ++g)
        m.unit_phi[g][c] = GatePotentialPerVolt(d.gates[g].outline, q, depth);
    }

  // Kernel h^2 K(r) by offset; the self cell holds the cell average of 1/r, 4 h ln(1 + sqrt 2) / h^2.
  const double pref = 1.0 / (4.0 * std::numbers::pi * eps);
  auto point_kernel = [&](double r) { return 1.0 / r - 1.0 / std::sqrt(r * r + 4.0 * depth * depth); };
  auto kernel = [&](int di, int dj) {
    if (di == 0 && dj == 0) return pref * (4.0 * m.h * std::log(1.0 + std::numbers::sqrt2) - m.h * m.h / (2.0 * depth));
    if (std::abs(di) <= 3 && std::abs(dj) <= 3) {
      // Near cells: the cell average of the kernel by an 8 x 8 midpoint rule.
      double sum = 0.0;
      for (int a = 0; a < 8; ++a)
        for (int b = 0; b < 8; ++b)
          sum += point_kernel(m.h * std::hypot(di + (a + 0.5) / 8.0 - 0.5, dj + (b + 0.5) / 8.0 - 0.5));
      return pref * m.h * m.h * sum / 64.0;
    }
    return pref * m.h * m.h * point_kernel(m.h * std::hypot(static_cast<double>(di), static_cast<double>(dj)));
  };
  m.k_direct.assign(static_cast<std::size_t>(2 * m.nx - 1) * static_cast<std::size_t>(2 * m.ny - 1), 0.0);
  m.real.assign(static_cast<std::size_t>(m.px) * m.py, 0.0);
  for (int dj = -(m.ny - 1); dj <= m.ny - 1; ++dj)
    for (int di = -(m.nx - 1); di <= m.nx - 1; ++di) {
      const double k = kernel(di, dj);
      m.k_direct[static_cast<std::size_t>(dj + m.ny - 1) * (2 * m.nx - 1) + (di + m.nx - 1)] = k;
      const int wi = (di + m.px) % m.px, wj = (dj + m.py) % m.py;
      m.real[static_cast<std::size_t>(wj) * m.px + wi] = k;
    }
  {
    std::call_once(fftw_threads_once, [] { fftw_init_threads(); });
    std::lock_guard<std::mutex> lock(fftw_planner_mutex);
    fftw_plan_with_nthreads(opt.threads);
    m.spec = fftw_alloc_complex(m.half());
    std::vector<double> scratch(m.real.size());
    m.forward = fftw_plan_dft_r2c_2d(m.py, m.px, scratch.data(), m.spec, FFTW_ESTIMATE);
    m.backward = fftw_plan_dft_c2r_2d(m.py, m.px, m.spec, scratch.data(), FFTW_ESTIMATE);
  }
  fftw_execute_dft_r2c(m.forward, m.real.data(), m.spec);
  m.khat.resize(m.half());
  m.phat.resize(m.half());
  for (std::size_t k = 0; k < m.half(); ++k) {
    m.khat[k] = m.spec[k][0];  // the kernel is even: its transform is real
    m.phat[k] = 1.0 / (1.0 + m.beta * std::max(0.0, m.khat[k]));
  }
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
  return ElectrostaticMemoryEstimate(impl_->nx, impl_->ny, static_cast<int>(impl_->unit_phi.size()));
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

DensityMap ElectrostaticProblem::Solve(const std::vector<double>& volts, const DensityMap* start) const {
  const Impl& m = *impl_;
  if (volts.size() != m.unit_phi.size()) throw std::invalid_argument("Solve: one voltage per gate is needed");
  const auto t0 = std::chrono::steady_clock::now();
  const std::size_t n = m.n();
  m.applications = 0;
  // b = 1 + e phi_g / E_F0 + beta K chi.
  std::vector<double> b;
  m.convolve(m.chi, m.khat, b);
  for (std::size_t c = 0; c < n; ++c) {
    double phi = 0.0;
    for (std::size_t g = 0; g < volts.size(); ++g) phi += volts[g] * m.unit_phi[g][c];
    b[c] = 1.0 + constants::kElementaryCharge_C * phi / m.ef0 + m.beta * b[c];
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
  std::vector<double> g, r, z, p, q, y(n), gy, u_prev = u;
  double residual = HUGE_VAL;
  int steps = 0;
  // Spectrum of H on the padded grid: 1 + beta min(khat) <= lambda <= 1 + beta max(khat).
  double kmax = 0.0, kmin = HUGE_VAL;
  for (double k : m.khat) {
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
  // Conjugate gradients on the cells that hold electrons, preconditioned by the circulant inverse of H,
  // from x with gradient grad = Hx - b. H x is carried along on the whole grid (H p is computed there
  // anyway), so neither the start nor the end of a face solve costs an extra operator application.
  // Returns the iterate and H times it; the caller decides whether to keep them.
  std::vector<double> hx;
  auto face_solve = [&](std::vector<double> x, const std::vector<double>& grad, const std::vector<char>& face,
                        double goal) {
    hx.resize(n);
    r.resize(n);
    for (std::size_t c = 0; c < n; ++c) {
      hx[c] = grad[c] + b[c];
      r[c] = face[c] ? -grad[c] : 0.0;
    }
    m.convolve(r, m.phat, z);
    for (std::size_t c = 0; c < n; ++c)
      if (!face[c]) z[c] = 0.0;
    p = z;
    double rz = 0.0;
    for (std::size_t c = 0; c < n; ++c) rz += r[c] * z[c];
    for (int it = 0; it < 200 && m.applications < opt.max_operator_applications; ++it) {
      double rmax = 0.0;
      for (std::size_t c = 0; c < n; ++c) rmax = std::max(rmax, std::abs(r[c]));
      if (rmax < goal) break;
      m.apply(p, q);
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
      m.convolve(r, m.phat, z);
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
  };
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
