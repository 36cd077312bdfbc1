// hallway/map.hpp: what the self-consistent electrostatics says about a layout (`hallway map`).
//
// For each gate: the wide-gate depletion voltage (docs/models.md, Depletion under a wide gate) and the
// voltage at which the 2DEG under the gate itself empties (the gate alone, the others at 0 V), the
// lateral depletion width at the design voltages, and the E x B drift velocity v = E / |B| of the
// edge there (docs/models.md, Edge velocity and lengths).
// For each constriction: the gap, the saddle (found, saddle.hpp) and its density at the design
// voltages, and the pinch-off voltage: both sides swept together, the other gates at their design
// voltages, bisection on the self-consistent density at the saddle (found anew at each voltage) to
// `pinch_resolution_V`, each solve starting from the previous one; beside it the bare (no screening)
// estimate. Constrictions and gates are solved on a window of the mesa (`window_m` around the gap or
// the gate) embedded in the 2DEG outside it (ElectrostaticWindow), the whole mesa once at the design
// voltages.
#pragma once

#include <functional>
#include <optional>
#include <string>
#include <vector>

#include "hallway/finding.hpp"
#include "hallway/design.hpp"
#include "hallway/electrostatics.hpp"

namespace hallway {

struct MapOptions {
  ElectrostaticsOptions electrostatics;  // for the whole-mesa map
  double local_grid_m = 0.0;             // cell size of the local windows; 0: min(d / 4, gap / 8)
  double window_m = 0.0;                 // half-size of a local window; 0: 12 d beyond the gap or gate
  double pinch_resolution_V = 1e-3;
  double empty_fraction = 1e-3;     // "empty" means n < empty_fraction n_s
  double search_limit_V = -10.0;    // no search below this gate voltage
  bool constrictions_only = false;  // only the constriction windows (no whole-mesa map, no gates)
  // Called before each stage (the whole mesa, each constriction, each gate): step, total, what.
  std::function<void(int, int, const std::string&)> progress;
  bool IsValid(std::string* why) const;
};

struct GateMap {
  std::string name;
  double wide_depletion_V = 0.0;                 // plate + quantum capacitance
  std::optional<double> depletion_V;             // at its actual size; nullopt above the search limit
  std::optional<double> lateral_depletion_m;     // at the design voltage (median over its edges)
  std::optional<double> drift_velocity_m_per_s;  // at the depletion edge, design voltage and field
};

struct ConstrictionMap {
  std::string name;
  double gap_m = 0.0;
  geometry::Point saddle;              // found in the self-consistent density at the design voltages
  double saddle_density_per_m2 = 0.0;  // there
  // Self-consistent pinch-off: the density at the saddle (found anew at each voltage) falls below
  // empty_fraction n_s. nullopt: not pinched off above the search limit.
  std::optional<double> pinch_off_V;
  // Bare (no screening): the gate potential at the bare saddle reaches the wide-gate depletion
  // voltage (FindBarePinchOff, saddle.hpp).
  std::optional<double> bare_pinch_off_V;
  int solves = 0;
};

struct MapResult {
  DensityMap map;  // whole mesa, design voltages
  std::vector<GateMap> gates;
  std::vector<ConstrictionMap> constrictions;
  int solves = 0;
  int operator_applications = 0;
  double seconds = 0.0;
  bool all_converged = true;
  std::vector<Finding> findings;
};

MapResult ComputeMap(const Design& design, const MapOptions& options = {});

// Cell size of a constriction's window of half size `half_m`: min(d / 4, gap / 8, at least 2 nm),
// coarsened so that the window has at most 400 cells a side (a 2DEG much deeper than the gap is wide
// does not resolve the gap anyway, and the grid would otherwise grow as (d / gap)^2).
double ConstrictionWindowCell_m(double depth_m, double gap_m, double half_m);

}  // namespace hallway
