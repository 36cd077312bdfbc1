// hallway/interferometer.hpp: what a Fabry–Pérot or Mach–Zehnder layout will show (`hallway fringes`).
//
// For each interferometer of a device's integer or fractional channels:
//   kind: Fabry–Pérot, a loop of the edge network closed through two (or more) constrictions; or
//     Mach–Zehnder, two edge pieces that leave the two faces of one constriction and both arrive at a
//     second one, enclosing a contact (docs/models.md "Interferometer kinds and periods");
//   periods: flux h / (e A) (h / (e* A) for a fractional channel; its statistical phase is not
//     computed), the field period, and every gate's period Phi_0 / (B dA/dV) with dA/dV by central
//     differences of the device's electrostatics (self-consistent, warm-started from the device's
//     density; or the bare estimate), the gate voltages moved by InterferometerOptions::gate_step_V;
//   visibility: the thermal damping of the first harmonic, X / sinh X with X = pi k_B T tau / hbar and
//     tau the round-trip time (Fabry–Pérot) or the arms' difference of flight times (Mach–Zehnder;
//     X = 2 pi^2 k_B T dL / (h v) at equal velocities; Chung, Samuelsson & Büttiker, Phys. Rev. B 72,
//     125320 (2005)), and how it changes with each gate through the round trip's length and velocity;
//   regime: the interior and edge coupling energies K_I, K_L, K_IL of Halperin, Stern, Neder & Rosenow,
//     Phys. Rev. B 83, 155440 (2011), from the inverse capacitance matrix of a compressible interior and
//     an edge strip in the image kernel of the pinned surface (docs/models.md "Coupling energies of a
//     cavity"), their ratio K_IL / K_I, the regime it implies and the slope of constant-phase lines;
//   a map of G(Phi, V_plunger) and of the excess noise at the amplifier contact, from the coherent
//     scattering matrix averaged over energy at the design temperature (the same code path as `noise
//     --phase`; docs/models.md "Thermal average at a fixed loop phase").
// Every number is an estimate of the models named; gate voltages are the design's, moved by small steps.
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "hallway/device.hpp"
#include "hallway/geometry/polygon.hpp"

namespace hallway {

enum class InterferometerKind { kFabryPerot, kMachZehnder };
std::string ToString(InterferometerKind k);  // "fabry-perot", "mach-zehnder"
std::optional<InterferometerKind> InterferometerKindFromString(const std::string& s);

// Halperin et al. (2011): Aharonov–Bohm (K_IL / K_I small), Coulomb-dominated (close to 1), between.
enum class InterferenceRegime { kAharonovBohm, kIntermediate, kCoulombDominated };
std::string ToString(InterferenceRegime r);  // "aharonov-bohm", "intermediate", "coulomb-dominated"
std::optional<InterferenceRegime> InterferenceRegimeFromString(const std::string& s);

struct InterferometerOptions {
  // Step of each gate voltage in the central differences dA/dV (V, > 0 and <= 0.1): small against the
  // voltage over which the edge moves by a cell, large enough that the area change is resolved.
  double gate_step_V = 0.01;
  // At most this many gates are differentiated (two electrostatic solves each), in design order.
  int max_gates = 8;
  // Width of the edge strip of the interfering channel in the coupling model (m); 0: the 2DEG depth d.
  double edge_strip_width_m = 0.0;
  // Cells across the loop's bounding box in the quadrature of the coupling integrals (>= 8, <= 200).
  int coupling_cells = 48;
  // K_IL / K_I at or below which the regime is Aharonov–Bohm, at or above which Coulomb-dominated
  // (a choice of ours; docs/models.md "Coupling energies of a cavity").
  double ab_ratio_limit = 0.2;
  double cd_ratio_limit = 0.8;
  // The map: flux and plunger points, and the spans in periods (flux h/eA, plunger Phi_0 / (B dA/dV)).
  int flux_points = 25;
  int plunger_points = 13;
  double flux_span_periods = 2.0;
  double plunger_span_periods = 2.0;
  // Gate swept in the map; empty: the gate with the shortest period that forms no constriction.
  std::string plunger;
  bool map = true;  // compute the map (an energy-averaged scattering solve per point)
  bool IsValid(std::string* why) const;
};

// One gate's effect on an interferometer, by central differences at +-gate_step_V.
struct GateEffect {
  int gate = 0;
  bool resolved = false;             // the loop was found at both voltages and its area moved
  double area_per_volt_m2_per_V = 0.0;   // dA/dV
  double period_V = 0.0;             // Phi_0 / (|B| |dA/dV|) for an electron (h / (e* ...) fractional)
  double length_per_volt_m_per_V = 0.0;  // d(round trip or arm difference)/dV
  double time_per_volt_s_per_V = 0.0;    // d tau / dV (the visibility's argument)
  double visibility_low = 0.0, visibility_high = 0.0;  // at V - step and V + step
  // The one-sided slopes (A(V) - A(V - step)) / step and (A(V + step) - A(V)) / step agree within 30 %;
  // false: A(V) bends or jumps within the step (an edge moving onto another gate), the period is uncertain.
  bool linear = true;
  std::string note;  // why unresolved, or what moved the visibility
};

// The coupling energies of Halperin et al. (2011) for a cavity.
struct CavityCoupling {
  double interior_J = 0.0;  // K_I = e^2 P_II
  double edge_J = 0.0;      // K_L = e^2 P_LL
  double coupling_J = 0.0;  // K_IL = e^2 P_IL
  double ratio = 0.0;       // K_IL / K_I
  InterferenceRegime regime = InterferenceRegime::kAharonovBohm;
  double edge_strip_width_m = 0.0;
  double interior_area_m2 = 0.0, edge_area_m2 = 0.0;
  // The same ratio with the screening plane at half the depth, and for the loop scaled by 2 (area x 4).
  double ratio_half_depth = 0.0, ratio_double_size = 0.0;
  double interior_double_size_J = 0.0;  // K_I of the loop scaled by 2
};

struct Interferometer {
  InterferometerKind kind = InterferometerKind::kFabryPerot;
  int channel = 0;                  // the interfering channel
  std::vector<int> constrictions;   // Fabry–Pérot: those of the loop; Mach–Zehnder: splitter, then merger
  std::vector<int> arms;            // edge pieces: the loop (FP), or the two arms (MZ)
  std::vector<int> contacts_inside; // contacts enclosed by the loop
  std::vector<int> passing_channels;    // fully transmitted at every constriction of the loop
  std::vector<int> reflected_channels;  // fully reflected at every constriction (encircle the cavity)
  bool fractional = false;
  double charge_e = 1.0;
  double area_m2 = 0.0;
  double length_m = 0.0;       // round trip (FP) or |L1 - L2| (MZ)
  double time_s = 0.0;         // round-trip time (FP) or |tau1 - tau2| (MZ)
  double velocity_m_per_s = 0.0;  // length / time (MZ: mean over the arms)
  double flux_period_T = 0.0;      // h / (e A)
  double quasiparticle_flux_period_T = 0.0;  // h / (e* A)
  // Coulomb-dominated field period h / (e nu_in A), nu_in the filling of the channels that pass every
  // constriction (Halperin et al. 2011); nullopt when nu_in = 0 (the CD lines do not move with B).
  std::optional<double> cd_field_period_T;
  double inner_filling = 0.0;  // nu_in
  double thermal_argument = 0.0;   // X = pi k_B T tau / hbar
  double visibility = 1.0;         // X / sinh X
  std::vector<GateEffect> gates;
  std::optional<CavityCoupling> coupling;  // Fabry–Pérot only
  // Slope dV/dB (V/T) of constant-phase lines in the (B, V_plunger) plane for the map's plunger:
  // Aharonov–Bohm -A / (B dA/dV) and Coulomb-dominated +nu_in A / (Phi_0 n dA/dV) (nu_in: fully
  // transmitted inner channels' filling, n the interior density), Halperin et al. (2011).
  std::optional<double> ab_slope_V_per_T, cd_slope_V_per_T;
  std::vector<std::string> notes;  // what is not computed, and why
};

// G(Phi, V) and the excess noise at the amplifier contact on a grid (row-major: flux fastest).
struct InterferenceMap {
  int interferometer = 0;
  int plunger = 0;                    // gate index
  int source = -1, amplifier = -1;    // contacts
  std::vector<double> flux_quanta;    // flux added to the loop, in h/e
  std::vector<double> plunger_V;      // absolute gate voltages
  std::vector<double> conductance_S;  // |dI_amplifier / dV_source| with floating contacts eliminated
  std::vector<double> excess_A2_per_Hz;
  int energy_points = 0;  // the most energy nodes any point used
};

struct InterferometerResult {
  std::vector<Interferometer> interferometers;
  std::optional<InterferenceMap> map;
  std::string map_not_computed;   // why there is no map (empty when there is one)
  std::string gate_model;         // which electrostatics gave dA/dV
  int electrostatic_solves = 0;
  double seconds = 0.0;
  std::vector<Finding> findings;
};

// Everything above for a usable device; `device_options` are those the device was built with (their
// electrostatics and bare estimate are used for the gate differences). std::invalid_argument for
// invalid options.
InterferometerResult AnalyseInterferometers(const Device& device, const DeviceOptions& device_options,
                                            const InterferometerOptions& options = {});

// The interferometers of an edge network with its path metrics (ComputePaths): kinds, arms, channels,
// flux and field periods and thermal visibility, without the gate differences, the coupling energies or
// the map (which need the device).
std::vector<Interferometer> FindInterferometers(const Design& design, const EdgeNetwork& network,
                                                const PathResult& paths);

// The closed Airy form of two constrictions of transmissions t1, t2 in series with round-trip phase
// theta: T = t1 t2 / (1 + r1 r2 - 2 sqrt(r1 r2) cos theta), r = 1 - t (Datta, Electronic Transport in
// Mesoscopic Systems, Cambridge 1995, ch. 3; docs/models.md "Thermal average at a fixed loop phase").
double FabryPerotTransmission(double t1, double t2, double theta_rad);
// X / sinh X with X = pi k_B T tau / hbar (1 at tau = 0).
double ThermalDamping(double time_s, double temperature_K);
// K_I, K_L, K_IL of an interior (the loop shrunk by the strip width w) and its edge strip, each with a
// uniform charge, in the potential of a charge at depth d below a pinned surface,
// (1 / 4 pi eps) [1/r - 1/sqrt(r^2 + 4 d^2)] (docs/models.md "Coupling energies of a cavity").
CavityCoupling CavityCouplingOf(const geometry::Polygon& loop, double strip_width_m, double depth_m,
                                double permittivity, int cells, double ab_limit, double cd_limit);

}  // namespace hallway
