// The commands of the Python module; see commands.hpp. Each function follows the matching Run* of
// cli/*_command.cpp step by step (same library calls, same options, same order of warnings), with
// exceptions where the CLI prints a message and returns an exit code.
#include "commands.hpp"

#include <fmt/core.h>

#include <cmath>
#include <iostream>
#include <memory>
#include <sstream>

#include "hallway/check.hpp"
#include "hallway/device.hpp"
#include "hallway/network.hpp"
#include "hallway/noise.hpp"
#include "hallway/paths.hpp"
#include "hallway/saddle_model.hpp"
#include "hallway/transport.hpp"
#include "hallway/units.hpp"
#include "hallway/wiring.hpp"
#include "json_parts.hpp"
#include "output.hpp"
#include "transmissions.hpp"

namespace hallway::python {

using nlohmann::json;

namespace {

std::string findings_text(const std::vector<Finding>& errors) {
  std::string s;
  for (const Finding& f : errors) {
    if (!s.empty()) s.push_back('\n');
    s.append(f.where.ToString()).append(": ").append(f.message);
  }
  return s;
}

std::vector<Finding> errors_among(const std::vector<Finding>& findings) {
  std::vector<Finding> errors;
  for (const Finding& f : findings)
    if (f.severity == Severity::kError) errors.push_back(f);
  return errors;
}

void refuse_errors(const std::vector<Finding>& findings) {
  if (auto errors = errors_among(findings); !errors.empty()) throw DesignFindings(std::move(errors));
}

std::string gib(std::size_t bytes) {
  return fmt::format("{:.1f} GiB", static_cast<double>(bytes) / 1073741824.0);
}

// GridTooLarge as the Python exception; `way_out` names the option that avoids the grid.
ResourceLimit grid_limit(const GridTooLarge& e, const std::string& way_out) {
  return ResourceLimit(fmt::format("{}; nothing was solved. {} raise the limit with max_memory (now {})", e.what(),
                                   way_out, gib(e.limit_bytes)),
                       e);
}

void require_finite(const std::vector<std::vector<double>>& values, const std::string& stage) {
  for (const auto& row : values)
    for (double x : row)
      if (!std::isfinite(x)) throw InternalError("a value that is not finite appeared in " + stage);
}

bool all_finite(const json& j) {
  if (j.is_number_float()) return std::isfinite(j.get<double>());
  if (j.is_array() || j.is_object())
    for (const auto& x : j)
      if (!all_finite(x)) return false;
  return true;
}

void require_finite_json(const json& j, const std::string& stage) {
  if (!all_finite(j)) throw InternalError("a value that is not finite appeared in " + stage);
}

// cli/output.cpp BuildDevice: checks (errors refuse), electrostatics unless fast (the memory guard and
// convergence refuse), channel geometry (errors refuse).
std::unique_ptr<Device> build_device(const Design& design, const RunOptions& run) {
  DeviceOptions options;
  options.bare_estimate = run.fast;
  options.electrostatics.max_memory_bytes = run.max_memory_bytes;
  std::unique_ptr<Device> device;
  try {
    device = std::make_unique<Device>(design, options);
  } catch (const GridTooLarge& e) {
    throw grid_limit(e, "Use fast=True for the bare estimate without a grid, or");
  }
  refuse_errors(device->check().findings);
  if (const auto& s = device->summary().electrostatics; s && !s->converged)
    throw ResourceLimit(fmt::format("the electrostatic solve did not converge within {} operator applications "
                                    "(residual {:.1e} of the ungated density); use fast=True for the bare estimate",
                                    s->operator_applications, s->residual));
  if (!device->usable()) {
    refuse_errors(device->summary().findings);
    throw DesignFindings({{Severity::kError, "device-unusable", "the device could not be built", {design.path, 0, 0, ""}}});
  }
  return device;
}

json contact_names(const Design& d) {
  json contacts = json::array();
  for (const Contact& c : d.contacts) contacts.push_back(c.name);
  return contacts;
}

json finding_json(const Finding& f) {
  return {{"code", f.code}, {"severity", ToString(f.severity)}, {"message", f.message}};
}


struct Field {
  const EdgeNetwork* network;
  const TransportResult* transport;
};

// The fields `solve` reports: the design field unless only the reversed one is asked, then the reversed.
std::vector<Field> solve_fields(const Device& device, bool field_reversed) {
  std::vector<FieldSign> signs;
  if (!field_reversed) signs.push_back(FieldSign::kDesign);
  signs.push_back(FieldSign::kReversed);
  std::vector<Field> solved;
  std::vector<Finding> errors;
  for (FieldSign sign : signs) {
    const EdgeNetwork& net = device.edges(sign);
    for (const Finding& f : errors_among(net.findings)) errors.push_back(f);
    if (!errors.empty()) break;
    const TransportResult& t = device.transport(sign);
    require_finite(t.conductance_S, "the conductance matrix");
    require_finite({t.current_A}, "the contact currents");
    for (const Finding& f : errors_among(t.findings)) errors.push_back(f);
    solved.push_back({&net, &t});
  }
  if (!errors.empty()) throw DesignFindings(std::move(errors));
  return solved;
}

}  // namespace

DesignFindings::DesignFindings(std::vector<Finding> e) : std::runtime_error(findings_text(e)), errors(std::move(e)) {}

std::size_t ParseMemory(const std::string& text) {
  std::ostringstream said;
  std::streambuf* const before = std::cerr.rdbuf(said.rdbuf());
  std::size_t bytes = 0;
  int code = 0;
  const bool ok = cli::ParseMaxMemory(text, &bytes, &code);
  std::cerr.rdbuf(before);
  std::string message = said.str();
  if (!ok) {
    const std::string prefix = "hallway: usage error: --max-memory";
    if (message.rfind(prefix, 0) == 0) message = "max_memory" + message.substr(prefix.size());
    while (!message.empty() && message.back() == '\n') message.pop_back();
    throw UsageError(message);
  }
  std::cerr << message;  // the warning about a limit beyond this machine's memory, as the CLI gives it
  return bytes;
}

json CheckDocument(const Design& design, bool gate_settings) {
  Design d = design;
  return json::parse(cli::RunCheckOn(&d, gate_settings).json);  // exactly `hallway check --json`
}

json SolveDocument(const Design& design, const RunOptions& run, bool field_reversed) {
  const auto device = build_device(design, run);
  const Design& d = device->design();
  const ChannelGeometry& geometry = device->geometry();
  const std::vector<Field> solved = solve_fields(*device, field_reversed);
  const WiringVerdict verdict =
      solved.size() == 2
          ? AssessWiring(d, *solved[0].network, *solved[0].transport, *solved[1].network, *solved[1].transport)
          : AssessWiring(d, geometry);
  for (const Field& s : solved) require_finite_json(cli::TransportJson(d, *s.network, *s.transport), "the transport results");
  json j = cli::TransportJson(d, *solved.front().network, *solved.front().transport);
  j["hallway_solve"] = 1;
  j["design"] = d.path;
  j["filling"] = d.conditions.filling.ToString();
  j["boundary_model"] = geometry.model;
  j["contacts"] = contact_names(d);
  json warnings = json::array();
  for (const Finding& f : device->summary().findings) warnings.push_back(finding_json(f));
  j["constrictions"] = cli::TransmissionsJson(d, device->summary().transmissions);
  for (auto& w : j["warnings"]) warnings.push_back(w);
  j["warnings"] = warnings;
  if (solved.size() == 2) j["reversed_field"] = cli::TransportJson(d, *solved[1].network, *solved[1].transport);
  j["wiring_verdict"] = cli::WiringVerdictJson(d, verdict);
  // Path metrics and constriction models of the first field solved, as `solve --json` gives them.
  PathOptions po;
  po.max_memory_bytes = run.max_memory_bytes;
  PathResult paths = ComputePaths(d, *solved.front().network, *solved.front().transport, device->density(), po);
  ComputeConstrictionModels(d, po, &paths);
  const json pj = cli::PathsJson(d, *solved.front().network, paths);
  for (const char* key : {"paths", "loops", "constriction_models"}) j[key] = pj[key];
  require_finite_json(j, "the path metrics and constriction models");
  return j;
}

json NoiseDocument(const Design& design, const RunOptions& run, const NoiseRun& nr) {
  // The CLI's limits on --phase and --target (cli/noise_command.cpp).
  if (nr.phase_rad && !(std::isfinite(*nr.phase_rad) && std::abs(*nr.phase_rad) <= 1e6))
    throw UsageError("phase must be a finite angle in radians of at most 1e6 in magnitude");
  if (!(nr.target_sigmas > 0.0)) throw UsageError("target must be positive");
  const auto model = ColliderModelFromString(nr.collider_model);
  if (!model)
    throw UsageError("collider_model must be 'zero-temperature' or 'finite-temperature'; got '" + nr.collider_model +
                     "'");
  NoiseOptions opt;
  opt.target_sigmas = nr.target_sigmas;
  opt.loop_phase_rad = nr.phase_rad;
  opt.collider_model = *model;
  const auto device = build_device(design, run);
  const Design& d = device->design();
  const ChannelGeometry& geometry = device->geometry();
  const FieldSign sign = nr.field_reversed ? FieldSign::kReversed : FieldSign::kDesign;
  const EdgeNetwork& net = device->edges(sign);
  refuse_errors(net.findings);
  const TransportResult& tr = device->transport(sign);
  const NoiseResult n = device->noise(opt, sign);
  require_finite(tr.conductance_S, "the conductance matrix");
  require_finite(n.total_A2_per_Hz, "the noise matrix");
  for (const Finding& f : errors_among(n.findings)) throw InternalError(f.message);
  const WiringVerdict verdict = AssessWiring(d, geometry);
  std::vector<std::string> warnings;
  for (const Finding& f : device->summary().findings) warnings.push_back(f.message);
  const std::string label = ReversedFieldLabel(d, verdict, device->field_T(sign));
  for (const std::vector<Finding>* list : {&net.findings, &tr.findings, &n.findings})
    for (const Finding& f : *list) warnings.push_back((label.empty() ? "" : "[" + label + "] ") + f.message);
  json j = cli::NoiseJson(d, n);
  j["hallway_noise"] = 1;
  j["design"] = d.path;
  j["contacts"] = contact_names(d);
  j["filling"] = d.conditions.filling.ToString();
  j["temperature_K"] = d.conditions.temperature_K;
  j["warnings"] = warnings;
  j["wiring_verdict"] = cli::WiringVerdictJson(d, verdict);
  j["constrictions"] = cli::TransmissionsJson(d, device->summary().transmissions);
  require_finite_json(j, "the noise results");
  return j;
}

json PathsDocument(const Design& design, const RunOptions& run, const PathsRun& pr) {
  PathOptions po;  // cli/paths_command.cpp ParsePathOptions
  po.max_memory_bytes = run.max_memory_bytes;
  try {
    if (!pr.target.empty()) po.target_transmission = units::Parse(pr.target, units::Kind::kDimensionless);
    if (!pr.gate_limit.empty()) po.gate_voltage_limit_V = units::Parse(pr.gate_limit, units::Kind::kVoltage);
    if (!pr.relaxation_length.empty())
      po.relaxation_length_m = units::Parse(pr.relaxation_length, units::Kind::kLength);
  } catch (const units::UnitError& e) {
    throw UsageError(e.what());
  }
  if (std::string why; !po.IsValid(&why)) throw UsageError(why);
  const auto device = build_device(design, run);
  const Design& d = device->design();
  const EdgeNetwork& net = device->edges();
  refuse_errors(net.findings);
  PathResult r;
  try {
    r = device->paths(po);
  } catch (const GridTooLarge& e) {
    throw grid_limit(e, "A constriction window exceeds the limit even with fast=True:");
  }
  std::vector<std::string> warnings;
  for (const Finding& f : device->summary().findings) warnings.push_back(f.message);
  for (const Finding& f : r.findings) warnings.push_back(f.message);
  json j = cli::PathsJson(d, net, r);
  j["hallway_paths"] = 1;
  j["design"] = d.path;
  j["field_T"] = d.conditions.field_T;
  j["warnings"] = warnings;
  j["constrictions"] = cli::TransmissionsJson(d, device->summary().transmissions);
  require_finite_json(j, "the path metrics and constriction models");
  return j;
}

MapResult RunMapSearch(const Design& d, const std::string& grid, std::size_t max_memory_bytes,
                       const std::function<void(int, int, const std::string&)>& progress) {
  MapOptions opt;
  opt.electrostatics.max_memory_bytes = max_memory_bytes;
  if (!grid.empty()) {  // cli/map_command.cpp ParseGrid: 1 nm to 10 um
    try {
      opt.electrostatics.grid_m = units::Parse(grid, units::Kind::kLength);
    } catch (const units::UnitError& e) {
      throw UsageError(std::string("grid: ") + e.what());
    }
    if (!(opt.electrostatics.grid_m >= 1e-9 && opt.electrostatics.grid_m <= 10e-6))
      throw UsageError("grid must lie between 1 nm and 10 um; got '" + grid + "'");
  }
  refuse_errors(CheckDesign(d).findings);
  opt.progress = progress;
  MapResult m;
  try {
    m = ComputeMap(d, opt);
  } catch (const GridTooLarge& e) {
    throw grid_limit(e, "Coarsen the grid (grid=\"" + units::FormatSI(e.fitting_cell_m, "m") + "\" or coarser fits), or");
  }
  if (!errors_among(m.findings).empty())
    throw ResourceLimit("the electrostatic solve did not converge within its iteration bound; no map is reported");
  require_finite({m.map.density_per_m2, m.map.energy_over_fermi}, "the density grid");
  for (const GateMap& g : m.gates)
    require_finite({{g.wide_depletion_V, g.depletion_V.value_or(0.0), g.lateral_depletion_m.value_or(0.0),
                     g.drift_velocity_m_per_s.value_or(0.0)}},
                   "the map results");
  for (const ConstrictionMap& c : m.constrictions)
    require_finite({{c.gap_m, c.saddle.x, c.saddle.y, c.saddle_density_per_m2, c.pinch_off_V.value_or(0.0),
                     c.bare_pinch_off_V.value_or(0.0)}},
                   "the map results");
  return m;
}

}  // namespace hallway::python
