// Regions with exact Boolean operations and Minkowski offsets; see region.hpp.
// The second of the project's two CGAL translation units (compiled in parallel with exact_cgal.cpp).
#include <CGAL/Boolean_set_operations_2.h>
#include <CGAL/Exact_predicates_exact_constructions_kernel.h>
#include <CGAL/Polygon_2.h>
#include <CGAL/Polygon_set_2.h>
#include <CGAL/Polygon_with_holes_2.h>
#include <CGAL/minkowski_sum_2.h>

#include <cmath>
#include <iterator>
#include <numbers>
#include <stdexcept>

#include "hallway/geometry/region.hpp"

namespace hallway::geometry {
namespace {

using Kernel = CGAL::Exact_predicates_exact_constructions_kernel;
using P2 = Kernel::Point_2;
using Poly = CGAL::Polygon_2<Kernel>;
using PolyWithHoles = CGAL::Polygon_with_holes_2<Kernel>;
using Set = CGAL::Polygon_set_2<Kernel>;

Poly to_cgal(const Polygon& p) {
  Poly out;
  for (const Point& q : p.vertices) out.push_back(P2(q.x, q.y));
  if (out.orientation() == CGAL::CLOCKWISE) out.reverse_orientation();
  return out;
}

Polygon from_cgal(const Poly& p) {
  Polygon out;
  out.vertices.reserve(p.size());
  for (auto v = p.vertices_begin(); v != p.vertices_end(); ++v)
    out.vertices.push_back({CGAL::to_double(v->x()), CGAL::to_double(v->y())});
  return out;
}

// Regular polygon with `n` vertices on the circle of radius r about the origin (counter-clockwise).
Poly disc(double r, int n) {
  Poly d;
  for (int k = 0; k < n; ++k) {
    const double a = 2.0 * std::numbers::pi * k / n;
    d.push_back(P2(r * std::cos(a), r * std::sin(a)));
  }
  return d;
}

std::vector<PolyWithHoles> pieces_of(const Set& s) {
  std::vector<PolyWithHoles> out;
  s.polygons_with_holes(std::back_inserter(out));
  return out;
}

Set grow(const Set& s, double r, int n) {
  Set out;
  const Poly d = disc(r, n);
  for (const PolyWithHoles& p : pieces_of(s)) out.join(CGAL::minkowski_sum_2(p, d));
  return out;
}

}  // namespace

struct Region::Impl {
  Set set;
};

Region::Region() : impl_(std::make_unique<Impl>()) {}
Region::Region(const Polygon& p) : Region() {
  impl_->set.insert(to_cgal(p));
}
Region::Region(const Region& o) : impl_(std::make_unique<Impl>(*o.impl_)) {}
Region::Region(Region&& o) noexcept = default;
Region& Region::operator=(const Region& o) {
  if (this != &o) impl_ = std::make_unique<Impl>(*o.impl_);
  return *this;
}
Region& Region::operator=(Region&& o) noexcept = default;
Region::~Region() = default;

bool Region::empty() const {
  return impl_->set.is_empty();
}

Region Region::Offset(double r, int segments) const {
  if (segments < 8) throw std::invalid_argument("Region::Offset: segments must be >= 8");
  Region out;
  if (r == 0.0 || empty()) {
    out.impl_->set = impl_->set;
    return out;
  }
  if (r > 0.0) {
    out.impl_->set = grow(impl_->set, r, segments);
    return out;
  }
  // Erosion: remove what lies within |r| of the complement. The complement is taken inside a box
  // larger than the region by 2|r| so that it is bounded.
  const double a = std::abs(r);
  double xmin = HUGE_VAL, ymin = HUGE_VAL, xmax = -HUGE_VAL, ymax = -HUGE_VAL;
  for (const auto& p : Pieces()) {
    const auto bb = bounding_box(p.outer);
    xmin = std::min(xmin, bb.xmin);
    ymin = std::min(ymin, bb.ymin);
    xmax = std::max(xmax, bb.xmax);
    ymax = std::max(ymax, bb.ymax);
  }
  const Polygon box{{{xmin - 2 * a, ymin - 2 * a},
                     {xmax + 2 * a, ymin - 2 * a},
                     {xmax + 2 * a, ymax + 2 * a},
                     {xmin - 2 * a, ymax + 2 * a}}};
  Set outside;
  outside.insert(to_cgal(box));
  outside.difference(impl_->set);
  out.impl_->set = impl_->set;
  out.impl_->set.difference(grow(outside, a, segments));
  return out;
}

Region Region::Union(const Region& o) const {
  Region out(*this);
  out.impl_->set.join(o.impl_->set);
  return out;
}
Region Region::Difference(const Region& o) const {
  Region out(*this);
  out.impl_->set.difference(o.impl_->set);
  return out;
}
Region Region::Intersection(const Region& o) const {
  Region out(*this);
  out.impl_->set.intersection(o.impl_->set);
  return out;
}

double Region::Area() const {
  Kernel::FT total = 0;
  for (const PolyWithHoles& p : pieces_of(impl_->set)) {
    total += p.outer_boundary().area();
    for (auto h = p.holes_begin(); h != p.holes_end(); ++h) total += h->area();  // holes are clockwise
  }
  return CGAL::to_double(total);
}

bool Region::ContainsInterior(Point q) const {
  const P2 x(q.x, q.y);
  for (const PolyWithHoles& p : pieces_of(impl_->set)) {
    if (p.outer_boundary().bounded_side(x) != CGAL::ON_BOUNDED_SIDE) continue;
    bool in_hole = false;
    for (auto h = p.holes_begin(); h != p.holes_end() && !in_hole; ++h)
      in_hole = h->bounded_side(x) != CGAL::ON_UNBOUNDED_SIDE;
    if (!in_hole) return true;
  }
  return false;
}

std::vector<PolygonWithHoles> Region::Pieces() const {
  std::vector<PolygonWithHoles> out;
  for (const PolyWithHoles& p : pieces_of(impl_->set)) {
    PolygonWithHoles q;
    q.outer = from_cgal(p.outer_boundary());
    for (auto h = p.holes_begin(); h != p.holes_end(); ++h) q.holes.push_back(from_cgal(*h));
    out.push_back(std::move(q));
  }
  return out;
}

}  // namespace hallway::geometry
