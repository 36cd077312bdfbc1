// hallway/gap.hpp: the gap of a constriction, the shortest segment between its two sides.
#pragma once

#include <optional>
#include <string>

#include "hallway/design.hpp"
#include "hallway/geometry/polygon.hpp"

namespace hallway {

// The shortest segment between the two sides of a constriction: `on_a` on its gate (the first gate,
// or the only one when the other side is `mesa`), `on_b` on the other side. For a gate against the
// mesa, the mesa edges that the gate itself meets are left out. nullopt (with the reason) when the
// sides touch or no gap is left.
std::optional<geometry::ClosestPair> FindGap(const Design& design, const Constriction& k, std::string* why);

}  // namespace hallway
