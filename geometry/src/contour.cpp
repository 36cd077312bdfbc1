// Marching squares and ring simplification; see contour.hpp.
#include "hallway/geometry/contour.hpp"

#include <cmath>
#include <unordered_map>

namespace hallway::geometry {

std::vector<Polygon> LevelCurves(const GridField& f, double level) {
  const int nx = f.nx, ny = f.ny;
  auto value = [&](int i, int j) {
    if (i <= 0 || j <= 0 || i >= nx - 1 || j >= ny - 1) return level - 1.0;  // border: below
    return f.values[static_cast<std::size_t>(j) * nx + i] - level;
  };
  auto pos = [&](int i, int j) { return Point{f.x0 + i * f.cell, f.y0 + j * f.cell}; };
  // A crossing on the grid edge from (i, j) along x (dir 0) or y (dir 1), keyed for linking.
  auto key = [&](int i, int j, int dir) { return (static_cast<long long>(j) * nx + i) * 2 + dir; };
  auto crossing = [&](int i, int j, int dir) {
    const int i2 = i + (dir == 0), j2 = j + (dir == 1);
    const double a = value(i, j), b = value(i2, j2);
    const double t = a / (a - b);
    const Point p = pos(i, j), q = pos(i2, j2);
    return Point{p.x + t * (q.x - p.x), p.y + t * (q.y - p.y)};
  };
  // next[k] = the crossing that follows crossing k along its curve (high values on the left).
  std::unordered_map<long long, long long> next;
  std::unordered_map<long long, Point> where;
  for (int j = 0; j + 1 < ny; ++j)
    for (int i = 0; i + 1 < nx; ++i) {
      // Corners counter-clockwise: 0 (i,j), 1 (i+1,j), 2 (i+1,j+1), 3 (i,j+1); edges between them:
      // e0 = bottom (i,j,x), e1 = right (i+1,j,y), e2 = top (i,j+1,x), e3 = left (i,j,y).
      const double v[4] = {value(i, j), value(i + 1, j), value(i + 1, j + 1), value(i, j + 1)};
      const long long e[4] = {key(i, j, 0), key(i + 1, j, 1), key(i, j + 1, 0), key(i, j, 1)};
      int mask = 0;
      for (int c = 0; c < 4; ++c)
        if (v[c] > 0.0) mask |= 1 << c;
      if (mask == 0 || mask == 15) continue;
      auto link = [&](int from, int to) {
        next[e[from]] = e[to];
        for (int x : {from, to})
          if (!where.count(e[x]))
            where[e[x]] = crossing(x == 1 ? i + 1 : i, x == 2 ? j + 1 : j, (x == 0 || x == 2) ? 0 : 1);
      };
      // Walk the square's boundary counter-clockwise; a segment enters where the corners go from
      // high to low... the curve runs from the edge where low-to-high (counter-clockwise) to the
      // edge where high-to-low, which keeps high values on its left.
      std::vector<int> up, down;  // edges c (corner c -> c+1) where the value rises / falls
      for (int c = 0; c < 4; ++c) {
        const bool a = v[c] > 0.0, b = v[(c + 1) % 4] > 0.0;
        if (!a && b) up.push_back(c);
        if (a && !b) down.push_back(c);
      }
      if (up.size() == 1) {
        link(down[0], up[0]);
      } else {
        // Saddle: two high corners opposite. If the centre is high, the high corners connect.
        const double centre = 0.25 * (v[0] + v[1] + v[2] + v[3]);
        for (int a = 0; a < 2; ++a) {
          const int d = down[static_cast<std::size_t>(a)];
          // candidate partners: the rising edges; pick by the centre rule
          int best = -1;
          for (int b = 0; b < 2; ++b) {
            const int u = up[static_cast<std::size_t>(b)];
            const bool adjacent = (d + 1) % 4 == u;  // turns around the low corner between them
            if ((centre > 0.0) == adjacent) best = u;
          }
          link(d, best);
        }
      }
    }
  std::vector<Polygon> out;
  std::unordered_map<long long, bool> used;
  for (const auto& [start, unused] : next) {
    if (used[start]) continue;
    Polygon ring;
    long long k = start;
    for (std::size_t guard = 0; guard <= next.size() && !used[k]; ++guard) {
      used[k] = true;
      ring.vertices.push_back(where.at(k));
      const auto it = next.find(k);
      if (it == next.end()) break;
      k = it->second;
    }
    if (ring.vertices.size() >= 3) out.push_back(std::move(ring));
  }
  return out;
}

namespace {
void dp(const std::vector<Point>& v, std::size_t a, std::size_t b, double tol, std::vector<char>& keep) {
  if (b <= a + 1) return;
  double worst = -1.0;
  std::size_t at = a;
  for (std::size_t k = a + 1; k < b; ++k) {
    const double dist = distance(v[k], closest_on_segment(v[k], v[a], v[b]));
    if (dist > worst) {
      worst = dist;
      at = k;
    }
  }
  if (worst > tol) {
    keep[at] = 1;
    dp(v, a, at, tol, keep);
    dp(v, at, b, tol, keep);
  }
}
}  // namespace

Polygon Simplify(const Polygon& ring, double tol) {
  const auto& v = ring.vertices;
  if (v.size() < 4) return ring;
  // Split at the vertex farthest from vertex 0 and simplify both halves.
  std::size_t far = 0;
  for (std::size_t k = 1; k < v.size(); ++k)
    if (distance(v[k], v[0]) > distance(v[far], v[0])) far = k;
  std::vector<Point> closed(v.begin(), v.end());
  closed.push_back(v[0]);
  std::vector<char> keep(closed.size(), 0);
  keep[0] = keep[far] = keep[closed.size() - 1] = 1;
  dp(closed, 0, far, tol, keep);
  dp(closed, far, closed.size() - 1, tol, keep);
  Polygon out;
  for (std::size_t k = 0; k + 1 < closed.size(); ++k)
    if (keep[k]) out.vertices.push_back(closed[k]);
  return out.vertices.size() >= 3 ? out : ring;
}

}  // namespace hallway::geometry
