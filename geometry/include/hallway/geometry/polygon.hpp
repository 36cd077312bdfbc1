// hallway/geometry/polygon.hpp: planar points and simple polygons in the plane of the 2DEG.
//
// Coordinates are in metres (SI inside; the design loader converts from the file's `units`).
// A Polygon is a closed ring of vertices without the closing repeat. After normalise() it is
// counter-clockwise seen from above (+z towards the reader), so signed_area() > 0.
//
// Everything in this header is plain floating point. The predicates that must be exact
// (simplicity, Boolean areas, touching) live in exact.hpp and are computed with CGAL.
#pragma once

#include <optional>
#include <string>
#include <vector>

namespace hallway::geometry {

struct Point {
  double x = 0.0;  // metres
  double y = 0.0;  // metres
};

struct BoundingBox {
  double xmin = 0.0, ymin = 0.0, xmax = 0.0, ymax = 0.0;  // metres
  double width() const { return xmax - xmin; }
  double height() const { return ymax - ymin; }
};

struct Polygon {
  std::vector<Point> vertices;
};

// Shoelace formula: A = 1/2 sum (x_k y_{k+1} - x_{k+1} y_k); positive for counter-clockwise rings.
double signed_area(const Polygon& p);
double area(const Polygon& p);
// Total boundary length, closing edge included.
double perimeter(const Polygon& p);
BoundingBox bounding_box(const Polygon& p);
// Reverses the ring if needed so that the polygon is counter-clockwise. Returns true if reversed.
bool normalise(Polygon& p);

// Point in polygon by the crossing-number rule. Points on the boundary may go either way;
// use distance_to_boundary() when that matters.
bool contains(const Polygon& p, Point q);

double distance(Point a, Point b);
// Closest point to q on the segment [a, b].
Point closest_on_segment(Point q, Point a, Point b);
double distance_to_boundary(const Polygon& p, Point q);

// The shortest connection between the boundaries of two polygons.
struct ClosestPair {
  Point on_a;
  Point on_b;
  double distance_m = 0.0;  // 0 when the boundaries cross or touch
  Point midpoint() const { return {(on_a.x + on_b.x) / 2, (on_a.y + on_b.y) / 2}; }
};
// Brute force over all edge pairs, O(n m). Exact in the sense that it returns the minimum of the
// segment-segment distances evaluated in floating point; segments that cross give 0. Where many pairs
// are equally close (parallel facing edges, such as two square finger ends), the pair in the middle of
// that set is returned, so the result does not depend on the vertex order or the starting vertex.
ClosestPair closest_boundary_points(const Polygon& a, const Polygon& b);
// The same, restricted to the edges of `b` whose indices are listed (edge k joins vertex k and k+1).
ClosestPair closest_boundary_points(const Polygon& a, const Polygon& b, const std::vector<std::size_t>& b_edges);

// What is wrong with a ring, cheapest checks first. Self-intersection is decided with exact
// predicates (CGAL), see exact.hpp.
// A ring of zero area whose vertices do not all lie on one line (a bow-tie) is kSelfIntersecting.
enum class PolygonDefect { kNone, kTooFewVertices, kNotFinite, kRepeatedVertex, kZeroArea, kSelfIntersecting };
std::string ToString(PolygonDefect d);
PolygonDefect find_defect(const Polygon& p);

// Two edges of a ring that meet where they should not (edge k joins vertex k and k+1, the last edge
// closes the ring): non-neighbouring edges that share any point, or neighbouring edges that overlap
// beyond their shared vertex. `first` < `second`; `at` is a point they share.
struct EdgeCrossing {
  std::size_t first = 0, second = 0;
  Point at;
};
// The first such pair in edge order, or nothing for a simple ring. Brute force over the edge pairs,
// O(n^2), with floating-point orientation tests: meant for naming the edges in a message after
// find_defect() has found the ring not simple; rings above `max_vertices` are not searched.
std::optional<EdgeCrossing> find_crossing_edges(const Polygon& p, std::size_t max_vertices = 5000);

}  // namespace hallway::geometry
