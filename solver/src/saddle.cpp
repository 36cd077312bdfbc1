// The saddle of a constriction by a minimax path search; see saddle.hpp.
#include "hallway/saddle.hpp"

#include <algorithm>
#include <cmath>
#include <queue>

#include "hallway/electrostatics.hpp"
#include "hallway/heterostructure.hpp"

namespace hallway {

using geometry::Point;

SaddleStrip SaddleStrip::For(const Design& d, const Constriction& k, const geometry::ClosestPair& gap, double step_m) {
  SaddleStrip s;
  s.gap = gap;
  const bool against_mesa = k.first == kMesaName || k.second == kMesaName;
  s.inset_b_m = against_mesa ? std::min(d.mesa.etch_depletion_m, 0.45 * gap.distance_m) : 0.0;
  // Far enough along the current to start and end in open 2DEG beyond square finger ends.
  s.reach_m = std::max(gap.distance_m, 4.0 * d.heterostructure.depth_m);
  s.step_m = step_m;
  return s;
}

Saddle FindSaddle(const std::function<double(Point)>& energy, const SaddleStrip& st) {
  Saddle out;
  const double gap = st.gap.distance_m;
  if (!(gap > 0.0) || !(st.step_m > 0.0) || !(st.reach_m > 0.0)) return out;
  const Point a = st.gap.on_a;
  const Point u{(st.gap.on_b.x - a.x) / gap, (st.gap.on_b.y - a.y) / gap};
  const Point n{-u.y, u.x};
  const double width = gap - st.inset_b_m;
  const int nu = std::clamp(static_cast<int>(std::ceil(width / st.step_m)), 4, 400);
  const int nn = std::clamp(static_cast<int>(std::ceil(2.0 * st.reach_m / st.step_m)) + 1, 8, 2000);
  const double du = width / nu, dn = 2.0 * st.reach_m / (nn - 1);
  auto point = [&](int i, int j) {
    const double tu = (i + 0.5) * du, tn = -st.reach_m + j * dn;
    return Point{a.x + tu * u.x + tn * n.x, a.y + tu * u.y + tn * n.y};
  };
  std::vector<double> e(static_cast<std::size_t>(nu) * nn);
  for (int j = 0; j < nn; ++j)
    for (int i = 0; i < nu; ++i) e[static_cast<std::size_t>(j) * nu + i] = energy(point(i, j));
  // Bottleneck Dijkstra from the first row to the last: key = the highest energy on the way.
  std::vector<double> key(e.size(), HUGE_VAL);
  std::vector<int> worst(e.size(), -1);  // the cell where the path's highest energy is
  using Item = std::pair<double, int>;
  std::priority_queue<Item, std::vector<Item>, std::greater<>> heap;
  for (int i = 0; i < nu; ++i) {
    key[static_cast<std::size_t>(i)] = e[static_cast<std::size_t>(i)];
    worst[static_cast<std::size_t>(i)] = i;
    heap.push({key[static_cast<std::size_t>(i)], i});
  }
  while (!heap.empty()) {
    const auto [k, c] = heap.top();
    heap.pop();
    if (k > key[static_cast<std::size_t>(c)]) continue;
    const int i = c % nu, j = c / nu;
    if (j == nn - 1) {
      const int w = worst[static_cast<std::size_t>(c)];
      out.point = point(w % nu, w / nu);
      out.energy = e[static_cast<std::size_t>(w)];
      out.found = true;
      return out;
    }
    const int di[4] = {1, -1, 0, 0}, dj[4] = {0, 0, 1, -1};
    for (int s = 0; s < 4; ++s) {
      const int ii = i + di[s], jj = j + dj[s];
      if (ii < 0 || ii >= nu || jj < 0 || jj >= nn) continue;
      const int cc = jj * nu + ii;
      const double kk = std::max(k, e[static_cast<std::size_t>(cc)]);
      if (kk < key[static_cast<std::size_t>(cc)]) {
        key[static_cast<std::size_t>(cc)] = kk;
        worst[static_cast<std::size_t>(cc)] =
            e[static_cast<std::size_t>(cc)] > k ? cc : worst[static_cast<std::size_t>(c)];
        heap.push({kk, cc});
      }
    }
  }
  return out;
}

namespace {

// The stationary point of the quadratic through the 3 x 3 cell values around the cell nearest to
// `s` (central differences: exact for a quadratic), where it lies within that cell's neighbours and
// is a saddle or a maximum along some direction. Sampling the bilinear interpolation puts the saddle
// value off by about U'' h^2 / 8 when the saddle falls between cells; the fit removes that, so the
// result does not depend on where the grid falls (to third order in the cell size).
Saddle Refine(const DensityMap& m, Saddle s) {
  const double fx = (s.point.x - m.x0_m) / m.cell_m, fy = (s.point.y - m.y0_m) / m.cell_m;
  const int i = static_cast<int>(std::lround(fx)), j = static_cast<int>(std::lround(fy));
  if (i < 1 || j < 1 || i + 1 >= m.nx || j + 1 >= m.ny) return s;
  auto e = [&](int a, int b) { return m.energy_over_fermi[static_cast<std::size_t>(j + b) * m.nx + (i + a)]; };
  const double gx = 0.5 * (e(1, 0) - e(-1, 0)), gy = 0.5 * (e(0, 1) - e(0, -1));
  const double hxx = e(1, 0) - 2 * e(0, 0) + e(-1, 0), hyy = e(0, 1) - 2 * e(0, 0) + e(0, -1);
  const double hxy = 0.25 * (e(1, 1) - e(1, -1) - e(-1, 1) + e(-1, -1));
  const double det = hxx * hyy - hxy * hxy;
  if (!(det < 0.0)) return s;  // not a saddle of the fitted quadratic
  const double x = -(hyy * gx - hxy * gy) / det, y = -(hxx * gy - hxy * gx) / det;
  if (!(std::abs(x) <= 1.0 && std::abs(y) <= 1.0)) return s;
  s.energy = e(0, 0) + 0.5 * (gx * x + gy * y);
  s.point = {m.x0_m + (i + x) * m.cell_m, m.y0_m + (j + y) * m.cell_m};
  return s;
}

}  // namespace

Saddle DensitySaddle(const DensityMap& map, const SaddleStrip& strip) {
  const Saddle s = FindSaddle([&](Point p) { return map.EnergyAt(p); }, strip);
  return s.found ? Refine(map, s) : s;
}

Saddle BareSaddle(const Design& d, const SaddleStrip& strip, const std::vector<double>& volts) {
  const double depth = d.heterostructure.depth_m;
  return FindSaddle(
      [&](Point p) {
        double phi = 0.0;
        for (std::size_t g = 0; g < d.gates.size(); ++g)
          if (volts[g] != 0.0) phi += volts[g] * GatePotentialPerVolt(d.gates[g].outline, p, depth);
        return -phi;
      },
      strip);
}

std::optional<BarePinchOff> FindBarePinchOff(const Design& d, const Constriction& k, const geometry::ClosestPair& gap) {
  const double depth = d.heterostructure.depth_m;
  const double vdep =
      DeriveWaferQuantities(d.heterostructure, d.conditions.field_T, d.conditions.temperature_K).depletion_voltage_V;
  std::vector<int> sides;
  for (std::size_t g = 0; g < d.gates.size(); ++g)
    if (d.gates[g].name == k.first || d.gates[g].name == k.second) sides.push_back(static_cast<int>(g));
  if (sides.empty()) return std::nullopt;
  const SaddleStrip strip = SaddleStrip::For(d, k, gap, std::min(gap.distance_m, depth) / 8.0);
  std::vector<double> volts;
  for (const Gate& g : d.gates) volts.push_back(g.voltage_V);
  auto split = [&](Point p, double* sides_per_volt, double* others_V) {
    *sides_per_volt = 0.0;
    *others_V = 0.0;
    for (std::size_t g = 0; g < d.gates.size(); ++g) {
      const bool side = std::find(sides.begin(), sides.end(), static_cast<int>(g)) != sides.end();
      const double unit = GatePotentialPerVolt(d.gates[g].outline, p, depth);
      if (side)
        *sides_per_volt += unit;
      else
        *others_V += d.gates[g].voltage_V * unit;
    }
  };
  // Start from the sides at the wide-gate depletion voltage; then V <- (V_dep - others) / sides at
  // the saddle of the last V, until it moves less than 0.1 mV.
  double v = vdep;
  BarePinchOff out;
  for (int it = 0; it < 12; ++it) {
    for (int g : sides) volts[static_cast<std::size_t>(g)] = v;
    const Saddle s = BareSaddle(d, strip, volts);
    if (!s.found) return std::nullopt;
    double per = 0.0, others = 0.0;
    split(s.point, &per, &others);
    if (!(per > 1e-6)) return std::nullopt;
    const double next = (vdep - others) / per;
    out = {next, s.point, per};
    if (std::abs(next - v) < 1e-4) break;
    v = next;
  }
  if (!(out.voltage_V < 0.0) || out.voltage_V < -1e3) return std::nullopt;
  return out;
}

}  // namespace hallway
