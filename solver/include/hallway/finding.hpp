// hallway/finding.hpp: what a check or a solver reports about a design: an error (the design is
// unusable for what was asked) or a warning (legal but suspicious), with a stable code, a message
// naming the objects involved, and where the first of them was written.
#pragma once

#include <string>

#include "hallway/design.hpp"

namespace hallway {

enum class Severity { kError, kWarning };
std::string ToString(Severity s);

struct Finding {
  Severity severity = Severity::kWarning;
  std::string code;  // stable short identifier, e.g. "gate-overlap"
  std::string message;
  SourceLocation where;  // the first object involved
};

}  // namespace hallway
