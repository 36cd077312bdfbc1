// hallway/paths.hpp: the design metrics of every edge path and constriction (`hallway paths`).
//
// Edge pieces: length along the edge, mean E x B drift velocity v = E / |B| from the local confining
// field of the self-consistent potential (docs/models.md, Edge velocity and lengths; a fixed velocity
// when no map is given), time of flight, thermal lengths hbar v / k_B T and hbar v / (2 pi k_B T)
// (both conventions, labelled).
// Loops: enclosed area, Aharonov-Bohm periods h/(eA) and h/(e*A), the charging energy e^2/2C of the
// enclosed island (disk C = 8 eps_eff eps_0 r, eps_eff = (eps_r + 1)/2, or the plate C = eps A / d
// when a gate covers most of it; docs/models.md, Aharonov-Bohm period and charging) against k_B T, and
// the thermal visibility factor X / sinh X, X = pi k_B T dL / (hbar v), for the round trip dL = loop
// length (docs/models.md, Edge velocity and lengths).
// Source constriction -> collider/splitter: the distance along the edge with its time of flight and
// thermal length, against a relaxation length that is a rule of thumb (common practice: energy
// relaxation by neutral modes or edge reconstruction over a few micrometres; no published distance law
// for the model in use). A path that is an arm of an interferometer loop is compared instead with the
// thermal length, through the visibility factor X / sinh X of its path difference (docs/models.md,
// Edge velocity and lengths).
// Floating contacts: Joule power (e^2/2h) sum g (mu_in - V_f)^2 and the electron temperature from
// P = N_out (pi^2 k_B^2 / 6h)(T_f^2 - T^2), phonons neglected (docs/models.md, Floating contacts;
// Jezouin et al., Science 342, 601 (2013)).
// Constrictions: saddle point of the self-consistent potential energy, curvatures along and across,
// transverse subbands by a sparse eigensolver (Spectra) against the harmonic spacing, and the
// saddle-point transmission of each integer channel in field (Büttiker, Phys. Rev. B 41, 7906 (1990);
// docs/models.md, Saddle-point transmission) as a function of the constriction's gate voltage.
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "hallway/design.hpp"
#include "hallway/edge_modes.hpp"
#include "hallway/electrostatics.hpp"
#include "hallway/finding.hpp"
#include "hallway/network.hpp"
#include "hallway/transport.hpp"

namespace hallway {

struct PathOptions {
  // Used without a density map: within the 1e4-1e5 m/s of GaAs edges (docs/models.md, Edge velocity and
  // lengths; from memory).
  double default_velocity_m_per_s = 2e4;
  // Rule of thumb (common practice, not a published distance law): a source-to-splitter distance beyond
  // which the non-equilibrium distribution sent out by a source constriction is taken to have relaxed,
  // by energy exchange with neutral modes or a reconstructed edge over a few micrometres. Default
  // (RelaxationRuleOfThumb_m): 1 um for integer fillings >= 2 (a conservative reading of le Sueur et
  // al., Phys. Rev. Lett. 105, 056803 (2010)), 3 um otherwise; 0: that default. Never applied to an arm
  // of an interferometer loop (docs/models.md, Edge velocity and lengths).
  double relaxation_length_m = 0.0;
  // Most negative gate voltage to suggest; nothing: the design's conditions.gate_voltage_min_V (design.hpp).
  std::optional<double> gate_voltage_limit_V;
  int curve_points = 25;                      // transmission-versus-voltage samples per constriction
  std::optional<double> target_transmission;  // instead of each constriction's design transmission
  std::size_t max_memory_bytes = kDefaultMaxMemoryBytes;  // of each constriction's electrostatic window
  bool IsValid(std::string* why) const;
};

struct PieceMetrics {
  int piece = 0;
  double length_m = 0.0;
  double velocity_m_per_s = 0.0;  // length / time of flight
  double time_of_flight_s = 0.0;
  double thermal_length_m = 0.0;      // hbar v / k_B T
  double thermal_length_2pi_m = 0.0;  // hbar v / (2 pi k_B T)
  bool velocity_from_map = false;
};

struct LoopMetrics {
  int channel = 0;
  std::vector<int> pieces;
  std::vector<int> constrictions;
  bool closed_edge = false;  // an edge around an island that touches nothing
  double length_m = 0.0;
  double area_m2 = 0.0;
  double ab_period_T = 0.0;                // h / (e A)
  double ab_period_quasiparticle_T = 0.0;  // h / (e* A)
  double charging_energy_J = 0.0;
  bool gated_island = false;
  double visibility = 0.0;  // X / sinh X for dL = length
};

struct SourcePath {
  int channel = 0;
  int source = 0, target = 0;  // constrictions
  int piece = 0;               // the edge piece (PathResult::pieces)
  double distance_m = 0.0;
  double time_of_flight_s = 0.0;     // of the piece (PieceMetrics)
  double thermal_length_m = 0.0;     // hbar v / k_B T of the piece (PieceMetrics)
  double relaxation_length_m = 0.0;  // the rule of thumb compared with (PathResult::relaxation_length_m)
  bool beyond_relaxation = false;    // distance > relaxation length; never on an interferometer arm
  // Interferometer arm: the loop (PathResult::loops) the piece lies on, or whose constrictions it joins.
  std::optional<int> loop;
  // Arm only: the path difference of the interference term (the loop's length when the piece lies on
  // the loop, else the arm's own length), the thermal length hbar v / k_B T at the velocity over that
  // path, and X / sinh X (ThermalVisibility) for it.
  double path_difference_m = 0.0;
  double path_thermal_length_m = 0.0;
  double visibility = 1.0;
  bool beyond_thermal_length = false;  // arm: path difference > path_thermal_length_m
  // Filling 2, outer channel beside the inner one: the charge and neutral modes along the path and where
  // the two half pulses of an injected electron stand at the target (edge_modes.hpp; docs/models.md
  // "Charge and neutral modes at filling 2"), with the bias of the source's hot input and the stream on
  // the path.
  std::optional<EdgeModes> modes;
  std::optional<PulseRegime> pulses;
};

struct FloatHeating {
  int contact = 0;
  double power_W = 0.0;
  double temperature_K = 0.0;
};

struct ConstrictionModel {
  int constriction = 0;
  bool saddle_found = false;
  geometry::Point saddle;
  double barrier_J = 0.0;                // V0 - E_F at the saddle (negative: open)
  double hbar_omega_x_J = 0.0;           // along the current (barrier)
  double hbar_omega_y_J = 0.0;           // across (confinement)
  std::vector<double> subbands_J;        // lowest transverse levels from the sparse eigensolver
  std::optional<double> harmonic_ratio;  // (E_1 - E_0) / hbar omega_y
  std::vector<double> transmission;      // per integer channel at the design voltage
  struct Sample {
    double voltage_V = 0.0;
    std::vector<double> transmission;  // per channel; empty when the saddle model fails there
  };
  std::vector<Sample> curve;
  std::vector<std::optional<double>> voltage_for_target_V;  // per channel: where t reaches the design value
  std::vector<std::string> warnings;
};

struct PathResult {
  std::vector<PieceMetrics> pieces;
  std::vector<LoopMetrics> loops;
  std::vector<SourcePath> source_paths;
  std::vector<FloatHeating> floats;
  std::vector<ConstrictionModel> constrictions;
  std::string velocity_model;
  double relaxation_length_m = 0.0;  // the rule of thumb in use (PathOptions::relaxation_length_m)
  std::string relaxation_rule;       // what it is and why (printed by every output)
  std::vector<Finding> findings;
};

// Saddle-point transmission of subband n with spin sign s (+1, -1) at E - V0 = energy_J (Büttiker 1990).
double SaddleTransmission(double energy_J, double hbar_omega_x_J, double hbar_omega_y_J, double hbar_omega_c_J, int n);
// The default relaxation length, a rule of thumb (common practice; PathOptions::relaxation_length_m):
// 1 um at integer fillings >= 2, 3 um otherwise.
double RelaxationRuleOfThumb_m(const Fraction& filling);
// X / sinh X with X = pi k_B T dL / (hbar v) (docs/models.md, Edge velocity and lengths).
double ThermalVisibility(double path_difference_m, double velocity_m_per_s, double temperature_K);
// Self-capacitance of an island of area A: the plate eps_r eps_0 A / d under a gate, otherwise the
// disk 8 eps_eff eps_0 r with r = sqrt(A / pi), eps_eff = (eps_r + 1) / 2 (docs/models.md, Aharonov-Bohm
// period and charging).
double IslandCapacitance_F(double area_m2, bool gated, double permittivity, double depth_m);

// Spin-resolved channel k (outermost first) of the same saddle, with the spin-resolved levels at
// E_2 (k + 1/2) / 2: where the spin-degenerate Thomas-Fermi density of states puts them, so that a
// channel passes when the local filling at the saddle exceeds k + 1/2, as in the channel boundaries of
// the edge network. (A choice of ours: the bare Zeeman splitting |g*| mu_B B would put both spins of
// a Landau level at its centre, and exchange enhancement is not modelled.)
double SpinResolvedSaddleTransmission(double energy_J, double hbar_omega_x_J, double hbar_omega_y_J,
                                      double hbar_omega_c_J, int k);
// E_1 and E_2 of Büttiker's saddle (docs/models.md, Saddle-point transmission).
void SaddleEnergies(double hbar_omega_x_J, double hbar_omega_y_J, double hbar_omega_c_J, double* e1_J, double* e2_J);

// The edge metrics (pieces, loops, source paths, floating contacts). `map` may be null.
PathResult ComputePaths(const Design& design, const EdgeNetwork& network, const TransportResult& transport,
                        const DensityMap* map, const PathOptions& options = {});
// Adds the constriction models (electrostatic solves on local windows around each gap).
void ComputeConstrictionModels(const Design& design, const PathOptions& options, PathResult* result);

}  // namespace hallway

namespace hallway {
// Lowest `count` levels of -hbar^2/2m d^2/dx^2 + U(x) for U sampled at spacing `dx_m` (Dirichlet ends),
// by shift-invert Lanczos on the sparse tridiagonal matrix (Spectra).
std::vector<double> TransverseLevels_J(const std::vector<double>& potential_J, double dx_m, double mass_kg, int count);
}  // namespace hallway
