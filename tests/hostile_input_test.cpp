// Hostile and careless input to the design loader: extreme quantities, text that is not clean
// UTF-8, line ends, several YAML documents. Every refusal is a DesignError naming the line and key
// with a message in words (units included), never a crash or a value the solvers cannot use.
#include <gtest/gtest.h>
#include <sys/wait.h>

#include <cstdio>
#include <string>

#include "hallway/design_loader.hpp"
#include "test_support.hpp"

namespace hallway {
namespace {

using test::kBase;
using test::replace;

// The message of the DesignError that loading `text` raises ("" when it loads), with its line.
std::string Refusal(const std::string& text, int* line = nullptr, const std::string& path = "t.yaml") {
  try {
    LoadDesignFromString(text, path);
  } catch (const DesignError& e) {
    if (line) *line = e.where().line;
    return e.what();
  }
  return "";
}

bool Has(const std::string& text, const std::string& words) {
  return text.find(words) != std::string::npos;
}

// A temperature of 1e-300 K once passed; the bound is 1 nK (common practice), printed with its unit.
TEST(Hostile, TemperatureBelowAnyCryostatIsRefused) {
  int line = 0;
  const std::string m = Refusal(replace(kBase, "temperature: 15 mK", "temperature: 1e-300 K"), &line);
  EXPECT_EQ(line, 9);
  EXPECT_TRUE(Has(m, "temperature must lie between 1 nK and 300 K; got 1e-300 K")) << m;
}

// Range errors give the limits and the value with their unit: 95 mm is not "95 m".
TEST(Hostile, RangeErrorsShowTheUnit) {
  std::string m = Refusal(replace(kBase, "depth: 95 nm", "depth: 95 mm"));
  EXPECT_TRUE(Has(m, "depth must lie between 1 nm and 10 um; got 95 mm")) << m;
  m = Refusal(replace(kBase, "density: 2.3e11 cm^-2", "density: 9.9e15 cm^-2"));
  EXPECT_TRUE(Has(m, "density must lie between 1e+09 cm^-2 and 1e+13 cm^-2; got 9.9e+15 cm^-2")) << m;
  m = Refusal(replace(kBase, "mobility: 2.5e6 cm^2/Vs", "mobility: 0.5 cm^2/Vs"));
  EXPECT_TRUE(Has(m, "got 0.5 cm^2/Vs")) << m;
}

TEST(Hostile, FieldBelowOneMillitesla) {
  const std::string m = Refusal(replace(kBase, "filling: 2", "field: 1e-9 T"));
  EXPECT_TRUE(Has(m, "at least 1 mT")) << m;
}

// Each amplifier value has a range of real measurement chains (common practice).
TEST(Hostile, AmplifierValuesOutsideRealInstruments) {
  struct Case {
    const char *from, *to, *words;
  };
  for (const Case& c : {Case{"load: 10 kOhm", "load: 1e-300 Ohm", "load must lie between 1 Ohm and 1e+12 Ohm"},
                        Case{"voltage_noise: 0.25 nV/rtHz", "voltage_noise: 1e-30 V/rtHz", "voltage_noise must lie"},
                        Case{"current_noise: 5 fA/rtHz", "current_noise: 1 A/rtHz", "current_noise must lie"},
                        Case{"bandwidth: 200 kHz", "bandwidth: 1e15 Hz", "got 1e+15 Hz"},
                        Case{"integration: 20 min", "integration: 1e-9 s", "got 1 ns"}}) {
    const std::string m = Refusal(replace(kBase, c.from, c.to));
    EXPECT_TRUE(Has(m, c.words)) << c.to << ": " << m;
  }
  // Zero noise (an ideal amplifier) stays allowed.
  EXPECT_EQ(Refusal(replace(kBase, "voltage_noise: 0.25 nV/rtHz", "voltage_noise: 0 V/rtHz")), "");
}

TEST(Hostile, BiasesTooSmallToMeasureAreRefusedButZeroIsAllowed) {
  EXPECT_TRUE(Has(Refusal(replace(kBase, "W: source 10 uV", "W: source 1e-300 V")), "at least 1 fV"));
  EXPECT_TRUE(Has(Refusal(replace(kBase, "W: source 10 uV", "W: source 1e-30 A")), "at least 1 aA"));
  EXPECT_EQ(Refusal(replace(kBase, "W: source 10 uV", "W: source 0 V")), "");
}

// Two neighbouring outline points closer than 1 nm: no lithography draws that (common practice).
TEST(Hostile, OutlinePointsCloserThanOneNanometre) {
  int line = 0;
  const std::string m =
      Refusal(replace(kBase, "[10.5,-0.15],[10,-0.4]", "[10.5,-0.15],[10.4999999999,-0.1500000001],[10,-0.4]"), &line);
  EXPECT_EQ(line, 17);
  EXPECT_TRUE(Has(m, "closer than 1 nm")) << m;
}

// Names, keys and free text must be UTF-8 without control characters; messages never echo raw bytes.
TEST(Hostile, NonUtf8AndControlCharactersInTextAreRefused) {
  std::string m = Refusal(replace(kBase, "name: QL,", "name: \"Q\xFFL\","));
  EXPECT_TRUE(Has(m, "not valid UTF-8")) << m;
  EXPECT_TRUE(Has(m, "\\xFF")) << m;
  m = Refusal(replace(kBase, "name: loader test bar", "name: \"bar \\e[2J\""));
  EXPECT_TRUE(Has(m, "control character")) << m;
  EXPECT_EQ(m.find('\x1B'), std::string::npos) << "raw escape written into the message";
  m = Refusal(replace(kBase, "  depth: 95 nm", "  dep\x1Bth: 95 nm"));
  EXPECT_EQ(m.find('\x1B'), std::string::npos);
  EXPECT_FALSE(m.empty());
  // Well-formed non-ASCII text is fine in free text.
  EXPECT_EQ(Refusal(replace(kBase, "name: loader test bar", "name: Hall bar µ-Probe")), "");
}

TEST(Hostile, FileNameThatIsNotUtf8) {
  const std::string m = Refusal(kBase, nullptr, "bad\xC3(.yaml");
  EXPECT_TRUE(Has(m, "rename the file")) << m;
  EXPECT_TRUE(Has(m, "bad\\xC3(.yaml")) << m;
}

TEST(Hostile, PrintableTextEscapesWhatATerminalWouldInterpret) {
  EXPECT_EQ(PrintableText("ok µm"), "ok µm");
  EXPECT_EQ(PrintableText("a\x1B[31mb"), "a\\x1B[31mb");
  EXPECT_EQ(PrintableText("\xC2\x9B"), "\\xC2\\x9B");           // C1 control sequence introducer, as UTF-8
  EXPECT_EQ(PrintableText("\xED\xA0\x80"), "\\xED\\xA0\\x80");  // a UTF-16 surrogate is not UTF-8
  EXPECT_TRUE(IsCleanText("QL-2.a"));
  EXPECT_FALSE(IsCleanText("Q\tL"));
}

// CR-only line ends (old Mac editors) are line ends: the design loads, and lines are counted.
TEST(Hostile, CarriageReturnLineEndsAreLineEnds) {
  std::string cr = kBase;
  for (char& c : cr)
    if (c == '\n') c = '\r';
  EXPECT_EQ(Refusal(cr), "");
  int line = 0;
  const std::string m = Refusal(replace(cr, "depth: 95 nm", "depth: 95 mm"), &line);
  EXPECT_EQ(line, 5) << m;
  std::string crlf;
  for (char c : kBase) crlf += c == '\n' ? std::string("\r\n") : std::string(1, c);
  EXPECT_EQ(Refusal(crlf), "");
}

TEST(Hostile, SecondYamlDocumentIsRefused) {
  int line = 0;
  const std::string m = Refusal(kBase + "---\nhallway: 1\n", &line);
  EXPECT_TRUE(Has(m, "second YAML document")) << m;
  EXPECT_EQ(line, 33) << m;  // the first line of the second document, after the "---" on line 32
  // A trailing document marker with nothing after it is harmless.
  EXPECT_EQ(Refusal(kBase + "---\n"), "");
}

// Command-line values that are not numbers a solver can use are usage errors (exit 2) with a message.
using CliRun = test::CommandRun;
inline CliRun Hallway(const std::string& args) {
  return test::RunHallway(args);
}

TEST(Hostile, NoisePhaseThatIsNotAFiniteAngleIsAUsageError) {
  const std::string design = test::SourcePath("designs/02_two_source_collider.yaml");
  for (const char* bad : {"nan", "inf", "1e300"}) {
    const CliRun r = Hallway("noise '" + design + "' --phase " + bad);
    EXPECT_EQ(r.exit_code, 2) << bad << "\n" << r.output;
    EXPECT_NE(r.output.find("--phase must be a finite angle"), std::string::npos) << r.output;
  }
}

TEST(Hostile, MapGridOutsideOneNanometreToTenMicrometresIsAUsageError) {
  const std::string design = test::SourcePath("designs/01_hallbar_qpc.yaml");
  for (const char* bad : {"1m", "11um", "0.5nm"}) {
    const CliRun r = Hallway("map '" + design + "' --grid " + bad);
    EXPECT_EQ(r.exit_code, 2) << bad << "\n" << r.output;
    EXPECT_NE(r.output.find("--grid must lie between 1 nm and 10 um"), std::string::npos) << r.output;
  }
}

}  // namespace
}  // namespace hallway
