// Results that must not be confidently wrong: coarse electrostatic cells, windows around deep 2DEGs,
// closed constrictions, and the resistance a source sees when another source is also biased.
#include <gtest/gtest.h>

#include <cmath>
#include <fstream>
#include <sstream>

#include "hallway/design_loader.hpp"
#include "hallway/electrostatics.hpp"
#include "hallway/heterostructure.hpp"
#include "hallway/map.hpp"
#include "hallway/network.hpp"
#include "hallway/transport.hpp"
#include "test_support.hpp"

namespace hallway {
namespace {

using test::NearRel;
using test::replace;

std::string Read(const std::string& rel) {
  std::ifstream in(test::SourcePath(rel));
  std::stringstream ss;
  ss << in.rdbuf();
  return ss.str();
}

// Cells of 800 nm over a 2DEG 90 nm deep (almost nine depths): the self cell's kernel integral is taken
// exactly, so the operator stays positive and the wide-gate law n = n_s (1 - V / V_dep) (plate and
// quantum capacitance in series; Luryi, Appl. Phys. Lett. 52, 501 (1988)) still holds under the gate.
TEST(Robustness, CoarseCellsKeepTheWideGateLaw) {
  const Design d = LoadDesignFromString(Read("tests/data/electrostatics/wide_gate.yaml"), "wide.yaml");
  ElectrostaticsOptions o;
  o.grid_m = 800e-9;
  const ElectrostaticProblem p(d, o);
  const double vdep = DeriveWaferQuantities(d.heterostructure, 1.0, 0.02).depletion_voltage_V;
  for (double v : {0.0, -0.15}) {
    const DensityMap m = p.Solve({v});
    ASSERT_TRUE(m.stats.converged);
    // 2 %: the cell is far coarser than the depth; the law is exact only for an infinite gate.
    EXPECT_TRUE(NearRel(m.At({0, 0}), 2.5e15 * (1.0 - v / vdep), 0.02)) << v;
  }
}

// A window around a 300 nm gap in a 2DEG 10 um deep must not grow as (d / gap)^2 cells.
TEST(Robustness, ConstrictionWindowsStayBoundedForDeepTwoDegs) {
  const double depth = 10e-6, gap = 300e-9, half = 0.5 * gap + 12.0 * depth;
  const double h = ConstrictionWindowCell_m(depth, gap, half);
  EXPECT_LE(2.0 * half / h, 400.0 + 1e-9);
  // The usual case keeps its resolution: d / 4 or gap / 8.
  EXPECT_DOUBLE_EQ(ConstrictionWindowCell_m(90e-9, 300e-9, 150e-9 + 12.0 * 90e-9), 22.5e-9);
}

TransportResult SolveFast(const std::string& text) {
  const Design d = LoadDesignFromString(text, "t.yaml");
  const ChannelGeometry g = BuildChannelGeometry(d);
  return SolveTransport(d, TraceEdges(d, g, d.conditions.field_T));
}

// A second voltage source must not change the resistance the first one is said to see: it is defined with
// the other sources at zero, so it equals the value with the second source grounded (Landauer-Buttiker
// linearity; Buttiker, Phys. Rev. Lett. 57, 1761 (1986)).
TEST(Robustness, SourceResistanceIsTakenWithTheOtherSourcesAtZero) {
  const std::string base = Read("designs/01_hallbar_qpc.yaml");
  const TransportResult one = SolveFast(base);
  const TransportResult two = SolveFast(replace(base, "  SE: ground", "  SE: source 10 uV"));
  ASSERT_EQ(one.sources.size(), 1u);
  ASSERT_EQ(two.sources.size(), 2u);
  ASSERT_TRUE(one.sources[0].resistance_Ohm && two.sources[0].resistance_Ohm);
  EXPECT_TRUE(NearRel(*two.sources[0].resistance_Ohm, *one.sources[0].resistance_Ohm, 1e-12));
  ASSERT_TRUE(two.sources[1].resistance_Ohm);
  EXPECT_GT(*two.sources[1].resistance_Ohm, 0.0);
}

// Gates far beyond pinch-off (-5 V, lateral depletion wider than the gap): the design's transmission still
// decides, so the currents equal those at the design voltage, and no closed edge (phantom loop) appears.
TEST(Robustness, ConstrictionClosedByItsGatesFollowsTheDesignTransmission) {
  const std::string base = Read("designs/01_hallbar_qpc.yaml");
  std::string closed = replace(base, "{name: QS, voltage: -0.8 V", "{name: QS, voltage: -5 V");
  closed = replace(closed, "{name: QN, voltage: -0.8 V", "{name: QN, voltage: -5 V");
  const Design d = LoadDesignFromString(closed, "closed.yaml");
  const ChannelGeometry g = BuildChannelGeometry(d);
  const EdgeNetwork net = TraceEdges(d, g, d.conditions.field_T);
  EXPECT_TRUE(net.closed.empty());
  const TransportResult a = SolveTransport(d, net), b = SolveFast(base);
  for (std::size_t i = 0; i < a.current_A.size(); ++i) EXPECT_NEAR(a.current_A[i], b.current_A[i], 1e-18) << i;
  EXPECT_GT(std::abs(a.current_A[0]), 1e-12);
}

}  // namespace
}  // namespace hallway
