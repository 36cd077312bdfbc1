// Shared helpers for the tests: relative comparison and the paths of the source tree.
#pragma once

#include <gtest/gtest.h>

#include <sys/wait.h>

#include <cmath>
#include <cstdio>
#include <string>

namespace hallway::test {

// |actual - expected| <= rel * |expected|, with a message that shows both and the ratio.
inline ::testing::AssertionResult NearRel(double actual, double expected, double rel) {
  const double err = std::abs(actual - expected);
  if (err <= rel * std::abs(expected)) return ::testing::AssertionSuccess();
  return ::testing::AssertionFailure() << "actual " << actual << " expected " << expected << " relative error "
                                       << err / std::abs(expected) << " > " << rel;
}

inline std::string SourcePath(const std::string& rel) {
  return std::string(HALLWAY_SOURCE_DIR) + "/" + rel;
}

// A small valid design; tests replace one line to break it. Line numbers (1-based) matter below.
inline const std::string kBase = R"(hallway: 1
name: loader test bar
units: um
heterostructure:
  depth: 95 nm
  density: 2.3e11 cm^-2
  mobility: 2.5e6 cm^2/Vs
conditions:
  temperature: 15 mK
  filling: 2
mesa:
  outline: [[-60,-10],[60,-10],[60,10],[-60,10]]
contacts:
  - {name: W, outline: [[-70,-6],[-58,-6],[-58,6],[-70,6]]}
  - {name: E, outline: [[58,-6],[70,-6],[70,6],[58,6]]}
gates:
  - {name: QL, voltage: -0.9 V, outline: [[10,-14],[11,-14],[11,-0.4],[10.5,-0.15],[10,-0.4]]}
  - {name: QR, voltage: -0.9 V, outline: [[10,14],[10,0.4],[10.5,0.15],[11,0.4],[11,14]]}
constrictions:
  - name: Q
    gates: [QL, QR]
    transmission: [1, 0.4]
wiring:
  W: source 10 uV
  E: amplifier
amplifier:
  load: 10 kOhm
  voltage_noise: 0.25 nV/rtHz
  current_noise: 5 fA/rtHz
  bandwidth: 200 kHz
  integration: 20 min
)";

inline std::string replace(const std::string& text, const std::string& from, const std::string& to) {
  const auto at = text.find(from);
  EXPECT_NE(at, std::string::npos) << "test bug: '" << from << "' not in the base design";
  std::string out = text;
  if (at != std::string::npos) out.replace(at, from.size(), to);
  return out;
}

#ifdef HALLWAY_EXE
// The built executable run with `args` (a shell command line), stdout and stderr together.
struct CommandRun {
  int exit_code = -1;
  std::string output;
};
inline CommandRun RunHallway(const std::string& args) {
  const std::string cmd = std::string("'") + HALLWAY_EXE + "' " + args + " 2>&1";
  CommandRun r;
  FILE* p = popen(cmd.c_str(), "r");
  if (!p) return r;
  char buf[4096];
  std::size_t n = 0;
  while ((n = fread(buf, 1, sizeof buf, p)) > 0) r.output.append(buf, n);
  const int status = pclose(p);
  r.exit_code = WIFEXITED(status) ? WEXITSTATUS(status) : -1;
  return r;
}
#endif

// Tolerance for values quoted to 4-6 significant digits in a reference.
constexpr double kQuoted4 = 5e-4;
constexpr double kQuoted6 = 5e-6;

}  // namespace hallway::test
