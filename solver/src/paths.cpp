// Edge-path metrics and constriction models; formulas and sources in paths.hpp.
#include "hallway/paths.hpp"

#include <Spectra/MatOp/SparseSymShiftSolve.h>
#include <Spectra/SymEigsShiftSolver.h>
#include <Eigen/Sparse>
#include <algorithm>
#include <cmath>
#include <cstdio>
#include <numbers>
#include <stdexcept>

#include "hallway/constants.hpp"
#include "hallway/gap.hpp"
#include "hallway/geometry/exact.hpp"
#include "hallway/heterostructure.hpp"
#include "hallway/map.hpp"
#include "hallway/saddle.hpp"
#include "hallway/saddle_model.hpp"
#include "hallway/units.hpp"

namespace hallway {

using constants::kBoltzmann_J_per_K;
using constants::kElementaryCharge_C;
using constants::kHbar_Js;
using constants::kPlanck_Js;
using geometry::Point;
using geometry::Polygon;

bool PathOptions::IsValid(std::string* why) const {
  auto bad = [&](const char* w) {
    if (why) *why = w;
    return false;
  };
  if (!(default_velocity_m_per_s > 0.0)) return bad("default_velocity_m_per_s must be > 0");
  if (!(relaxation_length_m >= 0.0)) return bad("relaxation_length_m must be >= 0 (0: default)");
  if (gate_voltage_limit_V && !(*gate_voltage_limit_V < 0.0)) return bad("gate_voltage_limit_V must be negative");
  if (curve_points < 2 || curve_points > 1000) return bad("curve_points must lie in [2, 1000]");
  if (target_transmission && !(*target_transmission >= 0.0 && *target_transmission <= 1.0))
    return bad("target_transmission must lie in [0, 1]");
  return true;
}

void SaddleEnergies(double x, double y, double c, double* e1, double* e2) {
  const double omega2 = c * c + y * y - x * x;
  const double root = std::sqrt(omega2 * omega2 + 4.0 * x * x * y * y);
  *e1 = std::sqrt(std::max(0.0, root - omega2)) / (2.0 * std::numbers::sqrt2);
  *e2 = std::sqrt(std::max(0.0, root + omega2)) / std::numbers::sqrt2;
}

double SaddleTransmission(double energy, double x, double y, double c, int n) {
  double e1 = 0.0, e2 = 0.0;
  SaddleEnergies(x, y, c, &e1, &e2);
  const double eps = (energy - e2 * (n + 0.5)) / e1;
  return 1.0 / (1.0 + std::exp(-std::numbers::pi * eps));
}

double RelaxationRuleOfThumb_m(const Fraction& filling) {
  return filling.is_integer() && filling.num >= 2 ? 1e-6 : 3e-6;
}

double ThermalVisibility(double dl, double v, double temperature) {
  const double x = std::numbers::pi * kBoltzmann_J_per_K * temperature * dl / (kHbar_Js * v);
  return x == 0.0 ? 1.0 : x / std::sinh(x);
}

double IslandCapacitance_F(double area, bool gated, double eps_r, double depth) {
  const double e0 = constants::kVacuumPermittivity_F_per_m;
  return gated ? eps_r * e0 * area / depth : 8.0 * 0.5 * (eps_r + 1.0) * e0 * std::sqrt(area / std::numbers::pi);
}

double SpinResolvedSaddleTransmission(double energy, double x, double y, double c, int k) {
  double e1 = 0.0, e2 = 0.0;
  SaddleEnergies(x, y, c, &e1, &e2);
  const double eps = (energy - 0.5 * e2 * (k + 0.5)) / e1;
  return 1.0 / (1.0 + std::exp(-std::numbers::pi * eps));
}

std::vector<double> TransverseLevels_J(const std::vector<double>& u_J, double dx, double mass, int count) {
  const int n = static_cast<int>(u_J.size());
  if (n < 3 * count + 3) throw std::invalid_argument("TransverseLevels_J: too few samples");
  // Work in units of the hopping energy t = hbar^2 / (2 m dx^2), so that the matrix entries are O(1).
  const double t_J = kHbar_Js * kHbar_Js / (2.0 * mass * dx * dx);
  std::vector<double> u(u_J.size());
  for (std::size_t i = 0; i < u.size(); ++i) u[i] = u_J[i] / t_J;
  const double t = 1.0;
  Eigen::SparseMatrix<double> h(n, n);
  std::vector<Eigen::Triplet<double>> entries;
  double lowest = u[0];
  for (int i = 0; i < n; ++i) {
    lowest = std::min(lowest, u[static_cast<std::size_t>(i)]);
    entries.emplace_back(i, i, 2.0 * t + u[static_cast<std::size_t>(i)]);
    if (i + 1 < n) {
      entries.emplace_back(i, i + 1, -t);
      entries.emplace_back(i + 1, i, -t);
    }
  }
  h.setFromTriplets(entries.begin(), entries.end());
  Spectra::SparseSymShiftSolve<double> op(h);
  Spectra::SymEigsShiftSolver<Spectra::SparseSymShiftSolve<double>> eigs(
      op, count, std::min(n, std::max(4 * count, 20)), lowest - 1e-3);
  eigs.init();
  eigs.compute(Spectra::SortRule::LargestMagn, 1000, 1e-12);
  if (eigs.info() != Spectra::CompInfo::Successful)
    throw std::runtime_error("transverse eigenproblem did not converge");
  const Eigen::VectorXd values = eigs.eigenvalues();
  std::vector<double> out;
  for (Eigen::Index i = 0; i < values.size(); ++i) out.push_back(values(i) * t_J);
  std::sort(out.begin(), out.end());
  return out;
}

namespace {

// |grad U| / (e |B|) at p from the map (U = E_F0 * energy_over_fermi).
double drift_at(const DensityMap& m, double ef0, double field, Point p) {
  const double h = m.cell_m;
  const double gx = (m.EnergyAt({p.x + h, p.y}) - m.EnergyAt({p.x - h, p.y})) / (2 * h);
  const double gy = (m.EnergyAt({p.x, p.y + h}) - m.EnergyAt({p.x, p.y - h})) / (2 * h);
  return std::hypot(gx, gy) * ef0 / (kElementaryCharge_C * std::abs(field));
}

Polygon ring_of(const EdgeNetwork& net, const std::vector<int>& pieces) {
  Polygon ring;
  for (int p : pieces) {
    const auto& path = net.pieces[static_cast<std::size_t>(p)].path;
    ring.vertices.insert(ring.vertices.end(), path.begin(), path.end());
  }
  return ring;
}

// What the path metrics of one network share: the design, the network, the options, the wafer's
// figures and the result being filled.
struct PathsContext {
  const Design& d;
  const EdgeNetwork& net;
  const PathOptions& opt;
  WaferQuantities fig;
  PathResult& r;
};

// Length, drift velocity (from the map where it gives one, else the default), time of flight and
// thermal length of each edge piece.
void measure_pieces(PathsContext& ctx, const DensityMap* map) {
  const Design& d = ctx.d;
  const PathOptions& opt = ctx.opt;
  const double kt = kBoltzmann_J_per_K * d.conditions.temperature_K;
  for (std::size_t p = 0; p < ctx.net.pieces.size(); ++p) {
    const EdgePiece& e = ctx.net.pieces[p];
    PieceMetrics pm;
    pm.piece = static_cast<int>(p);
    pm.length_m = e.length_m;
    double tof = 0.0, covered = 0.0;
    if (map) {
      for (std::size_t k = 0; k + 1 < e.path.size(); ++k) {
        const Point a = e.path[k], b = e.path[k + 1];
        const double len = geometry::distance(a, b);
        const int steps = std::max(1, static_cast<int>(std::ceil(len / map->cell_m)));
        for (int s = 0; s < steps; ++s) {
          const double f = (s + 0.5) / steps;
          const double v = drift_at(*map, ctx.fig.fermi_energy_J, d.conditions.field_T,
                                    {a.x + f * (b.x - a.x), a.y + f * (b.y - a.y)});
          if (v > 0.0) {
            tof += len / steps / v;
            covered += len / steps;
          }
        }
      }
    }
    if (covered > 0.0) {
      pm.velocity_m_per_s = covered / tof;
      pm.velocity_from_map = true;
    } else {
      pm.velocity_m_per_s = opt.default_velocity_m_per_s;
    }
    pm.time_of_flight_s = pm.length_m / pm.velocity_m_per_s;
    pm.thermal_length_m = kHbar_Js * pm.velocity_m_per_s / kt;
    pm.thermal_length_2pi_m = pm.thermal_length_m / (2.0 * std::numbers::pi);
    ctx.r.pieces.push_back(pm);
  }
}

// The area-dependent figures of a loop: Aharonov-Bohm periods, whether a gate covers it, charging
// energy, and its thermal visibility at the given velocity.
void finish_loop(const Design& d, LoopMetrics& l, const Polygon& ring, double velocity) {
  l.area_m2 = ring.vertices.size() >= 3 ? geometry::area(ring) : 0.0;
  const double charge = d.channels[static_cast<std::size_t>(l.channel)].charge_e;
  if (l.area_m2 > 0.0) {
    l.ab_period_T = kPlanck_Js / (kElementaryCharge_C * l.area_m2);
    l.ab_period_quasiparticle_T = l.ab_period_T / charge;
  }
  if (geometry::find_defect(ring) == geometry::PolygonDefect::kNone)
    for (const Gate& g : d.gates)
      if (geometry::intersection_area(ring, g.outline) > 0.5 * l.area_m2) l.gated_island = true;
  const double c =
      IslandCapacitance_F(l.area_m2, l.gated_island, d.heterostructure.permittivity, d.heterostructure.depth_m);
  if (c > 0.0) l.charging_energy_J = kElementaryCharge_C * kElementaryCharge_C / (2.0 * c);
  l.visibility = ThermalVisibility(l.length_m, velocity, d.conditions.temperature_K);
}

// Loops of every channel, and closed edges around islands.
void measure_loops(PathsContext& ctx) {
  const Design& d = ctx.d;
  const EdgeNetwork& net = ctx.net;
  PathResult& r = ctx.r;
  for (std::size_t k = 0; k < d.channels.size(); ++k) {
    for (const auto& comp : FindEdgeLoops(d, net, {static_cast<int>(k)})) {
      LoopMetrics l;
      l.channel = static_cast<int>(k);
      l.pieces = comp;
      double tof = 0.0;
      for (int p : comp) {
        const EdgePiece& e = net.pieces[static_cast<std::size_t>(p)];
        l.length_m += e.length_m;
        tof += r.pieces[static_cast<std::size_t>(p)].time_of_flight_s;
        for (const EdgeEnd* end : {&e.from, &e.to})
          if (end->kind == EdgeEnd::Kind::kConstriction &&
              std::find(l.constrictions.begin(), l.constrictions.end(), end->index) == l.constrictions.end())
            l.constrictions.push_back(end->index);
      }
      finish_loop(d, l, ring_of(net, comp), tof > 0.0 ? l.length_m / tof : ctx.opt.default_velocity_m_per_s);
      r.loops.push_back(l);
    }
  }
  for (const ClosedEdge& c : net.closed) {
    LoopMetrics l;
    l.channel = c.channel;
    l.closed_edge = true;
    l.length_m = c.length_m;
    // The island's own outline: its area gives the AB periods and, with the gates over it, the
    // charging energy (an empty outline here once gave every island E_C = 0).
    finish_loop(d, l, c.ring, ctx.opt.default_velocity_m_per_s);
    r.loops.push_back(l);
  }
}

// The loop (index in r.loops) a piece is an arm of: it lies on the loop, or joins two of its
// constrictions (e.g. the two constrictions of a Fabry-Perot cavity).
std::optional<int> arm_of(const PathResult& r, const EdgePiece& e, int piece) {
  for (std::size_t i = 0; i < r.loops.size(); ++i) {
    const LoopMetrics& l = r.loops[i];
    if (l.closed_edge || l.channel != e.channel) continue;
    const auto has = [&](int q) {
      return std::find(l.constrictions.begin(), l.constrictions.end(), q) != l.constrictions.end();
    };
    const bool on_loop = std::find(l.pieces.begin(), l.pieces.end(), piece) != l.pieces.end();
    if (on_loop || (has(e.from.index) && has(e.to.index))) return static_cast<int>(i);
  }
  return std::nullopt;
}

// An interferometer arm: the path difference (the loop's round trip when the piece lies on it), the
// thermal length at the mean velocity over it, the visibility X / sinh X, and a warning beyond it.
void judge_arm(PathsContext& ctx, SourcePath& sp) {
  const Design& d = ctx.d;
  const LoopMetrics& l = ctx.r.loops[static_cast<std::size_t>(*sp.loop)];
  const PieceMetrics& pm = ctx.r.pieces[static_cast<std::size_t>(sp.piece)];
  const bool on_loop = std::find(l.pieces.begin(), l.pieces.end(), sp.piece) != l.pieces.end();
  double length = pm.length_m, tof = pm.time_of_flight_s;
  if (on_loop) {
    length = l.length_m;
    tof = 0.0;
    for (int p : l.pieces) tof += ctx.r.pieces[static_cast<std::size_t>(p)].time_of_flight_s;
  }
  // The loop's round trip at the loop's mean velocity: the same v as measure_loops, so the visibility
  // is the loop's own number.
  const double v = tof > 0.0 ? length / tof : ctx.opt.default_velocity_m_per_s;
  sp.path_difference_m = length;
  sp.path_thermal_length_m = kHbar_Js * v / (kBoltzmann_J_per_K * d.conditions.temperature_K);
  sp.visibility = on_loop ? l.visibility : ThermalVisibility(length, v, d.conditions.temperature_K);
  sp.beyond_thermal_length = length > sp.path_thermal_length_m;
  if (!sp.beyond_thermal_length) return;
  const auto g4 = [](double x, const char* f) {
    char b[32];
    std::snprintf(b, sizeof b, f, x);
    return std::string(b);
  };
  const auto um = [&](double x) { return g4(x * 1e6, "%.4g"); };
  ctx.r.findings.push_back(
      {Severity::kWarning, "arm-thermal",
       "the interferometer arm from constriction " + d.constrictions[static_cast<std::size_t>(sp.source)].name +
           " to " + d.constrictions[static_cast<std::size_t>(sp.target)].name + " (channel " +
           std::to_string(sp.channel + 1) + ", " + um(sp.distance_m) + " um) has a path difference of " + um(length) +
           " um, beyond the thermal length hbar v / k_B T = " + um(sp.path_thermal_length_m) +
           " um: thermal smearing alone leaves the visibility factor X / sinh X = " + g4(sp.visibility, "%.3g") +
           " (docs/models.md \"Edge velocity and lengths\")",
       d.constrictions[static_cast<std::size_t>(sp.target)].where});
}

// Filling 2: the charge and neutral modes along a source path on the outer channel, the delay between the
// two half pulses at its target, and a warning where they no longer overlap (docs/models.md "Charge and
// neutral modes at filling 2"). There the delay, not the relaxation rule of thumb, judges the distance.
void pulse_delay(PathsContext& ctx, const TransportResult& tr, SourcePath& sp) {
  const Design& d = ctx.d;
  {
    const PieceMetrics& pm = ctx.r.pieces[static_cast<std::size_t>(sp.piece)];
    sp.modes = ModesAlongPiece(d, ctx.net, sp.piece, pm.velocity_m_per_s);
    if (!sp.modes) return;
    double hot = 0.0;  // the bias of the source constriction's hot input
    for (int i : PortsOf(ctx.net, sp.channel, sp.source).incoming)
      if (i >= 0 && std::abs(tr.piece_potential_V[static_cast<std::size_t>(i)]) > std::abs(hot))
        hot = tr.piece_potential_V[static_cast<std::size_t>(i)];
    const double stream = constants::kConductanceQuantum_S * tr.piece_potential_V[static_cast<std::size_t>(sp.piece)];
    sp.pulses = PulseRegimeOf(PulseDelay_s(sp.distance_m, *sp.modes), hot, d.conditions.temperature_K, stream);
    if (!(sp.pulses->bias_ratio > kOverlappingPulses)) return;
    char ratio[32];
    std::snprintf(ratio, sizeof ratio, "%.3g", sp.pulses->bias_ratio);
    ctx.r.findings.push_back(
        {Severity::kWarning, "pulses-separate",
         "an electron sent from constriction " + d.constrictions[static_cast<std::size_t>(sp.source)].name +
             " arrives at " + d.constrictions[static_cast<std::size_t>(sp.target)].name + " as two e/2 pulses " +
             units::FormatSI(sp.pulses->delay_s, "s", 3) + " apart (e V dt / hbar = " + ratio + " at the source bias " +
             units::FormatSI(hot, "V", 3) +
             "): the interaction between the two channels changes how they are partitioned there (`hallway noise` "
             "gives a collider's P with the pulses' part; cross-correlations of such pulses were measured negative, "
             "Glidic et al., Nat. Commun. (2024), doi:10.1038/s41467-024-50820-0; docs/models.md \"Charge and neutral "
             "modes at filling 2\")",
         d.constrictions[static_cast<std::size_t>(sp.target)].where});
  }
}

// Source constriction -> splitter or collider paths: time of flight and thermal length beside each
// distance; a warning beyond the relaxation rule of thumb, or for an interferometer arm beyond the
// thermal length instead.
void find_source_paths(PathsContext& ctx, const TransportResult& tr) {
  const Design& d = ctx.d;
  const PathOptions& opt = ctx.opt;
  const double relax =
      opt.relaxation_length_m > 0.0 ? opt.relaxation_length_m : RelaxationRuleOfThumb_m(d.conditions.filling);
  ctx.r.relaxation_length_m = relax;
  ctx.r.relaxation_rule =
      "relaxation length " + std::to_string(relax * 1e6).substr(0, 4) + " um, a rule of thumb (common practice" +
      (opt.relaxation_length_m > 0.0 ? ", set by the user" : ": 1 um at integer fillings >= 2, 3 um otherwise") +
      "): energy relaxation by neutral modes or edge reconstruction over a few micrometres, no published distance "
      "law for this model; interferometer arms are compared with the thermal length instead, and at filling 2 the "
      "delay between the charge and neutral pulses replaces it (docs/models.md \"Edge velocity and lengths\")";
  for (std::size_t p = 0; p < ctx.net.pieces.size(); ++p) {
    const EdgePiece& e = ctx.net.pieces[p];
    if (e.from.kind != EdgeEnd::Kind::kConstriction || e.to.kind != EdgeEnd::Kind::kConstriction ||
        e.from.index == e.to.index)
      continue;
    const double t =
        d.constrictions[static_cast<std::size_t>(e.to.index)].transmission[static_cast<std::size_t>(e.channel)];
    if (!(t > 0.0 && t < 1.0)) continue;
    const PieceMetrics& pm = ctx.r.pieces[p];
    SourcePath sp;
    sp.channel = e.channel;
    sp.source = e.from.index;
    sp.target = e.to.index;
    sp.piece = static_cast<int>(p);
    sp.distance_m = e.length_m;
    sp.time_of_flight_s = pm.time_of_flight_s;
    sp.thermal_length_m = pm.thermal_length_m;
    sp.relaxation_length_m = relax;
    sp.loop = arm_of(ctx.r, e, sp.piece);
    if (sp.loop) {
      judge_arm(ctx, sp);
    } else if (pulse_delay(ctx, tr, sp); sp.pulses) {
      sp.beyond_relaxation = e.length_m > relax;  // shown, but the delay judges the distance
    } else if ((sp.beyond_relaxation = e.length_m > relax)) {
      ctx.r.findings.push_back(
          {Severity::kWarning, "path-long",
           "the edge from constriction " + d.constrictions[static_cast<std::size_t>(sp.source)].name + " to " +
               d.constrictions[static_cast<std::size_t>(sp.target)].name + " (channel " +
               std::to_string(e.channel + 1) + ") is " + std::to_string(e.length_m * 1e6).substr(0, 5) +
               " um long, beyond the " + ctx.r.relaxation_rule,
           d.constrictions[static_cast<std::size_t>(sp.target)].where});
    }
    ctx.r.source_paths.push_back(sp);
  }
}

// Floating contacts: heating by the bias.
void float_heating(PathsContext& ctx, const TransportResult& tr) {
  const Design& d = ctx.d;
  const EdgeNetwork& net = ctx.net;
  for (std::size_t i = 0; i < d.wiring.size(); ++i) {
    if (d.wiring[i].role != Role::kFloat || !tr.voltage_V[i]) continue;
    FloatHeating fh;
    fh.contact = static_cast<int>(i);
    int outgoing = 0;
    for (std::size_t p = 0; p < net.pieces.size(); ++p) {
      const EdgePiece& e = net.pieces[p];
      const double g =
          d.channels[static_cast<std::size_t>(e.channel)].conductance.value() * constants::kConductanceQuantum_S;
      if (e.to.kind == EdgeEnd::Kind::kContact && e.to.index == static_cast<int>(i)) {
        const double dv = tr.piece_potential_V[p] - *tr.voltage_V[i];
        fh.power_W += 0.5 * g * dv * dv;
      }
      if (e.from.kind == EdgeEnd::Kind::kContact && e.from.index == static_cast<int>(i)) ++outgoing;
    }
    const double quantum =
        std::numbers::pi * std::numbers::pi * kBoltzmann_J_per_K * kBoltzmann_J_per_K / (6.0 * kPlanck_Js);
    const double t0 = d.conditions.temperature_K;
    fh.temperature_K = outgoing > 0 ? std::sqrt(t0 * t0 + fh.power_W / (outgoing * quantum)) : t0;
    ctx.r.floats.push_back(fh);
  }
}

// What the constriction models share: the design, the options and the wafer's figures.
struct ModelSetting {
  const Design& d;
  const PathOptions& opt;
  double depth = 0.0;                // 2DEG depth, m
  double mass = 0.0;                 // effective mass, kg
  double ef0 = 0.0;                  // bulk Fermi energy, J
  double cyclotron_J = 0.0;          // cyclotron energy, J
  std::vector<double> design_volts;  // the design's gate voltages, V
};

// One constriction as its model sees it: the saddle model on its window (saddle_model.hpp).
struct GapModel {
  const ModelSetting& s;
  const Constriction& k;
  std::size_t index = 0;
  const ConstrictionSaddleModel& model;
};

// Transverse subbands across the saddle, and how far their spacing is from the harmonic estimate.
void transverse_subbands(const GapModel& g, const DensityMap& m, const SaddleModel& s0, ConstrictionModel& cm) {
  const double dx = 0.25 * g.model.window_cell_m();
  const double reach = 0.5 * g.model.gap().distance_m + 4.0 * g.s.depth;
  const Point u = g.model.across();
  std::vector<double> pot;
  for (double t = -reach; t <= reach; t += dx)
    pot.push_back(m.EnergyAt({s0.saddle.x + t * u.x, s0.saddle.y + t * u.y}) * g.s.ef0);
  try {
    cm.subbands_J = TransverseLevels_J(pot, dx, g.s.mass, 3);
    cm.harmonic_ratio = (cm.subbands_J[1] - cm.subbands_J[0]) / s0.hbar_omega_y_J;
    if (std::abs(*cm.harmonic_ratio - 1.0) > 0.3)
      cm.warnings.push_back(
          "the transverse subband spacing differs from the harmonic estimate by more than 30 %: the "
          "parabolic saddle is a poor description");
  } catch (const std::exception& e) {
    cm.warnings.push_back(std::string("transverse subbands: ") + e.what());
  }
}

// Largest change of any channel's transmission between two samples (1 when only one has a model).
double jump(const ConstrictionModel::Sample& a, const ConstrictionModel::Sample& b) {
  if (a.transmission.empty() || b.transmission.empty()) return a.transmission.empty() == b.transmission.empty() ? 0 : 1;
  double j = 0.0;
  for (std::size_t c = 0; c < a.transmission.size() && c < b.transmission.size(); ++c)
    j = std::max(j, std::abs(a.transmission[c] - b.transmission[c]));
  return j;
}

// Transmission against the constriction's gate voltage (both sides together), from v_hi to v_lo:
// curve_points equally spaced samples, then halving every interval across which a transmission changes
// by more than 0.02 (down to 0.5 mV, at most 8 curve_points samples in all), so that the straight
// lines between samples follow the model's steps; each solve starts from the last.
void transmission_curve(const GapModel& g, double v_hi, double v_lo, std::optional<DensityMap>& last,
                        ConstrictionModel& cm) {
  const int points = g.s.opt.curve_points;
  auto sample = [&](double v) {
    const SaddleModel m = g.model.At(g.model.WithSides(v), &last);
    return ConstrictionModel::Sample{v, m.ok ? m.transmission : std::vector<double>{}};
  };
  for (int i = 0; i < points; ++i) cm.curve.push_back(sample(v_hi + (v_lo - v_hi) * i / (points - 1)));
  const std::size_t budget = 8 * static_cast<std::size_t>(points);
  for (bool refined = true; refined && cm.curve.size() < budget;) {
    refined = false;
    std::vector<ConstrictionModel::Sample> next{cm.curve.front()};
    for (std::size_t i = 1; i < cm.curve.size(); ++i) {
      const auto& a = cm.curve[i - 1];
      const auto& b = cm.curve[i];
      if (jump(a, b) > 0.02 && std::abs(b.voltage_V - a.voltage_V) > 1e-3 && next.size() + cm.curve.size() - i < budget) {
        next.push_back(sample(0.5 * (a.voltage_V + b.voltage_V)));
        refined = true;
      }
      next.push_back(b);
    }
    cm.curve = std::move(next);
  }
}

// The gate voltage at which each channel reaches the design (or target) transmission, with warnings
// where it is not reached or lies past the gate-voltage limit.
void voltages_for_target(const GapModel& g, ConstrictionModel& cm) {
  const Design& d = g.s.d;
  const PathOptions& opt = g.s.opt;
  for (std::size_t c = 0; c < d.channels.size(); ++c) {
    // A design value of exactly 1 or 0 is searched as 0.99 or 0.01 (where the channel starts to close);
    // the same search as `hallway check`'s gate settings (saddle_model.hpp).
    const double declared = g.k.transmission_from_gates ? 0.5 : g.k.transmission[c];
    const double target = std::clamp(opt.target_transmission.value_or(declared), 0.01, 0.99);
    const double floor = GateSearchFloor_V(d, g.index);
    const std::optional<double> at = VoltageForTransmission(g.model, c, target, 0.0, floor);
    cm.voltage_for_target_V.push_back(at);
    const std::string ch = "channel " + std::to_string(c + 1);
    if (!d.channels[c].conductance.is_integer()) continue;
    if (!at)
      cm.warnings.push_back(ch + ": the design transmission is not reached between " +
                            std::string("0 V and ") + std::to_string(floor).substr(0, 5) +
                            " V (beyond pinch-off or the sweep)");
    else if (*at < opt.gate_voltage_limit_V.value_or(d.conditions.gate_voltage_min_V))
      cm.warnings.push_back(
          ch + ": reaching the design transmission needs " + std::to_string(*at).substr(0, 6) +
          " V, beyond the gate-voltage limit " +
          std::to_string(opt.gate_voltage_limit_V.value_or(d.conditions.gate_voltage_min_V)).substr(0, 5) + " V (" +
          (opt.gate_voltage_limit_V ? "--gate-limit" : "conditions.gate_voltage_min") +
          "): a gate driven past leakage can destroy the sample");
  }
}

// The model of constriction ki: a window solve at the design voltages, its saddle and subbands, the
// transmission curve and the voltages for the target. Nothing when the constriction has no gap.
std::optional<ConstrictionModel> model_constriction(const ModelSetting& s, std::size_t ki) {
  const Design& d = s.d;
  const Constriction& k = d.constrictions[ki];
  ConstrictionModel cm;
  cm.constriction = static_cast<int>(ki);
  ElectrostaticsOptions lo;
  lo.max_memory_bytes = s.opt.max_memory_bytes;
  const ConstrictionSaddleModel model(d, ki, SaddlePotential::kSelfConsistentWindow, lo);
  if (!model.has_gap()) return std::nullopt;
  const GapModel g{s, k, ki, model};
  std::optional<DensityMap> last;
  bool converged = true;
  const SaddleModel s0 = model.At(s.design_volts, &last, &converged);
  if (!converged) {
    cm.warnings.push_back("the electrostatic solve did not converge; no constriction model");
    return cm;
  }
  cm.saddle_found = s0.ok;
  cm.saddle = s0.saddle;
  cm.barrier_J = s0.barrier_J;
  cm.hbar_omega_x_J = s0.hbar_omega_x_J;
  cm.hbar_omega_y_J = s0.hbar_omega_y_J;
  cm.transmission = s0.transmission;
  if (!s0.ok)
    cm.warnings.push_back(
        "no saddle in the self-consistent potential at the design voltages: the saddle-point model does not apply "
        "(each channel taken open or closed by the local filling at the narrowest point)");
  if (s0.ok) transverse_subbands(g, *last, s0, cm);
  const double v0 = model.design_side_voltage_V();
  const double v_hi = std::min(0.0, v0 + 0.5), v_lo = v0 - 1.0;
  transmission_curve(g, v_hi, v_lo, last, cm);
  voltages_for_target(g, cm);
  return cm;
}

}  // namespace

PathResult ComputePaths(const Design& d, const EdgeNetwork& net, const TransportResult& tr, const DensityMap* map,
                        const PathOptions& opt) {
  std::string why;
  if (!opt.IsValid(&why)) throw std::invalid_argument("PathOptions: " + why);
  PathResult r;
  PathsContext ctx{d, net, opt, DeriveWaferQuantities(d.heterostructure, d.conditions.field_T, d.conditions.temperature_K), r};
  r.velocity_model = map ? "E x B drift v = |grad U| / (e |B|) of the self-consistent potential along the edge "
                           "(docs/models.md \"Edge velocity and lengths\")"
                         : "a fixed drift velocity of " +
                               std::to_string(static_cast<int>(opt.default_velocity_m_per_s)) +
                               " m/s (docs/models.md \"Edge velocity and lengths\"; no electrostatic map)";
  measure_pieces(ctx, map);
  measure_loops(ctx);
  find_source_paths(ctx, tr);
  float_heating(ctx, tr);
  return r;
}

void ComputeConstrictionModels(const Design& d, const PathOptions& opt, PathResult* result) {
  std::string why;
  if (!opt.IsValid(&why)) throw std::invalid_argument("PathOptions: " + why);
  const WaferQuantities fig = DeriveWaferQuantities(d.heterostructure, d.conditions.field_T, d.conditions.temperature_K);
  ModelSetting s{d,
                 opt,
                 d.heterostructure.depth_m,
                 d.heterostructure.effective_mass * constants::kElectronMass_kg,
                 fig.fermi_energy_J,
                 fig.cyclotron_energy_J,
                 {}};
  for (const Gate& g : d.gates) s.design_volts.push_back(g.voltage_V);
  for (std::size_t ki = 0; ki < d.constrictions.size(); ++ki)
    if (auto cm = model_constriction(s, ki)) result->constrictions.push_back(std::move(*cm));
}

}  // namespace hallway
