// The project's CGAL translation unit: exact predicates and Boolean measures (see exact.hpp).
// Kept alone so that CGAL's heavy headers and -frounding-math touch one file only.
#include <CGAL/Boolean_set_operations_2.h>
#include <CGAL/Exact_predicates_exact_constructions_kernel.h>
#include <CGAL/Polygon_2.h>
#include <CGAL/Polygon_with_holes_2.h>

#include <iterator>
#include <vector>

#include "hallway/geometry/exact.hpp"

namespace hallway::geometry {
namespace {

using Kernel = CGAL::Exact_predicates_exact_constructions_kernel;
using P2 = Kernel::Point_2;
using Segment = Kernel::Segment_2;
using Poly = CGAL::Polygon_2<Kernel>;
using PolyWithHoles = CGAL::Polygon_with_holes_2<Kernel>;

Poly to_cgal(const Polygon& p) {
  Poly out;
  for (const Point& q : p.vertices) out.push_back(P2(q.x, q.y));
  if (out.size() >= 3 && out.is_simple() && out.orientation() == CGAL::CLOCKWISE) out.reverse_orientation();
  return out;
}

Kernel::FT area_of(const std::vector<PolyWithHoles>& parts) {
  Kernel::FT total = 0;
  for (const auto& pwh : parts) {
    total += pwh.outer_boundary().area();
    for (auto h = pwh.holes_begin(); h != pwh.holes_end(); ++h) total += h->area();  // holes are clockwise
  }
  return total;
}

Segment edge(const Polygon& p, std::size_t k) {
  const Point& a = p.vertices[k];
  const Point& b = p.vertices[(k + 1) % p.vertices.size()];
  return Segment(P2(a.x, a.y), P2(b.x, b.y));
}

}  // namespace

bool is_simple(const Polygon& p) {
  if (p.vertices.size() < 3) return false;
  return to_cgal(p).is_simple();
}

double intersection_area(const Polygon& a, const Polygon& b) {
  std::vector<PolyWithHoles> parts;
  CGAL::intersection(to_cgal(a), to_cgal(b), std::back_inserter(parts));
  return CGAL::to_double(area_of(parts));
}

double difference_area(const Polygon& a, const Polygon& b) {
  std::vector<PolyWithHoles> parts;
  CGAL::difference(to_cgal(a), to_cgal(b), std::back_inserter(parts));
  return CGAL::to_double(area_of(parts));
}

bool boundaries_meet(const Polygon& a, const Polygon& b) {
  for (std::size_t i = 0; i < a.vertices.size(); ++i)
    for (std::size_t j = 0; j < b.vertices.size(); ++j)
      if (CGAL::do_intersect(edge(a, i), edge(b, j))) return true;
  return false;
}

std::vector<std::size_t> edges_meeting(const Polygon& a, const Polygon& b) {
  const Poly ca = to_cgal(a);
  std::vector<std::size_t> out;
  for (std::size_t j = 0; j < b.vertices.size(); ++j) {
    const Segment s = edge(b, j);
    bool meets = ca.bounded_side(s.source()) != CGAL::ON_UNBOUNDED_SIDE ||
                 ca.bounded_side(s.target()) != CGAL::ON_UNBOUNDED_SIDE;
    for (std::size_t i = 0; !meets && i < a.vertices.size(); ++i) meets = CGAL::do_intersect(edge(a, i), s);
    if (meets) out.push_back(j);
  }
  return out;
}

}  // namespace hallway::geometry
