// hallway/geometry/region.hpp: planar regions (finite unions of polygons with holes) with exact
// Boolean operations and offsets, for the parts of the 2DEG that carry each edge channel.
//
// Implemented with CGAL's exact kernel (src/region_cgal.cpp); this header exposes no CGAL type.
// Offsets are Minkowski sums with a regular polygon of `segments` sides inscribed in the circle
// of radius |r|, so a grown outline lies within r (1 - cos(pi / segments)) of the exact offset
// (0.5 % of r for 32 segments).
#pragma once

#include <memory>
#include <vector>

#include "hallway/geometry/polygon.hpp"

namespace hallway::geometry {

// One connected piece: an outer ring (counter-clockwise) and its holes (clockwise).
struct PolygonWithHoles {
  Polygon outer;
  std::vector<Polygon> holes;
};

class Region {
 public:
  Region();
  explicit Region(const Polygon& p);  // p simple, either orientation
  Region(const Region& other);
  Region(Region&& other) noexcept;
  Region& operator=(const Region& other);
  Region& operator=(Region&& other) noexcept;
  ~Region();

  bool empty() const;
  // r > 0 grows, r < 0 shrinks (erodes) by |r| metres; r = 0 returns a copy.
  Region Offset(double r_m, int segments = 32) const;
  Region Union(const Region& o) const;
  Region Difference(const Region& o) const;
  Region Intersection(const Region& o) const;
  double Area() const;  // m^2
  // True when q lies in the interior (points on the boundary are outside).
  bool ContainsInterior(Point q) const;
  // The pieces with coordinates rounded to double.
  std::vector<PolygonWithHoles> Pieces() const;

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

}  // namespace hallway::geometry
