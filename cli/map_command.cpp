// `hallway map`: self-consistent depletion, pinch-off voltages, lateral depletion, density grids.
#include <fmt/core.h>

#include <cmath>
#include <iostream>
#include <nlohmann/json.hpp>

#include "commands.hpp"
#include "hallway/check.hpp"
#include "hallway/constants.hpp"
#include "hallway/map.hpp"
#include "hallway/units.hpp"
#include "output.hpp"
#include "progress.hpp"

#include <memory>

namespace hallway::cli {
namespace {
using nlohmann::json;
using units::FormatSI;
std::string volts(const std::optional<double>& v, const char* none) {
  return v ? FormatSI(*v, "V") : std::string(none);
}

// The --grid option: 1 nm to 10 um (finer than lithography draws is wasted memory, coarser than 10 um
// resolves no gate of a quantum Hall device; common practice). False after a usage error.
bool ParseGrid(const std::string& text, double* grid_m) {
  if (text.empty()) return true;
  try {
    *grid_m = units::Parse(text, units::Kind::kLength);
  } catch (const units::UnitError& e) {
    std::cerr << "hallway: usage error: --grid: " << e.what() << "\n";
    return false;
  }
  if (!(*grid_m >= 1e-9 && *grid_m <= 10e-6)) {
    std::cerr << "hallway: usage error: --grid must lie between 1 nm and 10 um; got '" << text << "'\n";
    return false;
  }
  return true;
}

std::string MapText(const Design& d, const MapResult& m, const CheckResult& check) {
  std::string out = fmt::format("hallway map  {}\n", d.path);
  if (!d.name.empty()) out += fmt::format("  design: {}\n", d.name);
  out +=
      "  model: self-consistent Thomas-Fermi density under a pinned surface with the image kernel and the quantum\n"
      "  capacitance (docs/models.md \"Thomas-Fermi electrostatics\"), bound-constrained QP by primal-dual active sets with FFT-preconditioned "
      "CG\n";
  const auto& s = m.map.stats;
  out += fmt::format("  whole mesa: grid {} x {} cells of {}, {} operator applications, residual {:.2e} (n/n_s), {}\n",
                     m.map.nx, m.map.ny, FormatSI(m.map.cell_m, "m"), s.operator_applications, s.residual,
                     s.converged ? "converged" : "NOT converged");
  out += fmt::format("  {} solves in all, {} operator applications, {:.3g} s\n", m.solves, m.operator_applications,
                     m.seconds);
  out +=
      "  density grid (--csv): at the mesa's sharp corners this model's density grows without bound as the cells\n"
      "  shrink (the field at the corner of a charged sheet); the filling there is a property of the model, not a\n"
      "  prediction (docs/models.md, \"Thomas-Fermi electrostatics\")\n";
  out += "\nGates\n";
  out += fmt::format("  {:<8} {:>12} {:>16} {:>18} {:>14}\n", "gate", "wide V_dep", "V_dep (its size)",
                     "lateral depletion", "edge drift");
  for (const GateMap& g : m.gates)
    out += fmt::format(
        "  {:<8} {:>12} {:>16} {:>18} {:>14}\n", g.name, FormatSI(g.wide_depletion_V, "V"),
        volts(g.depletion_V, "below limit"),
        g.lateral_depletion_m ? FormatSI(*g.lateral_depletion_m, "m") : std::string("n/a"),
        g.drift_velocity_m_per_s ? fmt::format("{:.3g} m/s", *g.drift_velocity_m_per_s) : std::string("n/a"));
  if (!m.constrictions.empty()) {
    out += "\nConstrictions (both sides swept together, other gates at their design voltages)\n";
    out += fmt::format("  {:<8} {:>10} {:>22} {:>22} {:>22}\n", "name", "gap", "saddle density", "pinch-off (n = 0)",
                       "bare (no screening)");
    for (const ConstrictionMap& c : m.constrictions)
      out +=
          fmt::format("  {:<8} {:>10} {:>16.4g} m^-2 {:>22} {:>22}\n", c.name, FormatSI(c.gap_m, "m"),
                      c.saddle_density_per_m2, volts(c.pinch_off_V, "below limit"), volts(c.bare_pinch_off_V, "n/a"));
    out +=
        "  pinch-off (n = 0): the self-consistent density at the saddle (the highest point of the best path through\n"
        "  the gap, found anew at each voltage) falls below 1e-3 n_s. bare (no screening): the gates' own potential\n"
        "  at the saddle reaches the wide-gate depletion voltage. `hallway paths` adds a third figure, the voltage\n"
        "  at which the saddle-point model closes each channel (docs/models.md, \"Saddle of a constriction\").\n";
  }
  out +=
      "\nPinch-off and depletion voltages are estimates; approach them slowly. A gate driven past its leakage or\n"
      "breakdown onset can destroy the sample.\n";
  if (!check.findings.empty()) {  // the design checks' warnings (errors stopped the command before)
    out += "\nWarnings\n";
    for (const Finding& f : check.findings) out += "  - " + f.message + " [" + f.code + "]\n";
  }
  out += kSafetyCaution;
  return out;
}

json MapJson(const Design& d, const MapResult& m) {
  const auto& s = m.map.stats;
  json doc;
  doc["hallway_map"] = 1;
  doc["design"] = d.path;
  json gates = json::array();
  for (const GateMap& g : m.gates) {
    json x = {{"name", g.name}, {"wide_depletion_V", g.wide_depletion_V}};
    x["depletion_V"] = g.depletion_V ? json(*g.depletion_V) : json(nullptr);
    x["lateral_depletion_m"] = g.lateral_depletion_m ? json(*g.lateral_depletion_m) : json(nullptr);
    x["drift_velocity_m_per_s"] = g.drift_velocity_m_per_s ? json(*g.drift_velocity_m_per_s) : json(nullptr);
    gates.push_back(x);
  }
  doc["gates"] = gates;
  json ks = json::array();
  for (const ConstrictionMap& c : m.constrictions) {
    json x = {{"name", c.name},
              {"gap_m", c.gap_m},
              {"saddle_m", {c.saddle.x, c.saddle.y}},
              {"saddle_density_per_m2", c.saddle_density_per_m2}};
    x["pinch_off_density_zero_V"] = c.pinch_off_V ? json(*c.pinch_off_V) : json(nullptr);
    x["pinch_off_bare_V"] = c.bare_pinch_off_V ? json(*c.bare_pinch_off_V) : json(nullptr);
    ks.push_back(x);
  }
  doc["constrictions"] = ks;
  doc["solver"] = {{"grid", {m.map.nx, m.map.ny}},
                   {"cell_m", m.map.cell_m},
                   {"operator_applications", s.operator_applications},
                   {"residual", s.residual},
                   {"converged", s.converged},
                   {"solves", m.solves},
                   {"total_operator_applications", m.operator_applications},
                   {"seconds", m.seconds}};
  return doc;
}

// The density grid as CSV: position, density and local filling of every cell.
std::string MapCsv(const Design& d, const MapResult& m) {
  std::string csv = "x_m,y_m,density_per_m2,filling\n";
  const double scale = constants::kPlanck_Js / (constants::kElementaryCharge_C * std::abs(d.conditions.field_T));
  for (int j = 0; j < m.map.ny; ++j)
    for (int i = 0; i < m.map.nx; ++i) {
      const double n = m.map.density_per_m2[static_cast<std::size_t>(j) * m.map.nx + i];
      csv += fmt::format("{:.6e},{:.6e},{:.6e},{:.6g}\n", m.map.x0_m + i * m.map.cell_m,
                         m.map.y0_m + j * m.map.cell_m, n, n * scale);
    }
  return csv;
}
}  // namespace

int RunMap(const MapArgs& args) {
  std::size_t max_memory = 0;
  if (int code = 0; !ParseMaxMemory(args.max_memory, &max_memory, &code)) return code;
  Design d;
  if (int code = 0; !LoadOrReport(args.design_path, &d, &code)) return code;
  MapOptions opt;
  opt.electrostatics.max_memory_bytes = max_memory;
  if (!ParseGrid(args.grid, &opt.electrostatics.grid_m)) return kExitUsage;
  const CheckResult check = CheckDesign(d);
  if (ReportErrors(check.findings) > 0) {
    std::cerr << "hallway: run `hallway check` for the full list; nothing was solved\n";
    return kExitDesignError;
  }
  MapResult m;
  std::unique_ptr<Progress> progress;
  opt.progress = [&](int step, int total, const std::string& what) {
    if (!progress) progress = std::make_unique<Progress>("map", total, args.quiet);
    progress->Step(step, what);
  };
  try {
    m = ComputeMap(d, opt);
  } catch (const GridTooLarge& e) {
    progress.reset();
    return ReportGridTooLarge(e, GridAdvice::kCoarserGrid);
  }
  progress.reset();
  if (ReportErrors(m.findings) > 0) {
    std::cerr << "hallway: resource limit: the electrostatic solve did not converge within its iteration bound; no "
                 "map is reported\n";
    return kExitResourceLimit;
  }
  // The result document, checked for non-finite numbers (with the density grid) before anything is shown.
  const json doc = MapJson(d, m);
  if (!RequireFiniteJson(doc, "the map results") ||
      !RequireFinite({m.map.density_per_m2, m.map.energy_over_fermi}, "the density grid"))
    return kExitInternal;
  std::cout << MapText(d, m, check);
  try {
    if (!args.csv_path.empty()) {
      WriteFileAtomically(args.csv_path, MapCsv(d, m), {args.design_path});
    }
    if (!args.json_path.empty()) {
      WriteFileAtomically(args.json_path, doc.dump(2) + "\n", {args.design_path});
    }
  } catch (const OutputError& e) {
    std::cerr << "hallway: output error: " << e.what() << "\n";
    return kExitOutputError;
  }
  return kExitOk;
}

}  // namespace hallway::cli
