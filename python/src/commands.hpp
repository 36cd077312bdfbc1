// python/src/commands.hpp: the work behind hallway.check/solve/noise/paths/map, in plain C++ (no Python
// object is touched, so every call runs with the GIL released). Each builds the same library objects
// with the same options as the matching `hallway` command (cli/*_command.cpp) and returns the document
// that command writes with --json, built by the CLI's own JSON functions (cli/json_parts.hpp), so a
// number and its key have one definition.
#pragma once

#include <cstddef>
#include <functional>
#include <optional>
#include <stdexcept>
#include <string>
#include <vector>

#include <nlohmann/json.hpp>

#include "hallway/design.hpp"
#include "hallway/electrostatics.hpp"
#include "hallway/finding.hpp"
#include "hallway/map.hpp"

namespace hallway::python {

// Options given with a wrong value or unit (the CLI's usage errors, exit 2).
class UsageError : public std::invalid_argument {
 public:
  using std::invalid_argument::invalid_argument;
};

// The memory guard (GridTooLarge, kept in `grid`) or an electrostatic solve stopped at its iteration
// bound (the CLI's exit 5).
class ResourceLimit : public std::runtime_error {
 public:
  explicit ResourceLimit(const std::string& what, std::optional<GridTooLarge> grid = std::nullopt)
      : std::runtime_error(what), grid(std::move(grid)) {}
  std::optional<GridTooLarge> grid;
};

// Errors found in a design by its checks or while tracing its edges (the CLI's exit 1 after loading).
class DesignFindings : public std::runtime_error {
 public:
  explicit DesignFindings(std::vector<Finding> errors);
  std::vector<Finding> errors;
};

// A value that is not finite in a result (the CLI's exit 4).
class InternalError : public std::runtime_error {
 public:
  using std::runtime_error::runtime_error;
};

// The options every solving command shares: --fast and --max-memory (parsed by ParseMemory).
struct RunOptions {
  bool fast = false;
  std::size_t max_memory_bytes = kDefaultMaxMemoryBytes;
};

// `hallway check --json`: the checks and the wiring verdict on the bare-potential edges.
nlohmann::json CheckDocument(const Design& design, bool gate_settings);
// `hallway solve --json` (--field-reversed: only the reversed field).
nlohmann::json SolveDocument(const Design& design, const RunOptions& run, bool field_reversed);

struct NoiseRun {
  bool field_reversed = false;
  std::optional<double> phase_rad;  // --phase
  double target_sigmas = 10.0;      // --target
  std::string collider_model = "zero-temperature";
};
// `hallway noise --json` (without --sweep).
nlohmann::json NoiseDocument(const Design& design, const RunOptions& run, const NoiseRun& noise);

struct PathsRun {
  std::string target;             // --target "0.5"; empty: each constriction's design transmission
  std::string gate_limit;         // --gate-limit "-2 V"
  std::string relaxation_length;  // --relaxation-length "1 um"
};
// `hallway paths --json`.
nlohmann::json PathsDocument(const Design& design, const RunOptions& run, const PathsRun& paths);

// `hallway map`: the result itself (the caller makes its document and the density grid from it).
// `grid` is the --grid text ("25nm"; empty: automatic); `progress` (may be empty) is called before each
// stage with (step, total, what), as the CLI's progress line is.
MapResult RunMapSearch(const Design& design, const std::string& grid, std::size_t max_memory_bytes,
                       const std::function<void(int, int, const std::string&)>& progress);

// The --max-memory text in bytes, by the CLI's own parser (cli/output.cpp); throws UsageError with its
// message. Writes to std::cerr's buffer for the duration: call it with the GIL held.
std::size_t ParseMemory(const std::string& text);

}  // namespace hallway::python
