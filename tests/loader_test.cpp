// Design loader: what a valid file yields in SI, and that every error names file, line, column and key.
#include <gtest/gtest.h>

#include <algorithm>
#include <string>
#include <utility>
#include <vector>

#include "hallway/design_loader.hpp"
#include "test_support.hpp"

namespace hallway {
namespace {

using test::kBase;
using test::NearRel;
using test::replace;

// Loads `text` and expects a DesignError at `line` whose message holds every one of `words`.
void ExpectError(const std::string& text, int line, const std::string& key, std::initializer_list<std::string> words) {
  try {
    LoadDesignFromString(text, "t.yaml");
    ADD_FAILURE() << "no error raised";
  } catch (const DesignError& e) {
    const std::string msg = e.what();
    EXPECT_EQ(e.where().file, "t.yaml");
    if (line > 0) {
      EXPECT_EQ(e.where().line, line) << msg;
    }
    EXPECT_GT(e.where().column, 0) << msg;
    EXPECT_NE(msg.find(key), std::string::npos) << "key '" << key << "' missing from: " << msg;
    for (const auto& w : words) EXPECT_NE(msg.find(w), std::string::npos) << "'" << w << "' missing from: " << msg;
    EXPECT_EQ(msg.rfind("t.yaml:", 0), 0u) << msg;
  }
}

TEST(Loader, ValidDesignIsConvertedToSI) {
  const Design d = LoadDesignFromString(kBase, "t.yaml");
  EXPECT_EQ(d.name, "loader test bar");
  EXPECT_TRUE(NearRel(d.heterostructure.depth_m, 95e-9, 1e-14));
  EXPECT_TRUE(NearRel(d.heterostructure.density_per_m2, 2.3e15, 1e-14));
  EXPECT_TRUE(NearRel(*d.heterostructure.mobility_m2_per_Vs, 250.0, 1e-14));
  EXPECT_TRUE(NearRel(d.conditions.temperature_K, 0.015, 1e-14));
  EXPECT_EQ(d.conditions.filling, MakeFraction(2, 1));
  EXPECT_GT(d.conditions.field_T, 0.0);  // a field derived from the filling is positive
  ASSERT_EQ(d.contacts.size(), 2u);
  EXPECT_EQ(d.contacts[0].name, "W");
  EXPECT_TRUE(NearRel(d.contacts[0].outline.vertices[0].x, -70e-6, 1e-14));
  ASSERT_EQ(d.gates.size(), 2u);
  EXPECT_DOUBLE_EQ(d.gates[0].voltage_V, -0.9);
  EXPECT_GT(geometry::signed_area(d.gates[1].outline), 0.0);  // clockwise in the file, normalised
  ASSERT_EQ(d.constrictions.size(), 1u);
  EXPECT_EQ(d.constrictions[0].transmission, (std::vector<double>{1.0, 0.4}));
  ASSERT_EQ(d.wiring.size(), 2u);
  EXPECT_EQ(d.wiring[0].role, Role::kSource);
  EXPECT_DOUBLE_EQ(d.wiring[0].bias_V, 1e-5);
  EXPECT_FALSE(d.wiring[0].current_source);
  ASSERT_TRUE(d.wiring[1].amplifier);
  EXPECT_DOUBLE_EQ(d.wiring[1].amplifier->integration_s, 1200.0);
  EXPECT_EQ(d.channels.size(), 2u);
}

TEST(Loader, FieldGivesNearestPlateauAndSaysSo) {
  // n = 2.3e15 m^-2: nu = 2 at B = n h / 2e = 4.7560 T; 4.8 T gives nu = 1.9817, within 5 % of 2.
  const Design d = LoadDesignFromString(replace(kBase, "filling: 2", "field: -4.8 T"), "t.yaml");
  EXPECT_EQ(d.conditions.filling, MakeFraction(2, 1));
  EXPECT_DOUBLE_EQ(d.conditions.field_T, -4.8);
  EXPECT_TRUE(NearRel(d.conditions.filling_from_field, 1.98168, 1e-4));
  ASSERT_FALSE(d.notes.empty());
  EXPECT_NE(d.notes[0].find("nearest plateau"), std::string::npos);
}

TEST(Loader, FieldFarFromAnyPlateauIsAnError) {
  ExpectError(replace(kBase, "filling: 2", "field: 3.8 T"), 10, "conditions.field", {"not within", "plateau"});
}

TEST(Loader, FractionalFillingWithCurrentSource) {
  std::string t = replace(kBase, "filling: 2", "filling: 1/3");
  t = replace(t, "transmission: [1, 0.4]", "transmission: 0.9\n    regime: weak");
  t = replace(t, "W: source 10 uV", "W: source 2 nA");
  const Design d = LoadDesignFromString(t, "t.yaml");
  EXPECT_EQ(d.conditions.filling, MakeFraction(1, 3));
  EXPECT_EQ(d.channels.size(), 1u);
  EXPECT_EQ(*d.constrictions[0].regime, Regime::kWeak);
  EXPECT_TRUE(d.wiring[0].current_source);
  EXPECT_DOUBLE_EQ(d.wiring[0].bias_A, 2e-9);
}

TEST(Loader, ChannelsOverrideMustAddUpToTheFilling) {
  std::string t =
      replace(kBase, "amplifier:\n  load", "channels:\n  - {conductance: 1}\n  - {conductance: 1}\namplifier:\n  load");
  EXPECT_EQ(LoadDesignFromString(t, "t.yaml").channels.size(), 2u);
  t = replace(kBase, "amplifier:\n  load",
              "channels:\n  - {conductance: 1}\n  - {conductance: 1/3}\namplifier:\n  load");
  ExpectError(t, 27, "channels", {"add up to 4/3", "bulk filling is 2"});
}

TEST(Loader, BareNumberWhereAUnitIsRequired) {
  ExpectError(replace(kBase, "depth: 95 nm", "depth: 95"), 5, "heterostructure.depth", {"needs a unit", "95 nm"});
}

TEST(Loader, WrongUnitNamesTheExpectedQuantity) {
  ExpectError(replace(kBase, "temperature: 15 mK", "temperature: 15 mV"), 9, "conditions.temperature",
              {"expected a temperature"});
}

TEST(Loader, UnknownKeyListsTheAllowedOnes) {
  ExpectError(replace(kBase, "  mobility: 2.5e6 cm^2/Vs", "  mobilty: 2.5e6 cm^2/Vs"), 7, "heterostructure.mobilty",
              {"unknown key 'mobilty'", "mobility"});
}

TEST(Loader, DuplicateKeyIsAnError) {
  ExpectError(replace(kBase, "  depth: 95 nm\n", "  depth: 95 nm\n  depth: 90 nm\n"), 6, "heterostructure.depth",
              {"given twice"});
}

TEST(Loader, WrongTypeIsAnError) {
  ExpectError(replace(kBase, "depth: 95 nm", "depth: [95, nm]"), 5, "heterostructure.depth", {"not a list"});
}

TEST(Loader, DuplicateNamesAcrossObjects) {
  ExpectError(replace(kBase, "name: QR", "name: W"), 18, "gates[1].name", {"already used by a contact"});
}

TEST(Loader, UnknownGateInConstriction) {
  ExpectError(replace(kBase, "gates: [QL, QR]", "gates: [QL, QX]"), 21, "constrictions[0].gates[1]",
              {"no gate named 'QX'"});
}

TEST(Loader, WrongNumberOfChannelTransmissions) {
  ExpectError(replace(kBase, "transmission: [1, 0.4]", "transmission: [1, 0.4, 0.2]"), 22,
              "constrictions[0].transmission", {"expected 2 transmissions"});
  ExpectError(replace(kBase, "transmission: [1, 0.4]", "transmission: 0.4"), 22, "constrictions[0].transmission",
              {"2 edge channels"});
}

TEST(Loader, TransmissionOutsideUnitInterval) {
  ExpectError(replace(kBase, "transmission: [1, 0.4]", "transmission: [1.2, 0.4]"), 22,
              "constrictions[0].transmission[0]", {"between 0 and 1"});
}

TEST(Loader, UnknownContactInWiring) {
  ExpectError(replace(kBase, "  E: amplifier", "  E: amplifier\n  N: ground"), 26, "wiring.N",
              {"no contact named 'N'"});
}

TEST(Loader, UnwiredContact) {
  ExpectError(replace(kBase, "  E: amplifier\n", ""), 24, "wiring", {"contact 'E' has no role"});
}

TEST(Loader, SourceWithoutBiasOrWithWrongBias) {
  ExpectError(replace(kBase, "W: source 10 uV", "W: source"), 24, "wiring.W", {"needs its bias"});
  ExpectError(replace(kBase, "W: source 10 uV", "W: source 10 uK"), 24, "wiring.W", {"voltage", "current"});
  ExpectError(replace(kBase, "W: source 10 uV", "W: ground 10 uV"), 24, "wiring.W", {"only a source takes a bias"});
}

TEST(Loader, AmplifierOverridePerContact) {
  const std::string t = replace(kBase, "E: amplifier", "E: {role: amplifier, load: 100 kOhm}");
  const Design d = LoadDesignFromString(t, "t.yaml");
  ASSERT_TRUE(d.wiring[1].amplifier);
  EXPECT_DOUBLE_EQ(d.wiring[1].amplifier->load_Ohm, 1e5);
  EXPECT_DOUBLE_EQ(d.wiring[1].amplifier->bandwidth_Hz, 2e5);  // from the shared block
}

TEST(Loader, SelfIntersectingOutline) {
  ExpectError(
      replace(kBase, "outline: [[-60,-10],[60,-10],[60,10],[-60,10]]", "outline: [[-60,-10],[60,10],[60,-10],[-60,5]]"),
      12, "mesa.outline", {"crosses or touches itself"});
}

TEST(Loader, AbsurdCoordinates) {
  ExpectError(replace(kBase, "[[58,-6],[70,-6]", "[[58,-6],[1e30,-6]"), 15, "contacts[1].outline[1]", {"10 cm"});
}

TEST(Loader, NegativeTemperatureAndDensity) {
  ExpectError(replace(kBase, "temperature: 15 mK", "temperature: -15 mK"), 9, "conditions.temperature",
              {"absolute zero"});
  ExpectError(replace(kBase, "density: 2.3e11 cm^-2", "density: -2.3e11 cm^-2"), 6, "heterostructure.density",
              {"between"});
}

TEST(Loader, FillingAndFieldTogether) {
  ExpectError(replace(kBase, "filling: 2", "filling: 2\n  field: 4.7 T"), 11, "conditions.field", {"not both"});
}

TEST(Loader, UnsupportedFillingExplainsChannels) {
  std::string t = replace(kBase, "filling: 2", "filling: 3/7");
  ExpectError(t, 10, "conditions.filling", {"no default edge channels", "channels:"});
}

TEST(Loader, YamlSyntaxErrorHasLineAndColumn) {
  ExpectError(replace(kBase, "  depth: 95 nm", "  depth: [95 nm"), 0, "", {"YAML syntax"});
}

// YAML forbids tabs in indentation (YAML 1.2, section 6.1); yaml-cpp calls it "illegal map value" or the
// like, so the loader names the tab itself: line 5 of the base design, column 1 (or 3 after two spaces).
TEST(Loader, TabIndentationIsNamedWithLineAndColumn) {
  for (const auto& [indent, column] : std::vector<std::pair<std::string, int>>{{"\t", 1}, {"  \t", 3}}) {
    const std::string text = replace(kBase, "  depth: 95 nm", indent + "depth: 95 nm");
    ExpectError(text, 5, "", {"tab", "indentation", "spaces"});
    try {
      LoadDesignFromString(text, "t.yaml");
    } catch (const DesignError& e) {
      EXPECT_EQ(e.where().column, column) << e.what();
      EXPECT_EQ(std::string(e.what()).find("illegal map value"), std::string::npos) << e.what();
    }
  }
  // A tab that separates a key from its value is not indentation: the design loads.
  EXPECT_NO_THROW(LoadDesignFromString(replace(kBase, "  depth: 95 nm", "  depth:\t95 nm"), "t.yaml"));
}

// A bow-tie has zero signed area; it is reported as self-intersecting, naming the two edges that cross by
// their points as written (counted from 0) and the crossing point, never as "zero area".
TEST(Loader, BowTieOutlineNamesTheCrossingEdges) {
  const std::string text = replace(kBase, "outline: [[-60,-10],[60,-10],[60,10],[-60,10]]",
                                   "outline: [[-60,-10],[60,10],[60,-10],[-60,10]]");
  ExpectError(text, 12, "mesa.outline",
              {"self-intersecting", "point [0] (-60, -10)", "point [1] (60, 10)", "point [2] (60, -10)",
               "point [3] (-60, 10)", "at (0, 0) um"});
  try {
    LoadDesignFromString(text, "t.yaml");
  } catch (const DesignError& e) {
    EXPECT_EQ(std::string(e.what()).find("zero area"), std::string::npos) << e.what();
  }
  // All points on one line is still zero area.
  ExpectError(replace(kBase, "outline: [[-60,-10],[60,-10],[60,10],[-60,10]]", "outline: [[-60,0],[0,0],[60,0]]"), 12,
              "mesa.outline", {"zero area"});
}

// Writing the first point again at the end is a common way to close a ring (common practice): the repeat is
// left out with a note naming where it was written; the outline is the same as without it.
TEST(Loader, ClosingPointThatRepeatsTheFirstIsDroppedWithANote) {
  const std::string text = replace(kBase, "outline: [[-60,-10],[60,-10],[60,10],[-60,10]]",
                                   "outline: [[-60,-10],[60,-10],[60,10],[-60,10],[-60,-10]]");
  const Design d = LoadDesignFromString(text, "t.yaml");
  const Design base = LoadDesignFromString(kBase, "t.yaml");
  ASSERT_EQ(d.mesa.outline.vertices.size(), 4u);
  EXPECT_DOUBLE_EQ(geometry::area(d.mesa.outline), geometry::area(base.mesa.outline));
  const auto note = std::find_if(d.notes.begin(), d.notes.end(),
                                 [](const std::string& n) { return n.find("repeats the first") != std::string::npos; });
  ASSERT_NE(note, d.notes.end());
  EXPECT_NE(note->find("mesa.outline"), std::string::npos) << *note;
  EXPECT_NE(note->find("line 12"), std::string::npos) << *note;
  // A repeated point anywhere else is still an error.
  ExpectError(replace(kBase, "outline: [[-60,-10],[60,-10],[60,10],[-60,10]]",
                      "outline: [[-60,-10],[60,-10],[60,-10],[60,10],[-60,10]]"),
              12, "mesa.outline", {"coincide"});
}

// The format reference allows the space between number and unit to be left out; both read the same.
TEST(Loader, QuantityWithoutASpaceReadsTheSame) {
  const Design d = LoadDesignFromString(replace(kBase, "depth: 95 nm", "depth: 95nm"), "t.yaml");
  EXPECT_DOUBLE_EQ(d.heterostructure.depth_m, LoadDesignFromString(kBase, "t.yaml").heterostructure.depth_m);
  const Design g = LoadDesignFromString(
      replace(kBase, "voltage: -0.9 V, outline: [[10,-14]", "voltage: -0.9V, outline: [[10,-14]"), "t.yaml");
  EXPECT_DOUBLE_EQ(g.gates[0].voltage_V, -0.9);
}

// The gate-voltage window: defaults from design.hpp, the lab's own values, their ranges, and where each
// gate's voltage was written.
TEST(Loader, GateVoltageWindowAndWhereEachVoltageIsWritten) {
  const Design d = LoadDesignFromString(kBase, "t.yaml");
  EXPECT_EQ(d.conditions.gate_voltage_min_V, kDefaultGateVoltageMin_V);
  EXPECT_EQ(d.conditions.gate_voltage_max_V, kDefaultGateVoltageMax_V);
  EXPECT_EQ(d.gates[0].voltage_where.line, 17);
  EXPECT_EQ(d.gates[0].voltage_where.key_path, "gates[0].voltage");
  EXPECT_EQ(d.gates[1].voltage_where.line, 18);
  const Design own = LoadDesignFromString(
      replace(kBase, "filling: 2", "filling: 2\n  gate_voltage_min: -1.5 V\n  gate_voltage_max: 300 mV"), "t.yaml");
  EXPECT_DOUBLE_EQ(own.conditions.gate_voltage_min_V, -1.5);
  EXPECT_DOUBLE_EQ(own.conditions.gate_voltage_max_V, 0.3);
  ExpectError(replace(kBase, "filling: 2", "filling: 2\n  gate_voltage_min: 1 V"), 11, "conditions.gate_voltage_min",
              {"between", "-20 V", "0 V"});
  ExpectError(replace(kBase, "filling: 2", "filling: 2\n  gate_voltage_max: -0.2 V"), 11, "conditions.gate_voltage_max",
              {"between"});
  ExpectError(replace(kBase, "filling: 2", "filling: 2\n  gate_voltage_min: -2"), 11, "conditions.gate_voltage_min",
              {"needs a unit"});
}

TEST(Loader, DeepNestingIsRefusedBeforeParsing) {
  ExpectError(kBase + "extra: " + std::string(200, '[') + std::string(200, ']') + "\n", 32, "", {"nested deeper"});
}

TEST(Loader, EmptyFile) {
  ExpectError("", 1, "", {"empty"});
}

TEST(Loader, UnsupportedFormatVersion) {
  ExpectError(replace(kBase, "hallway: 1", "hallway: 2"), 1, "hallway", {"format 1"});
}

TEST(Loader, MissingFileIsADesignError) {
  EXPECT_THROW(LoadDesign("/nonexistent/hallway/design.yaml"), DesignError);
}

// The base design's amplifier block ends at line 31 (`integration`); one optional key is added after it.
std::string with_amplifier_line(const std::string& line) {
  return replace(kBase, "  integration: 20 min\n", "  integration: 20 min\n  " + line + "\n");
}

TEST(Loader, AmplifierLoadTemperatureAndReferenceSubtractionDefaultsAndValues) {
  const Design base = LoadDesignFromString(kBase, "t.yaml");
  ASSERT_TRUE(base.wiring[1].amplifier);
  EXPECT_FALSE(base.wiring[1].amplifier->load_temperature_K);  // default: the design temperature
  EXPECT_FALSE(base.wiring[1].amplifier->reference_subtraction);

  const Design cold = LoadDesignFromString(with_amplifier_line("load_temperature: 4.2 K"), "t.yaml");
  ASSERT_TRUE(cold.wiring[1].amplifier && cold.wiring[1].amplifier->load_temperature_K);
  EXPECT_TRUE(NearRel(*cold.wiring[1].amplifier->load_temperature_K, 4.2, 1e-15));
  EXPECT_TRUE(NearRel(*cold.amplifier->load_temperature_K, 4.2, 1e-15));
  const Design milli = LoadDesignFromString(with_amplifier_line("load_temperature: 800 mK"), "t.yaml");
  EXPECT_TRUE(NearRel(*milli.wiring[1].amplifier->load_temperature_K, 0.8, 1e-15));

  for (const char* yes : {"true", "True", "TRUE"}) {
    const Design on = LoadDesignFromString(with_amplifier_line(std::string("reference_subtraction: ") + yes), "t.yaml");
    EXPECT_TRUE(on.wiring[1].amplifier->reference_subtraction) << yes;
  }
  const Design off = LoadDesignFromString(with_amplifier_line("reference_subtraction: false"), "t.yaml");
  EXPECT_FALSE(off.wiring[1].amplifier->reference_subtraction);

  // Per contact, like the other amplifier keys: the long form overrides the shared block.
  std::string t = with_amplifier_line("load_temperature: 4.2 K\n  reference_subtraction: true");
  t = replace(t, "E: amplifier", "E: {role: amplifier, load_temperature: 1.5 K, reference_subtraction: false}");
  const Design over = LoadDesignFromString(t, "t.yaml");
  EXPECT_TRUE(NearRel(*over.wiring[1].amplifier->load_temperature_K, 1.5, 1e-15));
  EXPECT_FALSE(over.wiring[1].amplifier->reference_subtraction);
  EXPECT_TRUE(over.amplifier->reference_subtraction);  // the shared block keeps its own
  // A contact that overrides something else inherits both from the shared block.
  t = replace(with_amplifier_line("load_temperature: 4.2 K\n  reference_subtraction: true"), "E: amplifier",
              "E: {role: amplifier, load: 100 kOhm}");
  const Design inherit = LoadDesignFromString(t, "t.yaml");
  EXPECT_TRUE(NearRel(*inherit.wiring[1].amplifier->load_temperature_K, 4.2, 1e-15));
  EXPECT_TRUE(inherit.wiring[1].amplifier->reference_subtraction);
}

TEST(Loader, AmplifierLoadTemperatureNeedsATemperatureUnit) {
  ExpectError(with_amplifier_line("load_temperature: 4.2 V"), 32, "amplifier.load_temperature",
              {"expected a temperature"});
  ExpectError(with_amplifier_line("load_temperature: 4.2"), 32, "amplifier.load_temperature",
              {"a temperature needs a unit"});
  ExpectError(replace(kBase, "E: amplifier", "E: {role: amplifier, load_temperature: 4 mV}"), 25,
              "wiring.E.load_temperature", {"expected a temperature"});
}

TEST(Loader, AmplifierLoadTemperatureOutsidePhysicalRange) {
  ExpectError(with_amplifier_line("load_temperature: -4.2 K"), 32, "amplifier.load_temperature", {"absolute zero"});
  ExpectError(with_amplifier_line("load_temperature: 0 K"), 32, "amplifier.load_temperature", {"absolute zero"});
  ExpectError(with_amplifier_line("load_temperature: 400 K"), 32, "amplifier.load_temperature",
              {"above 300 K", "room temperature"});
}

TEST(Loader, ReferenceSubtractionMustBeABoolean) {
  ExpectError(with_amplifier_line("reference_subtraction: yes"), 32, "amplifier.reference_subtraction",
              {"expected true or false", "'yes'"});
  ExpectError(with_amplifier_line("reference_subtraction: 1"), 32, "amplifier.reference_subtraction",
              {"expected true or false"});
  ExpectError(with_amplifier_line("reference_subtraction: \"true\""), 32, "amplifier.reference_subtraction",
              {"unquoted"});
  ExpectError(with_amplifier_line("reference_subtraction: [true]"), 32, "amplifier.reference_subtraction",
              {"true or false", "not a list"});
}

TEST(Loader, NewAmplifierKeysAreCheckedLikeTheOthers) {
  ExpectError(with_amplifier_line("reference_subtract: true"), 32, "amplifier.reference_subtract",
              {"unknown key 'reference_subtract'", "reference_subtraction", "load_temperature"});
  ExpectError(with_amplifier_line("load_temperature: 4.2 K\n  load_temperature: 1 K"), 33, "amplifier.load_temperature",
              {"given twice"});
  ExpectError(replace(kBase, "W: source 10 uV", "W: {role: source, bias: 10 uV, reference_subtraction: true}"), 24,
              "wiring.W", {"only for amplifier contacts"});
}

}  // namespace
}  // namespace hallway
