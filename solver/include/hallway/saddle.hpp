// hallway/saddle.hpp: the saddle of a constriction, found rather than assumed.
//
// Electrons cross a constriction along the best path through its gap: among all paths from one side of
// the gap to the other (along the current, inside the strip over the segment that joins the gap's two
// sides), the one whose highest potential energy is lowest. Its highest point is the saddle; the
// density there is the saddle density, zero exactly when no path through the gap holds electrons (the
// pinch-off criterion of `hallway map`). Found on a grid by a minimax (bottleneck) Dijkstra search, so
// it does not depend on where the gates' corners are, on the vertex order, or on the grid's offset
// beyond the sampling error (docs/models.md "Saddle of a constriction").
//
// Self-consistent: the energy is U / E_F0 of a density map; wherever electrons are, U / E_F0 = 1 - n / n_s,
// so the path is also the one that keeps the most electrons. Bare (no screening): the energy is -phi_g of
// the gates' closed-form potential (docs/models.md "Bare gate potential").
#pragma once

#include <functional>
#include <optional>
#include <vector>

#include "hallway/design.hpp"
#include "hallway/geometry/polygon.hpp"

namespace hallway {

struct DensityMap;

struct Saddle {
  geometry::Point point;
  double energy = 0.0;  // the field's value at the saddle
  bool found = false;   // false only when the strip could not be sampled
};

// The strip of a gap: across it from on_a (u = 0) to on_b (u = gap - inset_b_m), along the current
// from -reach_m to +reach_m; samples every step_m.
struct SaddleStrip {
  geometry::ClosestPair gap;
  double inset_b_m = 0.0;  // keep this far from side b (an etched mesa edge depletes that far)
  double reach_m = 0.0;
  double step_m = 0.0;
  static SaddleStrip For(const Design& design, const Constriction& k, const geometry::ClosestPair& gap, double step_m);
};

Saddle FindSaddle(const std::function<double(geometry::Point)>& energy, const SaddleStrip& strip);

// On a self-consistent map (energy U / E_F0), refined by the quadratic through the cells around it;
// the density there is n_s [1 - energy]_+.
Saddle DensitySaddle(const DensityMap& map, const SaddleStrip& strip);

// Of the bare gate potential at the given voltages (one per design gate); energy -phi_g in volts.
Saddle BareSaddle(const Design& design, const SaddleStrip& strip, const std::vector<double>& volts);

// The bare (no screening) pinch-off of a constriction: both its gates at V together, the others at
// their design voltages, V where the gate potential at the bare saddle reaches the wide-gate depletion
// voltage (plate and quantum capacitance, docs/models.md "Depletion under a wide gate"). The saddle
// moves with V; it is found again at each step of a fixed-point iteration.
struct BarePinchOff {
  double voltage_V = 0.0;
  geometry::Point saddle;
  double sides_per_volt = 0.0;  // phi / V of the constriction's gates at the saddle
};
std::optional<BarePinchOff> FindBarePinchOff(const Design& design, const Constriction& k,
                                             const geometry::ClosestPair& gap);

}  // namespace hallway
