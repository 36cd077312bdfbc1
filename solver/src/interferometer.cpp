// Interferometers of a device: kinds, periods, visibility, regime and the G(Phi, V) map; see
// interferometer.hpp and docs/models.md "Interferometer kinds and periods", "Coupling energies of a
// cavity", "Thermal average at a fixed loop phase".
#include "hallway/interferometer.hpp"

#include <Eigen/Dense>
#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <numbers>
#include <stdexcept>

#include "hallway/constants.hpp"

namespace hallway {

using constants::kBoltzmann_J_per_K;
using constants::kElementaryCharge_C;
using constants::kHbar_Js;
using constants::kPlanck_Js;

namespace {
constexpr double kFluxQuantum_Wb = kPlanck_Js / kElementaryCharge_C;  // h / e

// The mean potential of a uniformly charged square of side h over itself, times 4 pi eps h / q:
// the integral of 1/|r - r'| over the unit square twice, 4 ln(1 + sqrt 2) - 4 (sqrt 2 - 1) / 3.
const double kSquareSelf = 4.0 * std::log(1.0 + std::numbers::sqrt2) - 4.0 * (std::numbers::sqrt2 - 1.0) / 3.0;
}  // namespace

std::string ToString(InterferometerKind k) {
  return k == InterferometerKind::kFabryPerot ? "fabry-perot" : "mach-zehnder";
}
std::optional<InterferometerKind> InterferometerKindFromString(const std::string& s) {
  if (s == "fabry-perot") return InterferometerKind::kFabryPerot;
  if (s == "mach-zehnder") return InterferometerKind::kMachZehnder;
  return std::nullopt;
}
std::string ToString(InterferenceRegime r) {
  switch (r) {
    case InterferenceRegime::kAharonovBohm: return "aharonov-bohm";
    case InterferenceRegime::kIntermediate: return "intermediate";
    case InterferenceRegime::kCoulombDominated: return "coulomb-dominated";
  }
  return "unknown";
}
std::optional<InterferenceRegime> InterferenceRegimeFromString(const std::string& s) {
  for (InterferenceRegime r : {InterferenceRegime::kAharonovBohm, InterferenceRegime::kIntermediate,
                               InterferenceRegime::kCoulombDominated})
    if (ToString(r) == s) return r;
  return std::nullopt;
}

bool InterferometerOptions::IsValid(std::string* why) const {
  auto bad = [&](const std::string& w) {
    if (why) *why = "InterferometerOptions: " + w;
    return false;
  };
  if (!(gate_step_V > 0.0 && gate_step_V <= 0.1))
    return bad("gate_step_V must lie in (0, 0.1] V; got " + std::to_string(gate_step_V));
  if (max_gates < 0 || max_gates > 64) return bad("max_gates must lie in [0, 64]; got " + std::to_string(max_gates));
  if (!(edge_strip_width_m >= 0.0 && edge_strip_width_m < 1e-5))
    return bad("edge_strip_width_m must lie in [0, 10 um); got " + std::to_string(edge_strip_width_m));
  if (coupling_cells < 8 || coupling_cells > 200)
    return bad("coupling_cells must lie in [8, 200]; got " + std::to_string(coupling_cells));
  if (!(ab_ratio_limit > 0.0 && ab_ratio_limit < cd_ratio_limit && cd_ratio_limit < 1.0))
    return bad("need 0 < ab_ratio_limit < cd_ratio_limit < 1; got " + std::to_string(ab_ratio_limit) + ", " +
               std::to_string(cd_ratio_limit));
  if (flux_points < 2 || flux_points > 1001 || plunger_points < 2 || plunger_points > 1001)
    return bad("flux_points and plunger_points must lie in [2, 1001]; got " + std::to_string(flux_points) + ", " +
               std::to_string(plunger_points));
  if (!(flux_span_periods > 0.0 && flux_span_periods <= 100.0 && plunger_span_periods > 0.0 &&
        plunger_span_periods <= 100.0))
    return bad("flux_span_periods and plunger_span_periods must lie in (0, 100]");
  return true;
}

double FabryPerotTransmission(double t1, double t2, double theta) {
  if (t1 <= 0.0 || t2 <= 0.0) return 0.0;  // a closed constriction (the form is 0 / 0 at t1 = t2 = 0, theta = 0)
  const double r = std::sqrt((1.0 - t1) * (1.0 - t2));
  return t1 * t2 / (1.0 + r * r - 2.0 * r * std::cos(theta));
}

double ThermalDamping(double time_s, double temperature_K) {
  const double x = std::numbers::pi * kBoltzmann_J_per_K * temperature_K * time_s / kHbar_Js;
  if (x < 1e-8) return 1.0;
  if (x > 700.0) return 0.0;
  return x / std::sinh(x);
}

namespace {

// Cell centres of a grid over the polygon's box, inside it, split into the edge strip (within w of the
// boundary) and the interior.
struct CouplingCells {
  std::vector<geometry::Point> interior, strip;
  double cell_m = 0.0;
};

CouplingCells cells_of(const geometry::Polygon& loop, double w, int cells) {
  CouplingCells c;
  const geometry::BoundingBox box = geometry::bounding_box(loop);
  const double extent = std::max(box.xmax - box.xmin, box.ymax - box.ymin);
  c.cell_m = std::min(extent / cells, 0.5 * w);
  // At most about 1500 cells (a dense Cholesky factorisation of well under a second): coarser beyond.
  const double a = geometry::area(loop);
  c.cell_m = std::max(c.cell_m, std::sqrt(a / 1500.0));
  const int nx = static_cast<int>(std::ceil((box.xmax - box.xmin) / c.cell_m));
  const int ny = static_cast<int>(std::ceil((box.ymax - box.ymin) / c.cell_m));
  for (int j = 0; j < ny; ++j)
    for (int i = 0; i < nx; ++i) {
      const geometry::Point p{box.xmin + (i + 0.5) * c.cell_m, box.ymin + (j + 0.5) * c.cell_m};
      if (!geometry::contains(loop, p)) continue;
      (geometry::distance_to_boundary(loop, p) < w ? c.strip : c.interior).push_back(p);
    }
  return c;
}

// The interior and the edge strip as two conductors (each an equipotential, as a compressible region
// is): the cells' potential coefficients p_ij = G(r_ij) (times 4 pi eps; a cell's own is the mean over
// a uniformly charged square of side h), the capacitance matrix C_ab = sum over i in a, j in b of
// (p^-1)_ij, and the inverse capacitance matrix P = C^-1; K = e^2 P. Cells apart are taken as points.
struct Energies {
  double ki = 0.0, kl = 0.0, kil = 0.0, ai = 0.0, al = 0.0;
  bool ok = false;
};

// The probability density of the distance s between two points drawn uniformly from the unit square
// (the standard square line-picking density): 2s (pi - 4s + s^2) for s <= 1, and
// 2s (4 sqrt(s^2 - 1) - (s^2 + 2 - pi) - 4 arccos(1/s)) up to sqrt 2.
double square_distance_density(double s) {
  if (s <= 1.0) return 2.0 * s * (std::numbers::pi - 4.0 * s + s * s);
  return 2.0 * s * (4.0 * std::sqrt(s * s - 1.0) - (s * s + 2.0 - std::numbers::pi) - 4.0 * std::acos(1.0 / s));
}

// A cell's own potential coefficient (times 4 pi eps): the mean over the square of side h of the
// potential of its uniform charge, 1/r, minus that of its image at height 2d, averaged with the
// distance density (midpoint rule; the image term is smooth for d > 0).
double cell_self_coefficient(double h, double d) {
  constexpr int kPoints = 4000;
  const double top = std::numbers::sqrt2, ds = top / kPoints, a = 2.0 * d / h;
  double image = 0.0;
  for (int k = 0; k < kPoints; ++k) {
    const double s = (k + 0.5) * ds;
    image += square_distance_density(s) / std::sqrt(s * s + a * a) * ds;
  }
  return (kSquareSelf - image) / h;
}

Energies coupling_energies(const geometry::Polygon& loop, double w, double d, double eps, int cells) {
  const CouplingCells c = cells_of(loop, w, cells);
  Energies e;
  if (c.interior.empty() || c.strip.empty()) return e;
  std::vector<geometry::Point> all = c.interior;
  all.insert(all.end(), c.strip.begin(), c.strip.end());
  const int n = static_cast<int>(all.size()), ni = static_cast<int>(c.interior.size());
  const double four_d2 = 4.0 * d * d, h = c.cell_m, self = cell_self_coefficient(h, d);
  Eigen::MatrixXd p(n, n);
  for (int i = 0; i < n; ++i)
    for (int j = 0; j < n; ++j) {
      const double dx = all[static_cast<std::size_t>(i)].x - all[static_cast<std::size_t>(j)].x;
      const double dy = all[static_cast<std::size_t>(i)].y - all[static_cast<std::size_t>(j)].y;
      const double r2 = dx * dx + dy * dy;
      p(i, j) = i == j ? self : 1.0 / std::sqrt(r2) - 1.0 / std::sqrt(r2 + four_d2);
    }
  Eigen::MatrixXd ind = Eigen::MatrixXd::Zero(n, 2);
  for (int i = 0; i < n; ++i) ind(i, i < ni ? 0 : 1) = 1.0;
  const Eigen::LLT<Eigen::MatrixXd> llt(p);
  if (llt.info() != Eigen::Success) return e;
  const Eigen::Matrix2d cap = ind.transpose() * llt.solve(ind);  // times 1 / (4 pi eps)
  const Eigen::Matrix2d inv = cap.inverse();
  const double k = kElementaryCharge_C * kElementaryCharge_C / (4.0 * std::numbers::pi * eps);
  e.ki = k * inv(0, 0);
  e.kl = k * inv(1, 1);
  e.kil = k * inv(0, 1);
  e.ai = static_cast<double>(ni) * h * h;
  e.al = static_cast<double>(n - ni) * h * h;
  e.ok = std::isfinite(e.ki) && std::isfinite(e.kil) && e.ki > 0.0;
  return e;
}

geometry::Polygon scaled(const geometry::Polygon& p, double factor) {
  double cx = 0.0, cy = 0.0;
  for (const geometry::Point& q : p.vertices) {
    cx += q.x;
    cy += q.y;
  }
  cx /= static_cast<double>(p.vertices.size());
  cy /= static_cast<double>(p.vertices.size());
  geometry::Polygon out;
  for (const geometry::Point& q : p.vertices) out.vertices.push_back({cx + factor * (q.x - cx), cy + factor * (q.y - cy)});
  return out;
}

InterferenceRegime regime_of(double ratio, double ab, double cd) {
  if (ratio <= ab) return InterferenceRegime::kAharonovBohm;
  if (ratio >= cd) return InterferenceRegime::kCoulombDominated;
  return InterferenceRegime::kIntermediate;
}

}  // namespace

CavityCoupling CavityCouplingOf(const geometry::Polygon& loop, double w, double d, double eps_r, int cells,
                                double ab_limit, double cd_limit) {
  const double eps = eps_r * constants::kVacuumPermittivity_F_per_m;
  CavityCoupling c;
  c.edge_strip_width_m = w;
  const Energies e = coupling_energies(loop, w, d, eps, cells);
  if (!e.ok) throw std::invalid_argument("CavityCouplingOf: the loop is too small for an interior beyond the edge strip of " +
                                         std::to_string(w * 1e9) + " nm");
  c.interior_J = e.ki;
  c.edge_J = e.kl;
  c.coupling_J = e.kil;
  c.ratio = e.kil / e.ki;
  c.interior_area_m2 = e.ai;
  c.edge_area_m2 = e.al;
  c.regime = regime_of(c.ratio, ab_limit, cd_limit);
  const Energies half = coupling_energies(loop, w, 0.5 * d, eps, cells);
  const Energies big = coupling_energies(scaled(loop, 2.0), w, d, eps, cells);
  c.ratio_half_depth = half.ok ? half.kil / half.ki : c.ratio;
  c.ratio_double_size = big.ok ? big.kil / big.ki : c.ratio;
  c.interior_double_size_J = big.ok ? big.ki : 0.0;
  return c;
}

namespace {

// The pieces of a loop in the order electrons travel (a loop's pieces come sorted by index).
std::vector<int> travel_order(const EdgeNetwork& net, const std::vector<int>& pieces) {
  std::vector<int> order{pieces.front()};
  std::vector<char> used(pieces.size(), 0);
  used[0] = 1;
  while (order.size() < pieces.size()) {
    const EdgeEnd& to = net.pieces[static_cast<std::size_t>(order.back())].to;
    bool found = false;
    for (std::size_t i = 0; i < pieces.size() && !found; ++i) {
      const EdgeEnd& from = net.pieces[static_cast<std::size_t>(pieces[i])].from;
      if (!used[i] && from.kind == to.kind && from.index == to.index) {
        used[i] = 1;
        order.push_back(pieces[i]);
        found = true;
      }
    }
    if (!found)
      for (std::size_t i = 0; i < pieces.size() && !found; ++i)
        if (!used[i]) {
          used[i] = 1;
          order.push_back(pieces[i]);
          found = true;
        }
  }
  return order;
}

geometry::Polygon ring_of(const EdgeNetwork& net, const std::vector<int>& ordered) {
  geometry::Polygon ring;
  for (int p : ordered) {
    const auto& path = net.pieces[static_cast<std::size_t>(p)].path;
    ring.vertices.insert(ring.vertices.end(), path.begin(), path.end());
  }
  return ring;
}

// Where an interferometer is and how big it is, in one device (the design's or a gate-moved one).
struct Shape {
  InterferometerKind kind = InterferometerKind::kFabryPerot;
  int channel = 0;
  std::vector<int> constrictions, arms;
  geometry::Polygon ring;
  double area_m2 = 0.0, length_m = 0.0, time_s = 0.0, velocity_m_per_s = 0.0;
};

bool same_interferometer(const Shape& a, const Shape& b) {
  std::vector<int> x = a.constrictions, y = b.constrictions;
  if (a.kind == InterferometerKind::kFabryPerot) {
    std::sort(x.begin(), x.end());
    std::sort(y.begin(), y.end());
  }
  return a.kind == b.kind && a.channel == b.channel && x == y;
}

// Fabry–Pérot loops (edge loops through constrictions) and Mach–Zehnder pairs of arms of a device.
std::vector<Shape> shapes_of(const Design& d, const EdgeNetwork& net, const PathResult& paths) {
  std::vector<Shape> out;
  auto tof = [&](int p) { return paths.pieces[static_cast<std::size_t>(p)].time_of_flight_s; };
  for (const LoopMetrics& l : paths.loops) {
    if (l.closed_edge || l.constrictions.empty()) continue;
    Shape s;
    s.channel = l.channel;
    s.constrictions = l.constrictions;
    s.arms = travel_order(net, l.pieces);
    s.ring = ring_of(net, s.arms);
    s.area_m2 = geometry::area(s.ring);
    for (int p : s.arms) {
      s.length_m += net.pieces[static_cast<std::size_t>(p)].length_m;
      s.time_s += tof(p);
    }
    s.velocity_m_per_s = s.time_s > 0.0 ? s.length_m / s.time_s : 0.0;
    out.push_back(s);
  }
  for (std::size_t k = 0; k < d.channels.size(); ++k)
    for (std::size_t a = 0; a < d.constrictions.size(); ++a) {
      const ConstrictionPorts ports = PortsOf(net, static_cast<int>(k), static_cast<int>(a));
      if (ports.outgoing[0] < 0 || ports.outgoing[1] < 0) continue;
      const EdgePiece& e0 = net.pieces[static_cast<std::size_t>(ports.outgoing[0])];
      const EdgePiece& e1 = net.pieces[static_cast<std::size_t>(ports.outgoing[1])];
      if (e0.to.kind != EdgeEnd::Kind::kConstriction || e1.to.kind != EdgeEnd::Kind::kConstriction ||
          e0.to.index != e1.to.index || e0.to.face == e1.to.face)
        continue;
      Shape s;
      s.kind = InterferometerKind::kMachZehnder;
      s.channel = static_cast<int>(k);
      s.constrictions = {static_cast<int>(a), e0.to.index};
      s.arms = {ports.outgoing[0], ports.outgoing[1]};
      s.ring.vertices = e0.path;
      s.ring.vertices.insert(s.ring.vertices.end(), e1.path.rbegin(), e1.path.rend());
      s.area_m2 = geometry::area(s.ring);
      s.length_m = std::abs(e0.length_m - e1.length_m);
      s.time_s = std::abs(tof(s.arms[0]) - tof(s.arms[1]));
      const double t = tof(s.arms[0]) + tof(s.arms[1]);
      s.velocity_m_per_s = t > 0.0 ? (e0.length_m + e1.length_m) / t : 0.0;
      out.push_back(s);
    }
  return out;
}

std::vector<int> contacts_inside(const Design& d, const geometry::Polygon& ring) {
  std::vector<int> out;
  for (std::size_t c = 0; c < d.contacts.size(); ++c) {
    double x = 0.0, y = 0.0;
    const auto& v = d.contacts[c].outline.vertices;
    for (const geometry::Point& p : v) {
      x += p.x;
      y += p.y;
    }
    if (!v.empty() && geometry::contains(ring, {x / static_cast<double>(v.size()), y / static_cast<double>(v.size())}))
      out.push_back(static_cast<int>(c));
  }
  return out;
}

}  // namespace

namespace {

// The interferometer record of a shape in the design's device: channels, periods and visibility.
Interferometer describe(const Design& d, const Shape& s, double field_T) {
  Interferometer f;
  f.kind = s.kind;
  f.channel = s.channel;
  f.constrictions = s.constrictions;
  f.arms = s.arms;
  f.contacts_inside = contacts_inside(d, s.ring);
  const Channel& ch = d.channels[static_cast<std::size_t>(s.channel)];
  f.fractional = !(ch.conductance == MakeFraction(1, 1) && ch.charge_e == 1.0);
  f.charge_e = ch.charge_e;
  for (std::size_t k = 0; k < d.channels.size(); ++k) {
    if (static_cast<int>(k) == s.channel) continue;
    bool all_pass = true, all_reflect = true;
    for (int q : s.constrictions) {
      const double t = d.constrictions[static_cast<std::size_t>(q)].transmission[k];
      all_pass = all_pass && t >= 1.0;
      all_reflect = all_reflect && t <= 0.0;
    }
    if (all_pass) f.passing_channels.push_back(static_cast<int>(k));
    if (all_reflect) f.reflected_channels.push_back(static_cast<int>(k));
  }
  f.area_m2 = s.area_m2;
  f.length_m = s.length_m;
  f.time_s = s.time_s;
  f.velocity_m_per_s = s.velocity_m_per_s;
  for (int k : f.passing_channels) f.inner_filling += d.channels[static_cast<std::size_t>(k)].conductance.value();
  if (s.area_m2 > 0.0) {
    f.flux_period_T = kFluxQuantum_Wb / s.area_m2;
    f.quasiparticle_flux_period_T = f.flux_period_T / f.charge_e;
    if (f.inner_filling > 0.0) f.cd_field_period_T = f.flux_period_T / f.inner_filling;
  }
  const double temperature = d.conditions.temperature_K;
  f.thermal_argument = std::numbers::pi * kBoltzmann_J_per_K * temperature * s.time_s / kHbar_Js;
  f.visibility = ThermalDamping(s.time_s, temperature);
  if (f.kind == InterferometerKind::kMachZehnder && f.contacts_inside.empty())
    f.notes.push_back("no contact lies inside the two arms: a Mach–Zehnder layout needs its drain there");
  if (f.kind == InterferometerKind::kMachZehnder)
    f.notes.push_back("the two arms are not a loop of the edge network: `noise` and the map do not vary their phase "
                      "difference (the noise takes them in phase); periods and visibility above hold");
  if (f.fractional)
    f.notes.push_back(
        "fractional channel (charge " + std::to_string(f.charge_e).substr(0, 5) +
        " e): the periods, the gate periods and the regime carry over with e* in place of e; the braiding phase "
        "(statistical phase jumps when quasiparticles enter the interior) is not computed, and the thermal "
        "visibility above is the electron form X/sinh X (quasiparticle tunnelling changes its temperature "
        "dependence; not computed)");
  if (std::abs(field_T) == 0.0) f.notes.push_back("zero field: no flux or gate period");
  return f;
}

// One gate moved by -step and +step: the design's device rebuilt (warm-started from its density) and
// the interferometers found in each.
struct MovedShapes {
  std::vector<Shape> low, high;
  std::string problem;  // why a side is missing
};

std::vector<Shape> shapes_at(const Design& base, const DeviceOptions& options, int gate, double voltage,
                             std::string* problem) {
  Design d = base;
  d.gates[static_cast<std::size_t>(gate)].voltage_V = voltage;
  const Device dev(std::move(d), options);
  if (!dev.usable()) {
    *problem = "the device with " + base.gates[static_cast<std::size_t>(gate)].name + " at " +
               std::to_string(voltage).substr(0, 7) + " V is not usable";
    return {};
  }
  const PathResult paths = ComputePaths(dev.design(), dev.edges(), dev.transport(), dev.density());
  return shapes_of(dev.design(), dev.edges(), paths);
}

MovedShapes move_gate(const Design& d, const DeviceOptions& options, int g, double h, int* solves) {
  const double v0 = d.gates[static_cast<std::size_t>(g)].voltage_V;
  MovedShapes m;
  m.low = shapes_at(d, options, g, v0 - h, &m.problem);
  m.high = shapes_at(d, options, g, v0 + h, &m.problem);
  *solves += 2;
  return m;
}

const Shape* find_shape(const std::vector<Shape>& shapes, const Shape& target) {
  for (const Shape& s : shapes)
    if (same_interferometer(s, target)) return &s;
  return nullptr;
}

// What moved the visibility between the two sides: tau = L / v, so d ln tau = d ln L - d ln v.
std::string visibility_note(const GateEffect& e, const Shape& target, double h) {
  if (!(target.time_s > 0.0 && target.length_m > 0.0) || e.time_per_volt_s_per_V == 0.0) return {};
  const double dlnl = e.length_per_volt_m_per_V / target.length_m;
  const double dlnv = dlnl - e.time_per_volt_s_per_V / target.time_s;
  const std::string what = std::abs(dlnl) >= std::abs(dlnv) ? "mostly the path length" : "mostly the drift velocity";
  char buf[320];
  std::snprintf(buf, sizeof buf,
                "visibility %.3g -> %.3g over +-%.3g V: %s (d ln L/dV = %.3g /V, d ln v/dV = %.3g /V)",
                e.visibility_low, e.visibility_high, h, what.c_str(), dlnl, dlnv);
  return buf;
}

GateEffect gate_effect(const Design& d, const MovedShapes& m, int g, double h, const Shape& target, double charge_e) {
  GateEffect e;
  e.gate = g;
  const Shape* lo = find_shape(m.low, target);
  const Shape* hi = find_shape(m.high, target);
  if (!lo || !hi) {
    e.note = m.problem.empty() ? "the interferometer is not found at one of the two voltages" : m.problem;
    return e;
  }
  e.area_per_volt_m2_per_V = (hi->area_m2 - lo->area_m2) / (2.0 * h);
  e.length_per_volt_m_per_V = (hi->length_m - lo->length_m) / (2.0 * h);
  e.time_per_volt_s_per_V = (hi->time_s - lo->time_s) / (2.0 * h);
  const double temperature = d.conditions.temperature_K;
  e.visibility_low = ThermalDamping(lo->time_s, temperature);
  e.visibility_high = ThermalDamping(hi->time_s, temperature);
  const double b = std::abs(d.conditions.field_T);
  // An area change below one part in 1e9 of the area is rounding, not a response.
  e.resolved = std::abs(hi->area_m2 - lo->area_m2) > 1e-9 * target.area_m2 && b > 0.0;
  const double below = (target.area_m2 - lo->area_m2) / h, above = (hi->area_m2 - target.area_m2) / h;
  e.linear = std::abs(above - below) <= 0.3 * std::max(std::abs(above), std::abs(below));
  if (e.resolved)
    e.period_V = kFluxQuantum_Wb / (charge_e * b * std::abs(e.area_per_volt_m2_per_V));
  if (e.resolved && !e.linear) {
    char buf[240];
    std::snprintf(buf, sizeof buf,
                  "the area is not linear over +-%.3g V (one-sided dA/dV %.4g and %.4g um^2/V): the period is "
                  "uncertain; try a smaller step",
                  h, below * 1e12, above * 1e12);
    e.note = buf;
  } else if (!e.resolved)
    e.note = "the loop's area does not move within +-" + std::to_string(h).substr(0, 5) + " V: no period";
  const std::string v = visibility_note(e, target, h);
  if (!v.empty()) e.note += (e.note.empty() ? "" : "; ") + v;
  return e;
}

bool forms_constriction(const Design& d, int g) {
  const std::string& name = d.gates[static_cast<std::size_t>(g)].name;
  return std::any_of(d.constrictions.begin(), d.constrictions.end(),
                     [&](const Constriction& c) { return c.first == name || c.second == name; });
}

// The plunger of the map: the option's gate, or the gate with the shortest resolved period that forms
// no constriction (else any gate with a resolved period); -1 when none.
int choose_plunger(const Design& d, const Interferometer& f, const std::string& name) {
  if (!name.empty()) {
    for (std::size_t g = 0; g < d.gates.size(); ++g)
      if (d.gates[g].name == name) return static_cast<int>(g);
    throw std::invalid_argument("InterferometerOptions: plunger '" + name + "' is not a gate of the design");
  }
  int best = -1;
  for (int pass = 0; pass < 2 && best < 0; ++pass)
    for (const GateEffect& e : f.gates)
      if (e.resolved && (pass == 1 || !forms_constriction(d, e.gate)) &&
          (best < 0 || e.period_V < f.gates[static_cast<std::size_t>(best)].period_V))
        best = static_cast<int>(&e - f.gates.data());
  return best < 0 ? -1 : f.gates[static_cast<std::size_t>(best)].gate;
}

// The slopes dV/dB of constant-phase lines for gate effect e (Halperin et al. 2011): Aharonov–Bohm
// keeps B A(V) fixed, Coulomb-dominated keeps the interior's charge n A - nu_in B A / Phi_0 fixed.
void slopes(const Design& d, Interferometer& f, const GateEffect& e) {
  const double b = d.conditions.field_T;
  if (!e.resolved || b == 0.0) return;
  f.ab_slope_V_per_T = -f.area_m2 / (b * e.area_per_volt_m2_per_V);
  const double n = d.heterostructure.density_per_m2;
  f.cd_slope_V_per_T = f.inner_filling * f.area_m2 / (kFluxQuantum_Wb * n * e.area_per_volt_m2_per_V);
}

// |dI_amplifier / dV_source| of conductance matrix g (contact order) with the floating contacts and
// current sources eliminated (Schur complement G_AA - G_AF G_FF^-1 G_FA).
double terminal_conductance(const Design& d, const TransportResult& tr, const Matrix& g, int amp, int src) {
  std::vector<int> held, fixed;
  for (std::size_t i = 0; i < d.contacts.size(); ++i) {
    const Wiring& w = d.wiring[i];
    const bool floating = w.role == Role::kFloat || (w.role == Role::kSource && w.current_source);
    (floating && tr.voltage_V[i] ? held : fixed).push_back(static_cast<int>(i));
  }
  auto at = [&](int a, int b) { return g[static_cast<std::size_t>(a)][static_cast<std::size_t>(b)]; };
  double value = at(amp, src);
  if (!held.empty()) {
    const int nh = static_cast<int>(held.size());
    Eigen::MatrixXd gff(nh, nh);
    Eigen::VectorXd gaf(nh), gfs(nh);
    for (int i = 0; i < nh; ++i) {
      gaf(i) = at(amp, held[static_cast<std::size_t>(i)]);
      gfs(i) = at(held[static_cast<std::size_t>(i)], src);
      for (int j = 0; j < nh; ++j) gff(i, j) = at(held[static_cast<std::size_t>(i)], held[static_cast<std::size_t>(j)]);
    }
    value -= gaf.dot(gff.fullPivLu().solve(gfs));
  }
  return std::abs(value);
}

int contact_with(const Design& d, Role role) {
  for (std::size_t i = 0; i < d.wiring.size(); ++i)
    if (d.wiring[i].role == role && !(role == Role::kSource && d.wiring[i].current_source)) return static_cast<int>(i);
  return -1;
}

// G(Phi, V) and the excess noise at the amplifier: at each point the loop phase at the Fermi level is
// 2 pi (Phi + B dA/dV (V - V0) / Phi_0) (Aharonov–Bohm phase, origin arbitrary) and each loop piece's
// time of flight moves linearly with V by d tau / dV; the scattering is averaged over energy by
// SolveNoise (docs/models.md "Thermal average at a fixed loop phase").
std::optional<InterferenceMap> compute_map(const Device& device, const PathResult& paths,
                                           const InterferometerResult& r, const InterferometerOptions& opt,
                                           std::string* why) {
  const Design& d = device.design();
  int which = -1;
  for (std::size_t i = 0; i < r.interferometers.size() && which < 0; ++i)
    if (r.interferometers[i].kind == InterferometerKind::kFabryPerot && !r.interferometers[i].fractional)
      which = static_cast<int>(i);
  if (which < 0) {
    *why = "no Fabry–Pérot loop of an integer channel (the map uses the coherent scattering of integer channels)";
    return std::nullopt;
  }
  const Interferometer& f = r.interferometers[static_cast<std::size_t>(which)];
  const int plunger = choose_plunger(d, f, opt.plunger);
  const GateEffect* e = nullptr;
  for (const GateEffect& g : f.gates)
    if (g.gate == plunger && g.resolved) e = &g;
  InterferenceMap m;
  m.source = contact_with(d, Role::kSource);
  m.amplifier = contact_with(d, Role::kAmplifier);
  if (!e || m.source < 0 || m.amplifier < 0) {
    *why = !e ? "no gate with a resolved period to sweep" : "the wiring has no voltage source or no amplifier contact";
    return std::nullopt;
  }
  m.interferometer = which;
  m.plunger = plunger;
  const EdgeNetwork& net = device.edges();
  const TransportResult& tr = device.transport();
  std::vector<double> tof(net.pieces.size(), 0.0);
  for (const PieceMetrics& pm : paths.pieces) tof[static_cast<std::size_t>(pm.piece)] = pm.time_of_flight_s;
  const double v0 = d.gates[static_cast<std::size_t>(plunger)].voltage_V, b = d.conditions.field_T;
  for (int j = 0; j < opt.plunger_points; ++j)
    m.plunger_V.push_back(v0 + (static_cast<double>(j) / (opt.plunger_points - 1) - 0.5) * opt.plunger_span_periods * e->period_V);
  for (int i = 0; i < opt.flux_points; ++i)
    m.flux_quanta.push_back((static_cast<double>(i) / (opt.flux_points - 1) - 0.5) * opt.flux_span_periods);
  for (double v : m.plunger_V) {
    NoiseOptions no;
    no.piece_time_of_flight_s = tof;
    const double scale = f.time_s > 0.0 ? std::max(0.0, 1.0 + e->time_per_volt_s_per_V * (v - v0) / f.time_s) : 1.0;
    for (int p : f.arms) no.piece_time_of_flight_s[static_cast<std::size_t>(p)] *= scale;
    for (double phi : m.flux_quanta) {
      no.loop_phase_rad = 2.0 * std::numbers::pi * (phi + b * e->area_per_volt_m2_per_V * (v - v0) / kFluxQuantum_Wb);
      // Each point's energy grid is SolveNoise's own choice for its times, as `noise --phase` makes it.
      const NoiseResult n = SolveNoise(d, net, tr, no);
      m.energy_points = std::max(m.energy_points, n.energy_points);
      m.conductance_S.push_back(terminal_conductance(d, tr, n.coherent_conductance_S, m.amplifier, m.source));
      m.excess_A2_per_Hz.push_back(
          n.excess_A2_per_Hz[static_cast<std::size_t>(m.amplifier)][static_cast<std::size_t>(m.amplifier)]);
    }
  }
  return m;
}

// Gate effects, coupling and slopes of every interferometer.
void characterise(const Device& device, const DeviceOptions& device_options, const InterferometerOptions& opt,
                  InterferometerResult& r, const std::vector<Shape>& shapes) {
  const Design& d = device.design();
  DeviceOptions moved = device_options;
  moved.bare_estimate = device.density() == nullptr;
  moved.start = device.density();
  moved.check_declared_transmissions = false;  // the declared transmissions are kept; only the edges move
  const int gates = std::min(opt.max_gates, static_cast<int>(d.gates.size()));
  std::vector<MovedShapes> moves;
  if (!shapes.empty())
    for (int g = 0; g < gates; ++g) moves.push_back(move_gate(d, moved, g, opt.gate_step_V, &r.electrostatic_solves));
  const double w = opt.edge_strip_width_m > 0.0 ? opt.edge_strip_width_m : d.heterostructure.depth_m;
  for (std::size_t i = 0; i < shapes.size(); ++i) {
    Interferometer& f = r.interferometers[i];
    for (int g = 0; g < gates; ++g)
      f.gates.push_back(gate_effect(d, moves[static_cast<std::size_t>(g)], g, opt.gate_step_V, shapes[i], f.charge_e));
    if (static_cast<int>(d.gates.size()) > gates)
      f.notes.push_back("only the first " + std::to_string(gates) + " gates are differentiated (max_gates)");
    if (f.kind == InterferometerKind::kFabryPerot) {
      try {
        f.coupling = CavityCouplingOf(shapes[i].ring, w, d.heterostructure.depth_m, d.heterostructure.permittivity,
                                      opt.coupling_cells, opt.ab_ratio_limit, opt.cd_ratio_limit);
      } catch (const std::invalid_argument& ex) {
        f.notes.push_back(std::string("coupling energies not computed: ") + ex.what());
      }
    }
    const int plunger = f.gates.empty() ? -1 : choose_plunger(d, f, opt.plunger);
    for (const GateEffect& e : f.gates)
      if (e.gate == plunger) slopes(d, f, e);
  }
}

}  // namespace

std::vector<Interferometer> FindInterferometers(const Design& d, const EdgeNetwork& net, const PathResult& paths) {
  std::vector<Interferometer> out;
  for (const Shape& s : shapes_of(d, net, paths)) out.push_back(describe(d, s, d.conditions.field_T));
  return out;
}

InterferometerResult AnalyseInterferometers(const Device& device, const DeviceOptions& device_options,
                                            const InterferometerOptions& opt) {
  if (std::string why; !opt.IsValid(&why)) throw std::invalid_argument(why);
  const auto t0 = std::chrono::steady_clock::now();
  const Design& d = device.design();
  InterferometerResult r;
  const PathResult paths = ComputePaths(d, device.edges(), device.transport(), device.density());
  const std::vector<Shape> shapes = shapes_of(d, device.edges(), paths);
  r.interferometers = FindInterferometers(d, device.edges(), paths);
  r.gate_model =
      device.density()
          ? "central differences of the self-consistent Thomas-Fermi electrostatics, each solve warm-started from the "
            "design's density (docs/models.md \"Interferometer kinds and periods\")"
          : "central differences of the bare estimate (--fast: the bare lateral depletion moves the edges; the "
            "self-consistent edge moves differently; docs/models.md \"Interferometer kinds and periods\")";
  characterise(device, device_options, opt, r, shapes);
  if (opt.map && !r.interferometers.empty()) {
    r.map = compute_map(device, paths, r, opt, &r.map_not_computed);
  } else {
    r.map_not_computed = r.interferometers.empty() ? "no interferometer" : "not asked for";
  }
  for (const Interferometer& f : r.interferometers)
    if (f.visibility < 0.1)
      r.findings.push_back({Severity::kWarning, "interferometer-low-visibility",
                            "the " + ToString(f.kind) + " interferometer on channel " + std::to_string(f.channel + 1) +
                                " keeps a thermal visibility of only " + std::to_string(f.visibility).substr(0, 8) +
                                " (X = " + std::to_string(f.thermal_argument).substr(0, 6) +
                                "): shorten the loop or its slowest piece (docs/models.md \"Interferometer kinds and "
                                "periods\")",
                            d.mesa.where});
  r.seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
  return r;
}

}  // namespace hallway
