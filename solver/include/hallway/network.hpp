// hallway/network.hpp: where every edge channel runs, from the layout alone.
//
// For each channel k (outermost first) hallway builds the region of the 2DEG that carries it:
//   the mesa eroded by `etch_depletion`,
//   minus every gate that reflects channel k: a gate at or below the wide-gate depletion voltage
//     V_dep removes its footprint grown by the bare lateral depletion width
//     x_e = d cot(pi V_dep / V_g) (docs/models.md, Channel boundaries and slits; for
//     2 V_dep < V_g <= V_dep the formula puts the edge inside the footprint and hallway keeps the
//     footprint itself); a weaker gate lowers the local filling under it to nu (1 - V_g / V_dep)
//     (plate capacitor with quantum capacitance, docs/models.md, Depletion under a wide gate) and
//     reflects the channels whose cumulative filling (outermost first) exceeds that, at its footprint;
//   with each constriction whose sides reflect channel k cut across its gap (a thin slit along the
//     shortest segment between the two sides, moved along the current to pass through the saddle of
//     saddle.hpp; the gap is first re-opened by a corridor along the current through the saddle, so
//     the design's transmission decides what passes, and a warning says when the estimate disagrees).
// Edges follow the boundary of each region with the chirality of docs/models.md, Conventions: for
// B > 0 the 2DEG is on the electron's right-hand side, i.e. clockwise around the outer boundary seen
// from above.
// They are cut where they enter and leave ohmic contacts and where they meet a constriction's slit:
// the two faces of the slit are the constriction's ports.
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "hallway/finding.hpp"
#include "hallway/design.hpp"
#include "hallway/geometry/region.hpp"

namespace hallway {

// Which model placed the channel boundaries.
inline constexpr const char* kBareBoundaryModel =
    "bare-potential lateral depletion estimate (docs/models.md \"Channel boundaries and slits\"); self-consistent boundaries are not used";

inline constexpr const char* kSelfConsistentBoundaryModel =
    "self-consistent Thomas-Fermi density (docs/models.md \"Thomas-Fermi electrostatics\", as in `hallway map`); channel k runs where the local "
    "filling "
    "crosses the middle of its step, c_k - g_k / 2";

struct DensityMap;

struct NetworkOptions {
  // When set, the channel regions come from this self-consistent density (level curves of the local
  // filling) instead of the bare-potential estimate.
  const DensityMap* density = nullptr;
  int disc_segments = 32;      // polygon sides of the offset disc (>= 8)
  double slit_fraction = 0.1;  // slit half-width as a fraction of the gap, in (0, 0.25]
  bool IsValid(std::string* why) const;
};

// One end of an edge piece.
struct EdgeEnd {
  enum class Kind { kContact, kConstriction };
  Kind kind = Kind::kContact;
  int index = 0;  // into Design::contacts or Design::constrictions
  int face = 0;   // constrictions: 0 = the slit face on the left of the segment from the first side
                  // to the second, 1 = on its right
  friend bool operator==(const EdgeEnd&, const EdgeEnd&) = default;
};

// A stretch of edge channel between two ends, in the direction electrons travel.
struct EdgePiece {
  int channel = 0;
  EdgeEnd from, to;
  double length_m = 0.0;
  std::vector<geometry::Point> path;  // polyline from `from` to `to`
};

// An edge that closes on itself without meeting a contact or a constriction (around an island or
// a depleted hole that touches nothing).
struct ClosedEdge {
  int channel = 0;
  double length_m = 0.0;
  double enclosed_area_m2 = 0.0;
  geometry::Polygon ring;  // the edge itself, in the direction of travel
};

// What the region of one channel looks like (direction independent).
struct ChannelRegion {
  int channel = 0;
  geometry::Region region;              // after the slits
  std::vector<std::string> reflecting;  // gates that remove area for this channel
  std::vector<std::string> passing;     // gates this channel passes under
  std::vector<int> slit_constrictions;  // constrictions cut for this channel
  std::vector<bool> estimate_open;      // per constriction: is the gap open in the bare estimate?
};

// Direction-independent geometry: build once, trace for +B and -B.
struct ChannelGeometry {
  std::vector<ChannelRegion> channels;
  std::vector<double> lateral_depletion_m;  // per gate (0 for gates above V_dep)
  std::vector<double> local_filling;        // per gate: nu (1 - V_g / V_dep), clipped at 0
  std::vector<Finding> findings;
  std::string model = kBareBoundaryModel;
  // The slit of constriction c: its centre line from a to b and unit normal n (towards face 0).
  struct Slit {
    geometry::Point a, b, n;
    geometry::Point centre;  // the saddle the slit passes through
    double half_width_m = 0.0;
    double ext_a_m = 0.0, ext_b_m = 0.0;  // how far the slit reaches beyond a and beyond b
    double gap_m = 0.0;
  };
  std::vector<Slit> slits;  // per constriction (gap_m = 0 where none could be made)
};

ChannelGeometry BuildChannelGeometry(const Design& design, const NetworkOptions& options = {});

struct EdgeNetwork {
  double field_T = 0.0;  // the field the edges were traced for
  std::vector<EdgePiece> pieces;
  std::vector<ClosedEdge> closed;
  std::vector<Finding> findings;
};

// Traces the edges of every channel for the field `field_T` (only its sign matters here).
EdgeNetwork TraceEdges(const Design& design, const ChannelGeometry& geometry, double field_T);

std::string DescribeEnd(const Design& design, const EdgeEnd& end);  // "W", "Q/face 0"

// The edge piece of `channel` that leaves (outgoing) or arrives at (incoming) face `face` of a
// constriction, or -1.
int PortPiece(const EdgeNetwork& network, int channel, int constriction, int face, bool outgoing);

// The one scattering rule at a constriction port (docs/models.md "Edge network and Landauer-Büttiker
// transport"): a carrier on a piece that ends at face f of a constriction goes on along the piece that
// leaves face f (reflected, with probability 1 - t) or along the piece that leaves the other face
// (transmitted, t), where t is the constriction's transmission for the piece's channel. Transport
// weights the two by 1 - t and t, the coherent noise by the amplitudes sqrt(1 - t) and i sqrt(t).
struct PortStep {
  int reflected = -1;    // the piece that leaves the same face
  int transmitted = -1;  // the piece that leaves the other face
  double transmission = 0.0;
};
// The step at the end of piece `piece`, or nullopt when the piece ends at a contact.
std::optional<PortStep> StepAtPort(const Design& design, const EdgeNetwork& network, int piece);
// The same step for a carrier of `channel` arriving at face `face` of constriction `constriction`,
// whether or not a piece arrives there (the colliders and the fractional partition noise ask by port).
PortStep StepAtPort(const Design& design, const EdgeNetwork& network, int channel, int constriction, int face);
// The rule read backwards: the pieces that feed piece `piece`, which leaves face f of a constriction:
// `reflected` arrives at face f (weight 1 - t), `transmitted` at the other face (t); nullopt when the
// piece leaves a contact.
std::optional<PortStep> StepBackAtPort(const Design& design, const EdgeNetwork& network, int piece);

// The pieces of `channel` at the two faces of a constriction: incoming[f] arrives at face f,
// outgoing[f] leaves it (-1 where none does).
struct ConstrictionPorts {
  int incoming[2] = {-1, -1};
  int outgoing[2] = {-1, -1};
};
ConstrictionPorts PortsOf(const EdgeNetwork& network, int channel, int constriction);

// Which way a reachability search walks: the way carriers go (StepAtPort), or back to where they
// come from (StepBackAtPort).
enum class Walk { kDownstream, kUpstream };

// The pieces a carrier can reach from `starts` (steps of nonzero probability: reflected when t < 1,
// transmitted when t > 0; a piece that ends at a contact ends the walk), among pieces of `channels`
// (all channels when empty). reach[p] is 1 for each reachable piece. Upstream: the pieces whose
// carriers can arrive on a start piece (a piece that leaves a contact ends the walk).
std::vector<char> ReachablePieces(const Design& design, const EdgeNetwork& network, const std::vector<int>& starts,
                                  const std::vector<int>& channels = {}, Walk walk = Walk::kDownstream);

// Loops of the edge network: strongly connected sets of pieces (Tarjan) among the given channels,
// joined through constrictions that let the edge go that way (t > 0 across, t < 1 back). Each loop
// is the sorted list of its pieces.
std::vector<std::vector<int>> FindEdgeLoops(const Design& design, const EdgeNetwork& network,
                                            const std::vector<int>& channels);

}  // namespace hallway
