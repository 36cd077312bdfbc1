// cli/commands.hpp: the subcommands of the `hallway` executable.
#pragma once

#include <string>

namespace hallway::cli {

struct CheckArgs {
  std::string design_path;
  std::string json_path;  // empty: no JSON
};

// Loads and checks a design, prints the summary on stdout and findings, returns an exit code.
int RunCheck(const CheckArgs& args);

}  // namespace hallway::cli
