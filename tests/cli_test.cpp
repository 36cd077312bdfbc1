// The `hallway` executable end to end: demo designs pass, invalid designs fail with the right exit
// code and a message that names file, line and key, JSON output is complete or absent.
#include <gtest/gtest.h>
#include <sys/wait.h>
#include <unistd.h>

#include <algorithm>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <nlohmann/json.hpp>
#include <sstream>

#include "test_support.hpp"

namespace hallway {
namespace {

namespace fs = std::filesystem;

using CommandRun = test::CommandRun;
inline CommandRun hallway(const std::string& args) {
  return test::RunHallway(args);
}

std::string read(const fs::path& p) {
  std::ifstream in(p);
  std::stringstream s;
  s << in.rdbuf();
  return s.str();
}

// "  gate_voltage_min: <v> V\n", the design line of a lab's own gate limit.
std::string fmt_limit(double volts) {
  return "  gate_voltage_min: " + std::to_string(volts) + " V\n";
}

fs::path scratch(const std::string& name) {
  const fs::path dir = fs::temp_directory_path() / ("hallway_cli_test_" + std::to_string(::getpid()));
  fs::create_directories(dir);
  return dir / name;
}

TEST(Cli, EveryDemoDesignPassesTheCheck) {
  int n = 0;
  for (const auto& entry : fs::directory_iterator(test::SourcePath("designs"))) {
    if (entry.path().extension() != ".yaml") continue;
    ++n;
    const CommandRun r = hallway("check '" + entry.path().string() + "'");
    EXPECT_EQ(r.exit_code, 0) << entry.path() << "\n" << r.output;
    EXPECT_NE(r.output.find("check passed"), std::string::npos) << r.output;
    EXPECT_NE(r.output.find("model estimates"), std::string::npos) << "safety caution missing";
  }
  EXPECT_GE(n, 3);
}

struct InvalidCase {
  const char* file;
  const char* line_and_key;  // "file:line:" is checked via this suffix
  const char* words;
};

TEST(Cli, InvalidDesignsFailWithFileLineAndKey) {
  const InvalidCase cases[] = {
      {"gates_overlap.yaml", ":27:5: gates[0] (QS)", "gates QS and QN overlap or touch"},
      {"contact_off_mesa.yaml", ":21:5: contacts[1] (E)", "contact E does not overlap the mesa"},
      {"bare_number.yaml", ":7:10: heterostructure.depth", "needs a unit"},
      {"unwired_contact.yaml", ":34:3: wiring", "contact 'SE' has no role"},
      {"self_intersecting_gate.yaml", ":27:42: gates[0].outline", "crosses or touches itself"},
      {"transmission_count.yaml", ":32:19: constrictions[0].transmission", "expected 2 transmissions"},
  };
  for (const auto& c : cases) {
    const std::string path = test::SourcePath(std::string("designs/invalid/") + c.file);
    const CommandRun r = hallway("check '" + path + "'");
    EXPECT_EQ(r.exit_code, 1) << c.file << "\n" << r.output;
    EXPECT_NE(r.output.find(path + c.line_and_key), std::string::npos) << c.file << "\n" << r.output;
    EXPECT_NE(r.output.find(c.words), std::string::npos) << c.file << "\n" << r.output;
  }
}

TEST(Cli, JsonHoldsTheDerivedFiguresAndTheWiring) {
  const fs::path out = scratch("bar.json");
  fs::remove(out);
  const CommandRun r =
      hallway("check '" + test::SourcePath("designs/01_hallbar_qpc.yaml") + "' --json '" + out.string() + "'");
  ASSERT_EQ(r.exit_code, 0) << r.output;
  const auto j = nlohmann::json::parse(read(out));
  EXPECT_TRUE(j["ok"].get<bool>());
  EXPECT_EQ(j["derived"]["filling"], "2");
  // V_dep = -e n_s (d / eps + 1 / (e^2 D)) at n_s = 2.3e11 cm^-2, d = 95 nm, eps_r = 12.9, m* = 0.067 m_e
  // (series-capacitor law, Luryi, Appl. Phys. Lett. 52, 501 (1988); docs/models.md, Depletion under a
  // wide gate): -0.3147 V (hand arithmetic, from memory).
  EXPECT_TRUE(test::NearRel(j["derived"]["depletion_voltage_V"].get<double>(), -0.3147, 1e-3));
  EXPECT_EQ(j["wiring"]["W"]["role"], "source");
  EXPECT_DOUBLE_EQ(j["wiring"]["W"]["bias_V"].get<double>(), 1e-5);
  EXPECT_EQ(j["constrictions"][0]["name"], "Q");
  EXPECT_NEAR(j["constrictions"][0]["gap_m"].get<double>(), 300e-9, 1e-15);
  EXPECT_EQ(j["contacts"].size(), 6u);
}

TEST(Cli, NoJsonIsWrittenForADesignThatDoesNotLoad) {
  const fs::path out = scratch("bad.json");
  fs::remove(out);
  const CommandRun r =
      hallway("check '" + test::SourcePath("designs/invalid/bare_number.yaml") + "' --json '" + out.string() + "'");
  EXPECT_EQ(r.exit_code, 1);
  EXPECT_FALSE(fs::exists(out));
}

TEST(Cli, NeverWritesOverItsInput) {
  const fs::path copy = scratch("own_input.yaml");
  fs::copy_file(test::SourcePath("designs/01_hallbar_qpc.yaml"), copy, fs::copy_options::overwrite_existing);
  const std::string before = read(copy);
  const CommandRun r = hallway("check '" + copy.string() + "' --json '" + copy.string() + "'");
  EXPECT_EQ(r.exit_code, 3) << r.output;
  EXPECT_NE(r.output.find("refusing to write over the input"), std::string::npos) << r.output;
  EXPECT_EQ(read(copy), before);
}

TEST(Cli, OutputIntoAMissingFolderIsAnOutputError) {
  const CommandRun r =
      hallway("check '" + test::SourcePath("designs/01_hallbar_qpc.yaml") + "' --json /nonexistent/dir/x.json");
  EXPECT_EQ(r.exit_code, 3) << r.output;
}

TEST(Cli, UsageErrorsExitWithTwo) {
  EXPECT_EQ(hallway("").exit_code, 2);
  EXPECT_EQ(hallway("check").exit_code, 2);
  EXPECT_EQ(hallway("check a.yaml --no-such-option").exit_code, 2);
  EXPECT_EQ(hallway("frobnicate").exit_code, 2);
  EXPECT_EQ(hallway("--help").exit_code, 0);
}

TEST(Cli, SolveEveryDemoDesignForBothFieldDirections) {
  for (const char* f :
       {"designs/01_hallbar_qpc.yaml", "designs/02_two_source_collider.yaml", "designs/03_fabry_perot.yaml"}) {
    const CommandRun r = hallway(std::string("solve '") + test::SourcePath(f) + "'");
    EXPECT_EQ(r.exit_code, 0) << f << "\n" << r.output;
    EXPECT_NE(r.output.find("At B = +"), std::string::npos) << r.output;
    EXPECT_NE(r.output.find("At B = -"), std::string::npos) << r.output;
    EXPECT_NE(r.output.find("self-consistent Thomas-Fermi density"), std::string::npos) << "model not stated";
    EXPECT_NE(r.output.find("electrostatics: "), std::string::npos) << "solver statistics missing";
  }
}

TEST(Cli, SolveJsonHasTheAgreedKeys) {
  const fs::path out = scratch("solve.json");
  fs::remove(out);
  const CommandRun r =
      hallway("solve '" + test::SourcePath("designs/01_hallbar_qpc.yaml") + "' --json '" + out.string() + "'");
  ASSERT_EQ(r.exit_code, 0) << r.output;
  const auto j = nlohmann::json::parse(read(out));
  for (const char* key : {"contacts", "conductance_S", "voltages_V", "currents_A", "routes", "warnings", "field_T",
                          "filling", "reversed_field"})
    EXPECT_TRUE(j.contains(key)) << key;
  EXPECT_EQ(j["contacts"][0], "W");
  EXPECT_EQ(j["conductance_S"].size(), 6u);
  EXPECT_GT(j["field_T"].get<double>(), 0.0);
  EXPECT_LT(j["reversed_field"]["field_T"].get<double>(), 0.0);
  // Two-terminal resistance across a constriction of total transmission 1 + 0.4 in a quantum Hall bar:
  // h/(1.4 e^2) (Beenakker & van Houten, Solid State Physics 44, 1 (1991), R_2t = h/(K e^2) with K -> 1.4).
  const double r_ohm = j["two_terminal_resistance_Ohm"]["W"].get<double>();
  EXPECT_TRUE(test::NearRel(r_ohm, 25812.80745 / 1.4, 1e-9));
}

TEST(Cli, SolveFourTerminalAndReversedFieldOnly) {
  const std::string design = test::SourcePath("tests/data/network/qpc_nu2_k1.yaml");
  const CommandRun r = hallway("solve '" + design + "' --fast --field-reversed --four-terminal W,E,NW,NE");
  EXPECT_NE(r.output.find("bare-potential lateral depletion estimate"), std::string::npos) << "--fast model not stated";
  EXPECT_EQ(r.exit_code, 0) << r.output;
  EXPECT_EQ(r.output.find("At B = +"), std::string::npos) << r.output;
  EXPECT_NE(r.output.find("(0.500000 h/e^2)"), std::string::npos) << r.output;
  EXPECT_EQ(hallway("solve '" + design + "' --four-terminal W,E,NW").exit_code, 2);
  EXPECT_EQ(hallway("solve '" + design + "' --four-terminal W,E,NW,XX").exit_code, 2);
}

TEST(Cli, SolveRefusesADesignWithCheckErrors) {
  const CommandRun r = hallway("solve '" + test::SourcePath("designs/invalid/gates_overlap.yaml") + "'");
  EXPECT_EQ(r.exit_code, 1);
  EXPECT_NE(r.output.find("nothing was solved"), std::string::npos) << r.output;
}

TEST(Cli, NoiseJsonHasTheAgreedKeysAndTheCollider) {
  const fs::path out = scratch("noise.json");
  fs::remove(out);
  const CommandRun r =
      hallway("noise '" + test::SourcePath("designs/02_two_source_collider.yaml") + "' --json '" + out.string() + "'");
  ASSERT_EQ(r.exit_code, 0) << r.output;
  EXPECT_NE(r.output.find("P = -2"), std::string::npos) << r.output;
  const auto j = nlohmann::json::parse(read(out));
  for (const char* key :
       {"contacts", "noise_excess_A2_per_Hz", "noise_total_A2_per_Hz", "amplifiers", "colliders", "models"})
    EXPECT_TRUE(j.contains(key)) << key;
  EXPECT_EQ(j["noise_excess_A2_per_Hz"].size(), 6u);
  EXPECT_TRUE(j["amplifiers"].contains("D1"));
  EXPECT_NEAR(j["colliders"][0]["P"].get<double>(), -2.0, 1e-9);
}

TEST(Cli, NoiseSweepWritesOneCsvRowPerPoint) {
  const fs::path csv = scratch("sweep.csv");
  fs::remove(csv);
  const CommandRun r = hallway("noise '" + test::SourcePath("designs/02_two_source_collider.yaml") +
                               "' --sweep SA,SB=0:40uV:5 --ratio 1,0.5 --csv '" + csv.string() + "'");
  ASSERT_EQ(r.exit_code, 0) << r.output;
  std::stringstream lines(read(csv));
  std::string header, line;
  std::getline(lines, header);
  EXPECT_NE(header.find("bias_SA_V"), std::string::npos) << header;
  EXPECT_NE(header.find("S_exc_D1_D2_A2_per_Hz"), std::string::npos) << header;
  EXPECT_NE(header.find("P_C"), std::string::npos) << header;
  int rows = 0;
  while (std::getline(lines, line)) ++rows;
  EXPECT_EQ(rows, 5);
  EXPECT_EQ(
      hallway("noise '" + test::SourcePath("designs/02_two_source_collider.yaml") + "' --sweep D1=0:1uV:3").exit_code,
      2);
  EXPECT_EQ(
      hallway("noise '" + test::SourcePath("designs/02_two_source_collider.yaml") + "' --sweep SA=0:1nA:3").exit_code,
      2);
}

TEST(Cli, PathsReportsLoopsAndConstrictionModels) {
  const fs::path out = scratch("paths.json");
  fs::remove(out);
  const CommandRun r =
      hallway("paths '" + test::SourcePath("designs/03_fabry_perot.yaml") + "' --json '" + out.string() + "'");
  ASSERT_EQ(r.exit_code, 0) << r.output;
  EXPECT_NE(r.output.find("AB period h/eA"), std::string::npos) << r.output;
  const auto j = nlohmann::json::parse(read(out));
  EXPECT_EQ(j["loops"].size(), 1u);
  EXPECT_EQ(j["constriction_models"].size(), 2u);
  EXPECT_TRUE(j["constriction_models"][0]["saddle_found"].get<bool>());
  EXPECT_FALSE(j["paths"].empty());
}

TEST(Cli, MapReportsPinchOffAndWritesTheDensityGrid) {
  const fs::path js = scratch("map.json"), csv = scratch("map.csv");
  fs::remove(js);
  fs::remove(csv);
  const CommandRun r = hallway("map '" + test::SourcePath("designs/03_fabry_perot.yaml") + "' --grid 60nm --json '" +
                               js.string() + "' --csv '" + csv.string() + "'");
  ASSERT_EQ(r.exit_code, 0) << r.output;
  const auto j = nlohmann::json::parse(read(js));
  ASSERT_EQ(j["constrictions"].size(), 2u);
  for (const char* key :
       {"name", "gap_m", "saddle_m", "saddle_density_per_m2", "pinch_off_density_zero_V", "pinch_off_bare_V"})
    EXPECT_TRUE(j["constrictions"][0].contains(key)) << key;
  EXPECT_LT(j["constrictions"][0]["pinch_off_density_zero_V"].get<double>(), -0.5);
  EXPECT_TRUE(j["gates"][0].contains("depletion_V"));
  EXPECT_TRUE(j["solver"]["converged"].get<bool>());
  std::stringstream lines(read(csv));
  std::string header;
  std::getline(lines, header);
  EXPECT_EQ(header, "x_m,y_m,density_per_m2,filling");
  EXPECT_EQ(hallway("map '" + test::SourcePath("designs/03_fabry_perot.yaml") + "' --grid 10").exit_code, 2);
}

// A sweep over 8 electrostatic points of the Fabry-Perot demo (two chunks of four).
std::string sweep_cmd(const fs::path& out, const std::string& extra) {
  return "sweep '" + test::SourcePath("designs/03_fabry_perot.yaml") +
         "' --vary gates.Q1N.voltage=-0.8V:-1.0V:8 --vary " +
         "conditions.temperature=20mK:20mK:1 --quantities currents,noise,saddle --quiet --output '" + out.string() +
         "' " + extra;
}

// The solver statistics of a run: "N electrostatic operator applications (...)".
std::string applications_of(const std::string& output) {
  const auto end = output.find(" warm-started solves)");
  const auto begin = output.rfind("; ", end);
  return begin == std::string::npos || end == std::string::npos ? "" : output.substr(begin + 2, end - begin - 2);
}

TEST(Sweep, SerialThreadsAndMpiWriteTheSameFile) {
  const fs::path a = scratch("serial.csv"), b = scratch("threads.csv"), c = scratch("mpi.csv");
  const CommandRun serial_run = hallway(sweep_cmd(a, "--threads 1"));
  ASSERT_EQ(serial_run.exit_code, 0);
  ASSERT_FALSE(applications_of(serial_run.output).empty()) << serial_run.output;
  ASSERT_EQ(hallway(sweep_cmd(b, "--threads 2")).exit_code, 0);
  const std::string serial = read(a);
  EXPECT_EQ(std::count(serial.begin(), serial.end(), '\n'), 9);
  EXPECT_EQ(serial, read(b));
  if (std::system("command -v mpirun > /dev/null 2>&1") != 0)
    GTEST_SKIP() << "mpirun is not installed (Debian package openmpi-bin)";
  // OpenMPI refuses root and more ranks than cores unless told (deps.md). In the sanitizer build
  // (scripts/setup.sh sanitize) leak detection is off for the ranks only: OpenMPI unloads its
  // plug-ins in MPI_Finalize, so what they keep cannot be attributed (LeakSanitizer sees stacks in
  // unloaded modules); every other AddressSanitizer check stays on.
  const std::string env =
      "OMPI_ALLOW_RUN_AS_ROOT=1 OMPI_ALLOW_RUN_AS_ROOT_CONFIRM=1 OMPI_MCA_rmaps_base_oversubscribe=1 "
      "ASAN_OPTIONS=\"${ASAN_OPTIONS:+$ASAN_OPTIONS:}detect_leaks=0\" ";
  const fs::path log = scratch("mpi.log");
  const int rc = std::system(
      (env + "mpirun -np 2 '" + HALLWAY_EXE + "' " + sweep_cmd(c, "--threads 1") + " > '" + log.string() + "' 2>&1")
          .c_str());
  ASSERT_EQ(WIFEXITED(rc) ? WEXITSTATUS(rc) : -1, 0) << read(log);
  EXPECT_EQ(serial, read(c));
  // Chunks are solved the same way whoever takes them: the statistics summed over the ranks equal
  // the serial run's, and the run reports both ranks.
  const std::string mpi_out = read(log);
  EXPECT_EQ(applications_of(mpi_out), applications_of(serial_run.output)) << mpi_out;
  EXPECT_NE(mpi_out.find("over 2 MPI ranks"), std::string::npos) << mpi_out;
}

TEST(Sweep, ResumedSweepEqualsAnUninterruptedOne) {
  const fs::path full = scratch("full.csv"), part = scratch("part.csv");
  ASSERT_EQ(hallway(sweep_cmd(full, "--threads 2")).exit_code, 0);
  // An interrupted run: the header, the first chunk and half of the second.
  std::stringstream lines(read(full));
  std::string kept, line;
  for (int i = 0; i < 7 && std::getline(lines, line); ++i) kept += line + "\n";
  {
    std::ofstream o(part);
    o << kept;
  }
  const CommandRun r = hallway(sweep_cmd(part, "--threads 2 --resume"));
  ASSERT_EQ(r.exit_code, 0) << r.output;
  EXPECT_NE(r.output.find("4 kept from before"), std::string::npos) << r.output;
  EXPECT_EQ(read(part), read(full));
}

// The pinch-off group of a sweep runs the pinch-off search of `hallway map`: at the design's own
// values both must give the same voltage (to the 1 mV bisection resolution).
TEST(Sweep, PinchOffColumnAgreesWithTheMapCommand) {
  const std::string design = "'" + test::SourcePath("designs/01_hallbar_qpc.yaml") + "'";
  const fs::path csv = scratch("pinch.csv"), json_path = scratch("pinch_map.json");
  const CommandRun sweep = hallway("sweep " + design + " --vary conditions.temperature=15mK:15mK:1 " +
                                   "--quantities pinchoff --threads 1 --quiet --output '" + csv.string() + "'");
  ASSERT_EQ(sweep.exit_code, 0) << sweep.output;
  EXPECT_NE(sweep.output.find("pinch-off searches"), std::string::npos) << sweep.output;
  const std::string text = read(csv);
  EXPECT_EQ(text.substr(0, text.find('\n')), "point,conditions.temperature,pinch_off_density_zero_Q_V");
  const std::string row = text.substr(text.find('\n') + 1);
  const double swept = std::stod(row.substr(row.rfind(',') + 1));
  const CommandRun map = hallway("map " + design + " --quiet --json '" + json_path.string() + "'");
  ASSERT_EQ(map.exit_code, 0) << map.output;
  const auto j = nlohmann::json::parse(read(json_path));
  EXPECT_NEAR(swept, j["constrictions"][0]["pinch_off_density_zero_V"].get<double>(), 2e-3);
  const CommandRun fast = hallway("sweep " + design + " --vary conditions.temperature=15mK:15mK:1 " +
                                  "--quantities pinchoff --fast --output '" + scratch("never.csv").string() + "'");
  EXPECT_EQ(fast.exit_code, 2) << fast.output;
  EXPECT_NE(fast.output.find("cannot be combined with --fast"), std::string::npos) << fast.output;
}

// A gate beyond the gate-voltage window (default -2 V, design.hpp: common practice for surface Schottky
// gates on GaAs) passed every command silently. Now each command that shows the design's findings names
// the gate, its voltage, the limit and the line of its `voltage:`, and ends with the caution.
TEST(Cautions, EveryCommandWarnsOfAGateBeyondTheLimit) {
  const std::string demo = read(test::SourcePath("designs/01_hallbar_qpc.yaml"));
  const std::string from = "{name: QS, voltage: -0.8 V,";
  ASSERT_NE(demo.find(from), std::string::npos);
  std::string text = demo;
  text.replace(text.find(from), from.size(), "{name: QS, voltage: -8 V,");
  text.insert(text.find("  filling: 2\n") + 13, "  gate_voltage_min: -2 V\n");  // the default, written out to sweep it
  const fs::path design = scratch("gate_limit.yaml");
  {
    std::ofstream o(design);
    o << text;
  }
  const std::string line = std::to_string(std::count(text.begin(), text.begin() + text.find("name: QS"), '\n') + 1);
  const std::string d = "'" + design.string() + "'";
  const fs::path report_dir = scratch("gate_limit_report");
  fs::remove_all(report_dir);
  for (const std::string& cmd : {"check " + d, "solve " + d + " --fast", "noise " + d + " --fast",
                                 "paths " + d + " --fast", "map " + d + " --quiet --grid 200nm"}) {
    const CommandRun r = hallway(cmd);
    EXPECT_EQ(r.exit_code, 0) << cmd << "\n" << r.output;
    EXPECT_NE(r.output.find("gate QS at -8 V (gates[0].voltage, line " + line + ")"), std::string::npos) << cmd << "\n"
                                                                                                         << r.output;
    EXPECT_NE(r.output.find("gate-voltage limit -2 V"), std::string::npos) << cmd << "\n" << r.output;
    EXPECT_NE(r.output.find("model estimates"), std::string::npos) << cmd << ": caution missing";
    EXPECT_NE(r.output.find("local regulations for cryogens"), std::string::npos) << cmd << ": caution missing";
  }
  const CommandRun report = hallway("report " + d + " --fast -o '" + report_dir.string() + "'");
  ASSERT_EQ(report.exit_code, 0) << report.output;
  EXPECT_NE(read(report_dir / "report.html").find("gate QS at -8 V"), std::string::npos);
  // The sweep warns before it runs: the fixed gate from the checks, and the swept gate's range beyond the limit.
  const fs::path csv = scratch("gate_limit_sweep.csv");
  const CommandRun sweep =
      hallway("sweep " + d + " --vary gates.QN.voltage=-1.5V:-3V:2 --fast --quiet --output '" + csv.string() + "'");
  ASSERT_EQ(sweep.exit_code, 0) << sweep.output;
  EXPECT_NE(sweep.output.find("gate QS at -8 V (gates[0].voltage, line " + line + ")"), std::string::npos)
      << sweep.output;
  EXPECT_NE(sweep.output.find("gate QN is swept from -1.5 V to -3 V (--vary gates.QN.voltage); at -3 V it is below the "
                              "gate-voltage limit -2 V"),
            std::string::npos)
      << sweep.output;
  EXPECT_LT(sweep.output.find("gate QN is swept"), sweep.output.find("points (0 kept from before)"))
      << "warned before the run";
  EXPECT_NE(sweep.output.find("model estimates"), std::string::npos) << "sweep caution missing";
  // Within the window nothing is said, and the lab's own limit replaces the default.
  const CommandRun quiet =
      hallway("sweep " + d + " --vary gates.QS.voltage=-0.5V:-1V:2 --fast --quiet --output '" + csv.string() + "'");
  ASSERT_EQ(quiet.exit_code, 0) << quiet.output;
  EXPECT_EQ(quiet.output.find("gate-voltage-limit"), std::string::npos) << quiet.output;
  EXPECT_NE(quiet.output.find("model estimates"), std::string::npos) << quiet.output;
  const CommandRun own = hallway("sweep " + d +
                                 " --vary gates.QS.voltage=-0.5V:-1V:2 --vary conditions.gate_voltage_min=-2V:-0.8V:2 "
                                 "--zip --fast --quiet --output '" +
                                 csv.string() + "'");
  ASSERT_EQ(own.exit_code, 0) << own.output;
  EXPECT_NE(own.output.find("gate QS is swept from -500 mV to -1 V"), std::string::npos) << own.output;
}

// `paths` suggests no gate voltage beyond the design's own limit (one definition: conditions.gate_voltage_min),
// unless --gate-limit overrides it. The voltage the model needs is read from the run itself; limits just
// above and just below it must give and withhold the warning.
TEST(Cautions, PathsTakesItsSuggestionLimitFromTheDesign) {
  const std::string demo = read(test::SourcePath("designs/01_hallbar_qpc.yaml"));
  const fs::path json_path = scratch("paths_limit.json");
  ASSERT_EQ(hallway("paths '" + test::SourcePath("designs/01_hallbar_qpc.yaml") + "' --fast --json '" +
                    json_path.string() + "'")
                .exit_code,
            0);
  const auto j = nlohmann::json::parse(read(json_path));
  double needed = 0.0;  // the most negative voltage any channel needs
  for (const auto& v : j["constriction_models"][0]["voltage_for_design_transmission_V"])
    if (v.is_number()) needed = std::min(needed, v.get<double>());
  ASSERT_LT(needed, -0.1);
  ASSERT_GT(needed, -1.9);  // inside the default window, so the default gives no warning
  std::string text = demo;
  const std::string at = "  filling: 2\n";
  ASSERT_NE(text.find(at), std::string::npos);
  text.insert(text.find(at) + at.size(), fmt_limit(needed + 0.05));
  const fs::path design = scratch("paths_limit.yaml");
  {
    std::ofstream o(design);
    o << text;
  }
  const CommandRun own = hallway("paths '" + design.string() + "' --fast");
  ASSERT_EQ(own.exit_code, 0) << own.output;
  EXPECT_NE(own.output.find("(conditions.gate_voltage_min): a gate driven past leakage"), std::string::npos)
      << own.output;
  const CommandRun cli =
      hallway("paths '" + design.string() + "' --fast --gate-limit '" + std::to_string(needed - 0.05) + " V'");
  ASSERT_EQ(cli.exit_code, 0) << cli.output;
  EXPECT_EQ(cli.output.find("beyond the gate-voltage limit"), std::string::npos) << cli.output;
  const CommandRun plain = hallway("paths '" + test::SourcePath("designs/01_hallbar_qpc.yaml") + "' --fast");
  EXPECT_EQ(plain.output.find("beyond the gate-voltage limit"), std::string::npos) << plain.output;
}

TEST(Sweep, BadKeysRangesAndUnitsFailBeforeAnyWork) {
  const fs::path out = scratch("bad.csv");
  fs::remove(out);
  const std::string design = "'" + test::SourcePath("designs/03_fabry_perot.yaml") + "'";
  CommandRun r = hallway("sweep " + design + " --vary gates.QX.voltage=-0.8V:-1V:3 --output '" + out.string() + "'");
  EXPECT_EQ(r.exit_code, 1);
  EXPECT_NE(r.output.find("no object named 'QX'"), std::string::npos) << r.output;
  r = hallway("sweep " + design + " --vary gates.Q1N.voltage=-0.8mK:-1mK:3 --output '" + out.string() + "'");
  EXPECT_EQ(r.exit_code, 1);
  EXPECT_NE(r.output.find("expected a voltage"), std::string::npos) << r.output;
  r = hallway("sweep " + design + " --vary gates.Q1N.voltage=-0.8V:-1mA:3 --output '" + out.string() + "'");
  EXPECT_EQ(r.exit_code, 2);
  EXPECT_NE(r.output.find("different units"), std::string::npos) << r.output;
  r = hallway("sweep " + design + " --vary gates.Q1N.voltage=-0.8V:-1V:0 --output '" + out.string() + "'");
  EXPECT_EQ(r.exit_code, 2);
  r = hallway("sweep " + design + " --vary constrictions.Q1.transmission=0.5:1.5:3 --output '" + out.string() + "'");
  EXPECT_EQ(r.exit_code, 1);
  EXPECT_NE(r.output.find("between 0 and 1"), std::string::npos) << r.output;
  // A grid of 10^10 points is refused from its size, before the points are listed.
  r = hallway("sweep " + design +
              " --vary gates.Q1N.voltage=-0.8V:-1V:100000 --vary gates.Q1S.voltage=-0.8V:-1V:100000" + " --output '" +
              out.string() + "'");
  EXPECT_EQ(r.exit_code, 2);
  EXPECT_NE(r.output.find("more than a million"), std::string::npos) << r.output;
  r = hallway("sweep " + design + " --vary gates.Q1N.voltage=-0.8V:-1V:3 --max-memory 3 --output '" + out.string() +
              "'");
  EXPECT_EQ(r.exit_code, 2);
  EXPECT_NE(r.output.find("--max-memory"), std::string::npos) << r.output;
  EXPECT_FALSE(fs::exists(out));
}

TEST(BadInput, EveryCaseOfTheCorpusFailsWithItsMessage) {
  // tests/data/bad/expected.tsv: file, exit code, words the message must contain.
  std::stringstream manifest(read(test::SourcePath("tests/data/bad/expected.tsv")));
  std::string line;
  int cases = 0;
  while (std::getline(manifest, line)) {
    if (line.empty() || line[0] == '#') continue;
    std::stringstream fields(line);
    std::string file, code, words;
    std::getline(fields, file, '\t');
    std::getline(fields, code, '\t');
    std::getline(fields, words);
    const std::string path = test::SourcePath("tests/data/bad/" + file);
    const fs::path out = scratch("bad_" + file + ".json");
    fs::remove(out);
    const CommandRun r = hallway("check '" + path + "' --json '" + out.string() + "'");
    EXPECT_EQ(r.exit_code, std::stoi(code)) << file << "\n" << r.output;
    EXPECT_NE(r.output.find(words), std::string::npos) << file << ": '" << words << "' missing from\n" << r.output;
    EXPECT_NE(r.output.find(path), std::string::npos) << file << ": the message must name the file";
    ++cases;
  }
  EXPECT_GE(cases, 40);
}

TEST(BadInput, EnormousFileIsRefusedBeforeParsing) {
  const fs::path big = scratch("enormous.yaml");
  {
    std::ofstream o(big);
    const std::string comment = "# " + std::string(1000, 'x') + "\n";
    for (int i = 0; i < 9000; ++i) o << comment;
  }
  const CommandRun r = hallway("check '" + big.string() + "'");
  EXPECT_EQ(r.exit_code, 1);
  EXPECT_NE(r.output.find("larger than 8 MiB"), std::string::npos) << r.output;
}

// --max-memory: a grid above the limit is refused before allocation with the estimate, the limit and
// a cell size that fits; that cell size must then pass the memory guard. Bad values are usage errors.
TEST(Cli, MemoryLimitRefusesAGridAndSuggestsOneThatFits) {
  const std::string design = test::SourcePath("designs/01_hallbar_qpc.yaml");
  const fs::path json = scratch("memory_refused.json");
  fs::remove(json);
  const CommandRun r =
      hallway("map '" + design + "' --grid 5nm --max-memory 64MiB --quiet --json '" + json.string() + "'");
  EXPECT_EQ(r.exit_code, 5) << r.output;
  for (const char* words : {"resource limit", "needs about", "above the limit of 64 MiB", "or coarser fits",
                            "--max-memory", "nothing was solved"})
    EXPECT_NE(r.output.find(words), std::string::npos) << words << " missing from\n" << r.output;
  EXPECT_FALSE(fs::exists(json)) << "no output file may be left behind";
  const auto at = r.output.find("--grid ", r.output.find("Coarsen"));
  ASSERT_NE(at, std::string::npos) << r.output;
  const std::string cell = r.output.substr(at + 7, r.output.find(" or coarser", at) - at - 7);
  const CommandRun fits = hallway("map '" + design + "' --grid '" + cell + "' --max-memory 64MiB --quiet");
  EXPECT_EQ(fits.output.find("resource limit"), std::string::npos) << "suggested " << cell << "\n" << fits.output;
  EXPECT_EQ(fits.exit_code, 0) << fits.output;
  // Commands with an automatic grid point at --fast instead.
  const CommandRun solve = hallway("solve '" + design + "' --max-memory 2MiB");
  EXPECT_EQ(solve.exit_code, 5) << solve.output;
  EXPECT_NE(solve.output.find("--fast"), std::string::npos) << solve.output;
  for (const char* bad : {"12", "4 parsecs", "100kB", "-1GiB"}) {
    const CommandRun u = hallway("solve '" + design + "' --max-memory '" + bad + "'");
    EXPECT_EQ(u.exit_code, 2) << bad << "\n" << u.output;
    EXPECT_NE(u.output.find("--max-memory"), std::string::npos) << u.output;
  }
}

TEST(Cli, MissingDesignFileIsADesignError) {
  const CommandRun r = hallway("check /nonexistent/design.yaml");
  EXPECT_EQ(r.exit_code, 1);
  EXPECT_NE(r.output.find("cannot be opened"), std::string::npos) << r.output;
}

}  // namespace
}  // namespace hallway
