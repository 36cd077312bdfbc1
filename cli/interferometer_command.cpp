// `hallway fringes`: what each interferometer of a design will show (interferometer.hpp): its kind,
// arms and channels, flux, field and gate periods, thermal visibility, the regime of Halperin et al.
// (2011), and the map of G(Phi, V_plunger) with the excess noise (CSV with --csv).
#include <fmt/core.h>

#include <algorithm>
#include <cmath>
#include <iostream>

#include "commands.hpp"
#include "hallway/constants.hpp"
#include "hallway/interferometer.hpp"
#include "hallway/units.hpp"
#include "json_parts.hpp"
#include "output.hpp"
#include "report.hpp"

namespace hallway::cli {

using nlohmann::json;
using units::FormatSI;

namespace {

std::string names_of(const Design& d, const std::vector<int>& qs) {
  std::string out;
  for (int q : qs) out += (out.empty() ? "" : ", ") + d.constrictions[static_cast<std::size_t>(q)].name;
  return out;
}

std::string channel_list(const std::vector<int>& ks) {
  if (ks.empty()) return "none";
  std::string out;
  for (int k : ks) out += (out.empty() ? "" : ", ") + std::to_string(k + 1);
  return out;
}

std::string slope_text(const std::optional<double>& s) {
  if (!s) return "not computed";
  if (*s == 0.0) return "0 (lines parallel to the B axis)";
  return FormatSI(*s, "V/T") + (*s < 0.0 ? " (negative)" : " (positive)");
}

std::string coupling_text(const Interferometer& f) {
  if (!f.coupling) return "";
  const CavityCoupling& c = *f.coupling;
  std::string out = fmt::format(
      "  coupling energies (docs/models.md \"Coupling energies of a cavity\"; edge strip {}): K_I = {}, K_L = {}, "
      "K_IL = {}; K_IL/K_I = {:.3g}: {}\n",
      FormatSI(c.edge_strip_width_m, "m"), FormatSI(c.interior_J / constants::kElementaryCharge_C, "eV"),
      FormatSI(c.edge_J / constants::kElementaryCharge_C, "eV"),
      FormatSI(c.coupling_J / constants::kElementaryCharge_C, "eV"), c.ratio, ToString(c.regime));
  out += fmt::format(
      "    a screening plane at half the depth would give K_IL/K_I = {:.3g}; the loop twice as large, {:.3g} "
      "(K_I {})\n",
      c.ratio_half_depth, c.ratio_double_size, FormatSI(c.interior_double_size_J / constants::kElementaryCharge_C, "eV"));
  return out;
}

std::string interferometer_text(const Design& d, const EdgeNetwork& net, const Interferometer& f, int index) {
  std::string out = fmt::format("\nInterferometer {}: {} on channel {} through {}\n", index + 1, ToString(f.kind),
                                f.channel + 1, names_of(d, f.constrictions));
  for (int p : f.arms) {
    const EdgePiece& e = net.pieces[static_cast<std::size_t>(p)];
    out += fmt::format("  arm {} -> {}: {}\n", DescribeEnd(d, e.from), DescribeEnd(d, e.to), FormatSI(e.length_m, "m"));
  }
  std::string inside;
  for (int c : f.contacts_inside) inside += (inside.empty() ? "" : ", ") + d.contacts[static_cast<std::size_t>(c)].name;
  out += fmt::format("  interfering channel {} (charge {:.4g} e); passing every constriction: {}; reflected: {}; "
                     "contacts inside: {}\n",
                     f.channel + 1, f.charge_e, channel_list(f.passing_channels), channel_list(f.reflected_channels),
                     inside.empty() ? "none" : inside);
  out += fmt::format("  area {:.4g} um^2: flux period h/eA = {}{}", f.area_m2 * 1e12,
                     FormatSI(f.flux_period_T, "T"),
                     f.fractional ? ", h/e*A = " + FormatSI(f.quasiparticle_flux_period_T, "T") : std::string());
  out += f.cd_field_period_T ? "; Coulomb-dominated field period h/(nu_in e A) = " + FormatSI(*f.cd_field_period_T, "T") + "\n"
                             : "; no Coulomb-dominated field period (nu_in = 0: the CD lines do not move with B)\n";
  out += fmt::format("  {} {} in {} (v = {}): thermal damping of the first harmonic X/sinh X = {:.3g} (X = {:.3g})\n",
                     f.kind == InterferometerKind::kFabryPerot ? "round trip" : "arm difference",
                     FormatSI(f.length_m, "m"), FormatSI(f.time_s, "s"), FormatSI(f.velocity_m_per_s, "m/s"),
                     f.visibility, f.thermal_argument);
  for (const GateEffect& e : f.gates) {
    const std::string& name = d.gates[static_cast<std::size_t>(e.gate)].name;
    if (e.resolved)
      out += fmt::format("  gate {}: dA/dV = {} um^2/V, period {}{}\n", name, fmt::format("{:.4g}", e.area_per_volt_m2_per_V * 1e12),
                         FormatSI(e.period_V, "V"), e.note.empty() ? "" : "; " + e.note);
    else
      out += fmt::format("  gate {}: {}\n", name, e.note);
  }
  out += coupling_text(f);
  out += "  constant-phase lines dV/dB for the plunger (Halperin et al., Phys. Rev. B 83, 155440 (2011)): "
         "Aharonov-Bohm " + slope_text(f.ab_slope_V_per_T) + "; Coulomb-dominated " + slope_text(f.cd_slope_V_per_T) + "\n";
  for (const std::string& n : f.notes) out += "  note: " + n + "\n";
  return out;
}

json interferometer_json(const Design& d, const EdgeNetwork& net, const Interferometer& f) {
  json arms = json::array();
  for (int p : f.arms) {
    const EdgePiece& e = net.pieces[static_cast<std::size_t>(p)];
    arms.push_back({{"from", DescribeEnd(d, e.from)}, {"to", DescribeEnd(d, e.to)}, {"length_m", e.length_m}});
  }
  json gates = json::array();
  for (const GateEffect& e : f.gates)
    gates.push_back({{"gate", d.gates[static_cast<std::size_t>(e.gate)].name},
                     {"resolved", e.resolved},
                     {"area_per_volt_m2_per_V", e.area_per_volt_m2_per_V},
                     {"period_V", e.resolved ? json(e.period_V) : json(nullptr)},
                     {"loop_length_per_volt_m_per_V", e.length_per_volt_m_per_V},
                     {"loop_time_per_volt_s_per_V", e.time_per_volt_s_per_V},
                     {"visibility_at_minus_step", e.visibility_low},
                     {"visibility_at_plus_step", e.visibility_high},
                     {"area_linear_over_step", e.linear},
                     {"note", e.note}});
  json inside = json::array();
  for (int c : f.contacts_inside) inside.push_back(d.contacts[static_cast<std::size_t>(c)].name);
  auto channels = [](const std::vector<int>& ks) {
    json a = json::array();
    for (int k : ks) a.push_back(k + 1);
    return a;
  };
  json qs = json::array();
  for (int q : f.constrictions) qs.push_back(d.constrictions[static_cast<std::size_t>(q)].name);
  auto opt = [](const std::optional<double>& x) { return x ? json(*x) : json(nullptr); };
  json j{{"kind", ToString(f.kind)},
         {"channel", f.channel + 1},
         {"constrictions", qs},
         {"arms", arms},
         {"contacts_inside", inside},
         {"passing_channels", channels(f.passing_channels)},
         {"reflected_channels", channels(f.reflected_channels)},
         {"fractional", f.fractional},
         {"charge_e", f.charge_e},
         {"area_m2", f.area_m2},
         {"path_length_m", f.length_m},
         {"path_time_s", f.time_s},
         {"velocity_m_per_s", f.velocity_m_per_s},
         {"flux_period_T", f.flux_period_T},
         {"flux_period_quasiparticle_T", f.quasiparticle_flux_period_T},
         {"inner_filling", f.inner_filling},
         {"cd_field_period_T", opt(f.cd_field_period_T)},
         {"thermal_argument", f.thermal_argument},
         {"thermal_visibility", f.visibility},
         {"gates", gates},
         {"slope_ab_V_per_T", opt(f.ab_slope_V_per_T)},
         {"slope_cd_V_per_T", opt(f.cd_slope_V_per_T)},
         {"notes", f.notes}};
  if (f.coupling) {
    const CavityCoupling& c = *f.coupling;
    j["coupling"] = {{"interior_J", c.interior_J},
                     {"edge_J", c.edge_J},
                     {"mutual_J", c.coupling_J},
                     {"mutual_over_interior", c.ratio},
                     {"regime", ToString(c.regime)},
                     {"edge_strip_width_m", c.edge_strip_width_m},
                     {"interior_area_m2", c.interior_area_m2},
                     {"edge_area_m2", c.edge_area_m2},
                     {"ratio_screening_at_half_depth", c.ratio_half_depth},
                     {"ratio_loop_twice_as_large", c.ratio_double_size},
                     {"interior_J_loop_twice_as_large", c.interior_double_size_J}};
  } else {
    j["coupling"] = nullptr;
  }
  return j;
}

std::string map_csv(const InterferenceMap& m) {
  std::string csv = "flux_h_over_e,plunger_V,conductance_S,excess_noise_A2_per_Hz\n";
  std::size_t k = 0;
  for (double v : m.plunger_V)
    for (double phi : m.flux_quanta) {
      csv += fmt::format("{:.10g},{:.10g},{:.10g},{:.10g}\n", phi, v, m.conductance_S[k], m.excess_A2_per_Hz[k]);
      ++k;
    }
  return csv;
}

std::string map_text(const Design& d, const InterferometerResult& r, const std::string& csv_path) {
  if (!r.map) return "\nMap of G(Phi, V): not computed: " + r.map_not_computed + "\n";
  const InterferenceMap& m = *r.map;
  const auto [gmin, gmax] = std::minmax_element(m.conductance_S.begin(), m.conductance_S.end());
  const auto [smin, smax] = std::minmax_element(m.excess_A2_per_Hz.begin(), m.excess_A2_per_Hz.end());
  std::string out = fmt::format(
      "\nMap of G(Phi, V_{}) (interferometer {}): {} x {} points, up to {} energies per point (docs/models.md \"Thermal "
      "average at a fixed loop phase\")\n",
      d.gates[static_cast<std::size_t>(m.plunger)].name, m.interferometer + 1, m.flux_quanta.size(), m.plunger_V.size(),
      m.energy_points);
  out += fmt::format("  G = |dI_{} / dV_{}| with floating contacts eliminated: {} to {} (e^2/h = {})\n",
                     d.contacts[static_cast<std::size_t>(m.amplifier)].name,
                     d.contacts[static_cast<std::size_t>(m.source)].name, FormatSI(*gmin, "S"), FormatSI(*gmax, "S"),
                     FormatSI(constants::kConductanceQuantum_S, "S"));
  out += fmt::format("  excess noise at {}: {} to {}\n", d.contacts[static_cast<std::size_t>(m.amplifier)].name,
                     FormatSI(*smin, "A^2/Hz"), FormatSI(*smax, "A^2/Hz"));
  out += "  the phase origin is arbitrary (the area is not known to a flux quantum); the map assumes the "
         "Aharonov-Bohm phase B A(V)\n";
  if (!csv_path.empty()) out += "  written to " + csv_path + "\n";
  return out;
}

}  // namespace

std::string FringesText(const Design& d, const EdgeNetwork& net, const InterferometerResult& r) {
  std::string out = "gate periods: " + r.gate_model + "\n";
  if (r.interferometers.empty()) out += "\nNo interferometer: no loop through a constriction, no pair of arms.\n";
  for (std::size_t i = 0; i < r.interferometers.size(); ++i)
    out += interferometer_text(d, net, r.interferometers[i], static_cast<int>(i));
  return out + map_text(d, r, "");
}

std::string FringesCsv(const InterferenceMap& m) { return map_csv(m); }

nlohmann::json FringesJson(const Design& d, const EdgeNetwork& net, const InterferometerResult& r) {
  json list = json::array();
  for (const Interferometer& f : r.interferometers) list.push_back(interferometer_json(d, net, f));
  json j{{"interferometers", list}, {"gate_model", r.gate_model}, {"electrostatic_solves", r.electrostatic_solves}};
  if (r.map) {
    const InterferenceMap& m = *r.map;
    j["map"] = {{"interferometer", m.interferometer + 1},
                {"plunger", d.gates[static_cast<std::size_t>(m.plunger)].name},
                {"source", d.contacts[static_cast<std::size_t>(m.source)].name},
                {"amplifier", d.contacts[static_cast<std::size_t>(m.amplifier)].name},
                {"energy_points", m.energy_points},
                {"flux_h_over_e", m.flux_quanta},
                {"plunger_V", m.plunger_V},
                {"conductance_S", m.conductance_S},
                {"excess_noise_A2_per_Hz", m.excess_A2_per_Hz}};
  } else {
    j["map"] = nullptr;
    j["map_not_computed"] = r.map_not_computed;
  }
  return j;
}

int RunFringes(const FringesArgs& args) {
  std::size_t max_memory = 0;
  if (int code = 0; !ParseMaxMemory(args.max_memory, &max_memory, &code)) return code;
  InterferometerOptions opt;
  try {
    if (!args.gate_step.empty()) opt.gate_step_V = units::Parse(args.gate_step, units::Kind::kVoltage);
  } catch (const units::UnitError& e) {
    std::cerr << "hallway: usage error: --gate-step: " << e.what() << "\n";
    return kExitUsage;
  }
  opt.plunger = args.plunger;
  opt.flux_points = args.flux_points;
  opt.plunger_points = args.plunger_points;
  opt.map = !args.no_map;
  if (std::string why; !opt.IsValid(&why)) {
    std::cerr << "hallway: usage error: " << why << "\n";
    return kExitUsage;
  }
  if (args.no_map && !args.csv_path.empty()) {
    std::cerr << "hallway: usage error: --csv writes the map; it cannot go with --no-map\n";
    return kExitUsage;
  }
  Design design;
  if (int code = 0; !LoadOrReport(args.design_path, &design, &code)) return code;
  if (!args.plunger.empty() && std::none_of(design.gates.begin(), design.gates.end(),
                                            [&](const Gate& g) { return g.name == args.plunger; })) {
    std::cerr << "hallway: usage error: --plunger " << args.plunger << " is not a gate of " << args.design_path << "\n";
    return kExitUsage;
  }
  std::optional<Device> device;
  std::string es_note;
  if (int code = 0; !BuildDevice(std::move(design), args.fast, max_memory, &device, &es_note, &code)) return code;
  const Design& d = device->design();
  const EdgeNetwork& net = device->edges();
  if (ReportErrors(net.findings) > 0) return kExitDesignError;
  DeviceOptions dopt;
  dopt.bare_estimate = args.fast;
  dopt.electrostatics.max_memory_bytes = max_memory;
  const InterferometerResult r = AnalyseInterferometers(*device, dopt, opt);
  if (r.map && !RequireFinite({r.map->conductance_S, r.map->excess_A2_per_Hz}, "the interference map"))
    return kExitInternal;

  std::string out = fmt::format("hallway fringes  {}\n", d.path);
  if (!d.name.empty()) out += fmt::format("  design: {}\n", d.name);
  out += fmt::format("  bulk filling nu = {}, field {:+.4g} T, temperature {}\n", d.conditions.filling.ToString(),
                     d.conditions.field_T, FormatSI(d.conditions.temperature_K, "K"));
  out += fmt::format("  edge boundaries: {}\n", device->geometry().model);
  out += es_note;
  out += fmt::format("  gate periods: {} ({} solves, step +-{})\n", r.gate_model, r.electrostatic_solves,
                     FormatSI(opt.gate_step_V, "V"));
  if (r.interferometers.empty()) out += "\nNo interferometer: no loop through a constriction, no pair of arms.\n";
  for (std::size_t i = 0; i < r.interferometers.size(); ++i)
    out += interferometer_text(d, net, r.interferometers[i], static_cast<int>(i));
  const std::string csv = r.map ? FringesCsv(*r.map) : std::string();
  out += map_text(d, r, args.csv_path);
  std::vector<std::string> warnings;
  for (const Finding& f : device->summary().findings) warnings.push_back(f.message);
  for (const Finding& f : r.findings) warnings.push_back(f.message);
  if (!warnings.empty()) {
    out += "\nWarnings\n";
    for (const auto& w : warnings) out += "  - " + w + "\n";
  }
  out += kSafetyCaution;
  json j = FringesJson(d, net, r);
  j["hallway_fringes"] = 1;
  j["design"] = d.path;
  j["field_T"] = d.conditions.field_T;
  j["temperature_K"] = d.conditions.temperature_K;
  j["warnings"] = warnings;
  if (!RequireFiniteJson(j, "the interferometer results")) return kExitInternal;
  std::cout << out;
  try {
    if (!args.csv_path.empty()) WriteFileAtomically(args.csv_path, csv, {args.design_path});
    if (!args.json_path.empty()) WriteFileAtomically(args.json_path, j.dump(2) + "\n", {args.design_path});
  } catch (const OutputError& e) {
    std::cerr << "hallway: output error: " << e.what() << "\n";
    return kExitOutputError;
  }
  return kExitOk;
}

}  // namespace hallway::cli
