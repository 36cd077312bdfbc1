// Landauer–Büttiker transport of the edge network; see transport.hpp.
#include "hallway/transport.hpp"

#include <Eigen/Dense>
#include <cmath>
#include <functional>
#include <stdexcept>

#include "hallway/constants.hpp"

namespace hallway {
namespace {

constexpr double kTiny = 1e-12;  // probabilities below this are numerical zero

struct ChannelChain {
  std::vector<int> pieces;                   // network piece index of each state
  Eigen::MatrixXd P;                         // state -> state
  Eigen::MatrixXd R;                         // state -> contact
  Eigen::MatrixXd absorb;                    // state -> contact, solved
  Eigen::MatrixXd flux;                      // state x source-contact: current fraction along the state
  std::vector<std::vector<int>> emitted_by;  // per contact: states it emits
};

ChannelChain build_chain(const Design& d, const EdgeNetwork& net, int channel) {
  ChannelChain c;
  std::vector<int> state_of(net.pieces.size(), -1);  // network piece -> state of this channel
  for (std::size_t p = 0; p < net.pieces.size(); ++p)
    if (net.pieces[p].channel == channel) {
      state_of[p] = static_cast<int>(c.pieces.size());
      c.pieces.push_back(static_cast<int>(p));
    }
  const int n = static_cast<int>(c.pieces.size());
  const int nc = static_cast<int>(d.contacts.size());
  c.P = Eigen::MatrixXd::Zero(n, n);
  c.R = Eigen::MatrixXd::Zero(n, nc);
  c.emitted_by.assign(static_cast<std::size_t>(nc), {});
  std::vector<int> emitting;  // pieces that leave a contact
  for (int s = 0; s < n; ++s) {
    const int piece = c.pieces[static_cast<std::size_t>(s)];
    const EdgePiece& p = net.pieces[static_cast<std::size_t>(piece)];
    if (p.from.kind == EdgeEnd::Kind::kContact) {
      c.emitted_by[static_cast<std::size_t>(p.from.index)].push_back(s);
      emitting.push_back(piece);
    }
    // The scattering rule at a constriction port (network.hpp): 1 - t back along the same face, t across.
    const std::optional<PortStep> step = StepAtPort(d, net, piece);
    if (!step) {
      c.R(s, p.to.index) = 1.0;
      continue;
    }
    if (step->reflected < 0 || step->transmitted < 0)
      throw std::runtime_error("edge network has a constriction port without an outgoing edge");
    c.P(s, state_of[static_cast<std::size_t>(step->reflected)]) += 1.0 - step->transmission;
    c.P(s, state_of[static_cast<std::size_t>(step->transmitted)]) += step->transmission;
  }
  // Solve on the states that current from a contact can reach; closed loops that no contact feeds
  // carry nothing and would make I - P singular.
  const std::vector<char> reach = ReachablePieces(d, net, emitting, {channel});
  std::vector<int> idx;
  for (int s = 0; s < n; ++s)
    if (reach[static_cast<std::size_t>(c.pieces[static_cast<std::size_t>(s)])]) idx.push_back(s);
  const int m = static_cast<int>(idx.size());
  Eigen::MatrixXd A = Eigen::MatrixXd::Identity(m, m);
  Eigen::MatrixXd Rr(m, nc);
  for (int a = 0; a < m; ++a) {
    for (int b = 0; b < m; ++b) A(a, b) -= c.P(idx[static_cast<std::size_t>(a)], idx[static_cast<std::size_t>(b)]);
    Rr.row(a) = c.R.row(idx[static_cast<std::size_t>(a)]);
  }
  c.absorb = Eigen::MatrixXd::Zero(n, nc);
  c.flux = Eigen::MatrixXd::Zero(n, nc);
  if (m == 0) return c;
  const Eigen::FullPivLU<Eigen::MatrixXd> lu(A);
  if (!lu.isInvertible()) throw std::runtime_error("edge network: current can circulate without reaching a contact");
  const Eigen::MatrixXd X = lu.solve(Rr);
  // Flux: f = s + P^T f for the emission vector s of each contact.
  Eigen::MatrixXd S = Eigen::MatrixXd::Zero(m, nc);
  for (int j = 0; j < nc; ++j)
    for (int s : c.emitted_by[static_cast<std::size_t>(j)]) {
      const auto at = std::find(idx.begin(), idx.end(), s);
      S(static_cast<int>(at - idx.begin()), j) = 1.0;
    }
  const Eigen::MatrixXd F = A.transpose().fullPivLu().solve(S);
  for (int a = 0; a < m; ++a) {
    c.absorb.row(idx[static_cast<std::size_t>(a)]) = X.row(a);
    c.flux.row(idx[static_cast<std::size_t>(a)]) = F.row(a);
  }
  return c;
}

void add_finding(TransportResult& r, Severity s, std::string code, std::string msg, const SourceLocation& where) {
  r.findings.push_back({s, std::move(code), std::move(msg), where});
}

// The contacts as a linear system: voltages fixed at voltage sources, grounds and amplifiers, currents
// fixed elsewhere; G restricted to the contacts whose voltage is unknown but determined, factorised once.
struct ContactSystem {
  int nc = 0;
  std::vector<char> known;       // voltage fixed by the wiring
  std::vector<char> determined;  // known, or coupled through G to a known contact
  std::vector<double> v;         // contact voltages: fixed ones, then solved ones
  std::vector<double> i_fixed;   // currents fixed by current sources
  std::vector<int> unknown;      // determined contacts whose voltage is solved for
  Eigen::FullPivLU<Eigen::MatrixXd> lu;

  // The voltages of the unknown contacts for given fixed voltages and currents (linear in both).
  void solve_unknown(const Matrix& G, std::vector<double>& volts, const std::vector<double>& currents) const {
    const int u = static_cast<int>(unknown.size());
    if (u == 0) return;
    Eigen::VectorXd b(u);
    for (int a = 0; a < u; ++a) {
      const auto ia = static_cast<std::size_t>(unknown[static_cast<std::size_t>(a)]);
      b(a) = currents[ia];
      for (int j = 0; j < nc; ++j)
        if (known[static_cast<std::size_t>(j)])
          b(a) -= G[ia][static_cast<std::size_t>(j)] * volts[static_cast<std::size_t>(j)];
    }
    const Eigen::VectorXd x = lu.solve(b);
    for (int a = 0; a < u; ++a) volts[static_cast<std::size_t>(unknown[static_cast<std::size_t>(a)])] = x(a);
  }
};

// What the steps of one transport solution share.
struct Solving {
  const Design& d;
  const EdgeNetwork& net;
  int nc = 0;                        // contacts
  int nk = 0;                        // edge channels
  std::vector<ChannelChain> chains;  // one per edge channel
  ContactSystem contacts;
  TransportResult r;
};

// Build the chain of each edge channel; its transmissions T_ij,k and emissions M_jk give the
// conductance matrix.
void build_chains(Solving& ctx) {
  const Design& d = ctx.d;
  const int nc = ctx.nc;
  TransportResult& r = ctx.r;
  std::vector<ChannelChain>& chains = ctx.chains;
  std::vector<double> g;
  for (int k = 0; k < ctx.nk; ++k) {
    chains.push_back(build_chain(d, ctx.net, k));
    g.push_back(d.channels[static_cast<std::size_t>(k)].conductance.value());
    Matrix t(static_cast<std::size_t>(nc), std::vector<double>(static_cast<std::size_t>(nc), 0.0));
    std::vector<double> m(static_cast<std::size_t>(nc), 0.0);
    for (int j = 0; j < nc; ++j)
      for (int s : chains.back().emitted_by[static_cast<std::size_t>(j)]) {
        m[static_cast<std::size_t>(j)] += 1.0;
        for (int i = 0; i < nc; ++i)
          t[static_cast<std::size_t>(i)][static_cast<std::size_t>(j)] += chains.back().absorb(s, i);
      }
    r.transmission.push_back(std::move(t));
    r.emitted.push_back(std::move(m));
  }
  r.conductance_S = ConductanceFromTransmissions(r.transmission, r.emitted, g);
}

// Unknown contacts coupled (through G) to no known one have undetermined voltages.
std::vector<char> determined_contacts(const std::vector<char>& known, const Matrix& G) {
  const int nc = static_cast<int>(known.size());
  std::vector<char> determined = known;
  for (bool changed = true; changed;) {
    changed = false;
    for (int a = 0; a < nc; ++a) {
      if (determined[static_cast<std::size_t>(a)]) continue;
      for (int b = 0; b < nc; ++b)
        if (determined[static_cast<std::size_t>(b)] &&
            (std::abs(G[static_cast<std::size_t>(a)][static_cast<std::size_t>(b)]) > 0.0 ||
             std::abs(G[static_cast<std::size_t>(b)][static_cast<std::size_t>(a)]) > 0.0)) {
          determined[static_cast<std::size_t>(a)] = 1;
          changed = true;
          break;
        }
    }
  }
  return determined;
}

// Set up the linear system of the contacts from the wiring: what it fixes, which voltages are
// determined (a finding for each contact whose voltage is not), and the factorised G of the unknown ones.
void set_up_contacts(Solving& ctx) {
  const Design& d = ctx.d;
  const int nc = ctx.nc;
  const Matrix& G = ctx.r.conductance_S;
  ContactSystem& sys = ctx.contacts;
  sys.nc = nc;
  // Wiring: voltages fixed at voltage sources, grounds and amplifiers; currents fixed elsewhere.
  sys.known.assign(static_cast<std::size_t>(nc), 0);
  sys.v.assign(static_cast<std::size_t>(nc), 0.0);
  sys.i_fixed.assign(static_cast<std::size_t>(nc), 0.0);
  for (int j = 0; j < nc; ++j) {
    const Wiring& w = d.wiring[static_cast<std::size_t>(j)];
    if (w.role == Role::kSource && !w.current_source) {
      sys.known[static_cast<std::size_t>(j)] = 1;
      sys.v[static_cast<std::size_t>(j)] = w.bias_V;
    } else if (w.role == Role::kGround || w.role == Role::kAmplifier) {
      sys.known[static_cast<std::size_t>(j)] = 1;
    } else if (w.role == Role::kSource) {
      sys.i_fixed[static_cast<std::size_t>(j)] = w.bias_A;
    }
  }
  sys.determined = determined_contacts(sys.known, G);
  for (int j = 0; j < nc; ++j) {
    if (sys.known[static_cast<std::size_t>(j)]) continue;
    if (sys.determined[static_cast<std::size_t>(j)]) {
      sys.unknown.push_back(j);
      continue;
    }
    const Wiring& w = d.wiring[static_cast<std::size_t>(j)];
    if (w.role == Role::kSource)
      add_finding(ctx.r, Severity::kError, "current-nowhere",
                  "current source " + w.contact +
                      " is not connected through any edge to a grounded contact or a voltage source",
                  w.where);
    else
      add_finding(ctx.r, Severity::kWarning, "float-undetermined",
                  "floating contact " + w.contact +
                      " is connected to nothing that sets its potential; its voltage is undetermined",
                  w.where);
  }
  const int u = static_cast<int>(sys.unknown.size());
  Eigen::MatrixXd A(u, u);
  for (int a = 0; a < u; ++a)
    for (int c = 0; c < u; ++c)
      A(a, c) = G[static_cast<std::size_t>(sys.unknown[static_cast<std::size_t>(a)])]
                 [static_cast<std::size_t>(sys.unknown[static_cast<std::size_t>(c)])];
  if (u > 0) {  // an empty matrix is not factorised (Eigen asserts on it)
    sys.lu.compute(A);
    if (!sys.lu.isInvertible()) throw std::runtime_error("the wiring leaves the contact voltages undetermined");
  }
}

// Solve for the contact voltages, then the current into each contact, I_a = sum_b G_ab V_b; and the
// two-terminal resistance each source sees: V / I with every other source set to zero (voltage
// sources grounded, current sources open), the rest of the wiring as it is.
void solve_voltages_and_currents(Solving& ctx) {
  const Design& d = ctx.d;
  const int nc = ctx.nc;
  TransportResult& r = ctx.r;
  const Matrix& G = r.conductance_S;
  ContactSystem& sys = ctx.contacts;
  const std::vector<char>& determined = sys.determined;
  sys.solve_unknown(G, sys.v, sys.i_fixed);
  r.current_A.assign(static_cast<std::size_t>(nc), 0.0);
  for (int a = 0; a < nc; ++a) {
    r.voltage_V.push_back(determined[static_cast<std::size_t>(a)]
                              ? std::optional<double>(sys.v[static_cast<std::size_t>(a)])
                              : std::nullopt);
    for (int b = 0; b < nc; ++b)
      if (determined[static_cast<std::size_t>(b)])
        r.current_A[static_cast<std::size_t>(a)] +=
            G[static_cast<std::size_t>(a)][static_cast<std::size_t>(b)] * sys.v[static_cast<std::size_t>(b)];
  }
  for (int j = 0; j < nc; ++j) {
    const Wiring& wj = d.wiring[static_cast<std::size_t>(j)];
    if (wj.role != Role::kSource) continue;
    TransportResult::SourceResistance s{j, std::nullopt};
    std::vector<double> vj(static_cast<std::size_t>(nc), 0.0), ij(static_cast<std::size_t>(nc), 0.0);
    if (wj.current_source)
      ij[static_cast<std::size_t>(j)] = wj.bias_A;
    else
      vj[static_cast<std::size_t>(j)] = wj.bias_V;
    sys.solve_unknown(G, vj, ij);
    double i = 0.0;
    for (int b = 0; b < nc; ++b)
      if (determined[static_cast<std::size_t>(b)])
        i += G[static_cast<std::size_t>(j)][static_cast<std::size_t>(b)] * vj[static_cast<std::size_t>(b)];
    if (std::abs(i) > 1e-30 && determined[static_cast<std::size_t>(j)])
      s.resistance_Ohm = vj[static_cast<std::size_t>(j)] / i;
    r.sources.push_back(s);
  }
}

// Routes from every source, per channel: the edges its current takes, the fraction reaching each
// contact, and the constrictions on the way to contact i (fed by the source and feeding i).
void trace_routes(Solving& ctx) {
  const Design& d = ctx.d;
  const int nc = ctx.nc;
  TransportResult& r = ctx.r;
  for (int k = 0; k < ctx.nk; ++k) {
    const ChannelChain& c = ctx.chains[static_cast<std::size_t>(k)];
    for (int j = 0; j < nc; ++j) {
      if (d.wiring[static_cast<std::size_t>(j)].role != Role::kSource ||
          c.emitted_by[static_cast<std::size_t>(j)].empty())
        continue;
      Route route;
      route.source = j;
      route.channel = k;
      const double mj = r.emitted[static_cast<std::size_t>(k)][static_cast<std::size_t>(j)];
      route.reaching.assign(static_cast<std::size_t>(nc), 0.0);
      route.via.assign(static_cast<std::size_t>(nc), {});
      for (int i = 0; i < nc; ++i)
        route.reaching[static_cast<std::size_t>(i)] =
            r.transmission[static_cast<std::size_t>(k)][static_cast<std::size_t>(i)][static_cast<std::size_t>(j)] / mj;
      for (std::size_t s = 0; s < c.pieces.size(); ++s) {
        const double f = c.flux(static_cast<int>(s), j) / mj;
        if (f > kTiny) route.legs.push_back({c.pieces[s], f});
      }
      for (std::size_t q = 0; q < d.constrictions.size(); ++q) {
        bool fed = false;
        std::vector<double> feeds(static_cast<std::size_t>(nc), 0.0);
        for (std::size_t s = 0; s < c.pieces.size(); ++s) {
          const EdgePiece& p = ctx.net.pieces[static_cast<std::size_t>(c.pieces[s])];
          if (p.to.kind == EdgeEnd::Kind::kConstriction && p.to.index == static_cast<int>(q) &&
              c.flux(static_cast<int>(s), j) > kTiny)
            fed = true;
          if (p.from.kind == EdgeEnd::Kind::kConstriction && p.from.index == static_cast<int>(q))
            for (int i = 0; i < nc; ++i) feeds[static_cast<std::size_t>(i)] += c.absorb(static_cast<int>(s), i);
        }
        if (!fed) continue;
        for (int i = 0; i < nc; ++i)
          if (feeds[static_cast<std::size_t>(i)] > kTiny && route.reaching[static_cast<std::size_t>(i)] > kTiny)
            route.via[static_cast<std::size_t>(i)].push_back(static_cast<int>(q));
      }
      r.routes.push_back(std::move(route));
    }
  }
}

// Potentials carried by the edges, and the constrictions that partition a DC current.
void edge_potentials_and_partitioning(Solving& ctx) {
  const Design& d = ctx.d;
  const EdgeNetwork& net = ctx.net;
  const int nc = ctx.nc;
  const int nk = ctx.nk;
  TransportResult& r = ctx.r;
  const std::vector<double>& v = ctx.contacts.v;
  const std::vector<char>& determined = ctx.contacts.determined;
  double vmax = 0.0;
  for (double x : v) vmax = std::max(vmax, std::abs(x));
  r.piece_potential_V.assign(net.pieces.size(), 0.0);
  r.piece_absorption.assign(net.pieces.size(), std::vector<double>(static_cast<std::size_t>(nc), 0.0));
  for (int k = 0; k < nk; ++k) {
    const ChannelChain& c = ctx.chains[static_cast<std::size_t>(k)];
    for (std::size_t s = 0; s < c.pieces.size(); ++s) {
      for (int i = 0; i < nc; ++i)
        r.piece_absorption[static_cast<std::size_t>(c.pieces[s])][static_cast<std::size_t>(i)] =
            c.absorb(static_cast<int>(s), i);
      double mu = 0.0;
      for (int j = 0; j < nc; ++j)
        if (determined[static_cast<std::size_t>(j)])
          mu += c.flux(static_cast<int>(s), j) * v[static_cast<std::size_t>(j)];
      r.piece_potential_V[static_cast<std::size_t>(c.pieces[s])] = mu;
    }
  }
  for (std::size_t q = 0; q < d.constrictions.size(); ++q)
    for (int k = 0; k < nk; ++k) {
      const double t = d.constrictions[q].transmission[static_cast<std::size_t>(k)];
      if (!(t > kTiny && t < 1.0 - kTiny)) continue;
      std::optional<double> mu[2];
      const ConstrictionPorts ports = PortsOf(net, k, static_cast<int>(q));
      for (int f = 0; f < 2; ++f)
        if (ports.incoming[f] >= 0) mu[f] = r.piece_potential_V[static_cast<std::size_t>(ports.incoming[f])];
      if (mu[0] && mu[1] && std::abs(*mu[0] - *mu[1]) > 1e-9 * vmax)
        r.partitioning.push_back({static_cast<int>(q), k, *mu[0] - *mu[1]});
    }
}

// Transmission into contact i of what contact j emits, and the emission of contact j, summed over channels.
double total_transmission(const Solving& ctx, int i, int j) {
  double s = 0.0;
  for (int k = 0; k < ctx.nk; ++k)
    s += ctx.r.transmission[static_cast<std::size_t>(k)][static_cast<std::size_t>(i)][static_cast<std::size_t>(j)];
  return s;
}
double total_emitted(const Solving& ctx, int j) {
  double s = 0.0;
  for (int k = 0; k < ctx.nk; ++k) s += ctx.r.emitted[static_cast<std::size_t>(k)][static_cast<std::size_t>(j)];
  return s;
}

// Contacts that current from a source reaches, directly or through floating contacts.
std::vector<char> fed_by_sources(const Solving& ctx) {
  const Design& d = ctx.d;
  const int nc = ctx.nc;
  std::vector<char> fed(static_cast<std::size_t>(nc), 0);
  for (int j = 0; j < nc; ++j)
    fed[static_cast<std::size_t>(j)] = d.wiring[static_cast<std::size_t>(j)].role == Role::kSource;
  for (bool changed = true; changed;) {
    changed = false;
    for (int i = 0; i < nc; ++i) {
      if (fed[static_cast<std::size_t>(i)]) continue;
      for (int j = 0; j < nc; ++j) {
        const Role rj = d.wiring[static_cast<std::size_t>(j)].role;
        if (j != i && fed[static_cast<std::size_t>(j)] && (rj == Role::kSource || rj == Role::kFloat) &&
            total_transmission(ctx, i, j) > kTiny) {
          fed[static_cast<std::size_t>(i)] = 1;
          changed = true;
          break;
        }
      }
    }
  }
  return fed;
}

// downstream[a][b]: current absorbed at a reaches b, a itself or through floating contacts that re-emit it.
std::vector<std::vector<char>> downstream_contacts(const Solving& ctx) {
  const int nc = ctx.nc;
  std::vector<std::vector<char>> downstream(static_cast<std::size_t>(nc),
                                            std::vector<char>(static_cast<std::size_t>(nc), 0));
  for (int a = 0; a < nc; ++a) {
    std::vector<int> stack{a};
    while (!stack.empty()) {
      const int x = stack.back();
      stack.pop_back();
      if (downstream[static_cast<std::size_t>(a)][static_cast<std::size_t>(x)]) continue;
      downstream[static_cast<std::size_t>(a)][static_cast<std::size_t>(x)] = 1;
      if (ctx.d.wiring[static_cast<std::size_t>(x)].role != Role::kFloat) continue;
      for (int y = 0; y < nc; ++y)
        if (y != x && total_transmission(ctx, y, x) > kTiny) stack.push_back(y);
    }
  }
  return downstream;
}

// Whether amplifier contact i receives current that left a partitioning constriction.
bool sees_partitioned_current(const Solving& ctx, const std::vector<std::vector<char>>& downstream, int i) {
  bool partitioned = false;
  for (const auto& site : ctx.r.partitioning) {
    const ChannelChain& c = ctx.chains[static_cast<std::size_t>(site.channel)];
    for (std::size_t s = 0; s < c.pieces.size(); ++s) {
      const EdgePiece& e = ctx.net.pieces[static_cast<std::size_t>(c.pieces[s])];
      if (e.from.kind != EdgeEnd::Kind::kConstriction || e.from.index != site.constriction) continue;
      for (int a = 0; a < ctx.nc; ++a)
        if (c.absorb(static_cast<int>(s), a) > kTiny &&
            downstream[static_cast<std::size_t>(a)][static_cast<std::size_t>(i)])
          partitioned = true;
    }
  }
  return partitioned;
}

// Wiring warnings: contacts no edge touches, floating contacts no source feeds, idle grounds, sources
// whose current returns, amplifiers that would see thermal noise only or unpartitioned DC current.
void warn_about_wiring(Solving& ctx) {
  const Design& d = ctx.d;
  const int nc = ctx.nc;
  TransportResult& r = ctx.r;
  const std::vector<char> fed = fed_by_sources(ctx);
  const std::vector<std::vector<char>> downstream = downstream_contacts(ctx);
  for (int i = 0; i < nc; ++i) {
    const Wiring& w = d.wiring[static_cast<std::size_t>(i)];
    const std::string& name = w.contact;
    if (total_emitted(ctx, i) == 0.0) {
      const bool needed = w.role == Role::kSource || w.role == Role::kAmplifier;
      add_finding(r, needed ? Severity::kError : Severity::kWarning, "contact-untouched",
                  "no edge channel touches contact " + name +
                      (needed ? " (a " + ToString(w.role) + " must be on an edge)" : ""),
                  d.contacts[static_cast<std::size_t>(i)].where);
      continue;
    }
    double from_others = 0.0;
    for (int j = 0; j < nc; ++j)
      if (j != i) from_others += total_transmission(ctx, i, j);
    if (w.role == Role::kFloat && !fed[static_cast<std::size_t>(i)])
      add_finding(r, Severity::kWarning, "float-unset",
                  "floating contact " + name +
                      " receives no current from any source, directly or through other floating contacts: "
                      "its potential is set by no source",
                  w.where);
    if (w.role == Role::kGround && from_others <= kTiny)
      add_finding(r, Severity::kWarning, "ground-idle", "ground " + name + " receives no edge from any other contact",
                  w.where);
    if (w.role == Role::kSource && total_emitted(ctx, i) - total_transmission(ctx, i, i) <= kTiny)
      add_finding(r, Severity::kWarning, "source-returns",
                  "all of the current that source " + name + " emits returns to it", w.where);
    if (w.role != Role::kAmplifier) continue;
    if (!sees_partitioned_current(ctx, downstream, i))
      add_finding(r, Severity::kWarning, "amplifier-unpartitioned",
                  "amplifier " + name + " sees no partitioned current from any source: its noise would be thermal only",
                  w.where);
    for (const EdgePiece& p : ctx.net.pieces)
      if (p.to.kind == EdgeEnd::Kind::kContact && p.to.index == i && p.from.kind == EdgeEnd::Kind::kContact &&
          d.wiring[static_cast<std::size_t>(p.from.index)].role == Role::kSource) {
        add_finding(r, Severity::kWarning, "amplifier-direct",
                    "DC current from source " + d.wiring[static_cast<std::size_t>(p.from.index)].contact +
                        " reaches amplifier " + name + " along channel " + std::to_string(p.channel + 1) +
                        " without crossing any constriction",
                    w.where);
        break;
      }
  }
}

}  // namespace

Matrix ConductanceFromTransmissions(const std::vector<Matrix>& t, const std::vector<std::vector<double>>& m,
                                    const std::vector<double>& g) {
  const std::size_t n = m.empty() ? 0 : m.front().size();
  Matrix G(n, std::vector<double>(n, 0.0));
  for (std::size_t k = 0; k < t.size(); ++k)
    for (std::size_t i = 0; i < n; ++i)
      for (std::size_t j = 0; j < n; ++j)
        G[i][j] += constants::kConductanceQuantum_S * g[k] * ((i == j ? m[k][i] : 0.0) - t[k][i][j]);
  return G;
}

double FourTerminalResistance(const Matrix& G, int m, int n, int k, int l) {
  const int size = static_cast<int>(G.size());
  for (int x : {m, n, k, l})
    if (x < 0 || x >= size) throw std::invalid_argument("FourTerminalResistance: contact index out of range");
  if (m == n) throw std::invalid_argument("FourTerminalResistance: current contacts must differ");
  // Ground n, inject 1 A at m, every other contact floats: solve G' V' = e_m without row/column n.
  Eigen::MatrixXd A(size - 1, size - 1);
  Eigen::VectorXd b = Eigen::VectorXd::Zero(size - 1);
  auto red = [n](int i) { return i < n ? i : i - 1; };
  for (int i = 0; i < size; ++i) {
    if (i == n) continue;
    for (int j = 0; j < size; ++j)
      if (j != n) A(red(i), red(j)) = G[static_cast<std::size_t>(i)][static_cast<std::size_t>(j)];
  }
  b(red(m)) = 1.0;
  const Eigen::FullPivLU<Eigen::MatrixXd> lu(A);
  if (!lu.isInvertible()) throw std::runtime_error("the voltages are undetermined: some contacts are not connected");
  const Eigen::VectorXd v = lu.solve(b);
  auto volt = [&](int i) { return i == n ? 0.0 : v(red(i)); };
  return volt(k) - volt(l);
}

TransportResult SolveTransport(const Design& d, const EdgeNetwork& net) {
  for (const Finding& f : net.findings)
    if (f.severity == Severity::kError)
      throw std::runtime_error("SolveTransport: the edge network has errors: " + f.message);
  Solving ctx{d, net, static_cast<int>(d.contacts.size()), static_cast<int>(d.channels.size()), {}, {}, {}};
  ctx.r.field_T = net.field_T;
  build_chains(ctx);
  set_up_contacts(ctx);
  solve_voltages_and_currents(ctx);
  trace_routes(ctx);
  edge_potentials_and_partitioning(ctx);
  warn_about_wiring(ctx);
  return std::move(ctx.r);
}

}  // namespace hallway
