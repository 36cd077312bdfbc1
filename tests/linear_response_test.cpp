// Linear response of the self-consistent Thomas-Fermi solver against the continuum theory, evaluated
// here by GSL quadrature independently of the solver's grid, kernel and FFT.
//
// Model (pinned surface, 2DEG at depth d): the bare gate potential in the 2DEG plane is
// phi_g(q) = V_s(q) e^{-qd} (Davies, Larkin & Sukhorukov, J. Appl. Phys. 77, 4504 (1995)); the sheet's
// own potential is K(q) = (1 - e^{-2qd}) / (2 eps q) times its charge (image of opposite sign at the
// surface); n = D [E_F0 - U]_+ with U = -e phi_g + e^2 K * (n - n_s). Where the 2DEG stays occupied the
// model is linear and delta n(q) = e D phi_g(q) / eps_TF(q), eps_TF(q) = 1 + e^2 D K(q) (Thomas-Fermi
// screening, Ando, Fowler & Stern, Rev. Mod. Phys. 54, 437 (1982)). In real space
//   delta n(r0) = e D sum_gates V_g int_gate G(|r - r0|) d^2r,
//   G(r) = (1 / 2 pi) int_0^inf q J0(q r) e^{-qd} / eps_TF(q) dq = g(r / d) / (2 pi d^2),
//   g(rho) = int_0^inf s J0(s rho) e^{-s} / eps(s) ds,  eps(s) = 1 + a (1 - e^{-2s}) / s,  a = q_TF d,
// with q_TF = e^2 D / (2 eps). Without screening (a = 0) g is the Poisson kernel 1 / (1 + rho^2)^{3/2}
// (the Laplace transform int_0^inf s J0(b s) e^{-p s} ds = p / (p^2 + b^2)^{3/2}, from memory), whose
// integral over a gate is the closed-form bare potential; that limit checks the quadrature machinery.
#include <gsl/gsl_errno.h>
#include <gsl/gsl_integration.h>
#include <gsl/gsl_sf_bessel.h>
#include <gsl/gsl_spline.h>
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <numbers>
#include <string>
#include <vector>

#include "hallway/constants.hpp"
#include "hallway/design_loader.hpp"
#include "hallway/electrostatics.hpp"
#include "hallway/heterostructure.hpp"
#include "test_support.hpp"

namespace hallway {
namespace {

using geometry::Point;
using geometry::Polygon;
using test::NearRel;

// 1 / eps(s) in the dimensionless variable s = q d (a = q_TF d; a = 0: no screening).
double inverse_eps(double s, double a) {
  if (s <= 0.0) return 1.0 / (1.0 + 2.0 * a);
  return 1.0 / (1.0 + a * (-std::expm1(-2.0 * s)) / s);
}

// g(rho) by a composite 20-point Gauss-Legendre rule (GSL glfixed) on [0, 45], with panels no longer
// than half a period of J0(s rho) and at most 1/2; the part left off is below 46 e^{-45} = 1.3e-18.
double hankel_g(double rho, double a, const gsl_integration_glfixed_table* rule) {
  struct Par {
    double rho, a;
  } par{rho, a};
  gsl_function f{[](double s, void* vp) {
                   const auto* p = static_cast<const Par*>(vp);
                   return s * gsl_sf_bessel_J0(s * p->rho) * std::exp(-s) * inverse_eps(s, p->a);
                 },
                 &par};
  const double upper = 45.0;
  const double panel = rho > 0.0 ? std::min(0.5, std::numbers::pi / rho) : 0.5;
  const int panels = static_cast<int>(std::ceil(upper / panel));
  double sum = 0.0;
  for (int k = 0; k < panels; ++k)
    sum += gsl_integration_glfixed(&f, k * upper / panels, (k + 1) * upper / panels, rule);
  return sum;
}

// g on a table of rho in [0, rho_max], interpolated by a cubic spline (GSL). The nodes are 1/32 apart
// near 0 and (1 + rho / 2) / 32 apart further out, where g varies on the scale rho; 16 mirrored nodes
// below 0 make the spline even about rho = 0 (the natural end condition's error decays by 0.27 a node).
class RadialTable {
 public:
  RadialTable(double a, double rho_max) {
    std::vector<double> pos;
    for (double r = 0.0; r < rho_max + 1.0; r += (1.0 + 0.5 * r) / 32.0) pos.push_back(r);
    gsl_integration_glfixed_table* rule = gsl_integration_glfixed_table_alloc(20);
    std::vector<double> val(pos.size());
    for (std::size_t k = 0; k < pos.size(); ++k) val[k] = hankel_g(pos[k], a, rule);
    gsl_integration_glfixed_table_free(rule);
    for (int k = 16; k >= 1; --k) {
      rho_.push_back(-pos[static_cast<std::size_t>(k)]);
      g_.push_back(val[static_cast<std::size_t>(k)]);
    }
    rho_.insert(rho_.end(), pos.begin(), pos.end());
    g_.insert(g_.end(), val.begin(), val.end());
    spline_ = gsl_spline_alloc(gsl_interp_cspline, rho_.size());
    accel_ = gsl_interp_accel_alloc();
    gsl_spline_init(spline_, rho_.data(), g_.data(), rho_.size());
    max_ = pos.back();
  }
  ~RadialTable() {
    gsl_spline_free(spline_);
    gsl_interp_accel_free(accel_);
  }
  RadialTable(const RadialTable&) = delete;
  RadialTable& operator=(const RadialTable&) = delete;

  double operator()(double rho) const {
    if (!(rho >= 0.0 && rho <= max_)) {
      ADD_FAILURE() << "test bug: rho = " << rho << " beyond the table (" << max_ << ")";
      return 0.0;
    }
    return gsl_spline_eval(spline_, rho, accel_);
  }
  const std::vector<double>& nodes() const { return rho_; }
  const std::vector<double>& values() const { return g_; }

 private:
  std::vector<double> rho_, g_;
  gsl_spline* spline_ = nullptr;
  gsl_interp_accel* accel_ = nullptr;
  double max_ = 0.0;
};

// A rectangle in units of d.
struct Rect {
  double x0, x1, y0, y1;
};

// (1 / 2 pi) int_rect g(|rho - p|) d^2 rho by nested GSL QAG (21-point Gauss-Kronrod), the rectangle
// cut at p's coordinates so that the peak of g sits on a corner of every piece. Relative tolerances
// 1e-8 (inner) and 1e-7 (outer): tighter ones trip GSL's round-off test at the spline's knots.
double rect_response(const RadialTable& g, Rect r, Point p) {
  gsl_integration_workspace* wo = gsl_integration_workspace_alloc(1000);
  gsl_integration_workspace* wi = gsl_integration_workspace_alloc(1000);
  struct Inner {
    const RadialTable* g;
    double dx, py;
  };
  struct Outer {
    const RadialTable* g;
    Point p;
    double y0, y1;
    gsl_integration_workspace* wi;
  };
  auto cuts = [](double lo, double hi, double c) {
    return (c > lo && c < hi) ? std::vector<double>{lo, c, hi} : std::vector<double>{lo, hi};
  };
  const std::vector<double> xs = cuts(r.x0, r.x1, p.x), ys = cuts(r.y0, r.y1, p.y);
  double total = 0.0;
  for (std::size_t i = 0; i + 1 < xs.size(); ++i)
    for (std::size_t j = 0; j + 1 < ys.size(); ++j) {
      Outer outer{&g, p, ys[j], ys[j + 1], wi};
      gsl_function fo{[](double x, void* vp) {
                        auto* o = static_cast<Outer*>(vp);
                        Inner in{o->g, x - o->p.x, o->p.y};
                        gsl_function fi{[](double y, void* ip) {
                                          const auto* c = static_cast<const Inner*>(ip);
                                          return (*c->g)(std::hypot(c->dx, y - c->py));
                                        },
                                        &in};
                        double v = 0.0, err = 0.0;
                        const int status =
                            gsl_integration_qag(&fi, o->y0, o->y1, 0.0, 1e-8, 1000, GSL_INTEG_GAUSS21, o->wi, &v, &err);
                        EXPECT_EQ(status, GSL_SUCCESS) << "inner quadrature";
                        return v;
                      },
                      &outer};
      double v = 0.0, err = 0.0;
      const int status = gsl_integration_qag(&fo, xs[i], xs[i + 1], 0.0, 1e-7, 1000, GSL_INTEG_GAUSS21, wo, &v, &err);
      EXPECT_EQ(status, GSL_SUCCESS) << "outer quadrature";
      total += v;
    }
  gsl_integration_workspace_free(wo);
  gsl_integration_workspace_free(wi);
  return total / (2.0 * std::numbers::pi);
}

// The test layout (nm): a 16 um square mesa, a split gate at its centre, current along x. Each finger
// is 200 nm wide along the current and 1.5 um long; their tips are 300 nm apart.
constexpr double kDepth_m = 90e-9;
constexpr double kHalfMesa_nm = 8000.0;
const std::vector<Rect> kFingers_nm = {{-100, 100, -1650, -150}, {-100, 100, 150, 1650}};

std::string layout_yaml() {
  auto outline = [](double x0, double x1, double y0, double y1) {
    auto f = [](double v) { return std::to_string(v); };
    return "[[" + f(x0) + "," + f(y0) + "],[" + f(x1) + "," + f(y0) + "],[" + f(x1) + "," + f(y1) + "],[" + f(x0) +
           "," + f(y1) + "]]";
  };
  const double m = kHalfMesa_nm;
  std::string s = R"(hallway: 1
name: split gate linear response
units: nm
heterostructure:
  depth: 90 nm
  density: 2.5e11 cm^-2
conditions:
  temperature: 20 mK
  filling: 2
)";
  s += "mesa:\n  outline: " + outline(-m, m, -m, m) + "\n";
  s += "contacts:\n  - {name: W, outline: " + outline(-m - 300, -m + 300, -500, 500) + "}\n";
  s += "gates:\n";
  s += "  - {name: GS, voltage: 0 V, outline: " +
       outline(kFingers_nm[0].x0, kFingers_nm[0].x1, kFingers_nm[0].y0, kFingers_nm[0].y1) + "}\n";
  s += "  - {name: GN, voltage: 0 V, outline: " +
       outline(kFingers_nm[1].x0, kFingers_nm[1].x1, kFingers_nm[1].y0, kFingers_nm[1].y1) + "}\n";
  s += "wiring:\n  W: ground\n";
  return s;
}

// The fingers as polygons in metres and as rectangles in units of d.
Polygon finger_polygon(const Rect& r) {
  return Polygon{
      {{r.x0 * 1e-9, r.y0 * 1e-9}, {r.x1 * 1e-9, r.y0 * 1e-9}, {r.x1 * 1e-9, r.y1 * 1e-9}, {r.x0 * 1e-9, r.y1 * 1e-9}}};
}
Rect in_depths(const Rect& r) {
  const double k = 1e-9 / kDepth_m;
  return {r.x0 * k, r.x1 * k, r.y0 * k, r.y1 * k};
}

TEST(Electrostatics, SmallGateVoltageResponseEqualsContinuumThomasFermiLinearResponse) {
  gsl_set_error_handler_off();  // statuses are checked; GSL's default handler would abort the run
  const Design design = LoadDesignFromString(layout_yaml(), "linear_response.yaml");
  ASSERT_DOUBLE_EQ(design.heterostructure.depth_m, kDepth_m);
  const WaferQuantities f = DeriveWaferQuantities(design.heterostructure, design.conditions.field_T, 0.02);
  const double e = constants::kElementaryCharge_C;
  const double dos = f.density_of_states_per_J_m2;
  const double eps = design.heterostructure.permittivity * constants::kVacuumPermittivity_F_per_m;
  const double a = e * e * dos / (2.0 * eps) * kDepth_m;  // q_TF d, about 17.7

  // Evaluation points (m): the gap centre, under the middle of a finger, and 300 nm from the gap
  // centre along the current (200 nm beyond the fingers' edge).
  const std::vector<Point> points = {{0.0, 0.0}, {0.0, 900e-9}, {300e-9, 0.0}};
  // Farthest distance needed: from a point to a finger corner, and the half-diagonal of the 4 um square
  // of the wide-gate limit below, in units of d.
  const double rho_max = 2.0e-6 * std::numbers::sqrt2 / kDepth_m + 1.0;

  const RadialTable bare(0.0, rho_max), screened(a, rho_max);

  // (1) Quadrature check, no screening: the table against the Poisson kernel at every node, and its
  // integral over the fingers against the closed-form bare potential (Davies, Larkin & Sukhorukov 1995).
  double worst_node = 0.0;
  for (std::size_t k = 0; k < bare.nodes().size(); ++k) {
    const double r = bare.nodes()[k];
    worst_node = std::max(worst_node, std::abs(bare.values()[k] - std::pow(1.0 + r * r, -1.5)));
  }
  EXPECT_LT(worst_node, 1e-13);  // rounding of the panel sums; g(0) = 1
  for (const Point& p : points) {
    const Point pd{p.x / kDepth_m, p.y / kDepth_m};
    double quad = 0.0, closed = 0.0;
    for (const Rect& r : kFingers_nm) {
      quad += rect_response(bare, in_depths(r), pd);
      closed += GatePotentialPerVolt(finger_polygon(r), p, kDepth_m);
    }
    std::printf("bare potential per volt at (%.0f, %.0f) nm: quadrature %.10f, closed form %.10f\n", p.x * 1e9,
                p.y * 1e9, quad, closed);
    EXPECT_NEAR(quad, closed, 1e-7);  // spline interpolation of g between nodes, about 1e-8
  }

  // (2) g(0) of the screened table against a second, adaptive quadrature (GSL QAGIU on [0, inf)).
  {
    struct Par {
      double a;
    } par{a};
    gsl_function f0{
        [](double s, void* vp) { return s * std::exp(-s) * inverse_eps(s, static_cast<const Par*>(vp)->a); }, &par};
    gsl_integration_workspace* w = gsl_integration_workspace_alloc(1000);
    double g0 = 0.0, err = 0.0;
    ASSERT_EQ(gsl_integration_qagiu(&f0, 0.0, 1e-15, 1e-12, 1000, w, &g0, &err), GSL_SUCCESS);
    gsl_integration_workspace_free(w);
    EXPECT_TRUE(NearRel(screened(0.0), g0, 1e-10));  // both converged to about 1e-12
  }

  // (3) Wide-gate limit of the oracle: a square gate much wider than d gives the plate capacitor in
  // series with the quantum capacitance, delta n = -n_s V / V_dep (Luryi, Appl. Phys. Lett. 52, 501
  // (1988)), since (1 / 2 pi) int g d^2 rho = 1 / eps(0). The square of side 4 um misses the tail
  // g ~ 1 / (eps(0)^2 rho^3) outside it, a fraction of about d / (eps(0) R) = 1.2e-3 at R = 2 um.
  const double v = -0.005;
  {
    const double half = 2.0e-6 / kDepth_m;
    const double wide = e * dos * v * rect_response(screened, {-half, half, -half, half}, {0.0, 0.0});
    const double plate = -design.heterostructure.density_per_m2 * v / f.depletion_voltage_V;
    std::printf("wide-gate limit: oracle %.6e, -n_s V / V_dep %.6e m^-2 (ratio %.6f)\n", wide, plate, wide / plate);
    EXPECT_TRUE(NearRel(wide, plate, 2e-3));     // the tail left off, about 1.2e-3
    EXPECT_LT(std::abs(wide), std::abs(plate));  // the tail is positive: the square holds less than the plane
  }

  // (4) The solver at V and at 0 V on the same problem: the difference cancels the mesa's etched edges,
  // 8 um away, where the finite mesa departs from the infinite sheet of the theory (halving the mesa
  // changes the differences below by 1e-5 of themselves). Cells of 15 nm: the solver's error falls as
  // h^2 (at the gap centre -4.0 %, -1.8 %, -1.0 %, -0.5 % with 30, 20, 15, 10 nm cells).
  ElectrostaticsOptions o;
  o.grid_m = 15e-9;
  o.threads = 1;
  // The tolerance bounds the error of u = n / n_s; delta n / n_s is only 2e-5 at the third point, where
  // the default 1e-6 would allow an error of 5 %.
  o.tolerance = 1e-9;
  // An odd number of cells across (the grid is centred on the mesa): the points below are cell centres,
  // so DensityMap::At adds no interpolation error where the density is strongly curved.
  const double span = 2 * kHalfMesa_nm * 1e-9 + 6 * kDepth_m;
  o.margin_m = ((2 * std::floor(span / o.grid_m / 2) + 0.5) * o.grid_m - 2 * kHalfMesa_nm * 1e-9) / 2;
  const ElectrostaticProblem problem(design, o);
  const DensityMap m0 = problem.Solve({0.0, 0.0});
  ASSERT_TRUE(m0.stats.converged);
  const DensityMap mv = problem.Solve({v, v}, &m0);
  ASSERT_TRUE(mv.stats.converged);
  // Linear response holds only while every cell of the mesa holds electrons (no [ ]_+ clipping).
  double lowest = HUGE_VAL;
  for (int j = 0; j < mv.ny; ++j)
    for (int i = 0; i < mv.nx; ++i) {
      const Point q{mv.x0_m + i * mv.cell_m, mv.y0_m + j * mv.cell_m};
      if (std::abs(q.x) < kHalfMesa_nm * 1e-9 - 100e-9 && std::abs(q.y) < kHalfMesa_nm * 1e-9 - 100e-9)
        lowest = std::min(lowest, mv.density_per_m2[static_cast<std::size_t>(j) * mv.nx + i]);
    }
  ASSERT_GT(lowest, 0.5 * design.heterostructure.density_per_m2);

  // 2 % everywhere: the grid's error at 15 nm is -1.0 % at the gap centre, +0.1 % under the finger and
  // -0.6 % at the third point, and it vanishes as the cells shrink (above).
  for (const Point& p : points) {
    const double ci = (p.x - mv.x0_m) / mv.cell_m, cj = (p.y - mv.y0_m) / mv.cell_m;
    ASSERT_NEAR(ci, std::round(ci), 1e-6) << "test bug: not a cell centre";
    ASSERT_NEAR(cj, std::round(cj), 1e-6) << "test bug: not a cell centre";
    const Point pd{p.x / kDepth_m, p.y / kDepth_m};
    double response = 0.0;
    for (const Rect& r : kFingers_nm) response += rect_response(screened, in_depths(r), pd);
    const double oracle = e * dos * v * response;
    const double solver = mv.At(p) - m0.At(p);
    std::printf("delta n at (%.0f, %.0f) nm: solver %.6e, continuum %.6e m^-2, relative difference %+.4f\n", p.x * 1e9,
                p.y * 1e9, solver, oracle, solver / oracle - 1.0);
    EXPECT_TRUE(NearRel(solver, oracle, 0.02)) << "at (" << p.x << ", " << p.y << ") m";
  }
  std::printf("grid %d x %d cells of %.0f nm; operator applications %d + %d\n", problem.nx(), problem.ny(),
              problem.cell_m() * 1e9, m0.stats.operator_applications, mv.stats.operator_applications);
}

}  // namespace
}  // namespace hallway
