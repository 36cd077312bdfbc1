// The saddle of a constriction, the bare pinch-off from the actual gate potential, and windows that
// converge: square-ended fingers (common practice in split-gate layouts), vertex order, shifts of
// the layout against the grid, window doubling, and a large gate against the wide-gate limit.
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <fstream>
#include <numbers>
#include <sstream>

#include "hallway/check.hpp"
#include "hallway/design_loader.hpp"
#include "hallway/electrostatics.hpp"
#include "hallway/heterostructure.hpp"
#include "hallway/map.hpp"
#include "hallway/network.hpp"
#include "hallway/saddle.hpp"
#include "hallway/transport.hpp"
#include "test_support.hpp"

namespace hallway {
namespace {

using geometry::Point;
using geometry::Polygon;
using test::NearRel;

// Two square-ended fingers 200 nm wide with a 300 nm gap, 2DEG at 90 nm, 2.5e11 cm^-2: the layout of
// the split gate that people draw. `dx`, `dy` shift the whole layout (nm).
std::string SquareSplitGate(double dx = 0.0, double dy = 0.0, bool reversed = false) {
  auto rect = [&](double x0, double y0, double x1, double y1) {
    char buf[200];
    if (reversed)
      std::snprintf(buf, sizeof buf, "[[%g,%g],[%g,%g],[%g,%g],[%g,%g]]", x0 + dx, y1 + dy, x1 + dx, y1 + dy, x1 + dx,
                    y0 + dy, x0 + dx, y0 + dy);
    else
      std::snprintf(buf, sizeof buf, "[[%g,%g],[%g,%g],[%g,%g],[%g,%g]]", x0 + dx, y0 + dy, x1 + dx, y0 + dy, x1 + dx,
                    y1 + dy, x0 + dx, y1 + dy);
    return std::string(buf);
  };
  return "hallway: 1\nname: square split gate\nunits: nm\nheterostructure:\n  depth: 90 nm\n"
         "  density: 2.5e11 cm^-2\nconditions:\n  temperature: 20 mK\n  filling: 2\nmesa:\n  outline: " +
         rect(-3000, -3000, 3000, 3000) + "\ncontacts:\n  - {name: W, outline: " + rect(-3200, -300, -2900, 300) +
         "}\n  - {name: E, outline: " + rect(2900, -300, 3200, 300) +
         "}\ngates:\n  - {name: GS, voltage: -0.6 V, outline: " + rect(-100, -3100, 100, -150) +
         "}\n  - {name: GN, voltage: -0.6 V, outline: " + rect(-100, 150, 100, 3100) +
         "}\nconstrictions:\n  - {name: Q, gates: [GS, GN], transmission: [1, 0.5]}\n"
         "wiring:\n  W: source 10 uV\n  E: ground\n";
}

MapOptions ConstrictionsOnly() {
  MapOptions o;
  o.constrictions_only = true;
  o.pinch_resolution_V = 1e-3;
  return o;
}

TEST(ConstrictionSaddle, MinimaxPathFindsTheSaddleOfAQuadraticLandscape) {
  // E = (x - x0)^2 - (y - y0)^2 / 4 has its saddle at (x0, y0) (gap across x from 0 to 1, current along y).
  const double x0 = 0.37, y0 = 0.21;
  SaddleStrip s;
  s.gap = {{0.0, 0.0}, {1.0, 0.0}, 1.0};
  s.reach_m = 1.0;
  s.step_m = 0.01;
  const Saddle sd = FindSaddle([&](Point p) { return (p.x - x0) * (p.x - x0) - 0.25 * (p.y - y0) * (p.y - y0); }, s);
  ASSERT_TRUE(sd.found);
  EXPECT_NEAR(sd.point.x, x0, 0.01);  // within a sample step
  EXPECT_NEAR(sd.point.y, y0, 0.01);
}

// The bare estimate of a square-ended split gate: the closed-form rectangle potential of Davies, Larkin
// & Sukhorukov (J. Appl. Phys. 77, 4504 (1995)) at the gap centre, computed here, against the
// wide-gate depletion voltage with the quantum capacitance, V_dep = -e n_s (d / eps + 1 / (e^2 D)).
TEST(ConstrictionSaddle, BarePinchOffOfSquareFingersUsesTheirActualPotentialAtTheCentre) {
  const Design d = LoadDesignFromString(SquareSplitGate(), "sq.yaml");
  const auto gap = FindGap(d, d.constrictions[0], nullptr);
  ASSERT_TRUE(gap);
  const auto bare = FindBarePinchOff(d, d.constrictions[0], *gap);
  ASSERT_TRUE(bare);
  const double depth = 90e-9;
  auto f = [&](double u, double v) {
    return std::atan2(u * v, depth * std::sqrt(u * u + v * v + depth * depth)) / (2.0 * std::numbers::pi);
  };
  // A rectangle L <= x <= R, B <= y <= T seen from (0, 0): f(-L, -B) + f(-L, T) + f(R, -B) + f(R, T).
  auto rect = [&](double l, double b, double r, double t) { return f(-l, -b) + f(-l, t) + f(r, -b) + f(r, t); };
  const double per_volt = rect(-100e-9, -3100e-9, 100e-9, -150e-9) + rect(-100e-9, 150e-9, 100e-9, 3100e-9);
  const double vdep = DeriveWaferQuantities(d.heterostructure, 1.0, 0.02).depletion_voltage_V;
  EXPECT_NEAR(bare->saddle.x, 0.0, 2e-9);
  EXPECT_NEAR(bare->saddle.y, 0.0, 2e-9);
  EXPECT_TRUE(NearRel(bare->voltage_V, vdep / per_volt, 2e-3));
  EXPECT_LT(bare->voltage_V, -3.0);  // about 0.09 per volt at the centre: far below the half-plane estimate
}

TEST(ConstrictionSaddle, SquareFingerPinchOffDoesNotDependOnVertexOrderOrOnAShiftAgainstTheGrid) {
  std::vector<double> v;
  for (const std::string& text : {SquareSplitGate(), SquareSplitGate(0, 0, true), SquareSplitGate(8.3, -5.1)}) {
    const Design d = LoadDesignFromString(text, "sq.yaml");
    const MapResult r = ComputeMap(d, ConstrictionsOnly());
    ASSERT_EQ(r.constrictions.size(), 1u);
    ASSERT_TRUE(r.constrictions[0].pinch_off_V);
    v.push_back(*r.constrictions[0].pinch_off_V);
    std::printf("pinch-off %.4f V, saddle (%.1f, %.1f) nm\n", v.back(), r.constrictions[0].saddle.x * 1e9,
                r.constrictions[0].saddle.y * 1e9);
  }
  // Where the grid falls: windows of 1.20 and 1.25 um put a cell centre on the saddle or between cells.
  const Design d = LoadDesignFromString(SquareSplitGate(), "sq.yaml");
  for (double half : {1.20e-6, 1.25e-6}) {
    MapOptions o = ConstrictionsOnly();
    o.window_m = half;
    const MapResult r = ComputeMap(d, o);
    ASSERT_TRUE(r.constrictions.at(0).pinch_off_V);
    v.push_back(*r.constrictions[0].pinch_off_V);
  }
  // Within 10 mV of each other whatever the vertex order, shift or grid position.
  for (double x : v) EXPECT_NEAR(x, v[0], 0.010);
  // An independent Thomas-Fermi solver of the same model (periodic FFT box, bound-constrained
  // minimisation, grids of 25 and 12.5 nm) gave -2.70 V for this layout (computed for the issue that
  // reported the corner saddle; not a published value); grid convergence here gives -2.697 V.
  EXPECT_NEAR(v[0], -2.70, 0.03);
}

TEST(ConstrictionSaddle, PinchOffChangesByLessThanHalfAPercentWhenTheWindowIsDoubled) {
  const Design d = LoadDesignFromString(SquareSplitGate(), "sq.yaml");
  std::vector<double> v;
  for (double half : {1.2e-6, 2.4e-6}) {
    MapOptions o = ConstrictionsOnly();
    o.window_m = half;
    const MapResult r = ComputeMap(d, o);
    ASSERT_TRUE(r.constrictions.at(0).pinch_off_V);
    v.push_back(*r.constrictions[0].pinch_off_V);
    std::printf("window half %.1f um: pinch-off %.4f V\n", half * 1e6, v.back());
  }
  EXPECT_TRUE(NearRel(v[1], v[0], 0.005));
}

// A 12 um square gate (size / depth = 133) must deplete at the wide-gate value: the plate capacitor with
// the quantum capacitance, V_dep = -e n_s (d / eps + 1 / (e^2 D)) = -0.324545 V at these parameters (the
// series-capacitor law; Luryi, Appl. Phys. Lett. 52, 501 (1988)), within 1 %, and not at a smaller
// magnitude than that limit reached with the map's own emptiness threshold (n < 1e-3 n_s, reached at
// (1 - 1e-3) V_dep), up to 0.2 mV: the 2DEG held outside the window at its local-capacitance density
// keeps the bare potential's d / L tail under the gate, measured at 0.16 mV for the default window,
// 0.05 mV at twice it, 0 beyond (the converged value, -0.3243 V, is below the threshold value).
// Doubling the window moves it by less than 1 mV.
TEST(ConstrictionSaddle, LargeGateDepletesAtTheWideGateValueWhateverTheWindow) {
  std::string text =
      "hallway: 1\nname: large gate\nunits: um\nheterostructure:\n  depth: 90 nm\n  density: 2.5e15 m^-2\n"
      "conditions:\n  temperature: 20 mK\n  filling: 2\nmesa:\n  outline: [[-10,-10],[10,-10],[10,10],[-10,10]]\n"
      "contacts:\n  - {name: W, outline: [[-11,-1],[-9.5,-1],[-9.5,1],[-11,1]]}\n"
      "gates:\n  - {name: G, voltage: -0.1 V, outline: [[-6,-6],[6,-6],[6,6],[-6,6]]}\nwiring:\n  W: ground\n";
  const Design d = LoadDesignFromString(text, "large.yaml");
  const double wide = DeriveWaferQuantities(d.heterostructure, 1.0, 0.02).depletion_voltage_V;
  EXPECT_TRUE(NearRel(wide, -0.324545, 1e-5));
  std::vector<double> v;
  for (double half : {0.0, 2.0 * 15.0 * 90e-9}) {
    MapOptions o;
    o.electrostatics.grid_m = 250e-9;  // the whole-mesa map is not what is tested here
    o.window_m = half;
    o.pinch_resolution_V = 1e-4;
    const MapResult r = ComputeMap(d, o);
    ASSERT_TRUE(r.gates.at(0).depletion_V);
    v.push_back(*r.gates[0].depletion_V);
    std::printf("window half %.2f um: depletion %.5f V\n", half * 1e6, v.back());
  }
  for (double x : v) {
    EXPECT_TRUE(NearRel(x, wide, 0.01));
    EXPECT_LE(x, (1.0 - 1e-3) * wide + 2e-4);
  }
  EXPECT_NEAR(v[1], v[0], 1e-3);
}

// Square finger ends facing a gate's side make each gap a channel as long as the finger is wide. Where
// the self-consistent density closes it at the design voltages the design's transmission decides, so
// the routes (every transmission T_ij of every channel, both field signs) must equal those of the bare
// boundaries (--fast), with no closed edges (loops) that the bare network does not have.
TEST(ConstrictionSaddle, SquareEndedColliderRoutesAgreeBetweenSelfConsistentAndBareBoundaries) {
  std::ifstream in(test::SourcePath("tests/data/electrostatics/square_collider.yaml"));
  std::stringstream ss;
  ss << in.rdbuf();
  const Design d = LoadDesignFromString(ss.str(), "square_collider.yaml");
  const ElectrostaticProblem problem(d);
  std::vector<double> volts;
  for (const Gate& g : d.gates) volts.push_back(g.voltage_V);
  const DensityMap map = problem.Solve(volts);
  ASSERT_TRUE(map.stats.converged);
  NetworkOptions sc;
  sc.density = &map;
  const ChannelGeometry with_density = BuildChannelGeometry(d, sc), bare = BuildChannelGeometry(d);
  int closes = 0;
  for (const Finding& f : with_density.findings) closes += f.code == "estimate-closes";
  EXPECT_EQ(closes, 3) << "the self-consistent density closes QA, QB and C, and says so";
  for (double field : {d.conditions.field_T, -d.conditions.field_T}) {
    const EdgeNetwork a = TraceEdges(d, with_density, field), b = TraceEdges(d, bare, field);
    EXPECT_EQ(a.closed.size(), b.closed.size()) << "B = " << field;
    const TransportResult ta = SolveTransport(d, a), tb = SolveTransport(d, b);
    ASSERT_EQ(ta.transmission.size(), tb.transmission.size());
    double worst = 0.0;
    for (std::size_t k = 0; k < ta.transmission.size(); ++k)
      for (std::size_t i = 0; i < ta.transmission[k].size(); ++i)
        for (std::size_t j = 0; j < ta.transmission[k][i].size(); ++j)
          worst = std::max(worst, std::abs(ta.transmission[k][i][j] - tb.transmission[k][i][j]));
    EXPECT_LT(worst, 1e-9) << "B = " << field;
  }
}

}  // namespace
}  // namespace hallway
