// Plain floating-point polygon measures; see polygon.hpp.
#include "hallway/geometry/polygon.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <optional>
#include <tuple>

#include "hallway/geometry/exact.hpp"

namespace hallway::geometry {

double signed_area(const Polygon& p) {
  const auto& v = p.vertices;
  const std::size_t n = v.size();
  if (n < 3) return 0.0;
  // Shift to the first vertex to limit cancellation for layouts far from the origin.
  const Point o = v[0];
  double twice = 0.0;
  for (std::size_t k = 0; k < n; ++k) {
    const Point a{v[k].x - o.x, v[k].y - o.y};
    const Point b{v[(k + 1) % n].x - o.x, v[(k + 1) % n].y - o.y};
    twice += a.x * b.y - b.x * a.y;
  }
  return twice / 2.0;
}

double area(const Polygon& p) {
  return std::abs(signed_area(p));
}

double perimeter(const Polygon& p) {
  const auto& v = p.vertices;
  double s = 0.0;
  for (std::size_t k = 0; k < v.size(); ++k) s += distance(v[k], v[(k + 1) % v.size()]);
  return s;
}

BoundingBox bounding_box(const Polygon& p) {
  BoundingBox b{std::numeric_limits<double>::infinity(), std::numeric_limits<double>::infinity(),
                -std::numeric_limits<double>::infinity(), -std::numeric_limits<double>::infinity()};
  for (const Point& q : p.vertices) {
    b.xmin = std::min(b.xmin, q.x);
    b.ymin = std::min(b.ymin, q.y);
    b.xmax = std::max(b.xmax, q.x);
    b.ymax = std::max(b.ymax, q.y);
  }
  return b;
}

bool normalise(Polygon& p) {
  if (signed_area(p) < 0.0) {
    std::reverse(p.vertices.begin(), p.vertices.end());
    return true;
  }
  return false;
}

bool contains(const Polygon& p, Point q) {
  const auto& v = p.vertices;
  bool inside = false;
  for (std::size_t i = 0, j = v.size() - 1; i < v.size(); j = i++) {
    const bool crosses = (v[i].y > q.y) != (v[j].y > q.y);
    if (crosses) {
      const double x_at = v[j].x + (q.y - v[j].y) * (v[i].x - v[j].x) / (v[i].y - v[j].y);
      if (q.x < x_at) inside = !inside;
    }
  }
  return inside;
}

double distance(Point a, Point b) {
  return std::hypot(a.x - b.x, a.y - b.y);
}

Point closest_on_segment(Point q, Point a, Point b) {
  const double dx = b.x - a.x, dy = b.y - a.y;
  const double len2 = dx * dx + dy * dy;
  if (len2 == 0.0) return a;
  const double t = std::clamp(((q.x - a.x) * dx + (q.y - a.y) * dy) / len2, 0.0, 1.0);
  return {a.x + t * dx, a.y + t * dy};
}

double distance_to_boundary(const Polygon& p, Point q) {
  double best = std::numeric_limits<double>::infinity();
  const auto& v = p.vertices;
  for (std::size_t k = 0; k < v.size(); ++k)
    best = std::min(best, distance(q, closest_on_segment(q, v[k], v[(k + 1) % v.size()])));
  return best;
}

namespace {

double cross(Point o, Point a, Point b) {
  return (a.x - o.x) * (b.y - o.y) - (a.y - o.y) * (b.x - o.x);
}

// Proper or improper crossing of two closed segments (floating-point orientation tests; the
// distance is then reported as 0, which is all callers need).
bool segments_cross(Point a, Point b, Point c, Point d) {
  const double d1 = cross(c, d, a), d2 = cross(c, d, b), d3 = cross(a, b, c), d4 = cross(a, b, d);
  return ((d1 > 0 && d2 < 0) || (d1 < 0 && d2 > 0)) && ((d3 > 0 && d4 < 0) || (d3 < 0 && d4 > 0));
}

void consider_segments(Point a0, Point a1, Point b0, Point b1, ClosestPair& best) {
  if (segments_cross(a0, a1, b0, b1)) {
    // Intersection point of the two supporting lines.
    const double t = cross(b0, b1, a0) / (cross(b0, b1, a0) - cross(b0, b1, a1));
    const Point x{a0.x + t * (a1.x - a0.x), a0.y + t * (a1.y - a0.y)};
    best = {x, x, 0.0};
    return;
  }
  // Otherwise the minimum is attained at an endpoint of one of the segments.
  const Point cands[4][2] = {{a0, closest_on_segment(a0, b0, b1)},
                             {a1, closest_on_segment(a1, b0, b1)},
                             {closest_on_segment(b0, a0, a1), b0},
                             {closest_on_segment(b1, a0, a1), b1}};
  for (const auto& c : cands) {
    const double dd = distance(c[0], c[1]);
    if (dd < best.distance_m) best = {c[0], c[1], dd};
  }
}

}  // namespace

namespace {

// The closest pairs of two segments at distance `dist` (within `tol`): none, one, or, for parallel
// facing segments, the two ends of the stretch along which they face each other.
void minimal_pairs(Point a0, Point a1, Point b0, Point b1, double dist, double tol, std::vector<ClosestPair>& out) {
  const Point cands[4][2] = {{a0, closest_on_segment(a0, b0, b1)},
                             {a1, closest_on_segment(a1, b0, b1)},
                             {closest_on_segment(b0, a0, a1), b0},
                             {closest_on_segment(b1, a0, a1), b1}};
  std::vector<ClosestPair> here;
  for (const auto& c : cands)
    if (distance(c[0], c[1]) <= dist + tol) here.push_back({c[0], c[1], dist});
  if (here.empty()) return;
  // The extreme two along the stretch (all lie on one line when there are several).
  std::size_t i0 = 0, i1 = 0;
  double far = -1.0;
  for (std::size_t i = 0; i < here.size(); ++i)
    for (std::size_t j = i + 1; j < here.size(); ++j) {
      const double dd = distance(here[i].midpoint(), here[j].midpoint());
      if (dd > far) {
        far = dd;
        i0 = i;
        i1 = j;
      }
    }
  out.push_back(here[i0]);
  out.push_back(here[i1]);  // equal to the first when the closest pair is unique
}

}  // namespace

ClosestPair closest_boundary_points(const Polygon& a, const Polygon& b, const std::vector<std::size_t>& b_edges) {
  ClosestPair best{{}, {}, std::numeric_limits<double>::infinity()};
  const auto& va = a.vertices;
  const auto& vb = b.vertices;
  for (std::size_t i = 0; i < va.size() && best.distance_m > 0.0; ++i)
    for (std::size_t j : b_edges)
      consider_segments(va[i], va[(i + 1) % va.size()], vb[j], vb[(j + 1) % vb.size()], best);
  if (!(best.distance_m > 0.0) || !std::isfinite(best.distance_m)) return best;
  // Facing parallel edges (square finger ends) are equally close all along the stretch where they
  // face each other; the first pair found would be a corner, which depends on the vertex order. Take
  // the middle of the set of closest pairs instead: each edge pair contributes a stretch (two ends,
  // equal for a unique pair); the pair nearest to their length-weighted centre is returned.
  const double tol = 1e-7 * best.distance_m;
  std::vector<ClosestPair> ends;
  for (std::size_t i = 0; i < va.size(); ++i)
    for (std::size_t j : b_edges)
      minimal_pairs(va[i], va[(i + 1) % va.size()], vb[j], vb[(j + 1) % vb.size()], best.distance_m, tol, ends);
  double wsum = 0.0, cx = 0.0, cy = 0.0;
  for (std::size_t k = 0; k + 1 < ends.size(); k += 2) {
    const Point m0 = ends[k].midpoint(), m1 = ends[k + 1].midpoint();
    const double w = distance(m0, m1) + 1e-12 * best.distance_m;
    cx += w * 0.5 * (m0.x + m1.x);
    cy += w * 0.5 * (m0.y + m1.y);
    wsum += w;
  }
  const Point centre{cx / wsum, cy / wsum};
  double nearest = std::numeric_limits<double>::infinity();
  for (std::size_t k = 0; k + 1 < ends.size(); k += 2) {
    const Point m0 = ends[k].midpoint(), m1 = ends[k + 1].midpoint();
    const Point on = closest_on_segment(centre, m0, m1);
    const double dd = distance(on, centre);
    if (dd >= nearest) continue;
    nearest = dd;
    const double len = distance(m0, m1);
    const double t = len > 0.0 ? distance(on, m0) / len : 0.0;
    best.on_a = {ends[k].on_a.x + t * (ends[k + 1].on_a.x - ends[k].on_a.x),
                 ends[k].on_a.y + t * (ends[k + 1].on_a.y - ends[k].on_a.y)};
    best.on_b = {ends[k].on_b.x + t * (ends[k + 1].on_b.x - ends[k].on_b.x),
                 ends[k].on_b.y + t * (ends[k + 1].on_b.y - ends[k].on_b.y)};
  }
  return best;
}

ClosestPair closest_boundary_points(const Polygon& a, const Polygon& b) {
  std::vector<std::size_t> all(b.vertices.size());
  for (std::size_t k = 0; k < all.size(); ++k) all[k] = k;
  return closest_boundary_points(a, b, all);
}

std::string ToString(PolygonDefect d) {
  switch (d) {
    case PolygonDefect::kNone: return "none";
    case PolygonDefect::kTooFewVertices: return "fewer than 3 vertices";
    case PolygonDefect::kNotFinite: return "a coordinate is not a finite number";
    case PolygonDefect::kRepeatedVertex: return "two consecutive vertices coincide";
    case PolygonDefect::kZeroArea: return "zero area (all vertices on one line)";
    case PolygonDefect::kSelfIntersecting: return "the outline crosses or touches itself";
  }
  return "unknown";
}

PolygonDefect find_defect(const Polygon& p) {
  const auto& v = p.vertices;
  if (v.size() < 3) return PolygonDefect::kTooFewVertices;
  for (const Point& q : v)
    if (!std::isfinite(q.x) || !std::isfinite(q.y)) return PolygonDefect::kNotFinite;
  for (std::size_t k = 0; k < v.size(); ++k) {
    const Point& a = v[k];
    const Point& b = v[(k + 1) % v.size()];
    if (a.x == b.x && a.y == b.y) return PolygonDefect::kRepeatedVertex;
  }
  if (signed_area(p) == 0.0) {
    // A simple ring has positive area, so a ring of zero area is either flat (every vertex on the line
    // through the first two distinct ones) or crosses itself (a bow-tie, whose two lobes cancel).
    for (const Point& q : v)
      if (cross(v[0], v[1], q) != 0.0) return PolygonDefect::kSelfIntersecting;
    return PolygonDefect::kZeroArea;
  }
  if (!is_simple(p)) return PolygonDefect::kSelfIntersecting;
  return PolygonDefect::kNone;
}

namespace {

bool on_segment(Point a, Point b, Point q) {
  return cross(a, b, q) == 0.0 && std::min(a.x, b.x) <= q.x && q.x <= std::max(a.x, b.x) && std::min(a.y, b.y) <= q.y &&
         q.y <= std::max(a.y, b.y);
}

// A point shared by the closed segments [a, b] and [c, d], if any (proper crossings, touching ends,
// collinear overlaps).
std::optional<Point> segments_meet(Point a, Point b, Point c, Point d) {
  if (segments_cross(a, b, c, d)) {
    const double t = cross(c, d, a) / (cross(c, d, a) - cross(c, d, b));
    return Point{a.x + t * (b.x - a.x), a.y + t * (b.y - a.y)};
  }
  for (const auto& [s0, s1, q] : {std::tuple{c, d, a}, std::tuple{c, d, b}, std::tuple{a, b, c}, std::tuple{a, b, d}})
    if (on_segment(s0, s1, q)) return q;
  return std::nullopt;
}

}  // namespace

std::optional<EdgeCrossing> find_crossing_edges(const Polygon& p, std::size_t max_vertices) {
  const auto& v = p.vertices;
  const std::size_t n = v.size();
  if (n < 3 || n > max_vertices) return std::nullopt;
  for (std::size_t i = 0; i < n; ++i) {
    const Point a = v[i], b = v[(i + 1) % n];
    for (std::size_t j = i + 1; j < n; ++j) {
      const Point c = v[j], d = v[(j + 1) % n];
      const bool next = j == i + 1, wraps = i == 0 && j == n - 1;
      if (next || wraps) {
        // Neighbours share one vertex; they meet wrongly only when they fold back over each other.
        const Point shared = next ? b : a, far_i = next ? a : b, far_j = next ? d : c;
        if (cross(far_i, shared, far_j) == 0.0 &&
            (far_j.x - shared.x) * (far_i.x - shared.x) + (far_j.y - shared.y) * (far_i.y - shared.y) > 0.0)
          return EdgeCrossing{i, j, on_segment(shared, far_i, far_j) ? far_j : far_i};
        continue;
      }
      if (const auto at = segments_meet(a, b, c, d)) return EdgeCrossing{i, j, *at};
    }
  }
  return std::nullopt;
}

}  // namespace hallway::geometry
