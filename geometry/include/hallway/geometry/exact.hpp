// hallway/geometry/exact.hpp: predicates and Boolean measures evaluated with CGAL's exact kernel.
//
// The input coordinates (doubles) are taken as exact rationals, so "do these gates overlap",
// "does this contact reach off the mesa" and "is this outline simple" are answered exactly; only
// the returned areas are rounded to double at the end. Implemented in src/exact_cgal.cpp, the one
// translation unit of the project that includes CGAL's Boolean-operations headers.
//
// Preconditions: polygons are simple (check is_simple first); orientation does not matter.
#pragma once

#include "hallway/geometry/polygon.hpp"

namespace hallway::geometry {

// No two non-adjacent edges meet and adjacent edges meet only at their shared vertex.
bool is_simple(const Polygon& p);
// Area of the intersection of the interiors (m^2).
double intersection_area(const Polygon& a, const Polygon& b);
// Area of a minus b (m^2).
double difference_area(const Polygon& a, const Polygon& b);
// True when the closed boundaries share at least one point (touching or crossing).
bool boundaries_meet(const Polygon& a, const Polygon& b);
// Indices of the edges of `b` (edge k joins vertex k and k+1) that meet the closed polygon `a`.
std::vector<std::size_t> edges_meeting(const Polygon& a, const Polygon& b);

}  // namespace hallway::geometry
