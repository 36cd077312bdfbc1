// `hallway solve`: edge network, conductance matrix, wiring plan, routes, for +B and -B.
#include <fmt/core.h>

#include <cmath>
#include <iostream>
#include <nlohmann/json.hpp>
#include <sstream>

#include "commands.hpp"
#include "hallway/check.hpp"
#include "hallway/constants.hpp"
#include "hallway/design_loader.hpp"
#include "hallway/network.hpp"
#include "hallway/paths.hpp"
#include "hallway/transport.hpp"
#include "hallway/units.hpp"
#include "hallway/wiring.hpp"
#include "json_parts.hpp"
#include "output.hpp"
#include "transmissions.hpp"
#include "residue.hpp"

namespace hallway::cli {
namespace {

using nlohmann::json;
using units::FormatSI;

struct Solved {
  EdgeNetwork network;
  TransportResult transport;
};

std::string field_text(double b) {
  return fmt::format("{:+.4g} T", b);
}

void print_matrix(std::string& out, const Design& d, const Matrix& m, double scale, const char* cell) {
  out += fmt::format("  {:>8}", "");
  for (const Contact& c : d.contacts) out += fmt::format(" {:>10}", c.name);
  out += "\n";
  for (std::size_t i = 0; i < m.size(); ++i) {
    out += fmt::format("  {:>8}", d.contacts[i].name);
    for (double x : m[i]) {
      const double y = x * scale;
      out += fmt::format(fmt::runtime(cell), std::abs(y) < 1e-12 * std::abs(scale) ? 0.0 : y);
    }
    out += "\n";
  }
}

std::string volt_text(const std::optional<double>& v) {
  return v ? FormatSI(*v, "V") : std::string("undetermined");
}

void print_field(std::string& out, const Design& d, const Solved& s) {
  const TransportResult& t = s.transport;
  out += fmt::format("\nAt B = {}\n", field_text(t.field_T));
  out += "  conductance matrix G in e^2/h (row: current into the contact; column: voltage applied there)\n";
  print_matrix(out, d, t.conductance_S, 1.0 / constants::kConductanceQuantum_S, " {:>10.4f}");
  out += "  the same in siemens\n";
  print_matrix(out, d, t.conductance_S, 1.0, " {:>10.3e}");
  out += "  contacts\n";
  out += fmt::format("    {:<8} {:<10} {:>14} {:>14}\n", "contact", "role", "voltage", "current in");
  for (std::size_t i = 0; i < d.contacts.size(); ++i)
    out += fmt::format("    {:<8} {:<10} {:>14} {:>14}\n", d.contacts[i].name, ToString(d.wiring[i].role),
                       volt_text(t.voltage_V[i]), FormatSI(t.current_A[i], "A"));
  for (const auto& src : t.sources)
    out += fmt::format(
        "  source {} sees a two-terminal resistance of {}{}\n", d.contacts[static_cast<std::size_t>(src.contact)].name,
        src.resistance_Ohm ? FormatSI(*src.resistance_Ohm, "Ohm") +
                                 fmt::format(" ({:.4f} h/e^2)", *src.resistance_Ohm / constants::kVonKlitzing_Ohm)
                           : std::string("(no current flows)"),
        t.sources.size() > 1 ? " (the other sources set to zero)" : "");
  out += "  routes (fraction of each source's current per channel; edge lengths along the edge)\n";
  for (const Route& r : t.routes) {
    out +=
        fmt::format("    from {} on channel {}:", d.contacts[static_cast<std::size_t>(r.source)].name, r.channel + 1);
    for (std::size_t i = 0; i < r.reaching.size(); ++i) {
      if (r.reaching[i] <= 1e-12) continue;
      std::string via;
      for (int q : r.via[i]) via += (via.empty() ? "" : ", ") + d.constrictions[static_cast<std::size_t>(q)].name;
      out += fmt::format(" {} {:.1f}%{}", d.contacts[i].name, 100.0 * r.reaching[i],
                         via.empty() ? "" : " (via " + via + ")");
    }
    out += "\n";
    for (const RouteLeg& leg : r.legs) {
      const EdgePiece& p = s.network.pieces[static_cast<std::size_t>(leg.piece)];
      out += fmt::format("        {:>14} -> {:<14} {:>10}  carries {:.3f}\n", DescribeEnd(d, p.from),
                         DescribeEnd(d, p.to), FormatSI(p.length_m, "m"), leg.fraction);
    }
  }
  for (const ClosedEdge& c : s.network.closed)
    out += fmt::format("  closed edge of channel {} touching no contact: length {}, enclosing {:.4g} um^2\n",
                       c.channel + 1, FormatSI(c.length_m, "m"), c.enclosed_area_m2 * 1e12);
}

json field_json(const Design& d, const Solved& s) {
  const TransportResult& t = s.transport;
  json j;
  j["field_T"] = t.field_T;
  j["conductance_S"] = t.conductance_S;
  json v = json::object(), i = json::object();
  for (std::size_t c = 0; c < d.contacts.size(); ++c) {
    v[d.contacts[c].name] = t.voltage_V[c] ? json(*t.voltage_V[c]) : json(nullptr);
    i[d.contacts[c].name] = t.current_A[c];
  }
  j["voltages_V"] = v;
  j["currents_A"] = i;
  json res = json::object();
  for (const auto& src : t.sources)
    res[d.contacts[static_cast<std::size_t>(src.contact)].name] =
        src.resistance_Ohm ? json(*src.resistance_Ohm) : json(nullptr);
  j["two_terminal_resistance_Ohm"] = res;
  json routes = json::array();
  for (const Route& r : t.routes) {
    json x;
    x["source"] = d.contacts[static_cast<std::size_t>(r.source)].name;
    x["channel"] = r.channel + 1;
    json reach = json::object();
    for (std::size_t c = 0; c < r.reaching.size(); ++c) {
      if (r.reaching[c] <= 1e-12) continue;
      json via = json::array();
      for (int q : r.via[c]) via.push_back(d.constrictions[static_cast<std::size_t>(q)].name);
      reach[d.contacts[c].name] = {{"fraction", r.reaching[c]}, {"via", via}};
    }
    x["reaches"] = reach;
    json legs = json::array();
    for (const RouteLeg& leg : r.legs) {
      const EdgePiece& p = s.network.pieces[static_cast<std::size_t>(leg.piece)];
      legs.push_back({{"from", DescribeEnd(d, p.from)},
                      {"to", DescribeEnd(d, p.to)},
                      {"length_m", p.length_m},
                      {"fraction", leg.fraction}});
    }
    x["legs"] = legs;
    routes.push_back(x);
  }
  j["routes"] = routes;
  json w = json::array();
  for (const Finding& f : s.network.findings)
    w.push_back({{"code", f.code}, {"severity", ToString(f.severity)}, {"message", f.message}});
  for (const Finding& f : t.findings)
    w.push_back({{"code", f.code}, {"severity", ToString(f.severity)}, {"message", f.message}});
  j["warnings"] = w;
  return j;
}

void print_channels(std::string& out, const Design& d, const ChannelGeometry& geometry) {
  out += "\nWhere the channels run\n";
  for (const ChannelRegion& cr : geometry.channels) {
    std::string refl, pass;
    for (const auto& n : cr.reflecting) refl += (refl.empty() ? "" : ", ") + n;
    for (const auto& n : cr.passing) pass += (pass.empty() ? "" : ", ") + n;
    out += fmt::format("  channel {} ({} e^2/h): reflected by [{}], passes under [{}], area {:.4g} um^2\n",
                       cr.channel + 1, d.channels[static_cast<std::size_t>(cr.channel)].conductance.ToString(), refl,
                       pass, cr.region.Area() * 1e12);
  }
  const double vdep =
      DeriveWaferQuantities(d.heterostructure, d.conditions.field_T, d.conditions.temperature_K).depletion_voltage_V;
  for (std::size_t i = 0; i < d.gates.size(); ++i)
    out += fmt::format("  gate {}: bare lateral depletion estimate {}, local filling under it {:.3g}\n",
                       d.gates[i].name,
                       FormatLateralDepletion(geometry.lateral_depletion_m[i], d.gates[i].voltage_V <= vdep),
                       geometry.local_filling[i]);
}

void print_changes(std::string& out, const Design& d, const TransportResult& a, const TransportResult& b) {
  out += "\nWhat changes under B -> -B\n";
  bool any = false;
  for (std::size_t i = 0; i < d.contacts.size(); ++i) {
    const bool dv =
        a.voltage_V[i].has_value() != b.voltage_V[i].has_value() ||
        (a.voltage_V[i] && std::abs(*a.voltage_V[i] - *b.voltage_V[i]) > 1e-12 * (1e-6 + std::abs(*a.voltage_V[i])));
    const bool di = std::abs(a.current_A[i] - b.current_A[i]) > 1e-6 * (1e-15 + std::abs(a.current_A[i]));
    if (dv || di) {
      any = true;
      out += fmt::format("  {}: voltage {} -> {}, current {} -> {}\n", d.contacts[i].name, volt_text(a.voltage_V[i]),
                         volt_text(b.voltage_V[i]), FormatSI(a.current_A[i], "A"), FormatSI(b.current_A[i], "A"));
    }
  }
  if (!any) out += "  no contact voltage or current changes\n";
}

void print_four(std::string& out, const std::string& spec, const std::vector<int>& four,
                const std::vector<Solved>& solved) {
  out += "\nFour-terminal resistance\n";
  for (const Solved& s : solved) {
    try {
      const double r4 = FourTerminalResistance(s.transport.conductance_S, four[0], four[1], four[2], four[3]);
      out += fmt::format("  R({}) at B = {}: {} ({:.6f} h/e^2)\n", spec, field_text(s.transport.field_T),
                         FormatSI(r4, "Ohm"), r4 / constants::kVonKlitzing_Ohm);
    } catch (const std::runtime_error& e) {
      out += fmt::format("  R({}) at B = {}: {}\n", spec, field_text(s.transport.field_T), e.what());
    }
  }
}

// Every warning, the reversed field's labelled by what the verdict says about it.
// The device's findings (checks, electrostatics, transmissions from the gates, channel geometry) come first.
std::vector<std::string> solve_warnings(const Design& d, const DeviceSummary& summary,
                                        const std::vector<Solved>& solved, const WiringVerdict& verdict) {
  std::vector<std::string> warnings;
  for (const Finding& f : summary.findings) warnings.push_back(f.message);
  for (const Solved& s : solved) {
    const std::string label = ReversedFieldLabel(d, verdict, s.transport.field_T);
    const std::string tag =
        fmt::format("[B = {}{}]", field_text(s.transport.field_T), label.empty() ? "" : ", " + label);
    for (const Finding& f : s.network.findings) warnings.push_back(tag + " " + f.message);
    for (const Finding& f : s.transport.findings) warnings.push_back(tag + " " + f.message);
  }
  return warnings;
}

std::vector<int> parse_four(const Design& d, const std::string& spec, std::string* why) {
  std::vector<int> out;
  std::stringstream ss(spec);
  std::string name;
  while (std::getline(ss, name, ',')) {
    int found = -1;
    for (std::size_t i = 0; i < d.contacts.size(); ++i)
      if (d.contacts[i].name == name) found = static_cast<int>(i);
    if (found < 0) {
      *why = "--four-terminal: no contact named '" + name + "'";
      return {};
    }
    out.push_back(found);
  }
  if (out.size() != 4) {
    *why = "--four-terminal takes four contact names: I+,I-,V+,V-";
    return {};
  }
  if (out[0] == out[1]) {
    *why = "--four-terminal: the two current contacts must differ";
    return {};
  }
  return out;
}

}  // namespace

int RunSolve(const SolveArgs& args) {
  std::size_t max_memory = 0;
  if (int code = 0; !ParseMaxMemory(args.max_memory, &max_memory, &code)) return code;
  Design design;
  if (int code = 0; !LoadOrReport(args.design_path, &design, &code)) return code;
  std::vector<int> four;
  if (!args.four_terminal.empty()) {
    std::string why;
    four = parse_four(design, args.four_terminal, &why);
    if (four.empty()) {
      std::cerr << "hallway: usage error: " << why << "\n";
      return kExitUsage;
    }
  }
  std::optional<Device> device;
  std::string es_note;
  if (int code = 0; !BuildDevice(std::move(design), args.fast, max_memory, &device, &es_note, &code)) return code;
  const Design& d = device->design();
  const ChannelGeometry& geometry = device->geometry();
  std::vector<FieldSign> signs;
  if (!args.reversed_only) signs.push_back(FieldSign::kDesign);
  signs.push_back(FieldSign::kReversed);
  std::vector<Solved> solved;
  std::vector<Finding> errors;
  for (FieldSign sign : signs) {
    const EdgeNetwork& net = device->edges(sign);
    for (const Finding& f : net.findings)
      if (f.severity == Severity::kError) errors.push_back(f);
    if (!errors.empty()) break;
    const TransportResult& t = device->transport(sign);
    if (!RequireFinite(t.conductance_S, "the conductance matrix") ||
        !RequireFinite({t.current_A}, "the contact currents"))
      return kExitInternal;
    for (const Finding& f : t.findings)
      if (f.severity == Severity::kError) errors.push_back(f);
    solved.push_back({net, t});
  }
  if (!errors.empty()) {
    for (const Finding& f : errors)
      std::cerr << "hallway: design error: " << f.where.ToString() << ": " << f.message << "\n";
    return kExitDesignError;
  }

  std::string out = fmt::format("hallway solve  {}\n", d.path);
  if (!d.name.empty()) out += fmt::format("  design: {}\n", d.name);
  out += fmt::format("  bulk filling nu = {}, design field {}; {}\n", d.conditions.filling.ToString(),
                     field_text(d.conditions.field_T),
                     args.reversed_only ? "solving the reversed field only" : "also solving the reversed field");
  out += fmt::format("  edge boundaries: {}\n", geometry.model);
  out += es_note;
  print_channels(out, d, geometry);
  for (const Solved& s : solved) print_field(out, d, s);
  if (solved.size() == 2) print_changes(out, d, solved[0].transport, solved[1].transport);
  const WiringVerdict verdict = solved.size() == 2 ? AssessWiring(d, solved[0].network, solved[0].transport,
                                                                  solved[1].network, solved[1].transport)
                                                   : AssessWiring(d, geometry);
  out += WiringVerdictText(d, verdict, EdgesLabel(geometry));
  if (!four.empty()) print_four(out, args.four_terminal, four, solved);
  const std::vector<std::string> warnings = solve_warnings(d, device->summary(), solved, verdict);
  if (!warnings.empty()) {
    out += "\nWarnings\n";
    for (const auto& w : warnings) out += "  - " + w + "\n";
  }
  out += kSafetyCaution;
  for (const auto& s : solved)
    if (!RequireFiniteJson(field_json(d, s), "the transport results")) return kExitInternal;
  std::cout << out;

  if (!args.json_path.empty()) {
    json j = field_json(d, solved.front());
    j["hallway_solve"] = 1;
    j["design"] = d.path;
    j["filling"] = d.conditions.filling.ToString();
    j["boundary_model"] = geometry.model;
    json contacts = json::array();
    for (const Contact& c : d.contacts) contacts.push_back(c.name);
    j["contacts"] = contacts;
    json gw = json::array();
    for (const Finding& f : device->summary().findings)
      gw.push_back({{"code", f.code}, {"severity", ToString(f.severity)}, {"message", f.message}});
    j["constrictions"] = TransmissionsJson(d, device->summary().transmissions);
    for (auto& w : j["warnings"]) gw.push_back(w);
    j["warnings"] = gw;
    if (solved.size() == 2) j["reversed_field"] = field_json(d, solved[1]);
    j["wiring_verdict"] = WiringVerdictJson(d, verdict);
    // Path metrics and constriction models of the first field solved (hallway paths gives the same).
    PathOptions po;
    po.max_memory_bytes = max_memory;
    PathResult paths =
        ComputePaths(d, solved.front().network, solved.front().transport, device->density(), po);
    ComputeConstrictionModels(d, po, &paths);
    const json pj = PathsJson(d, solved.front().network, paths);
    for (const char* key : {"paths", "loops", "constriction_models"}) j[key] = pj[key];
    if (!RequireFiniteJson(j, "the path metrics and constriction models")) return kExitInternal;
    try {
      WriteFileAtomically(args.json_path, j.dump(2) + "\n", {args.design_path});
    } catch (const OutputError& e) {
      std::cerr << "hallway: output error: " << e.what() << "\n";
      return kExitOutputError;
    }
  }
  return kExitOk;
}

nlohmann::json TransportJson(const Design& d, const EdgeNetwork& net, const TransportResult& t) {
  return field_json(d, Solved{net, t});
}

}  // namespace hallway::cli
