// hallway/check.hpp: geometric and wiring consistency of a loaded design (`hallway check`).
//
// Errors make the design unusable for the solvers (a short between gates, a contact that misses
// the mesa, a constriction whose gates do not face each other across the 2DEG). Warnings are legal
// but suspicious. Each finding names the objects involved and where they were written.
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "hallway/design.hpp"
#include "hallway/finding.hpp"  // Severity, Finding
#include "hallway/gap.hpp"      // FindGap
#include "hallway/heterostructure.hpp"

namespace hallway {

struct ConstrictionGap {
  std::string name;
  std::string first, second;
  double gap_m = 0.0;                   // shortest distance between the two outlines
  geometry::Point on_first, on_second;  // where it is attained
  // Bare (no screening) pinch-off: the gates' closed-form potential at the bare saddle reaches the
  // wide-gate depletion voltage (FindBarePinchOff, saddle.hpp); nullopt where no such voltage exists.
  std::optional<double> bare_pinch_off_V;
  geometry::Point bare_saddle;
  double most_positive_gate_V = 0.0;  // of the gates that form it
};

// A gate beyond the design's gate-voltage window (Conditions::gate_voltage_min_V, gate_voltage_max_V,
// design.hpp) is a warning, "gate-voltage-limit", at the gate's `voltage:` value.
struct CheckOptions {
  // A gap wider than this many 2DEG depths is unlikely to pinch off at moderate voltage.
  double wide_gap_in_depths = 10.0;
  // A source bias above this fraction of the cyclotron energy (over e) risks breaking down the
  // quantum Hall state (common practice).
  double bias_fraction_of_cyclotron_gap = 0.1;
  bool IsValid(std::string* why) const;
};

struct CheckResult {
  WaferQuantities wafer;
  std::vector<ConstrictionGap> constrictions;
  std::vector<Finding> findings;  // errors first, then warnings, each in design order
  bool ok() const;                // no errors
  int error_count() const;
  int warning_count() const;
};

CheckResult CheckDesign(const Design& design, const CheckOptions& options = {});

// The end of a sentence "gate X at V ..." saying that `voltage_V` lies outside the design's gate-voltage
// window and what that risks, or nothing when it lies inside. The one rule for the check finding
// "gate-voltage-limit" and the warnings of `sweep` about a swept range.
std::optional<std::string> GateLimitProblem(const Design& design, double voltage_V);

}  // namespace hallway
