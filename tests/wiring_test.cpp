// The wiring verdict (hallway/wiring.hpp; docs/design-format.md "Wiring verdict"): `check` says whether the
// contact plan works in the design field, names the common wiring mistakes with their contacts, and
// prints a wiring card whose DC currents are `solve`'s own numbers; `solve`, `noise` and `report`
// give the same verdict.
#include <gtest/gtest.h>
#include <unistd.h>

#include <algorithm>
#include <filesystem>
#include <fstream>
#include <nlohmann/json.hpp>
#include <set>
#include <sstream>

#include "hallway/constants.hpp"
#include "hallway/design_loader.hpp"
#include "hallway/network.hpp"
#include "hallway/transport.hpp"
#include "hallway/wiring.hpp"
#include "test_support.hpp"

namespace hallway {
namespace {

namespace fs = std::filesystem;
using nlohmann::json;

fs::path Scratch(const std::string& name) {
  const fs::path dir = fs::temp_directory_path() / ("hallway_wiring_test_" + std::to_string(::getpid()));
  fs::create_directories(dir);
  return dir / name;
}

json ReadJson(const fs::path& p) {
  std::ifstream in(p);
  std::stringstream s;
  s << in.rdbuf();
  return json::parse(s.str());
}

// `hallway CMD DESIGN --json OUT [extra]`: the JSON written, after checking the exit code.
json RunJson(const std::string& cmd, const std::string& design, const std::string& extra = "") {
  const fs::path out = Scratch(cmd + "_" + fs::path(design).stem().string() + ".json");
  fs::remove(out);
  const test::CommandRun r = test::RunHallway(cmd + " '" + design + "' --json '" + out.string() + "' " + extra);
  EXPECT_EQ(r.exit_code, 0) << cmd << " " << design << "\n" << r.output;
  if (r.exit_code != 0 || !fs::exists(out)) return json::object();
  return ReadJson(out);
}

std::string Wiring(const std::string& file) {
  return test::SourcePath("tests/data/wiring/" + file);
}

// The problems of a verdict with this code, and whether any names all of `contacts`.
bool Names(const json& verdict, const std::string& code, const std::vector<std::string>& contacts) {
  for (const json& p : verdict["problems"]) {
    if (p["code"] != code) continue;
    const auto named = p["contacts"].get<std::vector<std::string>>();
    if (std::all_of(contacts.begin(), contacts.end(),
                    [&](const std::string& c) { return std::find(named.begin(), named.end(), c) != named.end(); }))
      return true;
  }
  return false;
}

TEST(WiringVerdict, ColliderDemoWorksInItsDesignField) {
  const json j = RunJson("check", test::SourcePath("designs/02_two_source_collider.yaml"));
  const json& v = j["wiring_verdict"];
  ASSERT_TRUE(v["assessed"].get<bool>()) << v.dump(2);
  EXPECT_TRUE(v["ok"].get<bool>()) << v.dump(2);
  EXPECT_TRUE(v["problems"].empty()) << v.dump(2);
  // Both amplifiers see the collider's output; the collider's inputs are dilute (5 % of the hot input:
  // the reflection 1 - t of the source constrictions at t = 0.95, the design's numbers).
  ASSERT_EQ(v["colliders"].size(), 1u);
  EXPECT_TRUE(v["colliders"][0]["inputs_dilute"].get<bool>());
  EXPECT_TRUE(v["colliders"][0]["outputs_measured"].get<bool>());
  for (const json& a : v["amplifiers"]) EXPECT_EQ(a["collider_outputs"], json::array({"C"})) << a.dump();
  // With the field reversed the demo's wiring does not work, and solve labels those warnings.
  EXPECT_FALSE(v["reversed_field_ok"].get<bool>());
}

TEST(WiringVerdict, FlippedFieldFailsButWorksReversedAndNamesTheAmplifiers) {
  const json j = RunJson("check", Wiring("collider_field_flipped.yaml"));
  const json& v = j["wiring_verdict"];
  EXPECT_FALSE(v["ok"].get<bool>()) << v.dump(2);
  EXPECT_TRUE(v["reversed_field_ok"].get<bool>()) << v.dump(2);
  EXPECT_TRUE(Names(v, "field-sign", {"D1", "D2"})) << v.dump(2);
  EXPECT_NE(v["summary"].get<std::string>().find("works with the field reversed"), std::string::npos);
  const test::CommandRun r = test::RunHallway("check '" + Wiring("collider_field_flipped.yaml") + "'");
  EXPECT_EQ(r.exit_code, 0) << r.output;  // legal design, wrong wiring: a verdict, not an error
  EXPECT_NE(r.output.find("wiring FAILS in the design field (works with the field reversed)"), std::string::npos)
      << r.output;
}

TEST(WiringVerdict, SwappedSourceAndGroundAreNamedTogether) {
  const json v = RunJson("check", Wiring("collider_source_ground_swapped.yaml"))["wiring_verdict"];
  EXPECT_FALSE(v["ok"].get<bool>()) << v.dump(2);
  EXPECT_TRUE(Names(v, "source-ground-swapped", {"GA", "SA"})) << v.dump(2);
}

TEST(WiringVerdict, AmplifierUpstreamOfItsConstrictionIsNamed) {
  const json v = RunJson("check", Wiring("qpc_amplifier_upstream.yaml"))["wiring_verdict"];
  EXPECT_FALSE(v["ok"].get<bool>()) << v.dump(2);
  EXPECT_TRUE(Names(v, "amplifier-upstream", {"NW"})) << v.dump(2);
  EXPECT_TRUE(Names(v, "source-feeds-amplifier", {"W", "NW"})) << v.dump(2);
}

TEST(WiringVerdict, GroundLeftFloatingIsNamedAsAFloatThatShouldBeAColdGround) {
  const json v = RunJson("check", Wiring("collider_ground_left_floating.yaml"))["wiring_verdict"];
  EXPECT_FALSE(v["ok"].get<bool>()) << v.dump(2);
  EXPECT_TRUE(Names(v, "float-should-be-ground", {"GA"})) << v.dump(2);
}

TEST(WiringVerdict, SourceWithOnlyAFloatingContactHasNoReturn) {
  const json v = RunJson("check", Wiring("island_no_return.yaml"))["wiring_verdict"];
  EXPECT_FALSE(v["ok"].get<bool>()) << v.dump(2);
  EXPECT_FALSE(v["reversed_field_ok"].get<bool>()) << v.dump(2);
  EXPECT_TRUE(Names(v, "island-no-return", {"W", "E"})) << v.dump(2);
  // No current flows: the card's expected current at W is zero (Kirchhoff: E carries no net current
  // and is W's only partner; common practice).
  EXPECT_EQ(v["card"][0]["contact"], "W");
  EXPECT_NEAR(v["card"][0]["current_A"].get<double>(), 0.0, 1e-24);
}

TEST(WiringVerdict, HallBarWorksAndTheCardListsTheVoltagePairs) {
  const json v = RunJson("check", Wiring("hallbar_rxy_rxx.yaml"))["wiring_verdict"];
  EXPECT_TRUE(v["ok"].get<bool>()) << v.dump(2);
  // Ideal quantum Hall bar: every probe on one edge sits at the potential of the contact upstream, so
  // the Hall voltage across the bar is the full source voltage (R_xy = h / nu e^2 with the two-terminal
  // current) and the longitudinal one is zero, both from Büttiker, Phys. Rev. B 38, 9375 (1988).
  const double vs = 25e-6;  // the design's source bias
  int hall = 0, longitudinal = 0;
  for (const json& p : v["voltage_pairs"]) {
    const auto c = p["contacts"].get<std::vector<std::string>>();
    const bool same_side = (c[0][0] == c[1][0]);  // N-N or S-S: along one edge
    if (p["kind"] == "hall") {
      ++hall;
      EXPECT_FALSE(same_side) << p.dump();
      EXPECT_TRUE(test::NearRel(std::abs(p["voltage_V"].get<double>()), vs, 1e-9)) << p.dump();
      EXPECT_TRUE(test::NearRel(p["reversed_voltage_V"].get<double>(), -p["voltage_V"].get<double>(), 1e-9));
    } else {
      ++longitudinal;
      EXPECT_TRUE(same_side) << p.dump();
      EXPECT_NEAR(p["voltage_V"].get<double>(), 0.0, 1e-9 * vs) << p.dump();
    }
  }
  EXPECT_EQ(hall, 4);          // NW-SW, NW-SE, NE-SW, NE-SE
  EXPECT_EQ(longitudinal, 2);  // NW-NE, SW-SE
  const test::CommandRun r = test::RunHallway("check '" + Wiring("hallbar_rxy_rxx.yaml") + "'");
  EXPECT_NE(r.output.find("voltage pair V(NW) - V(NE): longitudinal voltage"), std::string::npos) << r.output;
  EXPECT_NE(r.output.find("voltage pair V(NW) - V(SW): Hall voltage"), std::string::npos) << r.output;
}

// Every demo and test design that checks without errors: the verdict of `check` (bare edges) and of
// `solve --fast` is the same, and the card's currents are exactly the currents `solve --fast` prints.
std::vector<std::string> AllDesigns() {
  std::vector<std::string> out;
  for (const char* dir : {"designs", "tests/data/network", "tests/data/noise", "tests/data/electrostatics",
                          "tests/data/wiring", "tests/data/gds"})
    for (const auto& e : fs::directory_iterator(test::SourcePath(dir)))
      if (e.path().extension() == ".yaml") out.push_back(e.path().string());
  std::sort(out.begin(), out.end());
  return out;
}

std::set<std::string> Codes(const json& problems) {
  std::set<std::string> s;
  for (const json& p : problems) s.insert(p["code"].get<std::string>());
  return s;
}

TEST(WiringVerdict, CheckAndSolveAgreeOnEveryDemoAndTestDesign) {
  int compared = 0;
  for (const std::string& design : AllDesigns()) {
    const json c = RunJson("check", design);
    if (!c.contains("wiring_verdict") || !c["wiring_verdict"]["assessed"].get<bool>()) continue;
    const json s = RunJson("solve", design, "--fast");
    ASSERT_TRUE(s.contains("wiring_verdict")) << design;
    const json &vc = c["wiring_verdict"], &vs = s["wiring_verdict"];
    EXPECT_EQ(vc["ok"], vs["ok"]) << design;
    EXPECT_EQ(vc["reversed_field_ok"], vs["reversed_field_ok"]) << design;
    EXPECT_EQ(Codes(vc["problems"]), Codes(vs["problems"])) << design;
    EXPECT_EQ(vc["summary"], vs["summary"]) << design;
    for (const json& row : vc["card"])  // one number, one definition: exactly solve's currents
      EXPECT_EQ(row["current_A"].get<double>(), s["currents_A"][row["contact"].get<std::string>()].get<double>())
          << design << " " << row.dump();
    ++compared;
  }
  EXPECT_GE(compared, 12);
}

// The demos with the default (self-consistent) edges: same verdict as the bare estimate of `check`.
TEST(WiringVerdict, SelfConsistentSolveGivesTheSameVerdictOnTheDemos) {
  for (const char* f : {"designs/01_hallbar_qpc.yaml", "designs/02_two_source_collider.yaml",
                        "designs/03_fabry_perot.yaml", "tests/data/wiring/collider_field_flipped.yaml"}) {
    const std::string design = test::SourcePath(f);
    const json vc = RunJson("check", design)["wiring_verdict"], vs = RunJson("solve", design)["wiring_verdict"];
    EXPECT_EQ(vc["ok"], vs["ok"]) << f;
    EXPECT_EQ(vc["reversed_field_ok"], vs["reversed_field_ok"]) << f;
    EXPECT_EQ(Codes(vc["problems"]), Codes(vs["problems"])) << f;
  }
}

TEST(WiringVerdict, SolveAndNoiseShowTheVerdictAndLabelTheReversedField) {
  const std::string demo = test::SourcePath("designs/02_two_source_collider.yaml");
  const test::CommandRun s = test::RunHallway("solve '" + demo + "' --fast");
  ASSERT_EQ(s.exit_code, 0) << s.output;
  EXPECT_NE(s.output.find("Wiring verdict"), std::string::npos);
  EXPECT_NE(s.output.find("works in the design field"), std::string::npos) << s.output;
  EXPECT_NE(s.output.find("with the field reversed, which this design does not use] amplifier"), std::string::npos)
      << s.output;
  const json n = RunJson("noise", demo, "--fast");
  EXPECT_TRUE(n["wiring_verdict"]["ok"].get<bool>());
  const json nf = RunJson("noise", Wiring("collider_field_flipped.yaml"), "--fast");
  EXPECT_FALSE(nf["wiring_verdict"]["ok"].get<bool>());
  EXPECT_TRUE(nf["wiring_verdict"]["reversed_field_ok"].get<bool>());
}

TEST(WiringVerdict, ReportCarriesTheVerdictAndTheCard) {
  const fs::path dir = Scratch("report");
  fs::remove_all(dir);
  const test::CommandRun r = test::RunHallway("report '" + Wiring("collider_field_flipped.yaml") +
                                              "' --fast --quiet -o '" + dir.string() + "'");
  ASSERT_EQ(r.exit_code, 0) << r.output;
  const json j = ReadJson(dir / "result.json");
  EXPECT_FALSE(j["wiring_verdict"]["ok"].get<bool>());
  EXPECT_TRUE(j["wiring_verdict"]["reversed_field_ok"].get<bool>());
  std::ifstream in(dir / "report.html");
  std::stringstream h;
  h << in.rdbuf();
  EXPECT_NE(h.str().find("Wiring verdict and wiring card"), std::string::npos);
  EXPECT_NE(h.str().find("works with the field reversed"), std::string::npos);
  EXPECT_TRUE(fs::exists(dir / "wiring_card.csv"));
}

// Library: the card's currents and voltages are the transport solution's own numbers.
TEST(WiringVerdict, CardCarriesTheTransportSolutionsNumbers) {
  const Design d = LoadDesign(test::SourcePath("designs/01_hallbar_qpc.yaml"));
  const ChannelGeometry g = BuildChannelGeometry(d);
  const EdgeNetwork plus = TraceEdges(d, g, d.conditions.field_T), minus = TraceEdges(d, g, -d.conditions.field_T);
  const TransportResult tp = SolveTransport(d, plus), tm = SolveTransport(d, minus);
  const WiringVerdict v = AssessWiring(d, plus, tp, minus, tm);
  ASSERT_EQ(v.card.size(), d.contacts.size());
  for (const CardRow& r : v.card) {
    EXPECT_EQ(r.current_A, tp.current_A[static_cast<std::size_t>(r.contact)]);
    EXPECT_EQ(r.voltage_V, tp.voltage_V[static_cast<std::size_t>(r.contact)]);
  }
  // The same verdict as the one that traces the edges itself.
  const WiringVerdict w = AssessWiring(d, g);
  EXPECT_EQ(w.ok, v.ok);
  EXPECT_EQ(w.summary, v.summary);
  WiringOptions bad;
  bad.dilution_limit = 1.5;
  EXPECT_THROW(AssessWiring(d, plus, tp, minus, tm, bad), std::invalid_argument);
}

}  // namespace
}  // namespace hallway
