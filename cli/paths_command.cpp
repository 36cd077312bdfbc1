// `hallway paths`: lengths, drift velocities, times of flight and thermal lengths of every edge piece,
// loops with Aharonov-Bohm periods and charging energies, source-to-splitter distances, floating-contact
// heating, and the saddle-point model of every constriction.
#include <fmt/core.h>

#include <cmath>
#include <iostream>

#include "commands.hpp"
#include "hallway/check.hpp"
#include "hallway/constants.hpp"
#include "hallway/electrostatics.hpp"
#include "hallway/units.hpp"
#include "json_parts.hpp"
#include "output.hpp"
#include "transmissions.hpp"

namespace hallway::cli {

using nlohmann::json;
using units::FormatSI;

json PathsJson(const Design& d, const EdgeNetwork& net, const PathResult& r) {
  json pieces = json::array();
  for (const PieceMetrics& p : r.pieces) {
    const EdgePiece& e = net.pieces[static_cast<std::size_t>(p.piece)];
    pieces.push_back({{"channel", e.channel + 1},
                      {"from", DescribeEnd(d, e.from)},
                      {"to", DescribeEnd(d, e.to)},
                      {"length_m", p.length_m},
                      {"velocity_m_per_s", p.velocity_m_per_s},
                      {"velocity_from_map", p.velocity_from_map},
                      {"time_of_flight_s", p.time_of_flight_s},
                      {"thermal_length_hbar_v_over_kT_m", p.thermal_length_m},
                      {"thermal_length_hbar_v_over_2pi_kT_m", p.thermal_length_2pi_m}});
  }
  json loops = json::array();
  for (const LoopMetrics& l : r.loops) {
    json qs = json::array();
    for (int q : l.constrictions) qs.push_back(d.constrictions[static_cast<std::size_t>(q)].name);
    loops.push_back({{"channel", l.channel + 1},
                     {"constrictions", qs},
                     {"closed_edge", l.closed_edge},
                     {"length_m", l.length_m},
                     {"area_m2", l.area_m2},
                     {"ab_period_h_over_eA_T", l.ab_period_T},
                     {"ab_period_h_over_estar_A_T", l.ab_period_quasiparticle_T},
                     {"charging_energy_J", l.charging_energy_J},
                     {"charging_energy_over_kT",
                      l.charging_energy_J / (constants::kBoltzmann_J_per_K * d.conditions.temperature_K)},
                     {"gated_island", l.gated_island},
                     {"thermal_visibility", l.visibility}});
  }
  json models = json::array();
  for (const ConstrictionModel& c : r.constrictions) {
    json curve = json::array();
    for (const auto& s : c.curve) {
      json t = json::array();
      for (double x : s.transmission) t.push_back(std::isnan(x) ? json(nullptr) : json(x));
      curve.push_back({{"voltage_V", s.voltage_V}, {"transmission", t}});
    }
    json target = json::array();
    for (const auto& v : c.voltage_for_target_V) target.push_back(v ? json(*v) : json(nullptr));
    json t = json::array();
    for (double x : c.transmission) t.push_back(std::isnan(x) ? json(nullptr) : json(x));
    models.push_back({{"name", d.constrictions[static_cast<std::size_t>(c.constriction)].name},
                      {"saddle_found", c.saddle_found},
                      {"saddle_m", {c.saddle.x, c.saddle.y}},
                      {"barrier_above_fermi_J", c.barrier_J},
                      {"hbar_omega_x_J", c.hbar_omega_x_J},
                      {"hbar_omega_y_J", c.hbar_omega_y_J},
                      {"subbands_J", c.subbands_J},
                      {"harmonic_ratio", c.harmonic_ratio ? json(*c.harmonic_ratio) : json(nullptr)},
                      {"transmission_at_design", t},
                      {"curve", curve},
                      {"voltage_for_design_transmission_V", target},
                      {"warnings", c.warnings}});
  }
  json sources = json::array();
  for (const SourcePath& s : r.source_paths)
    sources.push_back({{"channel", s.channel + 1},
                       {"from", d.constrictions[static_cast<std::size_t>(s.source)].name},
                       {"to", d.constrictions[static_cast<std::size_t>(s.target)].name},
                       {"distance_m", s.distance_m},
                       {"time_of_flight_s", s.time_of_flight_s},
                       {"thermal_length_m", s.thermal_length_m},
                       {"relaxation_length_m", s.relaxation_length_m},
                       {"beyond_relaxation_length", s.beyond_relaxation},
                       {"interferometer_arm", s.loop.has_value()},
                       {"loop", s.loop ? json(*s.loop + 1) : json(nullptr)},
                       {"path_difference_m", s.loop ? json(s.path_difference_m) : json(nullptr)},
                       {"path_thermal_length_m", s.loop ? json(s.path_thermal_length_m) : json(nullptr)},
                       {"thermal_visibility", s.loop ? json(s.visibility) : json(nullptr)},
                       {"beyond_thermal_length", s.beyond_thermal_length},
                       {"charge_velocity_m_per_s", s.modes ? json(s.modes->charge_velocity_m_per_s) : json(nullptr)},
                       {"neutral_velocity_m_per_s", s.modes ? json(s.modes->neutral_velocity_m_per_s) : json(nullptr)},
                       {"mode_velocities_from_design", s.modes ? json(s.modes->from_design) : json(nullptr)},
                       {"delay_s", s.pulses ? json(s.pulses->delay_s) : json(nullptr)},
                       {"delay_bias_ratio", s.pulses ? json(s.pulses->bias_ratio) : json(nullptr)},
                       {"delay_thermal_ratio", s.pulses ? json(s.pulses->thermal_ratio) : json(nullptr)}});
  json floats = json::array();
  for (const FloatHeating& f : r.floats)
    floats.push_back({{"contact", d.contacts[static_cast<std::size_t>(f.contact)].name},
                      {"power_W", f.power_W},
                      {"temperature_K", f.temperature_K}});
  return {{"paths", pieces},
          {"loops", loops},
          {"constriction_models", models},
          {"source_paths", sources},
          {"relaxation_rule", r.relaxation_rule},
          {"floating_contacts", floats},
          {"velocity_model", r.velocity_model}};
}

namespace {

// The options of `paths` in SI; false after a usage error.
bool ParsePathOptions(const PathsArgs& args, std::size_t max_memory, PathOptions* out) {
  PathOptions& po = *out;
  po.max_memory_bytes = max_memory;
  try {
    if (!args.target.empty()) po.target_transmission = units::Parse(args.target, units::Kind::kDimensionless);
    if (!args.gate_limit.empty()) po.gate_voltage_limit_V = units::Parse(args.gate_limit, units::Kind::kVoltage);
    if (!args.relaxation_length.empty())
      po.relaxation_length_m = units::Parse(args.relaxation_length, units::Kind::kLength);
  } catch (const units::UnitError& e) {
    std::cerr << "hallway: usage error: " << e.what() << "\n";
    return false;
  }
  if (std::string why; !po.IsValid(&why)) {
    std::cerr << "hallway: usage error: " << why << "\n";
    return false;
  }
  return true;
}

// One source path: distance, time of flight and thermal length; against the relaxation rule of thumb,
// or for an interferometer arm against the thermal length with its visibility factor.
std::string SourcePathMetrics(const Design& d, const PathResult& r, const SourcePath& s);

// Filling 2: the modes along a source path and the delay between the two half pulses at its target.
std::string PulseLine(const SourcePath& s) {
  if (!s.modes || !s.pulses) return {};
  return fmt::format("    {}; pulses {} apart at the target: e V dt/hbar = {:.3g}, k_B T dt/hbar = {:.3g}: {}\n",
                     DescribeModes(*s.modes), FormatSI(s.pulses->delay_s, "s", 3), s.pulses->bias_ratio,
                     s.pulses->thermal_ratio, DescribePulses(*s.pulses));
}

std::string SourcePathLine(const Design& d, const PathResult& r, const SourcePath& s) {
  return SourcePathMetrics(d, r, s) + PulseLine(s);
}

std::string SourcePathMetrics(const Design& d, const PathResult& r, const SourcePath& s) {
  std::string out = fmt::format("  channel {}: {} -> {}: {}, flight {}, hbar v/kT {}", s.channel + 1,
                                d.constrictions[static_cast<std::size_t>(s.source)].name,
                                d.constrictions[static_cast<std::size_t>(s.target)].name, FormatSI(s.distance_m, "m"),
                                FormatSI(s.time_of_flight_s, "s"), FormatSI(s.thermal_length_m, "m"));
  if (!s.loop && s.pulses) return out + "  (at filling 2 the pulse delay below judges the distance)\n";
  if (!s.loop)
    return out + (s.beyond_relaxation ? "  (beyond the relaxation length, a rule of thumb)\n"
                                      : "  (within the relaxation length, a rule of thumb)\n");
  std::string qs;
  for (int q : r.loops[static_cast<std::size_t>(*s.loop)].constrictions)
    qs += (qs.empty() ? "" : ", ") + d.constrictions[static_cast<std::size_t>(q)].name;
  return out + fmt::format(
                   "\n    interferometer arm of the loop through {}: no relaxation check; path difference {} {} "
                   "the thermal length {}, visibility factor X/sinh X = {:.3g}\n",
                   qs, FormatSI(s.path_difference_m, "m"), s.beyond_thermal_length ? "exceeds" : "is within",
                   FormatSI(s.path_thermal_length_m, "m"), s.visibility);
}

std::string PathsText(const Design& d, const ChannelGeometry& geometry, const std::string& es_note,
                      const EdgeNetwork& net, const PathResult& r, const PathOptions& po,
                      const std::vector<Finding>& device_findings) {
  const double kt = constants::kBoltzmann_J_per_K * d.conditions.temperature_K;

  std::string out = fmt::format("hallway paths  {}\n", d.path);
  out += fmt::format("  field {:+.4g} T, temperature {}; edge boundaries: {}\n  velocity: {}\n", d.conditions.field_T,
                     FormatSI(d.conditions.temperature_K, "K"), geometry.model, r.velocity_model);
  out += es_note;
  out += "\nEdge pieces (direction of electron travel)\n";
  out += fmt::format("  {:>3} {:>14} {:>14} {:>10} {:>12} {:>10} {:>12} {:>14}\n", "ch", "from", "to", "length",
                     "v (m/s)", "flight", "hbar v/kT", "hbar v/2pi kT");
  for (const PieceMetrics& p : r.pieces) {
    const EdgePiece& e = net.pieces[static_cast<std::size_t>(p.piece)];
    out += fmt::format("  {:>3} {:>14} {:>14} {:>10} {:>12.3g} {:>10} {:>12} {:>14}\n", e.channel + 1,
                       DescribeEnd(d, e.from), DescribeEnd(d, e.to), FormatSI(p.length_m, "m"), p.velocity_m_per_s,
                       FormatSI(p.time_of_flight_s, "s"), FormatSI(p.thermal_length_m, "m"),
                       FormatSI(p.thermal_length_2pi_m, "m"));
  }
  if (!r.loops.empty()) {
    out += "\nLoops\n";
    for (const LoopMetrics& l : r.loops) {
      std::string qs;
      for (int q : l.constrictions) qs += (qs.empty() ? "" : ", ") + d.constrictions[static_cast<std::size_t>(q)].name;
      out += fmt::format(
          "  channel {} {}: length {}, area {:.4g} um^2, AB period h/eA = {}, h/e*A = {}; E_C = {} ({:.3g} k_BT, {} "
          "island); "
          "thermal visibility {:.3g}\n",
          l.channel + 1, l.closed_edge ? "closed edge" : "through " + qs, FormatSI(l.length_m, "m"), l.area_m2 * 1e12,
          FormatSI(l.ab_period_T, "T"), FormatSI(l.ab_period_quasiparticle_T, "T"),
          FormatSI(l.charging_energy_J / constants::kElementaryCharge_C, "eV"), l.charging_energy_J / kt,
          l.gated_island ? "gated, plate capacitor" : "ungated, disk", l.visibility);
    }
    out +=
        "  (AB periods assume the interfering edge encloses the area shown; which period is seen depends on the "
        "regime, "
        "docs/models.md \"Aharonov-Bohm period and charging\")\n";
  }
  if (!r.source_paths.empty()) {
    out += "\nSource constriction to splitter or collider\n  " + r.relaxation_rule + "\n";
    for (const SourcePath& s : r.source_paths) out += SourcePathLine(d, r, s);
  }
  if (!r.floats.empty()) {
    out += "\nFloating contacts (Joule heating at the design bias, phonon cooling neglected)\n";
    for (const FloatHeating& f : r.floats)
      out += fmt::format("  {}: {} dissipated, electron temperature {}\n",
                         d.contacts[static_cast<std::size_t>(f.contact)].name, FormatSI(f.power_W, "W"),
                         FormatSI(f.temperature_K, "K"));
  }
  if (!r.constrictions.empty()) {
    out +=
        "\nConstriction models (saddle point of the self-consistent potential in a window around each gap, solved "
        "also under --fast; Büttiker, Phys. Rev. B 41, 7906 "
        "(1990))\n";
    for (const ConstrictionModel& c : r.constrictions) {
      const Constriction& k = d.constrictions[static_cast<std::size_t>(c.constriction)];
      out += fmt::format("  {}: barrier {} relative to E_F, hbar w_x = {}, hbar w_y = {}", k.name,
                         FormatSI(c.barrier_J / constants::kElementaryCharge_C, "eV"),
                         FormatSI(c.hbar_omega_x_J / constants::kElementaryCharge_C, "eV"),
                         FormatSI(c.hbar_omega_y_J / constants::kElementaryCharge_C, "eV"));
      if (c.harmonic_ratio) out += fmt::format(", subband spacing / hbar w_y = {:.3f}", *c.harmonic_ratio);
      out += "\n";
      for (std::size_t ch = 0; ch < c.voltage_for_target_V.size(); ++ch) {
        const bool has_t = ch < c.transmission.size() && !std::isnan(c.transmission[ch]);
        // A from-gates constriction is searched at half transmission (saddle_model.hpp).
        const double target = po.target_transmission.value_or(k.transmission_from_gates ? 0.5 : k.transmission[ch]);
        out += fmt::format("    channel {}: model transmission at the design voltages {}; {} {:.3g}{} reached at {}\n",
                           ch + 1, has_t ? fmt::format("{:.3f}", c.transmission[ch]) : std::string("n/a (fractional)"),
                           po.target_transmission        ? "target"
                           : k.transmission_from_gates ? "half transmission"
                                                       : "design value",
                           target,
                           target > 0.99 ? " (searched as 0.99)" : target < 0.01 ? " (searched as 0.01)" : "",
                           c.voltage_for_target_V[ch] ? FormatSI(*c.voltage_for_target_V[ch], "V") : std::string("-"));
      }
      for (const auto& w : c.warnings) out += "    warning: " + w + "\n";
    }
  }
  std::vector<std::string> warnings;
  // The device's: design checks, transmissions from the gates, channel geometry.
  for (const Finding& f : device_findings) warnings.push_back(f.message);
  for (const Finding& f : r.findings) warnings.push_back(f.message);
  if (!warnings.empty()) {
    out += "\nWarnings\n";
    for (const auto& w : warnings) out += "  - " + w + "\n";
  }
  return out;
}

}  // namespace

int RunPaths(const PathsArgs& args) {
  std::size_t max_memory = 0;
  if (int code = 0; !ParseMaxMemory(args.max_memory, &max_memory, &code)) return code;
  Design design;
  if (int code = 0; !LoadOrReport(args.design_path, &design, &code)) return code;
  std::optional<Device> device;
  std::string es_note;
  if (int code = 0; !BuildDevice(std::move(design), args.fast, max_memory, &device, &es_note, &code)) return code;
  const Design& d = device->design();
  const ChannelGeometry& geometry = device->geometry();
  const EdgeNetwork& net = device->edges();
  if (ReportErrors(net.findings) > 0) return kExitDesignError;
  PathOptions po;
  if (!ParsePathOptions(args, max_memory, &po)) return kExitUsage;
  const PathResult r = device->paths(po);
  std::string out = PathsText(d, geometry, es_note, net, r, po, device->summary().findings);
  std::vector<std::string> warnings;
  for (const Finding& f : device->summary().findings) warnings.push_back(f.message);
  for (const Finding& f : r.findings) warnings.push_back(f.message);
  out += kSafetyCaution;
  json j = PathsJson(d, net, r);
  j["hallway_paths"] = 1;
  j["design"] = d.path;
  j["field_T"] = d.conditions.field_T;
  j["warnings"] = warnings;
  j["constrictions"] = TransmissionsJson(d, device->summary().transmissions);
  if (!RequireFiniteJson(j, "the path metrics and constriction models")) return kExitInternal;
  std::cout << out;
  if (!args.json_path.empty()) {
    try {
      WriteFileAtomically(args.json_path, j.dump(2) + "\n", {args.design_path});
    } catch (const OutputError& e) {
      std::cerr << "hallway: output error: " << e.what() << "\n";
      return kExitOutputError;
    }
  }
  return kExitOk;
}

}  // namespace hallway::cli
