// Electrostatics: the closed-form gate potential against GSL quadrature and the rectangle formula of
// Davies, Larkin & Sukhorukov, J. Appl. Phys. 77, 4504 (1995) (docs/models.md, Bare gate potential); the
// FFT operator against a direct sum; the Thomas-Fermi response against the plate capacitor with the
// quantum capacitance (Luryi, Appl. Phys. Lett. 52, 501 (1988)) and against eps_TF(q) (Ando, Fowler &
// Stern, Rev. Mod. Phys. 54, 437 (1982); docs/models.md, Thomas-Fermi electrostatics);
// mirror symmetry; convergence of the pinch-off voltage with the grid.
#include <gsl/gsl_errno.h>
#include <gsl/gsl_integration.h>
#include <gtest/gtest.h>

#include <cmath>
#include <cstdio>
#include <fstream>
#include <memory>
#include <numbers>
#include <sstream>

#include "hallway/constants.hpp"
#include "hallway/design_loader.hpp"
#include "hallway/electrostatics.hpp"
#include "hallway/heterostructure.hpp"
#include "hallway/map.hpp"
#include "test_support.hpp"

namespace hallway {
namespace {

using geometry::Point;
using geometry::Polygon;
using test::NearRel;

std::string read(const std::string& rel) {
  std::ifstream in(test::SourcePath(rel));
  std::stringstream ss;
  ss << in.rdbuf();
  return ss.str();
}

// Direct quadrature of the half-space Poisson kernel d / (2 pi (rho^2 + d^2)^(3/2)) over a polygon
// given as a union of y-simple strips: x in [x0, x1], y from lower(x) to upper(x). GSL QAGS, nested.
struct Strip {
  double x0, x1;
  std::function<double(double)> lower, upper;
};
double quadrature(const std::vector<Strip>& strips, Point q, double d) {
  struct Inner {
    double x, d;
    Point q;
  };
  double total = 0.0;
  gsl_integration_workspace* wo = gsl_integration_workspace_alloc(1000);
  gsl_integration_workspace* wi = gsl_integration_workspace_alloc(1000);
  for (const Strip& s : strips) {
    struct Outer {
      const Strip* s;
      double d;
      Point q;
      gsl_integration_workspace* wi;
    } outer{&s, d, q, wi};
    gsl_function fo{[](double x, void* vp) {
                      auto* o = static_cast<Outer*>(vp);
                      Inner in{x, o->d, o->q};
                      gsl_function fi{[](double y, void* ip) {
                                        auto* i = static_cast<Inner*>(ip);
                                        const double r2 = (i->x - i->q.x) * (i->x - i->q.x) +
                                                          (y - i->q.y) * (y - i->q.y) + i->d * i->d;
                                        return i->d / (2 * std::numbers::pi * r2 * std::sqrt(r2));
                                      },
                                      &in};
                      double v = 0, err = 0;
                      gsl_integration_qags(&fi, o->s->lower(x), o->s->upper(x), 1e-14, 1e-11, 1000, o->wi, &v, &err);
                      return v;
                    },
                    &outer};
    double v = 0, err = 0;
    gsl_integration_qags(&fo, s.x0, s.x1, 1e-14, 1e-11, 1000, wo, &v, &err);
    total += v;
  }
  gsl_integration_workspace_free(wo);
  gsl_integration_workspace_free(wi);
  return total;
}

// Series-capacitor depletion voltage of the test wafer (n_s = 2.5e15 m^-2, d = 90 nm, eps_r = 12.9,
// m* = 0.067 m_e): V_dep = -e n_s (d / eps + 1 / (e^2 D)), D = m* / (pi hbar^2) (Luryi, Appl. Phys. Lett.
// 52, 501 (1988); docs/models.md, Depletion under a wide gate): -0.324545 V.
double test_wafer_depletion_V() {
  const double e = constants::kElementaryCharge_C, hbar = constants::kHbar_Js;
  const double dos = 0.067 * constants::kElectronMass_kg / (std::numbers::pi * hbar * hbar);
  return -e * 2.5e15 * (90e-9 / (12.9 * constants::kVacuumPermittivity_F_per_m) + 1 / (e * e * dos));
}

auto constant(double c) {
  return [c](double) { return c; };
}

// Potential per volt at q of the rectangle [x0, x1] x [y0, y1] at depth d, in the closed form of Davies,
// Larkin & Sukhorukov, J. Appl. Phys. 77, 4504 (1995) (form from memory): the sum over the four corners
// of f(u, v) = (1 / 2 pi) atan(u v / (d sqrt(u^2 + v^2 + d^2))), u and v the signed distances from q to
// the corner's two sides. hallway itself sums triangle solid angles instead (docs/models.md, Bare gate
// potential), so this is an independent route.
double dls_rectangle(double x0, double x1, double y0, double y1, Point q, double d) {
  auto f = [d](double u, double v) {
    return std::atan2(u * v, d * std::sqrt(u * u + v * v + d * d)) / (2 * std::numbers::pi);
  };
  return f(q.x - x0, q.y - y0) + f(q.x - x0, y1 - q.y) + f(x1 - q.x, q.y - y0) + f(x1 - q.x, y1 - q.y);
}

TEST(GatePotential, RectangleLShapeAndFingersAgainstTheRectangleFormula) {
  // d = 90 nm, rectangle x in [-100, 100] nm, y in [-200, 200] nm, V = 1 V: 0.47415539, 0.18226364,
  // 0.07487621 and 0.01743688 at the four points below, from dls_rectangle.
  const Polygon r{{{-100e-9, -200e-9}, {100e-9, -200e-9}, {100e-9, 200e-9}, {-100e-9, 200e-9}}};
  const double d = 90e-9;
  for (const Point q : {Point{0, 0}, Point{150e-9, 0}, Point{0, 300e-9}, Point{250e-9, 350e-9}})
    EXPECT_NEAR(GatePotentialPerVolt(r, q, d), dls_rectangle(-100e-9, 100e-9, -200e-9, 200e-9, q, d), 1e-8)
        << q.x << "," << q.y;
  // L-shape, either vertex order: the sum of the rectangles [0, 100] x [0, 400] and [100, 300] x [0, 100]
  // nm (0.30692227 at (50, 50) nm, 0.10034158 at (200, 250) nm).
  auto l_expected = [d](Point q) {
    return dls_rectangle(0, 100e-9, 0, 400e-9, q, d) + dls_rectangle(100e-9, 300e-9, 0, 100e-9, q, d);
  };
  Polygon l{{{0, 0}, {300e-9, 0}, {300e-9, 100e-9}, {100e-9, 100e-9}, {100e-9, 400e-9}, {0, 400e-9}}};
  EXPECT_NEAR(GatePotentialPerVolt(l, {50e-9, 50e-9}, d), l_expected({50e-9, 50e-9}), 1e-8);
  EXPECT_NEAR(GatePotentialPerVolt(l, {200e-9, 250e-9}, d), l_expected({200e-9, 250e-9}), 1e-8);
  std::reverse(l.vertices.begin(), l.vertices.end());
  EXPECT_NEAR(GatePotentialPerVolt(l, {50e-9, 50e-9}, d), l_expected({50e-9, 50e-9}), 1e-8);
  // Split gate, w = 300 nm, fingers 2 um across and 500 nm along: 0.180861 at the centre.
  const Polygon f1{{{-250e-9, 150e-9}, {250e-9, 150e-9}, {250e-9, 2150e-9}, {-250e-9, 2150e-9}}};
  const Polygon f2{{{-250e-9, -2150e-9}, {250e-9, -2150e-9}, {250e-9, -150e-9}, {-250e-9, -150e-9}}};
  EXPECT_NEAR(GatePotentialPerVolt(f1, {0, 0}, d) + GatePotentialPerVolt(f2, {0, 0}, d),
              dls_rectangle(-250e-9, 250e-9, 150e-9, 2150e-9, {0, 0}, d) +
                  dls_rectangle(-250e-9, 250e-9, -2150e-9, -150e-9, {0, 0}, d),
              2e-6);
  // Semi-infinite gate limit: V [1/2 - (1/pi) atan(x / d)] = V/4 at x = d outside the edge (Davies,
  // Larkin & Sukhorukov 1995; docs/models.md, Pinch-off: three figures with three meanings); approximated
  // by a huge rectangle.
  const Polygon half{{{-1, -1}, {0, -1}, {0, 1}, {-1, 1}}};
  EXPECT_NEAR(GatePotentialPerVolt(half, {d, 0}, d), 0.25, 1e-6);
}

TEST(GatePotential, ClosedFormAgreesWithGslQuadratureInsideOutsideOnEdgesAndVertices) {
  const double d = 90e-9;
  const Polygon rect{{{-100e-9, -200e-9}, {100e-9, -200e-9}, {100e-9, 200e-9}, {-100e-9, 200e-9}}};
  const std::vector<Strip> rect_s{{-100e-9, 100e-9, constant(-200e-9), constant(200e-9)}};
  const Polygon l{{{0, 0}, {300e-9, 0}, {300e-9, 100e-9}, {100e-9, 100e-9}, {100e-9, 400e-9}, {0, 400e-9}}};
  const std::vector<Strip> l_s{{0, 100e-9, constant(0), constant(400e-9)},
                               {100e-9, 300e-9, constant(0), constant(100e-9)}};
  const Polygon tri{{{0, 0}, {400e-9, 0}, {100e-9, 300e-9}}};
  const std::vector<Strip> tri_s{{0, 100e-9, constant(0), [](double x) { return 3.0 * x; }},
                                 {100e-9, 400e-9, constant(0), [](double x) { return (400e-9 - x); }}};
  const std::vector<Point> rect_pts{{0, 0}, {150e-9, 0}, {100e-9, 0}, {100e-9, 200e-9}, {-300e-9, 400e-9}};
  const std::vector<Point> l_pts{{50e-9, 50e-9}, {200e-9, 250e-9}, {100e-9, 100e-9}, {300e-9, 50e-9}, {0, 0}};
  const std::vector<Point> tri_pts{{150e-9, 50e-9}, {500e-9, 500e-9}, {200e-9, 0}, {400e-9, 0}, {100e-9, 300e-9}};
  for (const Point& q : rect_pts)
    EXPECT_NEAR(GatePotentialPerVolt(rect, q, d), quadrature(rect_s, q, d), 1e-8) << q.x << "," << q.y;
  for (const Point& q : l_pts)
    EXPECT_NEAR(GatePotentialPerVolt(l, q, d), quadrature(l_s, q, d), 1e-8) << q.x << "," << q.y;
  for (const Point& q : tri_pts)
    EXPECT_NEAR(GatePotentialPerVolt(tri, q, d), quadrature(tri_s, q, d), 1e-8) << q.x << "," << q.y;
}

TEST(Electrostatics, FftOperatorEqualsTheDirectSumOfTheKernel) {
  Design d = LoadDesignFromString(read("tests/data/electrostatics/split_gate.yaml"), "split.yaml");
  ElectrostaticsOptions o;
  o.grid_m = 250e-9;  // 16 x 16 plus margin: small enough for the O(N^2) sum
  const ElectrostaticProblem p(d, o);
  std::vector<double> u(static_cast<std::size_t>(p.nx() * p.ny()));
  for (std::size_t i = 0; i < u.size(); ++i) u[i] = std::sin(0.37 * i) + 0.5 * std::cos(0.11 * i * i);
  const auto a = p.ApplyOperator(u), b = p.ApplyOperatorDirect(u);
  double scale = 0.0;
  for (double x : b) scale = std::max(scale, std::abs(x));
  for (std::size_t i = 0; i < u.size(); ++i) EXPECT_NEAR(a[i], b[i], 1e-11 * scale) << i;
}

TEST(Electrostatics, WideGateDensityFallsLinearlyAndEmptiesAtTheSeriesCapacitorVoltage) {
  // n(V) = n_s (1 - V / V_dep), V_dep = -e n_s (d / eps + 1 / (e^2 D)) = -0.324545 V at n_s = 2.5e15
  // m^-2, d = 90 nm, eps_r = 12.9, m* = 0.067 m_e (test_wafer_depletion_V). The discrete kernel on a
  // 60 nm grid reproduces it to 1 %.
  Design d = LoadDesignFromString(read("tests/data/electrostatics/wide_gate.yaml"), "wide.yaml");
  ElectrostaticsOptions o;
  o.grid_m = 60e-9;
  const ElectrostaticProblem p(d, o);
  const double vdep = test_wafer_depletion_V();
  DensityMap last;
  const DensityMap* start = nullptr;
  for (double v : {-0.05, -0.15, -0.25}) {
    last = p.Solve({v}, start);
    start = &last;
    ASSERT_TRUE(last.stats.converged);
    EXPECT_LE(last.stats.operator_applications, 60) << "target of the electrostatics issue";
    EXPECT_TRUE(NearRel(last.At({0, 0}), 2.5e15 * (1 - v / vdep), 0.01)) << v;
  }
  last = p.Solve({1.02 * vdep}, start);
  EXPECT_LT(last.At({0, 0}), 1e-3 * 2.5e15);
  last = p.Solve({0.97 * vdep}, &last);
  EXPECT_GT(last.At({0, 0}), 0.01 * 2.5e15);
}

TEST(Electrostatics, LinearScreeningMatchesThomasFermiDielectricFunction) {
  // Weak potential: the 2DEG stays everywhere occupied and responds linearly,
  // U = U_ext / eps_TF(q), eps_TF = 1 + (q_TF / q)(1 - exp(-2 q d)), q_TF = e^2 D / 2 eps (Ando, Fowler &
  // Stern, Rev. Mod. Phys. 54, 437 (1982), with the image kernel of docs/models.md, Thomas-Fermi
  // electrostatics). A weak gate
  // strip of width w over the centre probes q ~ pi / w; compare the induced density with the response
  // computed from the Fourier formula by numerical integration over the strip's spectrum.
  Design d = LoadDesignFromString(read("tests/data/electrostatics/wide_gate.yaml"), "wide.yaml");
  const double w = 400e-9, depth = 90e-9;
  d.gates[0].outline = Polygon{{{-w / 2, -8e-6}, {w / 2, -8e-6}, {w / 2, 8e-6}, {-w / 2, 8e-6}}};
  ElectrostaticsOptions o;
  o.grid_m = 20e-9;
  o.margin_m = 0.5e-6;
  d.mesa.outline = Polygon{{{-4e-6, -4e-6}, {4e-6, -4e-6}, {4e-6, 4e-6}, {-4e-6, 4e-6}}};
  const ElectrostaticProblem p(d, o);
  const double v = -0.01;
  const DensityMap m = p.Solve({v});
  ASSERT_TRUE(m.stats.converged);
  const double dn_numeric = m.At({0, 0}) - 2.5e15;
  // Strip of width w, long in y: phi_g(q) = V e^{-|q| d} 2 sin(q w/2) / q (the half-space kernel of
  // docs/models.md, Bare gate potential, in Fourier space),
  // U_ext = -e phi_g, U = U_ext / eps_TF(q), delta n(q) = -D U(q), delta n(0) = (1/pi) int_0^inf delta n(q) dq.
  const WaferQuantities f = DeriveWaferQuantities(d.heterostructure, 1.0, 0.02);
  const double qtf = constants::kElementaryCharge_C * constants::kElementaryCharge_C * f.density_of_states_per_J_m2 /
                     (2 * 12.9 * constants::kVacuumPermittivity_F_per_m);
  struct Par {
    double w, d, qtf;
  } par{w, depth, qtf};
  // In s = q d the integrand is 2 sin(s w / 2d) / s * exp(-s) / eps_TF(s / d).
  gsl_function fn{[](double sq, void* vp) {
                    const Par* a = static_cast<Par*>(vp);
                    const double q = sq / a->d;
                    const double eps = 1 + a->qtf / q * (1 - std::exp(-2 * sq));
                    return std::exp(-sq) * 2 * std::sin(q * a->w / 2) / sq / eps;
                  },
                  &par};
  gsl_integration_workspace* ws = gsl_integration_workspace_alloc(2000);
  double integral = 0, err = 0;
  gsl_set_error_handler_off();
  gsl_integration_qagiu(&fn, 0.0, 0.0, 1e-9, 2000, ws, &integral, &err);
  gsl_integration_workspace_free(ws);
  const double dn_fourier =
      -f.density_of_states_per_J_m2 * (-constants::kElementaryCharge_C * v) * integral / std::numbers::pi;
  std::printf("linear response at the strip centre: grid %.4e, Fourier %.4e m^-2\n", dn_numeric, dn_fourier);
  EXPECT_TRUE(NearRel(dn_numeric, dn_fourier, 0.05));
}

// The split-gate test layout on 40 nm cells (n_s = 2.5e15 m^-2).
std::unique_ptr<ElectrostaticProblem> split_gate_problem() {
  const Design d = LoadDesignFromString(read("tests/data/electrostatics/split_gate.yaml"), "split.yaml");
  ElectrostaticsOptions o;
  o.grid_m = 40e-9;
  o.threads = 1;
  return std::make_unique<ElectrostaticProblem>(d, o);
}

TEST(Electrostatics, MirrorSymmetricLayoutGivesMirrorSymmetricDensity) {
  const auto problem = split_gate_problem();
  const DensityMap m = problem->Solve({-0.6, -0.6});
  ASSERT_TRUE(m.stats.converged);
  double worst = 0.0;
  for (double x : {0.0, 120e-9, 400e-9, 900e-9})
    for (double y : {0.0, 60e-9, 300e-9, 1200e-9}) {
      const double a = m.At({x, y});
      for (const Point& q : {Point{-x, y}, Point{x, -y}, Point{-x, -y}}) worst = std::max(worst, std::abs(m.At(q) - a));
    }
  EXPECT_LT(worst, 1e-6 * 2.5e15);
}

TEST(Electrostatics, PinchOffVoltageConvergesWithTheGrid) {
  Design d = LoadDesignFromString(read("tests/data/electrostatics/split_gate.yaml"), "split.yaml");
  std::vector<double> v;
  for (double h : {30e-9, 15e-9, 7.5e-9}) {
    MapOptions o;
    o.electrostatics.grid_m = 100e-9;
    o.local_grid_m = h;
    o.pinch_resolution_V = 1e-4;
    const MapResult r = ComputeMap(d, o);
    ASSERT_EQ(r.constrictions.size(), 1u);
    ASSERT_TRUE(r.constrictions[0].pinch_off_V);
    v.push_back(*r.constrictions[0].pinch_off_V);
    std::printf("pinch-off with %4.1f nm cells: %.4f V\n", h * 1e9, v.back());
  }
  // Differences shrink as the cells are halved, and the self-consistent value lies below the bare
  // estimate (docs/models.md, Pinch-off: three figures with three meanings).
  EXPECT_LT(std::abs(v[2] - v[1]), std::abs(v[1] - v[0]) + 2e-4);
  EXPECT_LT(std::abs(v[2] - v[1]), 0.02);
  EXPECT_LT(v[2], BareSplitGatePinchOff_V(test_wafer_depletion_V(), 300e-9, 90e-9));
}

// A converged density handed back as the start must pass the optimality test with the one fresh
// operator application that Solve() makes first: this checks the H x carried along by the conjugate
// gradients against H applied anew.
TEST(Electrostatics, ConvergedDensityAsStartNeedsNoFurtherStep) {
  const auto problem = split_gate_problem();
  const ElectrostaticProblem& p = *problem;
  const DensityMap m = p.Solve({-0.6, -0.6});
  ASSERT_TRUE(m.stats.converged);
  ASSERT_GT(m.stats.active_set_steps, 0);
  const DensityMap again = p.Solve({-0.6, -0.6}, &m);
  EXPECT_TRUE(again.stats.converged);
  EXPECT_EQ(again.stats.active_set_steps, 0);
  EXPECT_EQ(again.stats.operator_applications, 1);
  EXPECT_LT(again.stats.residual, ElectrostaticsOptions{}.tolerance);
}

// Along a sweep in equal voltage steps the extrapolated start must reach the same density as a solve
// from scratch, with fewer operator applications than a start from the last point alone, which in
// turn needs fewer than a solve from scratch.
TEST(Electrostatics, ExtrapolatedStartReachesTheSameDensityWithFewerApplications) {
  const auto problem = split_gate_problem();
  const ElectrostaticProblem& p = *problem;
  int cold = 0, last = 0, extrapolated = 0;
  for (double v0 : {-0.40, -0.55, -0.70}) {
    const double step = -0.01;
    const DensityMap a = p.Solve({v0, v0});
    const DensityMap b = p.Solve({v0 + step, v0 + step}, &a);
    const DensityMap from_scratch = p.Solve({v0 + 2 * step, v0 + 2 * step});
    const DensityMap from_last = p.Solve({v0 + 2 * step, v0 + 2 * step}, &b);
    const DensityMap start = ExtrapolatedStart(a, b);
    const DensityMap from_line = p.Solve({v0 + 2 * step, v0 + 2 * step}, &start);
    ASSERT_TRUE(from_scratch.stats.converged && from_last.stats.converged && from_line.stats.converged);
    double worst = 0.0;
    for (std::size_t c = 0; c < from_scratch.density_per_m2.size(); ++c)
      worst = std::max(worst, std::abs(from_line.density_per_m2[c] - from_scratch.density_per_m2[c]));
    EXPECT_LT(worst, 1e-5 * 2.5e15) << "at " << v0;  // ten times the tolerance (1e-6 of n_s)
    cold += from_scratch.stats.operator_applications;
    last += from_last.stats.operator_applications;
    extrapolated += from_line.stats.operator_applications;
  }
  std::printf("operator applications over three sweeps: from scratch %d, from the last point %d, extrapolated %d\n",
              cold, last, extrapolated);
  EXPECT_LT(extrapolated, last);
  EXPECT_LT(last, cold);
  EXPECT_THROW(ExtrapolatedStart(DensityMap{}, p.Solve({-0.4, -0.4})), std::invalid_argument);
}

TEST(Electrostatics, MemoryGuardRefusesAHugeGrid) {
  Design d = LoadDesignFromString(read("tests/data/electrostatics/wide_gate.yaml"), "wide.yaml");
  ElectrostaticsOptions o;
  o.grid_m = 2e-9;  // 10^4 x 10^4 cells
  o.max_memory_bytes = std::size_t{1} << 30;
  try {
    ElectrostaticProblem p(d, o);
    FAIL() << "no error";
  } catch (const GridTooLarge& e) {
    EXPECT_NE(std::string(e.what()).find("MiB"), std::string::npos) << e.what();
    EXPECT_GT(e.need_bytes, e.limit_bytes);
    EXPECT_EQ(e.limit_bytes, o.max_memory_bytes);
    // The suggested cell size must fit: the estimate is proportional to the number of cells.
    EXPECT_GT(e.fitting_cell_m, o.grid_m);
    o.grid_m = e.fitting_cell_m;
    const ElectrostaticProblem coarse(d, o);
    EXPECT_LE(coarse.memory_bytes(), o.max_memory_bytes);
  }
}

}  // namespace
}  // namespace hallway
