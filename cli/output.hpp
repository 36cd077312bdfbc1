// cli/output.hpp: files hallway writes, written whole or not at all.
#pragma once

#include <stdexcept>
#include <string>
#include <vector>

#include <nlohmann/json.hpp>

#include "hallway/check.hpp"
#include "hallway/design.hpp"
#include "hallway/electrostatics.hpp"
#include "hallway/network.hpp"

namespace hallway::cli {

// Exit codes, documented in README.md ("Exit codes").
enum ExitCode : int {
  kExitOk = 0,
  kExitDesignError = 1,
  kExitUsage = 2,
  kExitOutputError = 3,
  kExitInternal = 4,
  kExitResourceLimit = 5,
};

class OutputError : public std::runtime_error {
 public:
  using std::runtime_error::runtime_error;
};

// Loads a design; on a DesignError prints it and returns false with *exit_code set.
bool LoadOrReport(const std::string& path, Design* design, int* exit_code);
// Prints the errors among `findings` as design errors; returns how many there were.
int ReportErrors(const std::vector<Finding>& findings);
// The channel regions for solve and noise: from the self-consistent density unless `fast`, in which
// case the bare-potential estimate. Appends a line about the electrostatic solve to *note. Returns
// false (with *exit_code) when the electrostatic solve fails or does not converge.
bool BuildGeometry(const Design& design, bool fast, ChannelGeometry* geometry, std::string* note, int* exit_code,
                   DensityMap* map_out = nullptr, std::size_t max_memory_bytes = kDefaultMaxMemoryBytes);

// The --max-memory option: "4GiB", "512 MiB", "2 GB" (B, kB, MB, GB, TB, KiB, MiB, GiB, TiB); empty
// gives the default. On a bad value prints a usage error and returns false with *exit_code set;
// warns (without changing the value) when it exceeds this machine's physical memory.
bool ParseMaxMemory(const std::string& text, std::size_t* bytes, int* exit_code);
// Prints why an electrostatic grid was refused and the ways out; returns kExitResourceLimit.
// `grid_option`: the command has --grid (map), so a coarser cell size can be suggested.
int ReportGridTooLarge(const GridTooLarge& e, bool grid_option);

// NaN or infinity in a result is never printed: returns false after naming the stage on stderr.
bool RequireFinite(const std::vector<std::vector<double>>& values, const std::string& stage);
// The same for every number of a result document (nlohmann::json keeps NaN and infinity as numbers
// and would write them as null); names the first offending entry by its JSON pointer.
bool RequireFiniteJson(const nlohmann::json& result, const std::string& stage);

// The caution printed at the end of every report.
extern const char* const kSafetyCaution;

// Refuses to write over any of `inputs`; writes `text` to a temporary file in the same folder and
// renames it into place, so readers never see a half-written file. Throws OutputError.
void WriteFileAtomically(const std::string& path, const std::string& text, const std::vector<std::string>& inputs);

}  // namespace hallway::cli
