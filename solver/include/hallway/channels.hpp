// hallway/channels.hpp: which bulk fillings hallway supports, and their default edge channels.
//
// The table of docs/models.md, Default edge channels per filling:
//   integer N      N channels of e^2/h, charge e                                   common practice
//   1/m, m odd     one channel 1/m, e* = e/m, theta/pi = 1/m, delta = 1/m            Kane & Fisher,
//                                                                     Phys. Rev. Lett. 72, 724 (1994)
//   2/5            1/3 + 1/15, e/3 outer and e/5 inner (inner: collider formulas not applicable)
//                                                     Beenakker picture; e/5: Reznikov et al.,
//                                                     Nature 399, 238 (1999) (from memory)
//   2/3            one equilibrated 2/3 channel, e* = e/3; the neutral upstream mode is not modelled
//   4/3, 5/3       1 + 1/3, 1 + 2/3 with e/3 for the fractional channel (Beenakker picture, common practice)
#pragma once

#include <optional>
#include <vector>

#include "hallway/design.hpp"

namespace hallway {

// Default channels for a bulk filling, or nullopt if the filling is not in the table.
std::optional<std::vector<Channel>> DefaultChannels(Fraction filling);
// Every fraction (non-integer) filling with default channels; integers 1..kMaxIntegerFilling also are.
const std::vector<Fraction>& SupportedFractions();
inline constexpr long kMaxIntegerFilling = 40;

// The plateau nearest (by relative distance) to a raw filling n h / (e |B|), if it lies within
// `relative_tolerance`; candidates are the integers 1..kMaxIntegerFilling and SupportedFractions().
struct PlateauMatch {
  Fraction filling;
  double relative_distance = 0.0;
};
std::optional<PlateauMatch> NearestPlateau(double raw_filling, double relative_tolerance);
// How far from a plateau a field may put the bulk filling before LoadDesign() refuses it. A design
// choice of ours: plateau widths depend on disorder and temperature and are not predicted here.
inline constexpr double kPlateauTolerance = 0.05;

}  // namespace hallway
