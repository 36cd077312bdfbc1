// Path metrics and constriction models against the formulas of docs/models.md (Saddle-point
// transmission, Edge velocity and lengths, Aharonov-Bohm period and charging) and their sources.
#include <gtest/gtest.h>

#include <cmath>
#include <fstream>
#include <numbers>
#include <sstream>

#include "hallway/constants.hpp"
#include "hallway/design_loader.hpp"
#include "hallway/device.hpp"
#include "hallway/geometry/exact.hpp"
#include "hallway/paths.hpp"
#include "test_support.hpp"

namespace hallway {
namespace {

using test::NearRel;
constexpr double kMeV = 1e-3 * constants::kElementaryCharge_C;

std::string read(const std::string& rel) {
  std::ifstream in(test::SourcePath(rel));
  std::stringstream ss;
  ss << in.rdbuf();
  return ss.str();
}

// E_1 and E_2 of Büttiker's saddle, Phys. Rev. B 41, 7906 (1990) (formula from memory), written out
// here in energies: Omega^2 = w_c^2 + w_y^2 - w_x^2,
// E_1 = (1 / 2 sqrt 2) [(Omega^4 + 4 w_x^2 w_y^2)^(1/2) - Omega^2]^(1/2),
// E_2 = (1 / sqrt 2) [(Omega^4 + 4 w_x^2 w_y^2)^(1/2) + Omega^2]^(1/2).
std::pair<double, double> buttiker_saddle(double wx, double wy, double wc) {
  const double o2 = wc * wc + wy * wy - wx * wx, root = std::sqrt(o2 * o2 + 4 * wx * wx * wy * wy);
  return {std::sqrt(root - o2) / (2 * std::sqrt(2.0)), std::sqrt(root + o2) / std::sqrt(2.0)};
}

TEST(Saddle, EnergiesAndLimits) {
  // hbar w_x = 1, hbar w_y = 3 meV at 0, 2 and 5 T in GaAs. hbar w_c / B = hbar e / m* with
  // m* = 0.067 m_e (Vurgaftman, Meyer & Ram-Mohan, J. Appl. Phys. 89, 5815 (2001), from memory):
  // 1.727875 meV/T (hand arithmetic, from memory). Expected E_1, E_2 from buttiker_saddle (0.332238 and
  // 4.514835 meV at 2 T, 0.164897 and 9.096570 meV at 5 T); at B = 0 the exact parabolic-barrier limit
  // E_1 = hbar w_x / 2, E_2 = hbar w_y.
  const double hbar_wc_per_T =
      constants::kHbar_Js * constants::kElementaryCharge_C / (0.067 * constants::kElectronMass_kg);
  EXPECT_TRUE(NearRel(hbar_wc_per_T / kMeV, 1.727875, 1e-6));
  const std::pair<double, std::pair<double, double>> table[] = {{0, {0.5, 3.0}},
                                                                {2, buttiker_saddle(1, 3, 2 * hbar_wc_per_T / kMeV)},
                                                                {5, buttiker_saddle(1, 3, 5 * hbar_wc_per_T / kMeV)}};
  for (const auto& [b, e] : table) {
    double e1, e2;
    SaddleEnergies(1 * kMeV, 3 * kMeV, b * hbar_wc_per_T, &e1, &e2);
    EXPECT_NEAR(e1 / kMeV, e.first, 2e-5) << b;
    EXPECT_NEAR(e2 / kMeV, e.second, 2e-5) << b;
    // T_0 = 1/(1 + exp(-pi eps_0)) (Büttiker 1990): 1/2 at E - V0 = E_2/2, 1/(1 + e^-pi/2) = 0.827897
    // at +E_1/2, 1/(1 + e^-pi) = 0.958576 at +E_1.
    EXPECT_NEAR(SaddleTransmission(e2 / 2, 1 * kMeV, 3 * kMeV, b * hbar_wc_per_T, 0), 0.5, 1e-12);
    EXPECT_NEAR(SaddleTransmission(e2 / 2 + e1 / 2, 1 * kMeV, 3 * kMeV, b * hbar_wc_per_T, 0),
                1 / (1 + std::exp(-std::numbers::pi / 2)), 1e-6);
    EXPECT_NEAR(SaddleTransmission(e2 / 2 + e1, 1 * kMeV, 3 * kMeV, b * hbar_wc_per_T, 0),
                1 / (1 + std::exp(-std::numbers::pi)), 1e-12);
  }
  // High field: E_1 -> hbar^2 w_x w_y / (2 hbar Omega) (Büttiker 1990): 0.085672 meV at 10 T, where
  // the full form gives 0.085667 meV.
  double e1, e2;
  SaddleEnergies(1 * kMeV, 3 * kMeV, 10 * hbar_wc_per_T, &e1, &e2);
  EXPECT_NEAR(e1 / kMeV, buttiker_saddle(1, 3, 10 * hbar_wc_per_T / kMeV).first, 3e-6);
  const double omega = std::sqrt(100 * hbar_wc_per_T * hbar_wc_per_T / (kMeV * kMeV) + 9 - 1);
  EXPECT_NEAR(e1 / kMeV, 1 * 3 / (2 * omega), 1e-5);
  // B = 0: the parabolic-barrier (Kemble) form with E_1 = hbar w_x / 2 and steps at hbar w_y (n + 1/2).
  EXPECT_NEAR(SaddleTransmission(3 * kMeV * 1.5, 1 * kMeV, 3 * kMeV, 0, 1), 0.5, 1e-12);
}

TEST(Saddle, TransverseLevelsOfAParabolaAreThoseOfTheHarmonicOscillator) {
  // E_n = hbar w (n + 1/2) for U = m w^2 x^2 / 2; hbar w = 1 meV, GaAs mass; finite differences on
  // 2 nm steps over +-300 nm agree to 1e-3.
  const double m = 0.067 * constants::kElectronMass_kg, hw = 1 * kMeV, w = hw / constants::kHbar_Js;
  const double dx = 2e-9;
  std::vector<double> u;
  for (double x = -300e-9; x <= 300e-9 + 1e-15; x += dx) u.push_back(0.5 * m * w * w * x * x);
  const auto levels = TransverseLevels_J(u, dx, m, 3);
  ASSERT_EQ(levels.size(), 3u);
  for (int n = 0; n < 3; ++n) EXPECT_TRUE(NearRel(levels[static_cast<std::size_t>(n)], hw * (n + 0.5), 1e-3)) << n;
}

TEST(Paths, ThermalLengthsAndVisibilityCheckValues) {
  // docs/models.md, Edge velocity and lengths: v = 2e4 m/s, 20 mK. The thermal length hbar v / k_B T
  // = 7.638 um (hbar v / 2 pi k_B T = 1.216 um) is checked with the hand-entered SI values of hbar and
  // k_B (CODATA 2018; Tiesinga et al., Rev. Mod. Phys. 93, 025010 (2021)); the visibility of a path
  // difference dL = 1 um is X / sinh X, X = pi k_B T dL / (hbar v) = 0.41130, i.e. 0.972352.
  const double lt = constants::kHbar_Js * 2e4 / (constants::kBoltzmann_J_per_K * 0.020);
  const double lt_hand = 1.054571817e-34 * 2e4 / (1.380649e-23 * 0.020);
  EXPECT_TRUE(NearRel(lt, lt_hand, 1e-4));
  EXPECT_TRUE(NearRel(lt / (2 * std::numbers::pi), lt_hand / (2 * std::numbers::pi), 1e-3));
  const double x = std::numbers::pi * 1e-6 / lt_hand;
  EXPECT_NEAR(ThermalVisibility(1e-6, 2e4, 0.020), x / std::sinh(x), 1e-6);
}

TEST(Paths, ChargingEnergyCheckValues) {
  // E_C = e^2 / 2C (docs/models.md, Aharonov-Bohm period and charging), eps_r = 12.9. Capacitances:
  // a thin conducting disk of radius r, 8 eps r (Jackson, Classical Electrodynamics, 3rd ed., Wiley
  // 1999, from memory), with eps = eps_0 (eps_r + 1) / 2 between vacuum and GaAs (from memory); under a
  // gate at d = 90 nm the plate eps_r eps_0 A / d. r = 1 um: 0.492 fF and 162.7 ueV without a gate,
  // 3.99 fF and 20.09 ueV under it; C = 2 fF gives 40.05 ueV.
  const double e = constants::kElementaryCharge_C, eps0 = constants::kVacuumPermittivity_F_per_m;
  EXPECT_NEAR(e * e / (2 * 2e-15) / e * 1e6, 40.05, 0.01);  // hand arithmetic (from memory)
  const double area = std::numbers::pi * 1e-12;
  const double disk = 8 * eps0 * (12.9 + 1) / 2 * 1e-6, plate = 12.9 * eps0 * area / 90e-9;
  EXPECT_NEAR(IslandCapacitance_F(area, false, 12.9, 90e-9) * 1e15, disk * 1e15, 0.001);
  EXPECT_NEAR(e / (2 * IslandCapacitance_F(area, false, 12.9, 90e-9)) * 1e6, e / (2 * disk) * 1e6, 0.2);
  EXPECT_NEAR(IslandCapacitance_F(area, true, 12.9, 90e-9) * 1e15, plate * 1e15, 0.01);
  EXPECT_NEAR(e / (2 * IslandCapacitance_F(area, true, 12.9, 90e-9)) * 1e6, e / (2 * plate) * 1e6, 0.05);
}

struct Traced {
  Design d;
  EdgeNetwork net;
  TransportResult tr;
};

Traced trace(const std::string& rel) {
  Traced t{LoadDesignFromString(read(rel), rel), {}, {}};
  t.net = TraceEdges(t.d, BuildChannelGeometry(t.d), std::abs(t.d.conditions.field_T));
  t.tr = SolveTransport(t.d, t.net);
  return t;
}

TEST(Paths, PieceLengthsAndTimesOfFlightOnARectangularMesa) {
  // W -> NW along the eroded rectangle: 3.88 um up the side and 26.88 um along the top (hand geometry,
  // as in Network.EdgeLengthsFollowTheMesaBoundary); with a fixed 2e4 m/s, 1.538 ns of flight.
  const Traced t = trace("tests/data/network/hallbar_nu2.yaml");
  const PathResult r = ComputePaths(t.d, t.net, t.tr, nullptr);
  bool found = false;
  for (const PieceMetrics& p : r.pieces) {
    const EdgePiece& e = t.net.pieces[static_cast<std::size_t>(p.piece)];
    if (e.channel == 0 && DescribeEnd(t.d, e.from) == "W" && DescribeEnd(t.d, e.to) == "NW") {
      found = true;
      EXPECT_NEAR(p.length_m, 30.76e-6, 0.3e-6);
      EXPECT_TRUE(NearRel(p.time_of_flight_s, p.length_m / 2e4, 1e-12));
      EXPECT_FALSE(p.velocity_from_map);
    }
  }
  EXPECT_TRUE(found);
}

TEST(Paths, FabryPerotLoopAreaAgreesWithCgalAndGivesTheAharonovBohmPeriod) {
  const Traced t = trace("designs/03_fabry_perot.yaml");
  const PathResult r = ComputePaths(t.d, t.net, t.tr, nullptr);
  ASSERT_EQ(r.loops.size(), 1u);
  const LoopMetrics& l = r.loops[0];
  EXPECT_EQ(l.constrictions.size(), 2u);
  geometry::Polygon ring;
  for (int p : l.pieces) {
    const auto& path = t.net.pieces[static_cast<std::size_t>(p)].path;
    ring.vertices.insert(ring.vertices.end(), path.begin(), path.end());
  }
  // CGAL's exact area of the same ring (its self-intersection).
  EXPECT_TRUE(NearRel(l.area_m2, geometry::intersection_area(ring, ring), 1e-9));
  // The cavity between the constrictions is about 3 um x 5.8 um (hand geometry); h/(eA) with
  // A = 1 um^2 is 4.1357 mT (h/e = 4.135667697e-15 Wb, CODATA 2018; Tiesinga et al., Rev. Mod. Phys. 93,
  // 025010 (2021); docs/models.md, Aharonov-Bohm period and charging).
  EXPECT_GT(l.area_m2, 10e-12);
  EXPECT_LT(l.area_m2, 18e-12);
  EXPECT_TRUE(NearRel(l.ab_period_T * l.area_m2, constants::kPlanck_Js / constants::kElementaryCharge_C, 1e-12));
  EXPECT_TRUE(NearRel(constants::kPlanck_Js / (constants::kElementaryCharge_C * 1e-12), 4.1357e-3, 1e-4));
}

TEST(Paths, SourceToColliderDistancesAreMeasuredAlongTheEdge) {
  const Traced t = trace("designs/02_two_source_collider.yaml");
  const PathResult r = ComputePaths(t.d, t.net, t.tr, nullptr);
  int to_collider = 0;
  for (const SourcePath& s : r.source_paths)
    if (t.d.constrictions[static_cast<std::size_t>(s.target)].name == "C") {
      ++to_collider;
      // QA's reflected beam runs down CN's west flank from y = 5 um to the tip at 0.15 um: about 5 um.
      EXPECT_GT(s.distance_m, 4e-6);
      EXPECT_LT(s.distance_m, 7e-6);
      EXPECT_TRUE(s.beyond_relaxation);  // 3 um default for fractional fillings
    }
  EXPECT_EQ(to_collider, 2);
}

TEST(Paths, DefaultOptionsAreValid) {
  std::string why;
  EXPECT_TRUE(PathOptions{}.IsValid(&why)) << why;
}

}  // namespace
}  // namespace hallway

namespace hallway {
namespace {

// A closed edge around a gated island gets the charging energy of its own outline: e^2 / 2C with the
// parallel-plate capacitance C = eps_r eps_0 A / d of the gate over the island (Jackson, Classical
// Electrodynamics, from memory). Until the island's outline reached finish_loop, every closed edge
// was given E_C = 0.
TEST(Paths, ClosedEdgeAroundAGatedIslandHasItsChargingEnergy) {
  DeviceOptions options;
  options.bare_estimate = true;
  const Device device(LoadDesign(test::SourcePath("tests/data/electrostatics/wide_gate.yaml")), options);
  ASSERT_TRUE(device.usable());
  const PathResult r = device.paths();
  const Design& d = device.design();
  int closed = 0;
  for (const LoopMetrics& l : r.loops) {
    if (!l.closed_edge) continue;
    ++closed;
    ASSERT_GT(l.area_m2, 0.0);
    EXPECT_TRUE(l.gated_island);
    const double c = d.heterostructure.permittivity * constants::kVacuumPermittivity_F_per_m * l.area_m2 /
                     d.heterostructure.depth_m;
    EXPECT_NEAR(l.charging_energy_J / (constants::kElementaryCharge_C * constants::kElementaryCharge_C / (2.0 * c)),
                1.0, 1e-12);
    EXPECT_NEAR(l.ab_period_T * l.area_m2, constants::kPlanck_Js / constants::kElementaryCharge_C, 1e-25);
  }
  EXPECT_GE(closed, 1);
}

}  // namespace
}  // namespace hallway
