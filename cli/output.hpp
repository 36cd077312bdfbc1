// cli/output.hpp: files hallway writes, written whole or not at all.
#pragma once

#include <stdexcept>
#include <string>
#include <vector>

namespace hallway::cli {

// Exit codes, documented in README.md ("Exit codes").
enum ExitCode : int {
  kExitOk = 0,
  kExitDesignError = 1,
  kExitUsage = 2,
  kExitOutputError = 3,
  kExitInternal = 4,
};

class OutputError : public std::runtime_error {
 public:
  using std::runtime_error::runtime_error;
};

// Refuses to write over any of `inputs`; writes `text` to a temporary file in the same folder and
// renames it into place, so readers never see a half-written file. Throws OutputError.
void WriteFileAtomically(const std::string& path, const std::string& text, const std::vector<std::string>& inputs);

}  // namespace hallway::cli
