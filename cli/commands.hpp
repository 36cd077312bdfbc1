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

namespace hallway::cli {

struct SolveArgs {
  std::string design_path;
  std::string json_path;
  bool reversed_only = false;
  std::string four_terminal;  // "I+,I-,V+,V-" contact names, empty: none
};

// Traces the edge network and solves the wiring plan for the design field and the reversed field.
int RunSolve(const SolveArgs& args);

}  // namespace hallway::cli
