// A device: a design made ready to solve, built once. It checks the design, solves the self-consistent
// electrostatics at the design voltages (or takes the bare estimate), builds the channel geometry, and
// then gives the edge network, transport, noise and path results for either field sign, each computed
// on first use and kept. A library user (a script, a notebook, the sweep) runs a design end to end with
// this class alone; the models behind each number are those of docs/models.md.
#pragma once

#include <array>
#include <functional>
#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "hallway/check.hpp"
#include "hallway/design.hpp"
#include "hallway/electrostatics.hpp"
#include "hallway/network.hpp"
#include "hallway/noise.hpp"
#include "hallway/paths.hpp"
#include "hallway/saddle_model.hpp"
#include "hallway/transport.hpp"

namespace hallway {

struct DeviceOptions {
  // The bare estimate (the gates' own potential and the wide-gate depletion) instead of the
  // self-consistent density: fast, no grid (the CLI's --fast).
  bool bare_estimate = false;
  ElectrostaticsOptions electrostatics;
  NetworkOptions network;  // its density is set by the device
  // Model also the constrictions whose transmissions the design declares, and warn where the gates
  // contradict them (saddle_model.hpp); `transmission: from-gates` constrictions are always modelled.
  bool check_declared_transmissions = true;
  // Where the self-consistent solve starts (a nearby solution of the same grid); null: from scratch.
  const DensityMap* start = nullptr;
  bool IsValid(std::string* why) const;
};

// The field the design is measured in, or its reverse.
enum class FieldSign { kDesign, kReversed };

// What a device is built from and whether its numbers can be used.
struct DeviceSummary {
  bool usable = false;            // no error in the design checks, converged electrostatics
  bool warm_started = false;      // the self-consistent solve started from DeviceOptions::start
  std::string boundary_model;     // how the channel boundaries were found (ChannelGeometry::model)
  std::optional<ElectrostaticsStats> electrostatics;  // absent under the bare estimate
  // Per constriction: the transmissions used and where they came from (the design, or the gates
  // through the saddle-point model on the window potential, or the bare one under the bare estimate).
  std::vector<ConstrictionTransmission> transmissions;
  // design checks, electrostatics, transmissions from the gates, channel geometry, in that order
  std::vector<Finding> findings;
};

// The caches make a const Device unsafe to share between threads without a lock; give each thread
// its own device.
class Device {
 public:
  // Checks `design` and, when it passes, solves the electrostatics and builds the channel geometry.
  // A design that fails its checks, or electrostatics that do not converge, give a device whose
  // summary says so (usable() false) and that refuses to solve. Throws GridTooLarge when the grid
  // exceeds options.electrostatics.max_memory_bytes, std::invalid_argument for invalid options.
  Device(Design design, const DeviceOptions& options = {});

  const Design& design() const { return design_; }
  const DeviceSummary& summary() const { return summary_; }
  bool usable() const { return summary_.usable; }
  const CheckResult& check() const { return check_; }
  const ChannelGeometry& geometry() const;
  const DensityMap* density() const { return density_ ? &*density_ : nullptr; }  // null: bare estimate
  double field_T(FieldSign sign) const;

  // Computed on first use for each sign and kept; std::logic_error on a device that is not usable.
  const EdgeNetwork& edges(FieldSign sign = FieldSign::kDesign) const;
  const TransportResult& transport(FieldSign sign = FieldSign::kDesign) const;
  // With a fixed loop phase and no piece times given, the times of flight come from this device's edge
  // velocities (ComputePaths), so that the energy average of the loop phase uses the same edges.
  NoiseResult noise(const NoiseOptions& options = {}, FieldSign sign = FieldSign::kDesign) const;
  // Path metrics and constriction models in the design field, with the device's density (or the
  // fixed drift velocity under the bare estimate).
  PathResult paths(const PathOptions& options = {}) const;

 private:
  void require_usable() const;
  bool resolve_transmissions();  // false on an error finding
  Design design_;
  DeviceOptions options_;
  CheckResult check_;
  DeviceSummary summary_;
  std::optional<DensityMap> density_;
  std::optional<ChannelGeometry> geometry_;
  mutable std::array<std::optional<EdgeNetwork>, 2> edges_;
  mutable std::array<std::optional<TransportResult>, 2> transport_;
};

// Warm starts along a sequence of nearby parameter values (a sweep): the start for the next point is
// the linear extrapolation of the last two solutions (ExtrapolatedStart) when the points are equally
// spaced, else the last solution, else none.
class WarmStarts {
 public:
  // The start for a point at parameters `at`, or null; valid until the next Push or Reset.
  const DensityMap* StartFor(const std::vector<double>& at);
  void Push(const DensityMap& solution, const std::vector<double>& at);
  void Reset();

 private:
  std::optional<DensityMap> last_, before_, predicted_;
  std::vector<double> last_at_, before_at_;
};

}  // namespace hallway
