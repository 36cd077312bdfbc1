// cli/commands.hpp: the subcommands of the `hallway` executable.
#pragma once

#include <string>
#include <vector>

namespace hallway::cli {

struct CheckArgs {
  std::string design_path;
  std::string json_path;  // empty: no JSON
  bool gate_settings = false;  // the gate voltages for the declared transmissions
};

// Loads and checks a design, prints the summary on stdout and findings, returns an exit code.
int RunCheck(const CheckArgs& args);

}  // namespace hallway::cli

namespace hallway::cli {

struct SolveArgs {
  std::string design_path;
  std::string json_path;
  bool reversed_only = false;
  bool fast = false;          // bare-potential boundaries instead of the self-consistent density
  std::string four_terminal;  // "I+,I-,V+,V-" contact names, empty: none
  std::string max_memory;     // --max-memory, e.g. "8GiB"; empty: 4 GiB
};

// Traces the edge network and solves the wiring plan for the design field and the reversed field.
int RunSolve(const SolveArgs& args);

}  // namespace hallway::cli

namespace hallway::cli {

struct NoiseArgs {
  std::string design_path;
  std::string json_path;
  std::string csv_path;
  std::string sweep;  // "SA,SB=0:50uV:11"
  std::string ratio;  // "1,0.5": bias multipliers of the swept contacts
  bool reversed_only = false;
  bool fast = false;
  bool phase_given = false;
  double phase_rad = 0.0;
  std::string collider_model = "zero-temperature";  // or finite-temperature
  double target_sigmas = 10.0;
  bool quiet = false;
  std::string max_memory;  // --max-memory, e.g. "8GiB"; empty: 4 GiB
};

int RunNoise(const NoiseArgs& args);

}  // namespace hallway::cli

namespace hallway::cli {

struct MapArgs {
  std::string design_path;
  std::string json_path;
  std::string csv_path;
  std::string grid;  // "10nm"; empty: automatic
  bool quiet = false;
  std::string max_memory;  // --max-memory, e.g. "8GiB"; empty: 4 GiB
};

int RunMap(const MapArgs& args);

}  // namespace hallway::cli

namespace hallway::cli {

struct PathsArgs {
  std::string design_path;
  std::string json_path;
  bool fast = false;
  std::string target;             // transmission to reach, instead of the design's ("0.5")
  std::string gate_limit;         // "-2 V"
  std::string relaxation_length;  // "1 um"
  std::string max_memory;         // --max-memory, e.g. "8GiB"; empty: 4 GiB
};

int RunPaths(const PathsArgs& args);

}  // namespace hallway::cli

namespace hallway::cli {

struct ReportArgs {
  std::string design_path;
  std::string out_dir;
  bool fast = false;
  bool quiet = false;
  std::string max_memory;  // --max-memory, e.g. "8GiB"; empty: 4 GiB
};

int RunReport(const ReportArgs& args);

}  // namespace hallway::cli

namespace hallway::cli {

struct SweepArgs {
  std::string design_path;
  std::vector<std::string> vary;  // "KEY=FROM:TO:N"
  bool zip = false;
  std::string output;
  std::string quantities;  // comma list of groups; empty: the default set
  int threads = 0;         // 0: the machine's cores (divided among MPI ranks)
  bool resume = false;
  bool fast = false;
  bool quiet = false;
  bool cold = false;       // no warm starts (for benchmarks)
  std::string max_memory;  // --max-memory, e.g. "8GiB"; empty: 4 GiB
};

// Runs a parameter sweep; under mpirun the points are shared among the ranks.
int RunSweep(const SweepArgs& args, int argc, char** argv);

}  // namespace hallway::cli

namespace hallway::cli {

struct FringesArgs {
  std::string design_path;
  std::string json_path;
  std::string csv_path;    // the map G(Phi, V) and the excess noise
  std::string plunger;     // gate swept in the map; empty: the library's choice
  std::string gate_step;   // "5 mV"; empty: the default
  int flux_points = 25;
  int plunger_points = 13;
  bool no_map = false;
  bool fast = false;
  std::string max_memory;  // --max-memory, e.g. "8GiB"; empty: 4 GiB
};

// Interferometers: kinds, periods, visibility, regime and the G(Phi, V) map.
int RunFringes(const FringesArgs& args);

}  // namespace hallway::cli
