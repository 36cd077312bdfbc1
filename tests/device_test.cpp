// The device API (device.hpp): one design run end to end through the library alone, its numbers
// checked against published formulas and against what the CLI prints for the same design.
#include <gtest/gtest.h>

#include <cmath>
#include <fstream>
#include <nlohmann/json.hpp>
#include <stdexcept>

#include "hallway/constants.hpp"
#include "hallway/design_loader.hpp"
#include "hallway/device.hpp"
#include "test_support.hpp"

namespace hallway {
namespace {

bool near_rel(double a, double b, double rel) { return std::abs(a - b) <= rel * std::max(std::abs(a), std::abs(b)); }

std::size_t contact(const Design& d, const std::string& name) {
  for (std::size_t i = 0; i < d.contacts.size(); ++i)
    if (d.contacts[i].name == name) return i;
  throw std::out_of_range(name);
}

// The two-source collider demo at filling 1/3 under the bare estimate: sources SA and SB at 30 uV,
// source constrictions QA and QB at t = 0.95, collider C at t = 0.9, drains D1 and D2 cold.
TEST(Device, RunsADesignEndToEndWithoutCliCode) {
  const Design design = LoadDesign(test::SourcePath("designs/02_two_source_collider.yaml"));
  DeviceOptions options;
  options.bare_estimate = true;
  const Device device(design, options);
  ASSERT_TRUE(device.usable());
  EXPECT_EQ(device.density(), nullptr);
  const Design& d = device.design();
  const TransportResult& t = device.transport();
  // Landauer-Buttiker (Buttiker, Phys. Rev. B 38, 9375 (1988)): a contact at V emits nu e^2/h V into
  // its edge; nothing flows back into a source whose upstream edge comes from a cold ground.
  const double emitted = (1.0 / 3.0) * constants::kConductanceQuantum_S * 30e-6;
  EXPECT_TRUE(near_rel(t.current_A[contact(d, "SA")], emitted, 1e-9));
  // D1 receives what QA reflects from SA's beam, (1 - 0.95), split by C with SB's reflected beam; by
  // symmetry both shares add up to the same (1 - 0.95) of one beam.
  EXPECT_TRUE(near_rel(t.current_A[contact(d, "D1")], -(1.0 - 0.95) * emitted, 1e-9));
  // The reversed field is solved by the same device and differs (the edges run the other way).
  const TransportResult& r = device.transport(FieldSign::kReversed);
  EXPECT_LT(r.field_T * t.field_T, 0.0);
  // The collider's generalised Fano factor for balanced dilute beams at 1/3: P = -2 (Rosenow,
  // Levkivskyi & Halperin, Phys. Rev. Lett. 116, 156802 (2016)).
  const NoiseResult n = device.noise();
  bool found = false;
  for (const ColliderPrediction& c : n.colliders)
    if (d.constrictions[static_cast<std::size_t>(c.constriction)].name == "C" && c.fano) {
      found = true;
      EXPECT_TRUE(near_rel(*c.fano, -2.0, 1e-9)) << *c.fano;
    }
  EXPECT_TRUE(found);
  const PathResult p = device.paths();
  ASSERT_FALSE(p.pieces.empty());
  for (const PieceMetrics& m : p.pieces) EXPECT_GT(m.length_m, 0.0);
}

// One number, one definition: the device's currents are the ones `hallway solve --fast` writes.
TEST(Device, GivesTheNumbersTheCliPrints) {
  const std::string path = test::SourcePath("designs/02_two_source_collider.yaml");
  const std::string json_path = ::testing::TempDir() + "device_test_solve.json";
  ASSERT_EQ(test::RunHallway("solve '" + path + "' --fast --json '" + json_path + "'").exit_code, 0);
  std::ifstream in(json_path);
  const nlohmann::json j = nlohmann::json::parse(in);
  DeviceOptions options;
  options.bare_estimate = true;
  const Device device(LoadDesign(path), options);
  for (const Contact& c : device.design().contacts)
    EXPECT_EQ(j["currents_A"][c.name].get<double>(), device.transport().current_A[contact(device.design(), c.name)])
        << c.name;
}

TEST(Device, RefusesToSolveADesignThatFailsItsChecks) {
  const Device device(LoadDesign(test::SourcePath("designs/invalid/gates_overlap.yaml")));
  EXPECT_FALSE(device.usable());
  EXPECT_FALSE(device.summary().findings.empty());
  EXPECT_THROW(device.transport(), std::logic_error);
}

// Equally spaced points are started from the linear extrapolation of the last two solutions, others
// from the last one (ExtrapolatedStart, electrostatics.hpp).
TEST(Device, WarmStartsExtrapolateEquallySpacedPoints) {
  DensityMap a, b;
  a.nx = b.nx = 2;
  a.ny = b.ny = 1;
  a.density_per_m2 = {1.0, 2.0};
  b.density_per_m2 = {2.0, 2.5};
  a.energy_over_fermi = b.energy_over_fermi = {0.0, 0.0};
  WarmStarts warm;
  EXPECT_EQ(warm.StartFor({0.0}), nullptr);
  warm.Push(a, {0.0});
  EXPECT_EQ(warm.StartFor({0.1})->density_per_m2, a.density_per_m2);
  warm.Push(b, {0.1});
  const DensityMap* next = warm.StartFor({0.2});
  ASSERT_NE(next, nullptr);
  EXPECT_NEAR(next->density_per_m2[0], 3.0, 1e-12);  // 2 + (2 - 1)
  EXPECT_NEAR(next->density_per_m2[1], 3.0, 1e-12);  // 2.5 + (2.5 - 2)
  EXPECT_EQ(warm.StartFor({0.5})->density_per_m2, b.density_per_m2);  // not equally spaced
}

}  // namespace
}  // namespace hallway

namespace hallway {
namespace {

// The one scattering rule (network.hpp): every piece that ends at a port steps onto the piece leaving
// the same face (reflected) and the one leaving the other face (transmitted) with the design's t; a
// carrier from source SA can reach drain D1 (through QA's reflection and the collider) but, with the
// edges' chirality, never reaches SA again through a cold ground.
TEST(ScatteringRule, StepsAndReachOnTheColliderDemo) {
  DeviceOptions options;
  options.bare_estimate = true;
  const Device device(LoadDesign(test::SourcePath("designs/02_two_source_collider.yaml")), options);
  ASSERT_TRUE(device.usable());
  const Design& d = device.design();
  const EdgeNetwork& net = device.edges();
  int ports = 0;
  std::vector<int> from_sa;
  for (std::size_t p = 0; p < net.pieces.size(); ++p) {
    const EdgePiece& e = net.pieces[p];
    if (e.from.kind == EdgeEnd::Kind::kContact && d.contacts[static_cast<std::size_t>(e.from.index)].name == "SA")
      from_sa.push_back(static_cast<int>(p));
    const auto step = StepAtPort(d, net, static_cast<int>(p));
    if (e.to.kind == EdgeEnd::Kind::kContact) {
      EXPECT_FALSE(step);
      continue;
    }
    ASSERT_TRUE(step);
    ++ports;
    EXPECT_EQ(step->transmission, d.constrictions[static_cast<std::size_t>(e.to.index)].transmission[0]);
    ASSERT_GE(step->reflected, 0);
    ASSERT_GE(step->transmitted, 0);
    EXPECT_EQ(net.pieces[static_cast<std::size_t>(step->reflected)].from.face, e.to.face);
    EXPECT_EQ(net.pieces[static_cast<std::size_t>(step->transmitted)].from.face, 1 - e.to.face);
  }
  EXPECT_GE(ports, 6);  // three constrictions, two faces each
  ASSERT_FALSE(from_sa.empty());
  const std::vector<char> reach = ReachablePieces(d, net, from_sa);
  bool d1 = false, back_to_sa = false;
  for (std::size_t p = 0; p < net.pieces.size(); ++p) {
    if (!reach[p] || net.pieces[p].to.kind != EdgeEnd::Kind::kContact) continue;
    const std::string& to = d.contacts[static_cast<std::size_t>(net.pieces[p].to.index)].name;
    d1 = d1 || to == "D1";
    back_to_sa = back_to_sa || to == "SA";
  }
  EXPECT_TRUE(d1);
  EXPECT_FALSE(back_to_sa);
}

}  // namespace
}  // namespace hallway

namespace hallway {
namespace {

// The scattering rule asked by port and read backwards (network.hpp) is the same rule: the port overload
// gives the step of the piece that arrives there, the backward step undoes the forward one, and piece x is
// reachable downstream from piece p exactly when p is reachable upstream from x (a walk reversed).
TEST(ScatteringRule, PortOverloadAndBackwardWalkAgreeWithTheForwardRule) {
  DeviceOptions options;
  options.bare_estimate = true;
  for (const char* path : {"designs/02_two_source_collider.yaml", "designs/03_fabry_perot.yaml"}) {
    const Device device(LoadDesign(test::SourcePath(path)), options);
    ASSERT_TRUE(device.usable()) << path;
    const Design& d = device.design();
    const EdgeNetwork& net = device.edges();
    const int n = static_cast<int>(net.pieces.size());
    int ports = 0;
    for (int p = 0; p < n; ++p) {
      const EdgePiece& e = net.pieces[static_cast<std::size_t>(p)];
      const auto step = StepAtPort(d, net, p);
      if (!step) continue;
      ++ports;
      const PortStep by_port = StepAtPort(d, net, e.channel, e.to.index, e.to.face);
      EXPECT_EQ(by_port.reflected, step->reflected);
      EXPECT_EQ(by_port.transmitted, step->transmitted);
      EXPECT_EQ(by_port.transmission, step->transmission);
      const ConstrictionPorts at = PortsOf(net, e.channel, e.to.index);
      EXPECT_EQ(at.incoming[e.to.face], p);
      EXPECT_EQ(at.outgoing[e.to.face], step->reflected);
      EXPECT_EQ(at.outgoing[1 - e.to.face], step->transmitted);
      const auto back_reflected = StepBackAtPort(d, net, step->reflected);
      const auto back_transmitted = StepBackAtPort(d, net, step->transmitted);
      ASSERT_TRUE(back_reflected && back_transmitted);
      EXPECT_EQ(back_reflected->reflected, p);
      EXPECT_EQ(back_transmitted->transmitted, p);
    }
    EXPECT_GE(ports, 4) << path;  // at least two constrictions with two faces each
    std::vector<std::vector<char>> down;
    for (int p = 0; p < n; ++p) down.push_back(ReachablePieces(d, net, {p}));
    for (int x = 0; x < n; ++x) {
      const std::vector<char> up = ReachablePieces(d, net, {x}, {}, Walk::kUpstream);
      for (int p = 0; p < n; ++p)
        EXPECT_EQ(up[static_cast<std::size_t>(p)], down[static_cast<std::size_t>(p)][static_cast<std::size_t>(x)])
            << path << ": pieces " << p << " and " << x;
    }
  }
}

}  // namespace
}  // namespace hallway
