// Device: see device.hpp.
#include "hallway/device.hpp"

#include <algorithm>
#include <cmath>
#include <stdexcept>

namespace hallway {
namespace {
std::size_t index_of(FieldSign s) { return s == FieldSign::kDesign ? 0 : 1; }

// True when x - last equals last - before on every axis (to rounding) and the step is not zero.
bool equal_step(const std::vector<double>& x, const std::vector<double>& last, const std::vector<double>& before) {
  if (x.size() != last.size() || x.size() != before.size()) return false;
  bool moved = false;
  for (std::size_t a = 0; a < x.size(); ++a) {
    const double scale = std::max({std::abs(x[a]), std::abs(last[a]), std::abs(before[a]), 1e-300});
    if (std::abs((x[a] - last[a]) - (last[a] - before[a])) > 1e-9 * scale) return false;
    moved = moved || x[a] != last[a];
  }
  return moved;
}
}  // namespace

bool DeviceOptions::IsValid(std::string* why) const {
  if (!network.IsValid(why)) return false;
  if (network.density) {
    *why = "DeviceOptions: network.density is set by the device; leave it null";
    return false;
  }
  if (bare_estimate && start) {
    *why = "DeviceOptions: a start density means nothing under the bare estimate";
    return false;
  }
  return true;
}

Device::Device(Design design, const DeviceOptions& options) : design_(std::move(design)), options_(options) {
  if (std::string why; !options_.IsValid(&why)) throw std::invalid_argument(why);
  options_.start = nullptr;  // used once, below; the device keeps no pointer it does not own
  check_ = CheckDesign(design_);
  summary_.findings = check_.findings;
  if (!check_.ok()) return;
  NetworkOptions network = options_.network;
  if (!options.bare_estimate) {
    std::vector<double> volts;
    for (const Gate& g : design_.gates) volts.push_back(g.voltage_V);
    const ElectrostaticProblem problem(design_, options_.electrostatics);
    const DensityMap* start = options.start && options.start->nx == problem.nx() && options.start->ny == problem.ny()
                                  ? options.start
                                  : nullptr;
    density_ = problem.Solve(volts, start);
    summary_.warm_started = start != nullptr;
    summary_.electrostatics = density_->stats;
    if (!density_->stats.converged) {
      summary_.findings.push_back({Severity::kError, "electrostatics-not-converged",
                                   "the electrostatic solve did not converge within " +
                                       std::to_string(density_->stats.operator_applications) +
                                       " operator applications; its density is not used",
                                   design_.mesa.where});
      return;
    }
    network.density = &*density_;
  }
  if (!resolve_transmissions()) return;
  geometry_ = BuildChannelGeometry(design_, network);
  summary_.boundary_model = geometry_->model;
  summary_.findings.insert(summary_.findings.end(), geometry_->findings.begin(), geometry_->findings.end());
  summary_.usable = true;
  for (const Finding& f : geometry_->findings) summary_.usable = summary_.usable && f.severity != Severity::kError;
}

bool Device::resolve_transmissions() {
  GateTransmissionOptions go;
  go.potential = options_.bare_estimate ? SaddlePotential::kBare : SaddlePotential::kSelfConsistentWindow;
  go.electrostatics = options_.electrostatics;
  go.check_declared = options_.check_declared_transmissions;
  std::vector<Finding> found;
  summary_.transmissions = ResolveGateTransmissions(&design_, go, &found);
  summary_.findings.insert(summary_.findings.end(), found.begin(), found.end());
  return std::none_of(found.begin(), found.end(), [](const Finding& f) { return f.severity == Severity::kError; });
}

void Device::require_usable() const {
  if (!summary_.usable)
    throw std::logic_error("this device is not usable (see its summary's findings); nothing can be solved");
}

const ChannelGeometry& Device::geometry() const {
  require_usable();
  return *geometry_;
}

double Device::field_T(FieldSign sign) const {
  return sign == FieldSign::kDesign ? design_.conditions.field_T : -design_.conditions.field_T;
}

const EdgeNetwork& Device::edges(FieldSign sign) const {
  require_usable();
  auto& slot = edges_[index_of(sign)];
  if (!slot) slot = TraceEdges(design_, *geometry_, field_T(sign));
  return *slot;
}

const TransportResult& Device::transport(FieldSign sign) const {
  auto& slot = transport_[index_of(sign)];
  if (!slot) slot = SolveTransport(design_, edges(sign));
  return *slot;
}

NoiseResult Device::noise(const NoiseOptions& options, FieldSign sign) const {
  // The pieces' times of flight also set the delay between the charge and neutral pulses of a collider's
  // inputs at filling 2 (edge_modes.hpp).
  const bool filling_two = design_.conditions.filling.is_integer() && design_.conditions.filling.num == 2;
  if ((!options.loop_phase_rad && !filling_two) || !options.piece_time_of_flight_s.empty())
    return SolveNoise(design_, edges(sign), transport(sign), options);
  // A fixed loop phase is averaged over energy with each piece's time of flight: the edge velocities of
  // this device's electrostatics (the paths' E x B drift; the fixed velocity under the bare estimate).
  NoiseOptions timed = options;
  const PathResult paths = ComputePaths(design_, edges(sign), transport(sign), density());
  timed.piece_time_of_flight_s.assign(edges(sign).pieces.size(), 0.0);
  for (const PieceMetrics& m : paths.pieces) timed.piece_time_of_flight_s[static_cast<std::size_t>(m.piece)] = m.time_of_flight_s;
  return SolveNoise(design_, edges(sign), transport(sign), timed);
}

PathResult Device::paths(const PathOptions& options) const {
  PathResult r = ComputePaths(design_, edges(), transport(), density(), options);
  ComputeConstrictionModels(design_, options, &r);
  return r;
}

const DensityMap* WarmStarts::StartFor(const std::vector<double>& at) {
  predicted_.reset();
  if (!last_) return nullptr;
  if (before_ && before_->nx == last_->nx && before_->ny == last_->ny && equal_step(at, last_at_, before_at_)) {
    predicted_ = ExtrapolatedStart(*before_, *last_);
    return &*predicted_;
  }
  return &*last_;
}

void WarmStarts::Push(const DensityMap& solution, const std::vector<double>& at) {
  before_ = std::move(last_);
  before_at_ = std::move(last_at_);
  last_ = solution;
  last_at_ = at;
}

void WarmStarts::Reset() { *this = {}; }

}  // namespace hallway
