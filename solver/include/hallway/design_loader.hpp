// hallway/design_loader.hpp: read a design file (YAML, format version 1) into a Design.
//
// Errors in the file (syntax, unknown or duplicate keys, wrong types, missing or wrong units, values
// out of range, names that do not resolve) throw DesignError, whose message starts with
// "file:line:column: key.path:". The loader checks what a single value or the file's structure can
// tell; geometric and wiring consistency is CheckDesign()'s job (check.hpp).
#pragma once

#include <stdexcept>
#include <string>
#include <string_view>

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

// `s` with every byte that is not part of a printable UTF-8 character (control characters, escape
// sequences, malformed UTF-8) written as \xNN; line breaks and tabs are kept. Used for every message.
std::string PrintableText(std::string_view s);
// True when `s` is well-formed UTF-8 without any control character (tabs and line breaks included).
bool IsCleanText(std::string_view s);

// Reads and validates `path`. Refuses files larger than kMaxDesignBytes before parsing.
Design LoadDesign(const std::string& path);
// The same from text already in memory; `path` is used in messages only.
Design LoadDesignFromString(const std::string& text, const std::string& path);

// Returns the design text with the value at `key_path` replaced by `value_text`. A path is a chain
// of keys separated by '.', where a list of named objects is entered by name ("gates.QL.voltage") and
// any list by index ("constrictions.Q.transmission[1]"); a source's bias is addressed as
// "wiring.W" and keeps its role. Throws DesignError naming the path when it does not exist.
std::string SetDesignValue(const std::string& text, const std::string& path, const std::string& key_path,
                           const std::string& value_text);

inline constexpr std::size_t kMaxDesignBytes = 8u << 20;  // 8 MiB: far above any hand-written design
inline constexpr int kMaxNestingDepth = 32;               // deeper YAML is refused, not recursed into
inline constexpr double kMaxCoordinate_m = 0.1;           // no outline point beyond 10 cm of the origin
// Below this no lithography draws a feature (electron-beam lithography resolves a few nm; common
// practice): consecutive outline vertices closer than this are refused by the loader, gaps narrower
// than this by CheckDesign.
inline constexpr double kMinFeature_m = 1e-9;
// 1 nK: far below any electron temperature reached in a 2DEG (a few mK; common practice), low enough
// to stand for the zero-temperature limit of the noise formulas, far above where k_B T underflows.
inline constexpr double kMinTemperature_K = 1e-9;
inline constexpr double kMinField_T = 1e-3;  // 1 mT: filling beyond 1000 at the lowest density

}  // namespace hallway
