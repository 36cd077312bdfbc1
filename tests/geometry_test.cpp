// Polygon measures and exact predicates. The floating-point measures are checked against CGAL's
// exact arithmetic (the exact kernel behind exact.hpp) and against brute-force sampling.
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <limits>
#include <numbers>

#include "hallway/geometry/exact.hpp"
#include "hallway/geometry/polygon.hpp"
#include "test_support.hpp"

namespace hallway::geometry {
namespace {

Polygon rect(double x0, double y0, double x1, double y1) {
  return {{{x0, y0}, {x1, y0}, {x1, y1}, {x0, y1}}};
}

// An L-shaped gate (vertices as in GatePotential.RectangleLShapeAndFingersAgainstTheRectangleFormula,
// nm there; any unit here).
Polygon l_shape() {
  return {{{0, 0}, {300, 0}, {300, 100}, {100, 100}, {100, 400}, {0, 400}}};
}

TEST(Polygon, ShoelaceAreaAgreesWithCgalExactArea) {
  // CGAL's exact kernel (Exact_predicates_exact_constructions) computes the self-intersection of a
  // polygon, whose area is the polygon's area in exact rational arithmetic.
  const Polygon shapes[] = {rect(0, 0, 2, 3), l_shape(),
                            Polygon{{{0.1, 0.2}, {5.3, -1.7}, {7.9, 4.4}, {2.2, 6.6}, {-1.3, 3.1}}}};
  for (const Polygon& p : shapes) EXPECT_TRUE(test::NearRel(area(p), intersection_area(p, p), 1e-14));
  EXPECT_DOUBLE_EQ(area(l_shape()), 300.0 * 100.0 + 100.0 * 300.0);
}

TEST(Polygon, NormaliseMakesCounterClockwise) {
  Polygon p = rect(0, 0, 1, 1);
  std::reverse(p.vertices.begin(), p.vertices.end());
  EXPECT_LT(signed_area(p), 0.0);
  EXPECT_TRUE(normalise(p));
  EXPECT_GT(signed_area(p), 0.0);
  EXPECT_FALSE(normalise(p));
}

TEST(Polygon, ContainsForNonConvexShape) {
  const Polygon l = l_shape();
  EXPECT_TRUE(contains(l, {50, 50}));
  EXPECT_TRUE(contains(l, {50, 350}));
  EXPECT_FALSE(contains(l, {200, 250}));  // in the notch
  EXPECT_FALSE(contains(l, {-1, 50}));
}

TEST(Polygon, ClosestPointsAgreeWithDenseSampling) {
  // Oracle: sample both boundaries every 1e-3 of their length and take the minimum distance.
  const Polygon a = l_shape();
  const Polygon b{{{350, 150}, {500, 120}, {450, 380}, {260, 300}}};
  const ClosestPair cp = closest_boundary_points(a, b);
  auto sample = [](const Polygon& p, int per_edge) {
    std::vector<Point> pts;
    for (std::size_t k = 0; k < p.vertices.size(); ++k) {
      const Point s = p.vertices[k], e = p.vertices[(k + 1) % p.vertices.size()];
      for (int i = 0; i < per_edge; ++i) {
        const double t = static_cast<double>(i) / per_edge;
        pts.push_back({s.x + t * (e.x - s.x), s.y + t * (e.y - s.y)});
      }
    }
    return pts;
  };
  double best = std::numeric_limits<double>::infinity();
  for (const Point& p : sample(a, 400))
    for (const Point& q : sample(b, 400)) best = std::min(best, distance(p, q));
  EXPECT_LE(cp.distance_m, best + 1e-12);
  EXPECT_NEAR(cp.distance_m, best, 1.0);  // sampling step is at most 1 unit here
  EXPECT_NEAR(distance(cp.on_a, cp.on_b), cp.distance_m, 1e-9);
}

TEST(Polygon, ClosestPointsOfSplitGateTips) {
  const Polygon south{{{-0.5, -14}, {0.5, -14}, {0.5, -0.4}, {0, -0.15}, {-0.5, -0.4}}};
  const Polygon north{{{-0.5, 14}, {-0.5, 0.4}, {0, 0.15}, {0.5, 0.4}, {0.5, 14}}};
  const ClosestPair cp = closest_boundary_points(south, north);
  EXPECT_NEAR(cp.distance_m, 0.3, 1e-12);
  EXPECT_NEAR(cp.midpoint().x, 0.0, 1e-12);
  EXPECT_NEAR(cp.midpoint().y, 0.0, 1e-12);
}

// Square-ended fingers (common practice in split-gate layouts) face each other along a whole edge:
// every pair across the facing stretch is equally close. The middle of that stretch is returned
// whatever the vertex order or the first vertex, and for a finger end facing a long gate side too.
TEST(Polygon, ClosestPointsOfSquareEndsAreTheMiddleOfTheFacingStretch) {
  Polygon west = rect(-2000, -100, -150, 100), east = rect(150, -100, 2000, 100);
  for (int rev = 0; rev < 2; ++rev)
    for (int rot = 0; rot < 4; ++rot) {
      Polygon w = west, e = east;
      if (rev) std::reverse(w.vertices.begin(), w.vertices.end());
      std::rotate(w.vertices.begin(), w.vertices.begin() + rot, w.vertices.end());
      std::rotate(e.vertices.begin(), e.vertices.begin() + (3 - rot), e.vertices.end());
      const ClosestPair cp = closest_boundary_points(w, e);
      EXPECT_NEAR(cp.distance_m, 300.0, 1e-9);
      EXPECT_NEAR(cp.midpoint().x, 0.0, 1e-9) << "rev " << rev << " rot " << rot;
      EXPECT_NEAR(cp.midpoint().y, 0.0, 1e-9) << "rev " << rev << " rot " << rot;
    }
  // A finger end (x in [-100, 100]) facing the side of a wide gate 300 above it: the middle of the end.
  const Polygon finger = rect(-100, -2000, 100, 0), side = rect(-3000, 300, 500, 900);
  const ClosestPair cp = closest_boundary_points(finger, side);
  EXPECT_NEAR(cp.distance_m, 300.0, 1e-9);
  EXPECT_NEAR(cp.midpoint().x, 0.0, 1e-9);
  EXPECT_NEAR(cp.midpoint().y, 150.0, 1e-9);
}

TEST(Polygon, CrossingBoundariesHaveZeroDistance) {
  EXPECT_EQ(closest_boundary_points(rect(0, 0, 2, 2), rect(1, 1, 3, 3)).distance_m, 0.0);
}

TEST(Exact, SimplicityOfRings) {
  EXPECT_TRUE(is_simple(l_shape()));
  EXPECT_FALSE(is_simple(Polygon{{{0, 0}, {2, 2}, {2, 0}, {0, 2}}}));                  // bow tie
  EXPECT_FALSE(is_simple(Polygon{{{0, 0}, {2, 0}, {1, 1}, {2, 2}, {0, 2}, {1, 1}}}));  // pinched at (1,1)
}

TEST(Exact, TouchingSquaresMeetButDoNotOverlap) {
  const Polygon a = rect(0, 0, 1, 1), b = rect(1, 0, 2, 1), c = rect(1.5, 0, 2.5, 1);
  EXPECT_TRUE(boundaries_meet(a, b));
  EXPECT_EQ(intersection_area(a, b), 0.0);
  EXPECT_FALSE(boundaries_meet(a, c));
  EXPECT_DOUBLE_EQ(intersection_area(b, c), 0.5);
  EXPECT_DOUBLE_EQ(difference_area(b, c), 0.5);
}

TEST(Exact, NestedPolygonsOverlapWithoutBoundaryContact) {
  const Polygon outer = rect(0, 0, 10, 10), inner = rect(4, 4, 5, 5);
  EXPECT_FALSE(boundaries_meet(outer, inner));
  EXPECT_DOUBLE_EQ(intersection_area(outer, inner), 1.0);
  EXPECT_DOUBLE_EQ(difference_area(outer, inner), 99.0);
}

TEST(Exact, EdgesMeetingFindsTheEdgeAGateCrosses) {
  const Polygon mesa = rect(-10, -10, 10, 10);  // edges: 0 bottom, 1 right, 2 top, 3 left
  const Polygon gate = rect(-0.5, 2, 0.5, 14);  // crosses the top edge only
  const auto e = edges_meeting(gate, mesa);
  ASSERT_EQ(e.size(), 1u);
  EXPECT_EQ(e[0], 2u);
}

TEST(Polygon, DefectsAreNamed) {
  EXPECT_EQ(find_defect(Polygon{{{0, 0}, {1, 0}}}), PolygonDefect::kTooFewVertices);
  EXPECT_EQ(find_defect(Polygon{{{0, 0}, {1, 0}, {1, 0}, {0, 1}}}), PolygonDefect::kRepeatedVertex);
  EXPECT_EQ(find_defect(Polygon{{{0, 0}, {1, 1}, {2, 2}}}), PolygonDefect::kZeroArea);
  EXPECT_EQ(find_defect(Polygon{{{0, 0}, {3, 3}, {3, 0}, {0, 1}}}), PolygonDefect::kSelfIntersecting);
  EXPECT_EQ(find_defect(Polygon{{{0, 0}, {std::nan(""), 0}, {0, 1}}}), PolygonDefect::kNotFinite);
  EXPECT_EQ(find_defect(l_shape()), PolygonDefect::kNone);
}

}  // namespace
}  // namespace hallway::geometry

#include "hallway/geometry/contour.hpp"

namespace hallway::geometry {
namespace {

TEST(Contour, LevelCurveOfADiscHasItsAreaAndRunsCounterClockwise) {
  // f = R - r sampled on a grid: the level curve f = 0 is the circle of radius R (area pi R^2);
  // marching squares with linear interpolation is accurate to O(h^2).
  const int n = 201;
  const double h = 0.01, radius = 0.6;
  std::vector<double> f(static_cast<std::size_t>(n * n));
  for (int j = 0; j < n; ++j)
    for (int i = 0; i < n; ++i) f[static_cast<std::size_t>(j * n + i)] = radius - std::hypot(-1 + i * h, -1 + j * h);
  const auto loops = LevelCurves({n, n, -1.0, -1.0, h, f.data()}, 0.0);
  ASSERT_EQ(loops.size(), 1u);
  EXPECT_GT(signed_area(loops[0]), 0.0);
  EXPECT_TRUE(test::NearRel(area(loops[0]), std::numbers::pi * radius * radius, 1e-3));
  const Polygon s = Simplify(loops[0], 1e-3);
  EXPECT_LT(s.vertices.size(), loops[0].vertices.size());
  EXPECT_TRUE(test::NearRel(area(s), area(loops[0]), 2e-3));
  EXPECT_EQ(find_defect(s), PolygonDefect::kNone);
}

TEST(Contour, AnnulusGivesAnOuterRingAndAClockwiseHole) {
  const int n = 201;
  const double h = 0.01;
  std::vector<double> f(static_cast<std::size_t>(n * n));
  for (int j = 0; j < n; ++j)
    for (int i = 0; i < n; ++i) {
      const double r = std::hypot(-1 + i * h, -1 + j * h);
      f[static_cast<std::size_t>(j * n + i)] = (r > 0.3 && r < 0.8) ? 1.0 : -1.0;
    }
  const auto loops = LevelCurves({n, n, -1.0, -1.0, h, f.data()}, 0.0);
  ASSERT_EQ(loops.size(), 2u);
  int ccw = 0, cw = 0;
  for (const auto& l : loops) (signed_area(l) > 0 ? ccw : cw)++;
  EXPECT_EQ(ccw, 1);
  EXPECT_EQ(cw, 1);
}

}  // namespace
}  // namespace hallway::geometry
