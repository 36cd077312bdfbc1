// `hallway check`: derived wafer figures, layout and wiring checks, as text and JSON.
#include <fmt/core.h>

#include <cmath>
#include <iostream>
#include <nlohmann/json.hpp>

#include "commands.hpp"
#include "hallway/channels.hpp"
#include "hallway/check.hpp"
#include "hallway/constants.hpp"
#include "hallway/design_loader.hpp"
#include "hallway/geometry/polygon.hpp"
#include "hallway/network.hpp"
#include "hallway/units.hpp"
#include "hallway/wiring.hpp"
#include "json_parts.hpp"
#include "output.hpp"
#include "transmissions.hpp"

namespace hallway::cli {
namespace {

using units::FormatSI;
constexpr double kMeV = 1e-3 * constants::kElementaryCharge_C;

std::string ev(double joule) {
  return FormatSI(joule / constants::kElementaryCharge_C, "eV");
}

void row(std::string& out, const std::string& label, const std::string& value) {
  out += fmt::format("  {:<36} {}\n", label, value);
}

// Durations as a lab writes them: seconds below a minute, then minutes, then hours.
std::string duration(double s) {
  if (s < 60.0) return FormatSI(s, "s");
  if (s < 3600.0) return fmt::format("{:.4g} min", s / 60.0);
  return fmt::format("{:.4g} h", s / 3600.0);
}

std::string optional_text(const std::optional<double>& x, const char* unit) {
  return x ? FormatSI(*x, unit) : std::string("(needs heterostructure.mobility)");
}

std::string describe_wiring(const Wiring& w) {
  switch (w.role) {
    case Role::kSource: return "source, " + (w.current_source ? FormatSI(w.bias_A, "A") : FormatSI(w.bias_V, "V"));
    case Role::kGround: return "cold ground";
    case Role::kFloat: return "floating ohmic (no net current)";
    case Role::kAmplifier: {
      const Amplifier& a = *w.amplifier;
      return fmt::format("amplifier: load {}, e_n {}/rtHz, i_n {}/rtHz, {} band, {} averaging",
                         FormatSI(a.load_Ohm, "Ohm"), FormatSI(a.voltage_noise_V_per_rtHz, "V"),
                         FormatSI(a.current_noise_A_per_rtHz, "A"), FormatSI(a.bandwidth_Hz, "Hz"),
                         duration(a.integration_s));
    }
  }
  return "?";
}

std::string channel_text(const Channel& c) {
  std::string s = fmt::format("{} e^2/h, e* = {:.4g} e", c.conductance.ToString(), c.charge_e);
  if (c.exchange_pi) s += fmt::format(", theta = {:.4g} pi", *c.exchange_pi);
  if (c.scaling) s += fmt::format(", delta = {:.4g}", *c.scaling);
  if (!c.note.empty()) s += " [" + c.note + "]";
  return s;
}

// The constrictions' transmissions against their gates, and the gate voltages for the declared values.
struct GateView {
  std::vector<ConstrictionTransmission> transmissions;
  std::vector<GateSetting> settings;
  std::string not_modelled;  // why there is no model (empty: modelled, or nothing to model)
};

std::string gate_settings_text(const Design& d, const GateView& g) {
  std::string out = TransmissionsText(d, g.transmissions);
  if (!g.not_modelled.empty()) out += "\nConstriction models: " + g.not_modelled + "\n";
  if (g.settings.empty()) return out;
  out += fmt::format(
      "\nGate voltages for the declared transmissions (both gates of the constriction together, the others at "
      "their design voltages; saddle-point model on the self-consistent window potential; a declared 1 or 0 is "
      "searched as 0.99 or 0.01, `from-gates` lists where each channel is half open)\n");
  for (const GateSetting& s : g.settings) {
    const Constriction& k = d.constrictions[static_cast<std::size_t>(s.constriction)];
    const Gate* first = d.FindGate(k.first);
    row(out, fmt::format("{} channel {}", k.name, s.channel + 1),
        fmt::format("t = {:.3g} at {}{}", s.target,
                    s.voltage_V ? FormatSI(*s.voltage_V, "V") : "(not reached above " + FormatSI(s.floor_V, "V") + ")",
                    first ? fmt::format(" (design {})", FormatSI(first->voltage_V, "V")) : std::string()));
  }
  out += "  Found to 1 mV. In a strong field the model's steps can be narrower than that (Büttiker's E_1 shrinks as\n"
         "  hbar w_x w_y / 2 W; measured risers are wider: disorder and the bias are not modelled), so read a value\n"
         "  as the centre of the step. These are estimates: approach them slowly, and never past the gates'\n"
         "  leakage or breakdown onset.\n";
  return out;
}

void gate_settings_json(const Design& d, const GateView& g, nlohmann::json& constrictions) {
  const nlohmann::json used = TransmissionsJson(d, g.transmissions);
  for (std::size_t i = 0; i < constrictions.size() && i < used.size(); ++i) {
    nlohmann::json& x = constrictions[i];
    for (const char* key : {"transmission_used", "transmission_source", "model"}) x[key] = used[i][key];
    nlohmann::json settings = nlohmann::json::array();
    for (const GateSetting& s : g.settings)
      if (s.constriction == static_cast<int>(i))
        settings.push_back({{"channel", s.channel + 1},
                            {"transmission", s.target},
                            {"voltage_V", s.voltage_V ? nlohmann::json(*s.voltage_V) : nlohmann::json(nullptr)}});
    x["gate_settings"] = settings;
  }
}

std::string render_text(const Design& d, const CheckResult& r, const WiringVerdict* v, const GateView* gv) {
  const auto& f = r.wafer;
  const auto& h = d.heterostructure;
  std::string out;
  out += fmt::format("hallway check  {}\n", d.path);
  if (!d.name.empty()) out += fmt::format("  design: {}\n", d.name);
  out += "\nWafer and field (derived)\n";
  row(out, "2DEG depth", FormatSI(h.depth_m, "m"));
  row(out, "sheet density", fmt::format("{:.4g} m^-2 ({:.4g} cm^-2)", h.density_per_m2, h.density_per_m2 * 1e-4));
  row(out, "density of states (spin-degenerate)",
      fmt::format("{:.4g} cm^-2 meV^-1", f.density_of_states_per_J_m2 * 1e-4 * kMeV));
  row(out, "Fermi energy", ev(f.fermi_energy_J));
  row(out, "Fermi wavelength", FormatSI(f.fermi_wavelength_m, "m"));
  row(out, "Fermi velocity", fmt::format("{:.4g} m/s", f.fermi_velocity_m_per_s));
  row(out, "mean free path", optional_text(f.mean_free_path_m, "m"));
  row(out, "transport lifetime", optional_text(f.transport_lifetime_s, "s"));
  if (d.conditions.field_given)
    row(out, "field (given)",
        fmt::format("{:.4g} T -> bulk filling {:.4g}, plateau nu = {}", f.field_T, d.conditions.filling_from_field,
                    d.conditions.filling.ToString()));
  else
    row(out, "field for the filling",
        fmt::format("{:.4g} T at nu = {} (n h / e nu)", f.field_T, d.conditions.filling.ToString()));
  row(out, "magnetic length", FormatSI(f.magnetic_length_m, "m"));
  row(out, "cyclotron energy", ev(f.cyclotron_energy_J));
  row(out, "thermal energy k_B T",
      ev(f.thermal_energy_J) + fmt::format(" at {}", FormatSI(d.conditions.temperature_K, "K")));
  row(out, "wide-gate capacitance", fmt::format("{:.4g} mF/m^2", f.gate_capacitance_F_per_m2 * 1e3));
  row(out, "density change per gate volt", fmt::format("{:.4g} m^-2/V", f.density_per_gate_volt_per_m2));
  row(out, "wide-gate depletion (plate)", FormatSI(f.depletion_voltage_plate_V, "V"));
  row(out, "wide-gate depletion (+ quantum C)", FormatSI(f.depletion_voltage_V, "V"));

  out += fmt::format("\nEdge channels at nu = {} ({})\n", d.conditions.filling.ToString(),
                     d.channels_given ? "from the design's channels:" : "hallway defaults");
  for (std::size_t k = 0; k < d.channels.size(); ++k)
    row(out, fmt::format("channel {}", k + 1), channel_text(d.channels[k]));

  out += "\nLayout\n";
  const auto bb = geometry::bounding_box(d.mesa.outline);
  row(out, "mesa",
      fmt::format("{} x {}, area {:.4g} um^2, etch depletion {}", FormatSI(bb.width(), "m"), FormatSI(bb.height(), "m"),
                  geometry::area(d.mesa.outline) * 1e12, FormatSI(d.mesa.etch_depletion_m, "m")));
  for (const Gate& g : d.gates)
    row(out, "gate " + g.name,
        fmt::format("{}, area {:.4g} um^2", FormatSI(g.voltage_V, "V"), geometry::area(g.outline) * 1e12));

  if (!d.constrictions.empty()) {
    out += "\nConstrictions\n";
    for (const Constriction& k : d.constrictions) {
      std::string t;
      for (double x : k.transmission) t += fmt::format("{}{:.3g}", t.empty() ? "" : ", ", x);
      std::string gap = "(not measured: see errors)";
      std::string pinch;
      for (const ConstrictionGap& g : r.constrictions)
        if (g.name == k.name) {
          gap = FormatSI(g.gap_m, "m");
          pinch = g.bare_pinch_off_V
                      ? fmt::format("; pinch-off, bare (no screening) {} (`hallway map` gives the self-consistent one)",
                                    FormatSI(*g.bare_pinch_off_V, "V"))
                      : std::string("; no bare pinch-off estimate (the gate potential at the saddle does not grow)");
        }
      row(out, k.name + " (" + k.first + " | " + k.second + ")",
          fmt::format("gap {}{}; transmission [{}]{}", gap, pinch, t,
                      k.transmission_from_gates ? " (from the gates)" : ""));
    }
  }

  if (gv) out += gate_settings_text(d, *gv);

  out += "\nWiring\n";
  for (const Wiring& w : d.wiring) row(out, w.contact, describe_wiring(w));

  if (!d.notes.empty()) {
    out += "\nNotes\n";
    for (const auto& n : d.notes) out += "  - " + n + "\n";
  }
  if (!r.findings.empty()) {
    out += "\nFindings\n";
    for (const Finding& x : r.findings)
      out += fmt::format("  {}: {} [{}]\n      at {}\n", ToString(x.severity), x.message, x.code, x.where.ToString());
  }
  if (v) out += WiringVerdictText(d, *v, "bare-potential edges, as `solve --fast`");
  out += kSafetyCaution;
  out += fmt::format("\n{}: {} error(s), {} warning(s)", r.ok() ? "check passed" : "check FAILED", r.error_count(),
                     r.warning_count());
  if (v && v->assessed)
    out += v->ok                  ? "; wiring works in the design field"
           : v->reversed_field_ok ? "; wiring FAILS in the design field (works with the field reversed)"
                                  : "; wiring FAILS in both field directions";
  return out + "\n";
}

nlohmann::json location_json(const SourceLocation& s) {
  return {{"file", s.file}, {"line", s.line}, {"column", s.column}, {"key", s.key_path}};
}

nlohmann::json polygon_json(const geometry::Polygon& p) {
  const auto bb = geometry::bounding_box(p);
  return {{"area_m2", geometry::area(p)}, {"bounding_box_m", {bb.xmin, bb.ymin, bb.xmax, bb.ymax}}};
}

std::string render_json(const Design& d, const CheckResult& r, const WiringVerdict* v, const GateView* gv) {
  using nlohmann::json;
  const auto& f = r.wafer;
  json j;
  j["hallway_check"] = 1;
  j["design"] = {{"path", d.path}, {"name", d.name}, {"format", d.format_version}};
  json derived = {{"depth_m", d.heterostructure.depth_m},
                  {"density_per_m2", d.heterostructure.density_per_m2},
                  {"density_of_states_per_J_m2", f.density_of_states_per_J_m2},
                  {"fermi_energy_J", f.fermi_energy_J},
                  {"fermi_wavelength_m", f.fermi_wavelength_m},
                  {"fermi_velocity_m_per_s", f.fermi_velocity_m_per_s},
                  {"field_T", f.field_T},
                  {"filling", d.conditions.filling.ToString()},
                  {"filling_at_field", f.filling},
                  {"field_given", d.conditions.field_given},
                  {"magnetic_length_m", f.magnetic_length_m},
                  {"cyclotron_energy_J", f.cyclotron_energy_J},
                  {"thermal_energy_J", f.thermal_energy_J},
                  {"temperature_K", d.conditions.temperature_K},
                  {"gate_capacitance_F_per_m2", f.gate_capacitance_F_per_m2},
                  {"density_per_gate_volt_per_m2", f.density_per_gate_volt_per_m2},
                  {"depletion_voltage_plate_V", f.depletion_voltage_plate_V},
                  {"depletion_voltage_V", f.depletion_voltage_V}};
  derived["mean_free_path_m"] = f.mean_free_path_m ? json(*f.mean_free_path_m) : json(nullptr);
  derived["transport_lifetime_s"] = f.transport_lifetime_s ? json(*f.transport_lifetime_s) : json(nullptr);
  j["derived"] = derived;
  json ch = json::array();
  for (const Channel& c : d.channels) {
    json x = {{"conductance_e2_per_h", c.conductance.ToString()}, {"charge_e", c.charge_e}};
    x["exchange_pi"] = c.exchange_pi ? json(*c.exchange_pi) : json(nullptr);
    x["scaling"] = c.scaling ? json(*c.scaling) : json(nullptr);
    x["note"] = c.note;
    ch.push_back(x);
  }
  j["channels"] = ch;
  j["channels_from_design"] = d.channels_given;
  j["mesa"] = polygon_json(d.mesa.outline);
  j["mesa"]["etch_depletion_m"] = d.mesa.etch_depletion_m;
  json contacts = json::array();
  for (const Contact& c : d.contacts) {
    json x = polygon_json(c.outline);
    x["name"] = c.name;
    contacts.push_back(x);
  }
  j["contacts"] = contacts;
  json gates = json::array();
  for (const Gate& g : d.gates) {
    json x = polygon_json(g.outline);
    x["name"] = g.name;
    x["voltage_V"] = g.voltage_V;
    gates.push_back(x);
  }
  j["gates"] = gates;
  json ks = json::array();
  for (const Constriction& k : d.constrictions) {
    json x = {{"name", k.name}, {"sides", {k.first, k.second}}, {"transmission", k.transmission}};
    x["regime"] = k.regime ? json(ToString(*k.regime)) : json(nullptr);
    x["gap_m"] = nullptr;
    x["pinch_off_bare_V"] = nullptr;
    for (const ConstrictionGap& g : r.constrictions)
      if (g.name == k.name) {
        x["gap_m"] = g.gap_m;
        x["gap_ends_m"] = {{g.on_first.x, g.on_first.y}, {g.on_second.x, g.on_second.y}};
        if (g.bare_pinch_off_V) {
          x["pinch_off_bare_V"] = *g.bare_pinch_off_V;
          x["saddle_bare_m"] = {g.bare_saddle.x, g.bare_saddle.y};
        }
      }
    ks.push_back(x);
  }
  if (gv) gate_settings_json(d, *gv, ks);
  j["constrictions"] = ks;
  json wiring = json::object();
  for (const Wiring& w : d.wiring) {
    json x = {{"role", ToString(w.role)}};
    if (w.role == Role::kSource) x[w.current_source ? "bias_A" : "bias_V"] = w.bias_own_unit();
    if (w.amplifier)
      x["amplifier"] = {{"load_Ohm", w.amplifier->load_Ohm},
                        {"voltage_noise_V_per_rtHz", w.amplifier->voltage_noise_V_per_rtHz},
                        {"current_noise_A_per_rtHz", w.amplifier->current_noise_A_per_rtHz},
                        {"bandwidth_Hz", w.amplifier->bandwidth_Hz},
                        {"integration_s", w.amplifier->integration_s}};
    wiring[w.contact] = x;
  }
  j["wiring"] = wiring;
  j["notes"] = d.notes;
  json errors = json::array(), warnings = json::array();
  for (const Finding& x : r.findings)
    (x.severity == Severity::kError ? errors : warnings)
        .push_back({{"code", x.code}, {"message", x.message}, {"where", location_json(x.where)}});
  j["errors"] = errors;
  j["warnings"] = warnings;
  j["ok"] = r.ok();
  if (v) j["wiring_verdict"] = WiringVerdictJson(d, *v);
  return j.dump(2) + "\n";
}

std::string contact_list(const Design& d, const std::vector<int>& contacts) {
  std::string s;
  for (int c : contacts) s += (s.empty() ? "" : ", ") + d.contacts[static_cast<std::size_t>(c)].name;
  return s;
}

void problem_lines(std::string& out, const std::vector<WiringProblem>& problems) {
  for (const WiringProblem& p : problems) {
    out += fmt::format("    - {} [{}{}]\n", p.message, p.code, p.mistake ? ", a common wiring mistake" : "");
    out += fmt::format("        what to change: {}\n", p.fix);
  }
}

void field_views(std::string& out, const Design& d, const FieldAssessment& a) {
  auto name = [&](int c) { return d.contacts[static_cast<std::size_t>(c)].name; };
  auto qname = [&](int q) { return d.constrictions[static_cast<std::size_t>(q)].name; };
  for (const AmplifierView& v : a.amplifiers) {
    std::string s;
    for (const auto& p : v.partitioned)
      s += fmt::format("{}partitioned current of {} through {} (channel {})", s.empty() ? "" : "; ", name(p.source),
                       qname(p.constriction), p.channel + 1);
    for (int q : v.collider_outputs) s += (s.empty() ? "" : "; ") + std::string("output of collider ") + qname(q);
    if (!v.direct_sources.empty())
      s += (s.empty() ? "" : "; ") + std::string("DC straight from ") + contact_list(d, v.direct_sources);
    row(out, "  amplifier " + name(v.contact), s.empty() ? "sees nothing partitioned" : s);
  }
  for (const ColliderView& v : a.colliders) {
    if (!v.fed) {
      row(out, "  collider " + qname(v.constriction), "no stream arrives");
      continue;
    }
    auto feed = [&](int q, int c, const std::vector<int>& src, double dil) {
      return (src.empty() ? std::string("no source") : contact_list(d, src)) +
             (q >= 0   ? " through " + qname(q)
              : c >= 0 ? " straight from " + name(c)
                       : std::string()) +
             fmt::format(" ({:.3g} % of the hot input)", 100.0 * dil);
    };
    row(out, "  collider " + qname(v.constriction),
        fmt::format("inputs {} and {}; outputs to {} and {}; {}",
                    feed(v.feed_first, v.contact_first, v.sources_first, v.dilution_first),
                    feed(v.feed_second, v.contact_second, v.sources_second, v.dilution_second),
                    v.output_first >= 0 ? name(v.output_first) : "-",
                    v.output_second >= 0 ? name(v.output_second) : "-",
                    v.inputs_dilute && v.outputs_measured ? "dilute inputs, both outputs measured" : "NOT as planned"));
  }
  for (const SourceView& v : a.sources) {
    std::string s;
    for (const auto& r : v.returns)
      s += fmt::format("{}{}{} {:.3g} %", s.empty() ? "" : ", ", name(r.first),
                       r.first == v.contact ? " (itself, reflected back)" : "", 100.0 * r.second);
    row(out, "  source " + name(v.contact), "current returns at " + (s.empty() ? std::string("no contact") : s));
  }
}

std::string card_text(const Design& d, const WiringVerdict& v) {
  std::string out =
      fmt::format("\nWiring card at B = {:+.4g} T (expected DC values: the transport solution the verdict used)\n",
                  d.conditions.field_T);
  out += fmt::format("  {:<8} {:<10} {:<58} {}\n", "contact", "role", "connect", "expected DC");
  for (const CardRow& r : v.card) {
    out += fmt::format("  {:<8} {:<10} {:<58} I = {} into the device, V = {}\n",
                       d.contacts[static_cast<std::size_t>(r.contact)].name, ToString(r.role), r.connect,
                       FormatSI(r.current_A, "A"), r.voltage_V ? FormatSI(*r.voltage_V, "V") : "undetermined");
    out += fmt::format("  {:<8} {:<10} {}\n", "", "", r.purpose);
  }
  for (const VoltagePair& p : v.voltage_pairs)
    out += fmt::format("  voltage pair V({}) - V({}): {} voltage, {} at the design field, {} reversed\n",
                       d.contacts[static_cast<std::size_t>(p.first)].name,
                       d.contacts[static_cast<std::size_t>(p.second)].name, p.hall ? "Hall" : "longitudinal",
                       FormatSI(p.voltage_V, "V"), FormatSI(p.reversed_voltage_V, "V"));
  return out;
}

}  // namespace

std::string WiringVerdictText(const Design& d, const WiringVerdict& v, const std::string& edges) {
  std::string out = fmt::format("\nWiring verdict ({}, both field signs)\n", edges);
  if (!v.assessed) return out + "  not assessed: " + v.not_assessed + "\n";
  out += "  " + v.summary + "\n";
  out += fmt::format("  at the design field B = {:+.4g} T\n", d.conditions.field_T);
  field_views(out, d, v.design);
  if (!v.problems.empty()) {
    out += "  problems in the design field\n";
    problem_lines(out, v.problems);
  }
  const std::string label = ReversedFieldLabel(d, v, -d.conditions.field_T);
  if (!v.reversed.problems.empty()) {
    out +=
        fmt::format("  {} (B = {:+.4g} T): {} problem(s)\n", label, -d.conditions.field_T, v.reversed.problems.size());
    problem_lines(out, v.reversed.problems);
  }
  return out + card_text(d, v);
}

std::string EdgesLabel(const ChannelGeometry& geometry) {
  return geometry.model == kBareBoundaryModel ? "bare-potential edges, as `check` and `solve --fast`"
                                              : "self-consistent edges";
}

nlohmann::json WiringVerdictJson(const Design& d, const WiringVerdict& v) {
  using nlohmann::json;
  auto names = [&](const std::vector<int>& cs) {
    json a = json::array();
    for (int c : cs) a.push_back(c >= 0 ? json(d.contacts[static_cast<std::size_t>(c)].name) : json(nullptr));
    return a;
  };
  auto qname = [&](int q) { return q >= 0 ? json(d.constrictions[static_cast<std::size_t>(q)].name) : json(nullptr); };
  auto problems = [&](const std::vector<WiringProblem>& ps) {
    json a = json::array();
    for (const WiringProblem& p : ps) {
      json qs = json::array();
      for (int q : p.constrictions) qs.push_back(qname(q));
      a.push_back({{"code", p.code},
                   {"mistake", p.mistake},
                   {"contacts", names(p.contacts)},
                   {"constrictions", qs},
                   {"message", p.message},
                   {"fix", p.fix}});
    }
    return a;
  };
  json j = {{"assessed", v.assessed},
            {"ok", v.ok},
            {"reversed_field_ok", v.reversed_field_ok},
            {"design_field_T", d.conditions.field_T},
            {"summary", v.summary}};
  j["not_assessed"] = v.assessed ? json(nullptr) : json(v.not_assessed);
  j["problems"] = problems(v.problems);
  j["reversed_field_problems"] = problems(v.reversed.problems);
  json amps = json::array();
  for (const AmplifierView& a : v.design.amplifiers) {
    json parts = json::array();
    for (const auto& p : a.partitioned)
      parts.push_back({{"source", d.contacts[static_cast<std::size_t>(p.source)].name},
                       {"constriction", qname(p.constriction)},
                       {"channel", p.channel + 1}});
    json outs = json::array();
    for (int q : a.collider_outputs) outs.push_back(qname(q));
    amps.push_back({{"contact", d.contacts[static_cast<std::size_t>(a.contact)].name},
                    {"partitioned", parts},
                    {"collider_outputs", outs},
                    {"direct_sources", names(a.direct_sources)},
                    {"sees_signal", a.sees_signal()}});
  }
  j["amplifiers"] = amps;
  json cols = json::array();
  for (const ColliderView& c : v.design.colliders)
    cols.push_back({{"constriction", qname(c.constriction)},
                    {"channel", c.channel + 1},
                    {"fed", c.fed},
                    {"feeds", {qname(c.feed_first), qname(c.feed_second)}},
                    {"sources", {names(c.sources_first), names(c.sources_second)}},
                    {"dilution", {c.dilution_first, c.dilution_second}},
                    {"outputs", names({c.output_first, c.output_second})},
                    {"inputs_dilute", c.inputs_dilute},
                    {"outputs_measured", c.outputs_measured}});
  j["colliders"] = cols;
  json srcs = json::array();
  for (const SourceView& s : v.design.sources) {
    json ret = json::object();
    for (const auto& r : s.returns) ret[d.contacts[static_cast<std::size_t>(r.first)].name] = r.second;
    srcs.push_back({{"contact", d.contacts[static_cast<std::size_t>(s.contact)].name},
                    {"current_A", s.current_A},
                    {"returns", ret}});
  }
  j["sources"] = srcs;
  json card = json::array();
  for (const CardRow& r : v.card) {
    json x = {{"contact", d.contacts[static_cast<std::size_t>(r.contact)].name},
              {"role", ToString(r.role)},
              {"connect", r.connect},
              {"purpose", r.purpose},
              {"current_A", r.current_A}};
    x["voltage_V"] = r.voltage_V ? json(*r.voltage_V) : json(nullptr);
    if (r.bias_V) x["bias_V"] = *r.bias_V;
    if (r.bias_A) x["bias_A"] = *r.bias_A;
    card.push_back(x);
  }
  j["card"] = card;
  json pairs = json::array();
  for (const VoltagePair& p : v.voltage_pairs)
    pairs.push_back({{"contacts", names({p.first, p.second})},
                     {"kind", p.hall ? "hall" : "longitudinal"},
                     {"voltage_V", p.voltage_V},
                     {"reversed_voltage_V", p.reversed_voltage_V}});
  j["voltage_pairs"] = pairs;
  return j;
}

namespace {

WiringVerdict bare_verdict(const Design& d, const CheckResult& r) {
  WiringVerdict v;
  if (!r.ok()) {
    v.not_assessed = "the design has errors (see Findings)";
    return v;
  }
  try {
    return AssessWiring(d, BuildChannelGeometry(d));
  } catch (const std::runtime_error& e) {
    v.not_assessed = std::string("the edges could not be traced: ") + e.what();
    return v;
  }
}

// Transmissions from the gates (written into the design) and the gate settings for the declared ones;
// their findings join the checks'.
GateView gate_view(Design* d, CheckResult* r, bool settings) {
  GateView g;
  if (!r->ok() || d->constrictions.empty()) return g;
  try {
    GateTransmissionOptions go;
    g.transmissions = ResolveGateTransmissions(d, go, &r->findings);
    if (r->ok() && settings)
      g.settings = GateSettings(*d, SaddlePotential::kSelfConsistentWindow, go.electrostatics);
  } catch (const GridTooLarge& e) {
    g.not_modelled = std::string("not computed (") + e.what() + ")";
    g.transmissions.clear();
    g.settings.clear();
    for (const Constriction& k : d->constrictions)
      if (k.transmission_from_gates)
        r->findings.push_back({Severity::kError, "transmission-model-failed",
                               "constriction " + k.name + ": `transmission: from-gates`, but its window is too large "
                                                          "to solve within the memory limit",
                               k.where});
  }
  return g;
}

}  // namespace

CheckRun RunCheckOn(Design* d, bool gate_settings) {
  CheckRun run;
  run.result = CheckDesign(*d);
  const GateView gv = gate_view(d, &run.result, gate_settings);
  const WiringVerdict v = bare_verdict(*d, run.result);
  run.text = render_text(*d, run.result, &v, &gv);
  if (!gate_settings && run.result.ok() && !d->constrictions.empty())
    run.text += "\n(`hallway check --gate-settings` adds the gate voltage each constriction needs for its declared "
                "transmissions)\n";
  run.json = render_json(*d, run.result, &v, &gv);
  return run;
}

int RunCheck(const CheckArgs& args) {
  Design d;
  if (int code = 0; !LoadOrReport(args.design_path, &d, &code)) return code;
  const CheckRun run = RunCheckOn(&d, args.gate_settings);
  const CheckResult& r = run.result;
  std::cout << run.text;
  if (!args.json_path.empty()) {
    try {
      WriteFileAtomically(args.json_path, run.json, {args.design_path});
    } catch (const OutputError& e) {
      std::cerr << "hallway: output error: " << e.what() << "\n";
      return kExitOutputError;
    }
  }
  if (ReportErrors(r.findings) > 0) return kExitDesignError;
  return kExitOk;
}

std::string CheckJsonText(const Design& d, const CheckResult& r) {
  return render_json(d, r, nullptr, nullptr);
}

}  // namespace hallway::cli
