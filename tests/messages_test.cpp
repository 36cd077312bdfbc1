// Messages a user acts on: errors about a swept design cite the line of the user's own file (SetDesignValue
// edits the design in place, every other byte kept), and advice never asks for an option already given.
#include <gtest/gtest.h>

#include <fstream>
#include <sstream>
#include <string>
#include <tuple>
#include <vector>

#include "hallway/design_loader.hpp"
#include "hallway/units.hpp"
#include "test_support.hpp"

namespace hallway {
namespace {

std::vector<std::string> lines_of(const std::string& text) {
  std::vector<std::string> out;
  std::istringstream in(text);
  for (std::string line; std::getline(in, line);) out.push_back(line);
  return out;
}

std::string read(const std::string& path) {
  std::ifstream in(path);
  std::stringstream ss;
  ss << in.rdbuf();
  return ss.str();
}

// The 1-based number of the first line of `text` that contains `needle`.
std::size_t line_of(const std::string& text, const std::string& needle) {
  const auto lines = lines_of(text);
  for (std::size_t i = 0; i < lines.size(); ++i)
    if (lines[i].find(needle) != std::string::npos) return i + 1;
  return 0;
}

TEST(DesignEdit, OnlyTheChangedValueDiffers) {
  const std::string path = test::SourcePath("designs/02_two_source_collider.yaml");
  const std::string text = read(path);
  // A value inside a flow map ({name: CN, voltage: -0.35 V, ...}), one in a block map, a source's bias.
  for (const auto& [key, value] : std::vector<std::pair<std::string, std::string>>{
           {"gates.CN.voltage", "-0.5 V"}, {"constrictions.C.transmission", "0.7"}, {"conditions.temperature", "30 mK"}}) {
    const std::string edited = SetDesignValue(text, path, key, value);
    const auto a = lines_of(text), b = lines_of(edited);
    ASSERT_EQ(a.size(), b.size()) << key;
    int differing = 0;
    for (std::size_t i = 0; i < a.size(); ++i) differing += a[i] != b[i];
    EXPECT_EQ(differing, 1) << key;
    EXPECT_NE(edited.find(value), std::string::npos) << key;
    EXPECT_NO_THROW(LoadDesignFromString(edited, path)) << key;
  }
}

TEST(DesignEdit, FlowListElementAndComments) {
  const std::string text =
      "a: [1, 0.5]   # two channels\n"
      "b:\n"
      "  c: 'x y'  # quoted\n";
  EXPECT_EQ(SetDesignValue(text, "t.yaml", "a[1]", "0.25"), "a: [1, 0.25]   # two channels\nb:\n  c: 'x y'  # quoted\n");
  EXPECT_EQ(SetDesignValue(text, "t.yaml", "b.c", "z"), "a: [1, 0.5]   # two channels\nb:\n  c: z  # quoted\n");
  EXPECT_THROW(SetDesignValue(text, "t.yaml", "a[2]", "1"), DesignError);
  EXPECT_THROW(SetDesignValue(text, "t.yaml", "b.d", "1"), DesignError);
}

// A sweep whose range leaves the allowed interval is refused with the line of the user's file.
TEST(DesignEdit, SweepErrorCitesTheUsersLine) {
  const std::string path = test::SourcePath("designs/02_two_source_collider.yaml");
  const std::size_t line = line_of(read(path), "name: C,  gates: [CN, CS], transmission");
  ASSERT_GT(line, 0u);
  const test::CommandRun r = test::RunHallway("sweep '" + path +
                                              "' --vary constrictions.C.transmission=0.5:1.5:3 --fast --output "
                                              "/tmp/hallway-design-edit-unused.csv");
  EXPECT_EQ(r.exit_code, 1) << r.output;
  EXPECT_NE(r.output.find(":" + std::to_string(line) + ":"), std::string::npos) << r.output;
}

// A grid refused under --fast (the constriction windows of `paths` still need one) must not suggest
// --fast; without --fast it does.
TEST(Advice, NeverSuggestsAnOptionAlreadyGiven) {
  const std::string design = test::SourcePath("designs/02_two_source_collider.yaml");
  const test::CommandRun fast = test::RunHallway("paths '" + design + "' --fast --max-memory 1MiB");
  EXPECT_EQ(fast.exit_code, 5) << fast.output;
  EXPECT_EQ(fast.output.find("Use --fast"), std::string::npos) << fast.output;
  EXPECT_NE(fast.output.find("--max-memory"), std::string::npos) << fast.output;
  const test::CommandRun slow = test::RunHallway("solve '" + design + "' --max-memory 1MiB");
  EXPECT_EQ(slow.exit_code, 5) << slow.output;
  EXPECT_NE(slow.output.find("Use --fast"), std::string::npos) << slow.output;
}

// A unit typo in any key of the design gets the nearest known unit, with file, line, column and key. One
// case per unit family the format uses (docs/design-format.md); the typos are common ones (common
// practice: a letter in the wrong case, a letter added). Line numbers are those of test::kBase.
TEST(UnitTypos, EveryUnitFamilyOfTheFormatGetsASuggestion) {
  struct Case {
    const char* from;
    const char* to;
    int line;
    const char* key;
    const char* meant;
  };
  const Case cases[] = {
      {"depth: 95 nm", "depth: 95 NM", 5, "heterostructure.depth", "nm"},               // length
      {"2.3e11 cm^-2", "2.3e11 CM^-2", 6, "heterostructure.density", "cm"},             // sheet density
      {"2.5e6 cm^2/Vs", "2.5e6 cm^2/vs", 7, "heterostructure.mobility", "Vs"},          // mobility
      {"temperature: 15 mK", "temperature: 15 mk", 9, "conditions.temperature", "mK"},  // temperature
      {"filling: 2", "field: 4.75 t", 10, "conditions.field", "T"},                     // field
      {"voltage: -0.9 V, outline: [[10,-14]", "voltage: -0.3 mv, outline: [[10,-14]", 17, "gates[0].voltage", "mV"},
      {"W: source 10 uV", "W: source 2 na", 24, "wiring.W", "nA"},                          // current
      {"load: 10 kOhm", "load: 10 KOhm", 27, "amplifier.load", "kOhm"},                     // resistance
      {"0.25 nV/rtHz", "0.25 nv/rtHz", 28, "amplifier.voltage_noise", "nV"},                // voltage noise
      {"5 fA/rtHz", "5 fa/rtHz", 29, "amplifier.current_noise", "fA"},                      // current noise
      {"bandwidth: 200 kHz", "bandwidth: 200 khz", 30, "amplifier.bandwidth", "kHz"},       // frequency
      {"integration: 20 min", "integration: 20 mins", 31, "amplifier.integration", "min"},  // time
  };
  for (const Case& c : cases) {
    try {
      LoadDesignFromString(test::replace(test::kBase, c.from, c.to), "t.yaml");
      ADD_FAILURE() << c.to << ": no error";
    } catch (const DesignError& e) {
      const std::string msg = e.what();
      EXPECT_EQ(e.where().line, c.line) << msg;
      EXPECT_GT(e.where().column, 0) << msg;
      EXPECT_EQ(e.where().key_path, c.key) << msg;
      EXPECT_EQ(msg.rfind("t.yaml:" + std::to_string(c.line) + ":", 0), 0u) << msg;
      EXPECT_NE(msg.find(std::string("did you mean '") + c.meant + "'"), std::string::npos) << msg;
    }
  }
  // The two families no design key uses yet, through the parser itself.
  for (const auto& [text, kind, meant] :
       {std::tuple{"10 uev", units::Kind::kEnergy, "ueV"}, std::tuple{"2 fFF", units::Kind::kCapacitance, "fF"}}) {
    try {
      units::Parse(text, kind);
      ADD_FAILURE() << text << ": no error";
    } catch (const units::UnitError& e) {
      EXPECT_NE(std::string(e.what()).find(std::string("did you mean '") + meant + "'"), std::string::npos) << e.what();
    }
  }
}

}  // namespace
}  // namespace hallway
