// Depletion, pinch-off and edge positions from the self-consistent electrostatics; see map.hpp.
#include "hallway/map.hpp"

#include <algorithm>
#include <chrono>
#include <cmath>
#include <functional>
#include <stdexcept>

#include "hallway/constants.hpp"
#include "hallway/gap.hpp"
#include "hallway/geometry/region.hpp"
#include "hallway/heterostructure.hpp"
#include "hallway/saddle.hpp"
#include "hallway/units.hpp"

namespace hallway {

using geometry::Point;
using geometry::Polygon;

bool MapOptions::IsValid(std::string* why) const {
  auto bad = [&](const char* w) {
    if (why) *why = w;
    return false;
  };
  if (!electrostatics.IsValid(why)) return false;
  if (!(local_grid_m >= 0.0)) return bad("local_grid_m must be >= 0");
  if (!(window_m >= 0.0)) return bad("window_m must be >= 0");
  if (!(pinch_resolution_V > 0.0 && pinch_resolution_V < 1.0)) return bad("pinch_resolution_V must lie in (0, 1)");
  if (!(empty_fraction > 0.0 && empty_fraction < 0.5)) return bad("empty_fraction must lie in (0, 0.5)");
  if (!(search_limit_V < 0.0 && search_limit_V >= -50.0)) return bad("search_limit_V must lie in [-50, 0)");
  return true;
}

namespace {

struct Clock {
  std::chrono::steady_clock::time_point t0 = std::chrono::steady_clock::now();
  double seconds() const { return std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count(); }
};

int gate_index(const Design& d, const std::string& name) {
  for (std::size_t i = 0; i < d.gates.size(); ++i)
    if (d.gates[i].name == name) return static_cast<int>(i);
  return -1;
}

// Bisection for the voltage at which `density(V)` (monotone: lower V, less density) reaches `empty`.
// Returns nullopt when the 2DEG is still there at the search limit.
std::optional<double> find_empty(const std::function<double(double)>& density, double empty, double start_V,
                                 double limit_V, double resolution_V) {
  double hi = std::min(start_V, -resolution_V);
  if (density(hi) <= empty) {
    // Already empty: look above, up to 0 V.
    double lo = hi;
    hi = 0.0;
    if (density(hi) <= empty) return 0.0;
    while (hi - lo > resolution_V) {
      const double mid = 0.5 * (hi + lo);
      (density(mid) <= empty ? lo : hi) = mid;
    }
    return 0.5 * (hi + lo);
  }
  double step = std::max(0.05, std::abs(hi) * 0.5), lo = hi - step;
  while (density(lo) > empty) {
    hi = lo;
    if (lo <= limit_V) return std::nullopt;
    step *= 1.6;
    lo = std::max(limit_V, lo - step);
  }
  while (hi - lo > resolution_V) {
    const double mid = 0.5 * (hi + lo);
    (density(mid) <= empty ? lo : hi) = mid;
  }
  return 0.5 * (hi + lo);
}

// One constriction on its window: the saddle density at the design voltages, the self-consistent
// pinch-off (both sides together, bisection on the density at the saddle found anew at each voltage)
// and the bare estimate.
std::optional<ConstrictionMap> MapConstriction(const Design& d, const Constriction& k, const MapOptions& opt,
                                               const std::vector<double>& design_volts,
                                               const std::function<void(const DensityMap&)>& note,
                                               std::vector<Finding>* findings) {
  const auto gap = FindGap(d, k, nullptr);
  if (!gap) return std::nullopt;
  const double depth = d.heterostructure.depth_m;
  const double ns = d.heterostructure.density_per_m2;
  const double vdep =
      DeriveWaferQuantities(d.heterostructure, d.conditions.field_T, d.conditions.temperature_K).depletion_voltage_V;
  ConstrictionMap cm;
  cm.name = k.name;
  cm.gap_m = gap->distance_m;
  const double half = opt.window_m > 0.0 ? opt.window_m : 0.5 * gap->distance_m + 12.0 * depth;
  ElectrostaticsOptions lo = opt.electrostatics;
  lo.grid_m = opt.local_grid_m > 0.0 ? opt.local_grid_m : ConstrictionWindowCell_m(depth, gap->distance_m, half);
  const ElectrostaticProblem local(d, lo, ElectrostaticWindow{gap->midpoint(), half, half});
  const SaddleStrip strip = SaddleStrip::For(d, k, *gap, 0.25 * local.cell_m());
  const int ga = gate_index(d, k.first), gb = gate_index(d, k.second);
  DensityMap last = local.Solve(design_volts);
  note(last);
  bool ok = last.stats.converged;
  const Saddle s0 = DensitySaddle(last, strip);
  cm.saddle = s0.point;
  cm.saddle_density_per_m2 = ns * std::max(0.0, 1.0 - s0.energy);
  auto density = [&](double v) {
    std::vector<double> volts = design_volts;
    if (ga >= 0) volts[static_cast<std::size_t>(ga)] = v;
    if (gb >= 0) volts[static_cast<std::size_t>(gb)] = v;
    last = local.Solve(volts, &last);
    note(last);
    ++cm.solves;
    ok = ok && last.stats.converged;
    return ns * std::max(0.0, 1.0 - DensitySaddle(last, strip).energy);
  };
  cm.pinch_off_V = find_empty(density, opt.empty_fraction * ns, vdep, opt.search_limit_V, opt.pinch_resolution_V);
  if (const auto bare = FindBarePinchOff(d, k, *gap)) cm.bare_pinch_off_V = bare->voltage_V;
  if (!ok) {
    findings->push_back({Severity::kError, "pinch-not-converged",
                         "constriction " + k.name +
                             ": a solve of the pinch-off search did not converge; its pinch-off voltage is not given",
                         k.where});
    cm.pinch_off_V.reset();
  }
  return cm;
}

// The depletion voltage of gate gi at its actual size (alone, the others at 0 V): the density at its
// deepest point (where its own potential per volt is largest, over the mesa) reaches the empty level,
// on a local window; none when the search does not get there or a solve does not converge.
std::optional<double> GateDepletion(const Design& d, std::size_t gi, const MapOptions& opt,
                                    const WaferQuantities& fig, double empty,
                                    const std::function<void(const DensityMap&)>& note) {
  const Gate& g = d.gates[gi];
  const double depth = d.heterostructure.depth_m;
  std::optional<double> result;
  // The deepest point: where the gate's own potential per volt is largest, over the mesa.
  const auto bb = geometry::bounding_box(g.outline);
  Point deepest{};
  double best = -1.0;
  for (int a = 0; a <= 60; ++a)
    for (int b = 0; b <= 60; ++b) {
      const Point q{bb.xmin + bb.width() * a / 60.0, bb.ymin + bb.height() * b / 60.0};
      if (!geometry::contains(g.outline, q) || !geometry::contains(d.mesa.outline, q) ||
          geometry::distance_to_boundary(d.mesa.outline, q) < 6.0 * depth + d.mesa.etch_depletion_m)
        continue;
      const double phi = GatePotentialPerVolt(g.outline, q, depth);
      if (phi > best) {
        best = phi;
        deepest = q;
      }
    }
  if (best > 0.0) {
    const double half = opt.window_m > 0.0 ? opt.window_m : 15.0 * depth;
    ElectrostaticsOptions lo = opt.electrostatics;
    lo.grid_m = opt.local_grid_m > 0.0 ? opt.local_grid_m : std::max(depth / 3.0, 2.0 * half / 400.0);
    const ElectrostaticProblem local(d, lo, ElectrostaticWindow{deepest, half, half});
    DensityMap last;
    bool have = false, ok = true;
    auto density = [&](double v) {
      std::vector<double> volts(d.gates.size(), 0.0);
      volts[gi] = v;
      last = local.Solve(volts, have ? &last : nullptr);
      have = true;
      note(last);
      ok = ok && last.stats.converged;
      return last.At(deepest);
    };
    result = find_empty(density, empty, fig.depletion_voltage_V, opt.search_limit_V, opt.pinch_resolution_V);
    if (!ok) result.reset();
  }
  return result;
}

// Lateral depletion and edge drift velocity of gate gi from the whole-mesa map: march out along the
// normals of the gate's long edges to where the density returns; the medians over the edges.
void LateralDepletion(const Design& d, std::size_t gi, const DensityMap& map, const WaferQuantities& fig,
                      double empty, GateMap* out) {
  const Gate& g = d.gates[gi];
  const double depth = d.heterostructure.depth_m;
  GateMap& gm = *out;
  // Lateral depletion from the whole-mesa map: march out along the normals of the gate's edges.
  std::vector<double> widths, speeds;
  const auto& v = g.outline.vertices;  // counter-clockwise after loading: outward normal is (dy, -dx)
  const double step = 0.25 * map.cell_m;
  for (std::size_t e = 0; e < v.size(); ++e) {
    const Point a = v[e], b = v[(e + 1) % v.size()];
    const double len = geometry::distance(a, b);
    if (len < 4.0 * depth) continue;
    const Point n{(b.y - a.y) / len, -(b.x - a.x) / len};
    for (double f : {0.25, 0.5, 0.75}) {
      const Point p{a.x + f * (b.x - a.x), a.y + f * (b.y - a.y)};
      if (!geometry::contains(d.mesa.outline, p) || geometry::distance_to_boundary(d.mesa.outline, p) < 6.0 * depth)
        continue;
      bool near_other = false;
      for (std::size_t o = 0; o < d.gates.size(); ++o)
        if (o != gi && geometry::distance_to_boundary(d.gates[o].outline, p) < 6.0 * depth) near_other = true;
      if (near_other) continue;
      const Point inside{p.x - 2.0 * depth * n.x, p.y - 2.0 * depth * n.y};
      if (map.At(inside) > empty) continue;  // not depleted at its edge
      for (double s = -2.0 * depth; s < 30.0 * depth; s += step) {
        const Point q{p.x + s * n.x, p.y + s * n.y};
        if (map.At(q) > empty) {
          widths.push_back(s);
          // Confining field on the electron side of the edge (one-sided difference over two cells).
          const Point q2{q.x + 2.0 * map.cell_m * n.x, q.y + 2.0 * map.cell_m * n.y};
          const double field = std::abs(map.EnergyAt(q) - map.EnergyAt(q2)) * fig.fermi_energy_J /
                               (2.0 * map.cell_m * constants::kElementaryCharge_C);
          speeds.push_back(field / std::abs(d.conditions.field_T));
          break;
        }
      }
    }
  }
  if (!widths.empty()) {
    std::sort(widths.begin(), widths.end());
    std::sort(speeds.begin(), speeds.end());
    gm.lateral_depletion_m = widths[widths.size() / 2];
    gm.drift_velocity_m_per_s = speeds[speeds.size() / 2];
  }
}

}  // namespace

double ConstrictionWindowCell_m(double depth_m, double gap_m, double half_m) {
  return std::max({2e-9, std::min(depth_m / 4.0, gap_m / 8.0), 2.0 * half_m / 400.0});
}

MapResult ComputeMap(const Design& d, const MapOptions& opt) {
  std::string why;
  if (!opt.IsValid(&why)) throw std::invalid_argument("MapOptions: " + why);
  const Clock clock;
  MapResult r;
  const WaferQuantities fig = DeriveWaferQuantities(d.heterostructure, d.conditions.field_T, d.conditions.temperature_K);
  const double ns = d.heterostructure.density_per_m2;
  const double empty = opt.empty_fraction * ns;
  std::vector<double> design_volts;
  for (const Gate& g : d.gates) design_volts.push_back(g.voltage_V);
  auto note = [&](const DensityMap& m) {
    ++r.solves;
    r.operator_applications += m.stats.operator_applications;
    if (!m.stats.converged) r.all_converged = false;
  };

  const int stages = opt.constrictions_only ? static_cast<int>(d.constrictions.size())
                                            : 1 + static_cast<int>(d.constrictions.size() + d.gates.size());
  int stage = 0;
  auto report = [&](const std::string& what) {
    if (opt.progress) opt.progress(stage, stages, what);
    ++stage;
  };
  // The whole mesa at the design voltages.
  if (!opt.constrictions_only) {
    report("whole mesa");
    const ElectrostaticProblem whole(d, opt.electrostatics);
    r.map = whole.Solve(design_volts);
    note(r.map);
    if (!r.map.stats.converged)
      r.findings.push_back(
          {Severity::kError, "map-not-converged",
           "the whole-mesa solve did not converge (residual " + std::to_string(r.map.stats.residual) + ")",
           d.mesa.where});
  }

  // Constrictions on local windows.
  for (const Constriction& k : d.constrictions) {
    report("pinch-off of " + k.name);
    if (auto cm = MapConstriction(d, k, opt, design_volts, note, &r.findings)) r.constrictions.push_back(*cm);
  }

  // Gates: depletion at actual size (alone, the others at 0 V) and the edge at the design voltage.
  for (std::size_t gi = 0; gi < (opt.constrictions_only ? 0 : d.gates.size()); ++gi) {
    const Gate& g = d.gates[gi];
    report("depletion of " + g.name);
    GateMap gm;
    gm.name = g.name;
    gm.wide_depletion_V = fig.depletion_voltage_V;
    gm.depletion_V = GateDepletion(d, gi, opt, fig, empty, note);
    LateralDepletion(d, gi, r.map, fig, empty, &gm);
    r.gates.push_back(gm);
  }
  if (!r.all_converged && r.findings.empty())
    r.findings.push_back({Severity::kError, "map-not-converged", "a solve did not converge", d.mesa.where});
  r.seconds = clock.seconds();
  return r;
}

}  // namespace hallway
