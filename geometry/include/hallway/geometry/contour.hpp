// hallway/geometry/contour.hpp: closed level curves of a field sampled on a regular grid
// (marching squares), and polyline simplification.
#pragma once

#include <vector>

#include "hallway/geometry/polygon.hpp"

namespace hallway::geometry {

struct GridField {
  int nx = 0, ny = 0;
  double x0 = 0.0, y0 = 0.0, cell = 0.0;  // position of sample (0, 0) and spacing, metres
  const double* values = nullptr;         // row-major, values[j * nx + i]
};

// Closed curves f = level, with f > level on their left: outer boundaries of {f > level} come
// counter-clockwise, holes clockwise. Samples on the border of the grid are treated as below the
// level, so every curve closes. Saddle squares are resolved by the mean of their four corners.
std::vector<Polygon> LevelCurves(const GridField& field, double level);

// Douglas-Peucker simplification of a closed ring: no vertex removed lies farther than `tolerance`
// from the simplified ring.
Polygon Simplify(const Polygon& ring, double tolerance);

}  // namespace hallway::geometry
