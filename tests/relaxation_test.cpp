// Source-to-splitter distances (docs/models.md, Edge velocity and lengths): the relaxation length is a
// configurable rule of thumb (common practice), never applied to an interferometer arm, which is judged
// against the thermal length hbar v / k_B T through X / sinh X; and the two input paths of a collider
// in a symmetric layout have equal lengths.
#include <gtest/gtest.h>

#include <unistd.h>
#include <cmath>
#include <filesystem>
#include <fstream>
#include <map>
#include <nlohmann/json.hpp>
#include <numbers>
#include <utility>

#include "hallway/constants.hpp"
#include "hallway/design_loader.hpp"
#include "hallway/device.hpp"
#include "hallway/network.hpp"
#include "hallway/paths.hpp"
#include "hallway/transport.hpp"
#include "test_support.hpp"

namespace hallway {
namespace {

using test::NearRel;

// The bare estimate: no density map, so every piece drifts at PathOptions::default_velocity_m_per_s.
struct Edges {
  Design d;
  EdgeNetwork net;
  TransportResult tr;
};

Edges edges_of(Design design) {
  Edges e{std::move(design), {}, {}};
  e.net = TraceEdges(e.d, BuildChannelGeometry(e.d), std::abs(e.d.conditions.field_T));
  e.tr = SolveTransport(e.d, e.net);
  return e;
}

const std::string& name_of(const Design& d, int q) {
  return d.constrictions[static_cast<std::size_t>(q)].name;
}

int count_findings(const PathResult& r, const std::string& code) {
  int n = 0;
  for (const Finding& f : r.findings) n += f.code == code ? 1 : 0;
  return n;
}

// hbar v / k_B T (docs/models.md, Edge velocity and lengths), written out here.
double thermal_length(double v, double temperature_K) {
  return constants::kHbar_Js * v / (constants::kBoltzmann_J_per_K * temperature_K);
}

// The Fabry-Perot demo at filling 1: both edges between Q1 and Q2 are arms of the cavity loop. They get
// no relaxation check; each is judged on the loop's round trip against hbar v / k_B T, with
// X / sinh X, X = pi k_B T dL / (hbar v) (docs/models.md, Edge velocity and lengths) computed here.
TEST(Relaxation, FabryPerotArmsAreJudgedByTheThermalLengthNotByRelaxation) {
  const Edges e = edges_of(LoadDesign(test::SourcePath("designs/03_fabry_perot.yaml")));
  const PathResult r = ComputePaths(e.d, e.net, e.tr, nullptr);
  ASSERT_EQ(r.source_paths.size(), 2u);
  EXPECT_EQ(count_findings(r, "path-long"), 0);
  const double v = PathOptions{}.default_velocity_m_per_s;
  const double lt = thermal_length(v, e.d.conditions.temperature_K);
  // 2e4 m/s at 20 mK: hbar v / k_B T = 7.638 um (hand arithmetic with CODATA 2018 hbar and k_B;
  // Tiesinga et al., Rev. Mod. Phys. 93, 025010 (2021)).
  EXPECT_TRUE(NearRel(lt, 7.638e-6, 1e-3));
  int warned = 0;
  for (const SourcePath& s : r.source_paths) {
    ASSERT_TRUE(s.loop.has_value()) << name_of(e.d, s.source) << " -> " << name_of(e.d, s.target);
    EXPECT_FALSE(s.beyond_relaxation);
    const LoopMetrics& l = r.loops[static_cast<std::size_t>(*s.loop)];
    EXPECT_TRUE(NearRel(s.path_difference_m, l.length_m, 1e-12));  // the piece lies on the cavity loop
    EXPECT_TRUE(NearRel(s.path_thermal_length_m, lt, 1e-9));
    const double x = std::numbers::pi * s.path_difference_m / lt;
    EXPECT_TRUE(NearRel(s.visibility, x / std::sinh(x), 1e-9));
    EXPECT_TRUE(NearRel(s.visibility, l.visibility, 1e-9));  // one number: the loop's own factor
    EXPECT_EQ(s.beyond_thermal_length, s.path_difference_m > lt);
    warned += s.beyond_thermal_length ? 1 : 0;
    // Beside the distance: its time of flight L / v and the piece's thermal length.
    EXPECT_TRUE(NearRel(s.time_of_flight_s, s.distance_m / v, 1e-12));
    EXPECT_TRUE(NearRel(s.thermal_length_m, lt, 1e-9));
  }
  // The cavity is about 3 um x 5.8 um (hand geometry, Paths.FabryPerotLoopAreaAgreesWithCgal...): a round
  // trip near 18 um, beyond 7.6 um, so both arms warn.
  EXPECT_EQ(warned, 2);
  EXPECT_EQ(count_findings(r, "arm-thermal"), 2);
}

// The collider demo at 1/3: its source-to-collider paths are no interferometer arms and are still
// compared with the rule of thumb, 3 um at a fractional filling (common practice), or with the user's.
TEST(Relaxation, ColliderPathsAreComparedWithTheConfigurableRuleOfThumb) {
  const Edges e = edges_of(LoadDesign(test::SourcePath("designs/02_two_source_collider.yaml")));
  const PathResult r = ComputePaths(e.d, e.net, e.tr, nullptr);
  EXPECT_TRUE(NearRel(r.relaxation_length_m, 3e-6, 1e-12));  // common practice, fractional filling
  EXPECT_NE(r.relaxation_rule.find("rule of thumb"), std::string::npos);
  EXPECT_NE(r.relaxation_rule.find("common practice"), std::string::npos);
  int to_collider = 0;
  for (const SourcePath& s : r.source_paths) {
    if (name_of(e.d, s.target) != "C") continue;
    ++to_collider;
    EXPECT_FALSE(s.loop.has_value());
    EXPECT_GT(s.distance_m, 4e-6);  // about 5 um down the central gates (Paths.SourceToColliderDistances...)
    EXPECT_TRUE(s.beyond_relaxation);
    EXPECT_TRUE(NearRel(s.time_of_flight_s, s.distance_m / PathOptions{}.default_velocity_m_per_s, 1e-12));
    EXPECT_TRUE(NearRel(s.thermal_length_m,
                        thermal_length(PathOptions{}.default_velocity_m_per_s, e.d.conditions.temperature_K), 1e-9));
  }
  EXPECT_EQ(to_collider, 2);
  EXPECT_GE(count_findings(r, "path-long"), 2);
  EXPECT_EQ(count_findings(r, "arm-thermal"), 0);

  PathOptions longer;
  longer.relaxation_length_m = 20e-6;  // the user's own rule
  const PathResult q = ComputePaths(e.d, e.net, e.tr, nullptr, longer);
  EXPECT_EQ(count_findings(q, "path-long"), 0);
  for (const SourcePath& s : q.source_paths) EXPECT_FALSE(s.beyond_relaxation);
  EXPECT_NE(q.relaxation_rule.find("set by the user"), std::string::npos);
}

TEST(Relaxation, RuleOfThumbDependsOnTheFilling) {
  // Common practice (docs/models.md, Edge velocity and lengths): 1 um at integer fillings >= 2, 3 um otherwise.
  EXPECT_DOUBLE_EQ(RelaxationRuleOfThumb_m(MakeFraction(2, 1)), 1e-6);
  EXPECT_DOUBLE_EQ(RelaxationRuleOfThumb_m(MakeFraction(1, 1)), 3e-6);
  EXPECT_DOUBLE_EQ(RelaxationRuleOfThumb_m(MakeFraction(2, 3)), 3e-6);
}

// What `hallway paths` prints for the Fabry-Perot demo: no relaxation warning, the thermal length and
// visibility factor instead, and the JSON keys named with their units.
TEST(Relaxation, FabryPerotPathsOutputStatesTheThermalLength) {
  namespace fs = std::filesystem;
  const fs::path out = fs::temp_directory_path() / ("hallway_relaxation_" + std::to_string(::getpid()) + ".json");
  const test::CommandRun run = test::RunHallway("paths '" + test::SourcePath("designs/03_fabry_perot.yaml") +
                                                "' --fast --json '" + out.string() + "'");
  ASSERT_EQ(run.exit_code, 0) << run.output;
  EXPECT_EQ(run.output.find("beyond the relaxation"), std::string::npos) << run.output;
  EXPECT_NE(run.output.find("interferometer arm"), std::string::npos) << run.output;
  EXPECT_NE(run.output.find("X/sinh X"), std::string::npos) << run.output;
  std::ifstream in(out);
  const nlohmann::json j = nlohmann::json::parse(in);
  fs::remove(out);
  const auto& sources = j.at("source_paths");
  ASSERT_EQ(sources.size(), 2u);
  for (const auto& s : sources) {
    EXPECT_TRUE(s.at("interferometer_arm").get<bool>());
    EXPECT_FALSE(s.at("beyond_relaxation_length").get<bool>());
    for (const char* key : {"distance_m", "time_of_flight_s", "thermal_length_m", "relaxation_length_m",
                            "path_difference_m", "path_thermal_length_m", "thermal_visibility"})
      EXPECT_TRUE(s.at(key).is_number()) << key;
  }
  EXPECT_TRUE(j.at("relaxation_rule").is_string());
}

// A collider C between gates CN and CS, with source gates at y = +-5 um on both sides of the central
// gates: the layout is mirror-symmetric about both axes through C's gap (x = 0 and y = 0). A reflection
// reverses the chirality of the edges, so one mirror maps an input path of C onto an output path
// (QA -> C onto C -> QA2); the two inputs QA -> C and QB -> C are images under the product of the two
// mirrors (the half turn about C). All four must be equal. The contacts W and E between the source
// gates keep the band between them from closing into a cavity (QA -> C -> QB2 -> QA, a loop).
const char* kSymmetricCollider = R"(hallway: 1
name: mirror-symmetric collider (test)
units: um
heterostructure:
  depth: 95 nm
  density: 1.1e11 cm^-2
  mobility: 9e6 cm^2/Vs
conditions:
  temperature: 12 mK
  filling: 1/3
mesa:
  outline: [[-20,-20],[20,-20],[20,20],[-20,20]]
  etch_depletion: 150 nm
contacts:
  - {name: SA, outline: [[-24,-16],[-18,-16],[-18,-12],[-24,-12]]}
  - {name: GA, outline: [[-24,12],[-18,12],[-18,16],[-24,16]]}
  - {name: SB, outline: [[18,12],[24,12],[24,16],[18,16]]}
  - {name: GB, outline: [[18,-16],[24,-16],[24,-12],[18,-12]]}
  - {name: D1, outline: [[-16,-24],[-12,-24],[-12,-18],[-16,-18]]}
  - {name: D2, outline: [[12,18],[16,18],[16,24],[12,24]]}
  - {name: D3, outline: [[12,-24],[16,-24],[16,-18],[12,-18]]}
  - {name: D4, outline: [[-16,18],[-12,18],[-12,24],[-16,24]]}
  - {name: W,  outline: [[-24,-2],[-18,-2],[-18,2],[-24,2]]}
  - {name: E,  outline: [[18,-2],[24,-2],[24,2],[18,2]]}
gates:
  - {name: CN, voltage: -0.35 V, outline: [[-0.5,0.15],[0.5,0.15],[0.5,25],[-0.5,25]]}
  - {name: CS, voltage: -0.35 V, outline: [[-0.5,-25],[0.5,-25],[0.5,-0.15],[-0.5,-0.15]]}
  - {name: AW, voltage: -0.30 V, outline: [[-25,5],[-0.8,5],[-0.8,6],[-25,6]]}
  - {name: AE, voltage: -0.30 V, outline: [[0.8,5],[25,5],[25,6],[0.8,6]]}
  - {name: BW, voltage: -0.30 V, outline: [[-25,-6],[-0.8,-6],[-0.8,-5],[-25,-5]]}
  - {name: BE, voltage: -0.30 V, outline: [[0.8,-6],[25,-6],[25,-5],[0.8,-5]]}
constrictions:
  - {name: QA,  gates: [AW, CN], transmission: 0.95}
  - {name: QA2, gates: [AE, CN], transmission: 0.95}
  - {name: QB2, gates: [BW, CS], transmission: 0.95}
  - {name: QB,  gates: [BE, CS], transmission: 0.95}
  - {name: C,   gates: [CN, CS], transmission: 0.9, regime: weak}
wiring:
  SA: source 30 uV
  SB: source 30 uV
  GA: ground
  GB: ground
  D1: amplifier
  D2: amplifier
  D3: ground
  D4: ground
  W: ground
  E: ground
amplifier:
  load: 100 kOhm
  voltage_noise: 0.25 nV/rtHz
  current_noise: 2 fA/rtHz
  bandwidth: 100 kHz
  integration: 30 min
)";

// The paths into and out of C along the central gates are equal within one cell of the saddle search
// (min(gap, depth) / 8 = 11.9 nm for the 300 nm gap at 95 nm depth, network.cpp MakeSlit) under the
// bare estimate; the slit through the saddle replaced the gap's corner (issue: 2.63 against 2.01 um).
TEST(Relaxation, SymmetricColliderHasEqualInputPaths) {
  const Edges e = edges_of(LoadDesignFromString(kSymmetricCollider, "symmetric_collider.yaml"));
  const PathResult r = ComputePaths(e.d, e.net, e.tr, nullptr);
  const double cell = std::min(0.3e-6, e.d.heterostructure.depth_m) / 8.0;
  std::map<std::string, double> by_name;
  for (const SourcePath& s : r.source_paths) {
    by_name[name_of(e.d, s.source) + "->" + name_of(e.d, s.target)] = s.distance_m;
    EXPECT_FALSE(s.loop.has_value());
  }
  for (const char* key : {"QA->C", "QB->C", "C->QA2", "C->QB2"}) ASSERT_EQ(by_name.count(key), 1u) << key;
  const double in_a = by_name["QA->C"], in_b = by_name["QB->C"];
  RecordProperty("input_QA_m", std::to_string(in_a));
  RecordProperty("input_QB_m", std::to_string(in_b));
  EXPECT_NEAR(in_a, in_b, cell) << "inputs " << in_a << " and " << in_b;
  EXPECT_NEAR(in_a, by_name["C->QA2"], cell);  // its mirror image about x = 0
  EXPECT_NEAR(in_b, by_name["C->QB2"], cell);  // its mirror image about x = 0
  // From QA's gap (y = 5 to 6 um) down CN's flank to the collider at y = 0: about 5 um (hand geometry).
  EXPECT_GT(in_a, 4e-6);
  EXPECT_LT(in_a, 7e-6);
}

// The same layout on the self-consistent density (a coarse 80 nm grid to keep the test short), where
// the slit follows the density's saddle (network.cpp MakeSlit): inputs and their mirror images equal
// within one grid cell. Measured on the automatic 40.6 nm grid of `hallway paths`: 5.9125 and 5.9213 um
// for the inputs, 5.9192 and 5.9103 um for their images.
TEST(Relaxation, SymmetricColliderOnTheDensityHasEqualInputPaths) {
  DeviceOptions options;
  options.electrostatics.grid_m = 80e-9;
  const Device device(LoadDesignFromString(kSymmetricCollider, "symmetric_collider.yaml"), options);
  ASSERT_TRUE(device.usable());
  ASSERT_NE(device.density(), nullptr);
  const double cell = device.density()->cell_m;
  const PathResult r = ComputePaths(device.design(), device.edges(), device.transport(), device.density());
  std::map<std::string, double> by_name;
  for (const SourcePath& s : r.source_paths)
    by_name[name_of(device.design(), s.source) + "->" + name_of(device.design(), s.target)] = s.distance_m;
  for (const char* key : {"QA->C", "QB->C", "C->QA2", "C->QB2"}) ASSERT_EQ(by_name.count(key), 1u) << key;
  EXPECT_NEAR(by_name["QA->C"], by_name["QB->C"], cell);
  EXPECT_NEAR(by_name["QA->C"], by_name["C->QA2"], cell);
  EXPECT_NEAR(by_name["QB->C"], by_name["C->QB2"], cell);
}

}  // namespace
}  // namespace hallway
