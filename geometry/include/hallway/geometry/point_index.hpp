// hallway/geometry/point_index.hpp: nearest-point queries over a fixed set of planar points
// (a k-d tree from nanoflann, kept out of this header).
#pragma once

#include <cstddef>
#include <memory>
#include <vector>

#include "hallway/geometry/polygon.hpp"

namespace hallway::geometry {

class PointIndex {
 public:
  explicit PointIndex(std::vector<Point> points);
  ~PointIndex();
  PointIndex(const PointIndex&) = delete;
  PointIndex& operator=(const PointIndex&) = delete;

  std::size_t size() const;
  const Point& point(std::size_t i) const;
  // Index of the point nearest to q; the set must not be empty.
  std::size_t Nearest(Point q) const;
  // Indices of all points within distance r of q (r in metres, not squared), nearest first.
  std::vector<std::size_t> Within(Point q, double r) const;

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

}  // namespace hallway::geometry
