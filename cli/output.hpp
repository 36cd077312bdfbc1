// cli/output.hpp: files hallway writes, written whole or not at all.
#pragma once

#include <optional>
#include <stdexcept>
#include <string>
#include <vector>

#include <nlohmann/json.hpp>

#include "hallway/check.hpp"
#include "hallway/design.hpp"
#include "hallway/device.hpp"
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
// The device for solve, noise, paths, sweep and report (device.hpp): checks the design and prints its
// errors, solves the electrostatics unless `fast`, builds the channel geometry, and appends a line about
// the electrostatic solve and the constrictions' transmissions to *note. Returns false (with *exit_code)
// when the design fails its checks, the grid is too large or the solve does not converge.
bool BuildDevice(Design design, bool fast, std::size_t max_memory_bytes, std::optional<Device>* device,
                 std::string* note, int* exit_code);

// The --max-memory option: "4GiB", "512 MiB", "2 GB" (B, kB, MB, GB, TB, KiB, MiB, GiB, TiB); empty
// gives the default. On a bad value prints a usage error and returns false with *exit_code set;
// warns (without changing the value) when it exceeds this machine's physical memory.
bool ParseMaxMemory(const std::string& text, std::size_t* bytes, int* exit_code);
// The way out of a refused grid that the command offers besides --max-memory: a coarser --grid (map),
// --fast (a command run without it), or none (--fast was given and a later stage still needs a grid).
enum class GridAdvice { kCoarserGrid, kFastOption, kMemoryOnly };
// Prints why an electrostatic grid was refused and the ways out; returns kExitResourceLimit. Never
// suggests an option the user already gave.
int ReportGridTooLarge(const GridTooLarge& e, GridAdvice advice);

// NaN or infinity in a result is never printed: returns false after naming the stage on stderr.
bool RequireFinite(const std::vector<std::vector<double>>& values, const std::string& stage);
// The same for every number of a result document (nlohmann::json keeps NaN and infinity as numbers
// and would write them as null); names the first offending entry by its JSON pointer.
bool RequireFiniteJson(const nlohmann::json& result, const std::string& stage);

// The caution printed at the end of every report.
extern const char* const kSafetyCaution;

// Every file that reading the design at `design_path` reads: the design itself and, when its
// top-level `layout:` block names a `file:`, that GDSII file (relative to the design's folder).
std::vector<std::string> DesignInputs(const std::string& design_path);

// Throws OutputError when `path` is one of `inputs` or of the files they read (DesignInputs), compared
// by device and inode, so a symbolic or hard link to an input is caught as well as the input's own name.
void RefuseInputAsOutput(const std::string& path, const std::vector<std::string>& inputs);

// Refuses to write over any of `inputs` (RefuseInputAsOutput). A regular or new file is written to a
// temporary file in the same folder and renamed into place, so readers never see a half-written file.
// A character device or a named pipe (/dev/null, /dev/stdout, a FIFO with a reader) is written
// directly and never replaced; a block device, a socket or a FIFO without a reader is refused.
// Throws OutputError (a full disk or device included).
void WriteFileAtomically(const std::string& path, const std::string& text, const std::vector<std::string>& inputs);

// Temporary files and folders removed when SIGINT, SIGTERM or SIGHUP stops the program: the handler
// (InstallCleanupHandlers) unlinks every registered file, empties and removes every registered folder
// (one level deep), restores the default action and raises the signal again. At most 32 entries at a
// time; the registry uses only async-signal-safe calls in the handler.
void RegisterTemporary(const std::string& path, bool folder = false);
void UnregisterTemporary(const std::string& path);
void InstallCleanupHandlers();

}  // namespace hallway::cli
