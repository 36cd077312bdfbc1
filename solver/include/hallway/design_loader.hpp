// hallway/design_loader.hpp: read a design file (YAML, format version 1) into a Design.
//
// Errors in the file (syntax, unknown or duplicate keys, wrong types, missing or wrong units, values
// out of range, names that do not resolve) throw DesignError, whose message starts with
// "file:line:column: key.path:". The loader checks what a single value or the file's structure can
// tell; geometric and wiring consistency is CheckDesign()'s job (check.hpp).
#pragma once

#include <stdexcept>
#include <string>

#include "hallway/design.hpp"

namespace hallway {

class DesignError : public std::runtime_error {
 public:
  DesignError(SourceLocation where, const std::string& message);
  const SourceLocation& where() const { return where_; }
  const std::string& message() const { return message_; }

 private:
  SourceLocation where_;
  std::string message_;
};

// Reads and validates `path`. Refuses files larger than kMaxDesignBytes before parsing.
Design LoadDesign(const std::string& path);
// The same from text already in memory; `path` is used in messages only.
Design LoadDesignFromString(const std::string& text, const std::string& path);

inline constexpr std::size_t kMaxDesignBytes = 8u << 20;  // 8 MiB: far above any hand-written design
inline constexpr int kMaxNestingDepth = 32;               // deeper YAML is refused, not recursed into
inline constexpr double kMaxCoordinate_m = 0.1;           // no outline point beyond 10 cm of the origin

}  // namespace hallway
