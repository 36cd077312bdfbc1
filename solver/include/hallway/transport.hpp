// hallway/transport.hpp: Landauer–Büttiker transport of an edge network (docs/models.md, Conventions;
// Edge network and Landauer–Büttiker transport).
//
//   I_i = sum_j G_ij V_j,   G_ij = (e^2/h) sum_k g_k (M_ik delta_ij - T_ij,k)
// with I_i the conventional current into the device at contact i, g_k the conductance of channel k in
// e^2/h, M_ik the number of edges of channel k leaving contact i, and T_ij,k the probability-weighted
// number of them, leaving contact j, that contact i absorbs. Each constriction scatters channel k
// incoherently: an edge arriving at a face of its slit is transmitted across the gap with the design's
// transmission t_k and turns back on its own side with 1 - t_k. Loops are composed by solving the
// absorbing Markov chain (I - P) A = R exactly, not by enumerating paths.
//
// The wiring plan fixes V at voltage sources, grounds and amplifier inputs (DC-grounded), and I at
// current sources and floating contacts (I = 0); the remaining voltages follow from G.
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "hallway/design.hpp"
#include "hallway/finding.hpp"
#include "hallway/network.hpp"

namespace hallway {

using Matrix = std::vector<std::vector<double>>;  // row-major, [row][column]

// Fraction of one source's emitted current of one channel that travels along one edge piece.
struct RouteLeg {
  int piece = 0;          // index into EdgeNetwork::pieces
  double fraction = 0.0;  // current carried, as a fraction of the source's emission in this channel
};

struct Route {
  int source = 0;  // contact index
  int channel = 0;
  std::vector<double> reaching;       // per contact: fraction absorbed there (sums to 1)
  std::vector<std::vector<int>> via;  // per contact: constrictions the current may pass on the way
  std::vector<RouteLeg> legs;         // every edge piece the source's current travels along
};

struct TransportResult {
  double field_T = 0.0;
  std::vector<Matrix> transmission;              // per channel, T_ij,k (i absorbs, j emits)
  std::vector<std::vector<double>> emitted;      // per channel, M_jk
  Matrix conductance_S;                          // G_ij in siemens, contact order of the design
  std::vector<std::optional<double>> voltage_V;  // nullopt: undetermined (isolated floating contact)
  std::vector<double> current_A;                 // into the device at each contact
  struct SourceResistance {
    int contact = 0;
    // V / I of the source with every other source set to zero (voltage sources grounded, current
    // sources open); nullopt when no current flows.
    std::optional<double> resistance_Ohm;
  };
  std::vector<SourceResistance> sources;
  std::vector<Route> routes;  // one per (source, channel) that emits
  // Electrochemical potential carried by each edge piece (index of EdgeNetwork::pieces):
  // mu_p = sum_j F_pj V_j, with F_pj the fraction of the carriers on p that contact j emitted.
  std::vector<double> piece_potential_V;
  // piece_absorption[p][i]: probability that a carrier on piece p ends in contact i (0 for pieces
  // that no contact feeds).
  Matrix piece_absorption;
  // Constrictions that partition a DC current: 0 < t < 1 and their two incoming edges carry
  // different potentials, so they make shot noise.
  struct PartitionSite {
    int constriction = 0;
    int channel = 0;
    double potential_difference_V = 0.0;  // mu(face 0 input) - mu(face 1 input)
  };
  std::vector<PartitionSite> partitioning;
  std::vector<Finding> findings;
};

TransportResult SolveTransport(const Design& design, const EdgeNetwork& network);

// Conductance matrix from transmissions: G = (e^2/h) sum_k g_k (diag(M_k) - T_k).
Matrix ConductanceFromTransmissions(const std::vector<Matrix>& t, const std::vector<std::vector<double>>& m,
                                    const std::vector<double>& g_e2h);

// R_{mn,kl} = (V_k - V_l) / I for a current I into contact m and out of contact n, every other
// contact floating (Büttiker, Phys. Rev. Lett. 57, 1761 (1986)). Throws std::invalid_argument when the
// indices repeat in m, n or are out of range, std::runtime_error when the network leaves the voltages
// undetermined.
double FourTerminalResistance(const Matrix& conductance_S, int m, int n, int k, int l);

}  // namespace hallway
