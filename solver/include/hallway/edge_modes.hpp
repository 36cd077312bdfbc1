// hallway/edge_modes.hpp: the charge and neutral modes of the two co-propagating channels at bulk filling
// 2, and the delay between the two pulses an injected electron splits into (docs/models.md "Charge and
// neutral modes at filling 2").
//
// Two chiral channels of conductance e^2/h with line densities rho_i obey
//   d rho_i / dt + d/dx (sum_j V_ij rho_j) = 0,   V_ij = v_d delta_ij + (e^2 / h) U_ij,
// where U_ij is the potential per unit line charge (Landauer-Büttiker: a chiral channel carries
// (e/h) mu). Our capacitance model: both channels are line charges of width w (the magnetic length)
// at lateral separation a in the 2DEG plane, a screening plane (the pinned surface and the gates) at
// the depth d above them, so (method of images, e.g. Jackson, Classical Electrodynamics, 3rd ed. 1999)
//   U(r) = ln(sqrt(r^2 + 4 d^2) / r) / (2 pi eps_r eps_0),   r_11 = r_22 = w, r_12 = a,
// and both bare velocities equal the E x B drift v_d of the outer channel (a simplification: with equal
// bare velocities the modes are exactly (rho_1 +- rho_2)/sqrt2, the strong-coupling limit):
//   v_c = v_d + u_11 + u_12,   v_n = v_d + u_11 - u_12,   u_ij = (e^2/h) U_ij.
// The mode picture for filling 2 follows Levkivskyi & Sukhorukov, Phys. Rev. B 78, 045322 (2008), from
// memory; the numbers are an estimate: a design can give both velocities (`conditions.charge_mode_velocity`,
// `neutral_mode_velocity`) when they are known.
//
// An electron injected into the outer channel splits into two pulses of charge e/2 on it, separated after
// a length L by delta_t = L (1/v_n - 1/v_c). The pulses overlap within the electron's own duration
// hbar / (e V) when e V delta_t / hbar << 1 (the non-interacting limit); they arrive as two separate
// half charges when it is >> 1 (Idrisov, Levkivskyi, Sukhorukov & Schmidt, Phys. Rev. Lett. 129, 026802
// (2022); measured by Glidic et al., Nat. Commun. (2024), doi:10.1038/s41467-024-50820-0).
#pragma once

#include <optional>
#include <string>

#include "hallway/design.hpp"
#include "hallway/network.hpp"

namespace hallway {

struct EdgeModes {
  double charge_velocity_m_per_s = 0.0;
  double neutral_velocity_m_per_s = 0.0;
  bool from_design = false;  // true: the design's velocities; false: the capacitance model
  // The capacitance model's inputs (zero when from the design).
  double drift_velocity_m_per_s = 0.0;
  double separation_m = 0.0;  // between the two channels
  double screening_m = 0.0;   // depth of the screening plane above the channels
  double width_m = 0.0;       // of each channel (the magnetic length)
};

// The capacitance model above; std::invalid_argument for non-positive inputs.
EdgeModes CapacitanceModelModes(double drift_velocity_m_per_s, double separation_m, double screening_m,
                                double width_m, double relative_permittivity);

// L (1 / v_n - 1 / v_c).
double PulseDelay_s(double length_m, const EdgeModes& modes);

// Where the two half pulses stand against the other times of a collider input.
struct PulseRegime {
  double delay_s = 0.0;
  double bias_ratio = 0.0;       // e V delta_t / hbar, V the bias of the source that feeds the input
  double thermal_ratio = 0.0;    // k_B T delta_t / hbar
  double injection_ratio = 0.0;  // (I / e) delta_t: the delay against the time between injected electrons
};
PulseRegime PulseRegimeOf(double delay_s, double source_bias_V, double temperature_K, double stream_A);

// Below this bias ratio the pulses overlap: the non-interacting (exact scattering) noise holds (our
// judgement: the delay is under a third of the electron's own duration hbar / eV). Above
// kSeparatePulses they arrive as two separate half charges; in between, partly separated.
inline constexpr double kOverlappingPulses = 0.3;
inline constexpr double kSeparatePulses = 3.0;
// "the pulses overlap: ...", "partly separated", "separate": the verdict every output prints.
std::string DescribePulses(const PulseRegime& regime);

// The modes along edge piece `piece` of the network: the design's velocities, or the capacitance model
// with the piece's drift velocity and the median distance from the piece to the inner channel. Nullopt
// unless the bulk filling is 2, the piece runs on the outer channel and the inner channel runs beside
// it (within 1 um) along most of its length.
std::optional<EdgeModes> ModesAlongPiece(const Design& design, const EdgeNetwork& network, int piece,
                                         double drift_velocity_m_per_s);

// "charge mode 1.9e+05 m/s, neutral mode 6.4e+04 m/s (capacitance model: ...)": one line for every output.
std::string DescribeModes(const EdgeModes& modes);

}  // namespace hallway
