// hallway/noise.hpp: zero-frequency current noise at every contact and the signal-to-noise of the
// planned measurement (docs/models.md: Coherent noise of integer channels, Fractional constriction,
// Floating contacts, Anyon collider, Amplifier chain). One-sided spectral densities: Poisson
// noise is 2eI, Johnson–Nyquist noise 4 k_B T G; "excess" is the total minus the same quantity at
// zero bias and the same temperature.
//
// Integer channels: the coherent scattering matrix of the edge network (a unitary 2x2
//   [[sqrt(1-t), i sqrt(t)], [i sqrt(t), sqrt(1-t)]] per constriction and channel, a phase per edge
//   piece) in Büttiker's multi-terminal formula with the energy integrals in closed form
//     S_ab = (e^2/h) sum_cd Tr[A_cd(a) A_dc(b)] F_cd,  A_cd(a) = d_ac d_ad 1 - s_ac^+ s_ad,
//     F_cd = e V_cd coth(e V_cd / 2 k_B T),  F_cc = 2 k_B T
//   (Büttiker, Phys. Rev. B 46, 12485 (1992); Blanter & Büttiker, Phys. Rep. 336, 1 (2000)).
//   Networks with a loop that encloses area are interferometers: the result is averaged over the
//   loop phases unless a phase is fixed.
// Fractional channels: each constriction with 0 < t < 1 is an independent noise source
//     S_Q = 2 e* |V_Q| g (e^2/h) t (1 - t) [coth(e*|V_Q| / 2 k_B T) - 2 k_B T / (e*|V_Q|)]
//   with V_Q the potential difference of its two incoming edges, e* the charge of its regime
//   (Kane & Fisher, Phys. Rev. Lett. 72, 724 (1994); docs/models.md, Fractional constriction), carried
//   to the contacts by the incoherent network.
// Floating contacts and current sources hold dI = 0 at low frequency (docs/models.md, Floating contacts):
//   S' = L S L^T, L = [1, -G_AF G_FF^-1]. Their heating by the bias is not included.
// Colliders: docs/models.md, Anyon collider (collider.hpp).
// Amplifiers: docs/models.md, Amplifier chain (Dicke radiometer formula for the averaging time).
// Each model is a unit in noise.cpp that returns its contribution, and one row of the table of models
// there (its tag NoiseModel, its docs/models.md section, when it runs: a source of noise with every
// contact voltage fixed, the circuit that turns that into the measured noise, or a readout of it);
// NoiseResult::models says which models produced the numbers.
#pragma once

#include <array>
#include <optional>
#include <string>
#include <vector>

#include "hallway/design.hpp"
#include "hallway/edge_modes.hpp"
#include "hallway/finding.hpp"
#include "hallway/network.hpp"
#include "hallway/transport.hpp"

namespace hallway {

// Which collider model fills the contact matrix (both are always computed and printed). An integer
// channel's collider is in the contact matrix through the exact scattering of non-interacting electrons
// (kExactScattering; docs/models.md "Coherent noise of integer channels").
enum class ColliderModel { kZeroTemperature, kFiniteTemperature, kExactScattering };
std::string ToString(ColliderModel m);
std::optional<ColliderModel> ColliderModelFromString(const std::string& s);

struct NoiseOptions {
  int phase_samples = 256;                 // phase configurations averaged when the network has loops
  std::optional<double> loop_phase_rad;    // fix the phase of every loop instead of averaging
  // With loop_phase_rad: the time of flight tau of every edge piece (EdgeNetwork::pieces order), which
  // makes each piece's phase energy dependent, E tau / hbar, so that the coherent scattering is averaged
  // over energy at the design temperature (docs/models.md "Thermal average at a fixed loop phase").
  // Empty: each piece's length over PathOptions::default_velocity_m_per_s (Device::noise fills it from
  // the edge velocities of its own electrostatics).
  std::vector<double> piece_time_of_flight_s;
  // Nodes of that energy average; 0: chosen from k_B T, the bias window and the slowest loop (a step
  // of at most k_B T / 2 and 0.3 hbar / tau_loop, over the bias window widened by 36 k_B T each side).
  int energy_points = 0;
  double target_sigmas = 10.0;             // signal-to-noise asked of every correlation
  double collider_fano_uncertainty = 0.1;  // +- on P
  // A collider input is dilute when its stream carries at most this fraction of the bias of the hot
  // input of the constriction that feeds it (common practice: 0.1).
  double dilution_limit = 0.1;
  double weak_tunnelling_limit = 0.1;  // collider tunnelling probability counted as weak (common practice)
  // Default zero-temperature: the form published comparisons with measurements use; measured values at
  // zeta of about 0.1 have been reported close to it (docs/models.md "Anyon collider").
  ColliderModel collider_model = ColliderModel::kZeroTemperature;
  bool IsValid(std::string* why) const;
};

// A closed path of coherent propagation between constrictions (an interferometer loop).
struct CoherentLoop {
  int channel = 0;
  std::vector<int> pieces;         // EdgeNetwork::pieces in the loop
  std::vector<int> constrictions;  // constrictions it passes
  double length_m = 0.0;
  double enclosed_area_m2 = 0.0;
};

struct AmplifierNoise {
  int contact = 0;
  double sample_resistance_Ohm = 0.0;     // what the sample presents at the contact
  double effective_resistance_Ohm = 0.0;  // sample in parallel with the load
  double excess_current_A2_per_Hz = 0.0;  // S_exc at the contact
  double signal_V2_per_Hz = 0.0;          // R_eff^2 S_exc
  double floor_V2_per_Hz = 0.0;           // e_n^2 + R_eff^2 i_n^2 + 4 k_B R_eff^2 (T_s/R_s + T_L/R_L)
  double floor_current_A2_per_Hz = 0.0;   // floor / R_eff^2
  double snr = 0.0;                       // with the design's bandwidth and averaging time
  // With reference subtraction: the length of each of the two averages.
  std::optional<double> time_for_target_s;
  // T_L used for the load's Johnson noise, and whether it is the design temperature (no
  // `load_temperature` given).
  double load_temperature_K = 0.0;
  bool load_temperature_from_design = true;
  bool reference_subtraction = false;  // on/off measurement: SNR / sqrt(2), time x 2
};

struct CrossNoise {
  int first = 0, second = 0;  // amplifier contacts
  double excess_current_A2_per_Hz = 0.0;
  double signal_V2_per_Hz = 0.0;
  double snr = 0.0;
  std::optional<double> time_for_target_s;
};

struct ColliderPrediction {
  int constriction = 0;
  int channel = 0;
  // What feeds each input (input 1 arrives on face 0, input 2 on face 1): the constriction whose
  // output it is (-1 when the edge comes straight from a contact, then `contact_first/second`).
  int source_first = -1, source_second = -1;
  int contact_first = -1, contact_second = -1;
  // Signed excess currents that arrive at the two inputs (above the grounds' potential), from the
  // transport solution, and the fraction of the feeding constriction's hot input that each carries.
  double stream_first_A = 0.0, stream_second_A = 0.0;
  double dilution_first = 0.0, dilution_second = 0.0;
  bool one_beam = false;  // one input at equilibrium (no stream), the other a dilute stream
  double i_plus_A = 0.0, i_minus_A = 0.0;
  double tunnelling = 0.0;  // of the collider, 1 - t in the weak regime
  double charge_e = 0.0;
  double exchange_pi = 0.0, scaling = 0.0;
  std::optional<double> fano;                     // P(I-/I+) at T = 0
  std::optional<double> fano_finite_temperature;  // P at the design temperature (thermal edge correlators)
  // 2 P e* |I+| T (1 - T) with the P of NoiseOptions::collider_model: the value in the contact matrix.
  std::optional<double> s34_A2_per_Hz;
  bool in_contact_matrix = false;  // false: the independent partition model is used there instead
  // The form whose P fills s34_A2_per_Hz and the matrix: NoiseOptions::collider_model, or finite
  // temperature for one beam (its published effect needs thermal excitations).
  ColliderModel model_in_matrix = ColliderModel::kZeroTemperature;
  std::string not_computed;                   // why P is not computed or not used (empty when it is)
  int output_first = -1, output_second = -1;  // contacts that receive most of each output
  bool dilute = false, weak_tunnelling = false, exchange_below_half_pi = false;
  double rate_over_temperature = 0.0;     // zeta (docs/models.md, Anyon collider)
  std::optional<double> time_for_fano_s;  // averaging for P to +- NoiseOptions::collider_fano_uncertainty
  // The collider's block in the contact matrix (model of NoiseOptions::collider_model), A^2/Hz:
  // S_34 = s1t - s2t - stt (with I3 = I1 - I_T, I4 = I2 + I_T), S_1T, S_2T and the excess S_TT.
  struct Block {
    double s34_A2_per_Hz = 0.0, s1t_A2_per_Hz = 0.0, s2t_A2_per_Hz = 0.0, stt_A2_per_Hz = 0.0;
  } shape;
  std::vector<std::string> caveats;
  // Integer channel: P is read from the drains' cross-correlation of the exact scattering (the contact
  // matrix), S_34 / (2 e |I+| T (1 - T)), at the design temperature (fano and fano_finite_temperature hold
  // the same number). At filling 2, per input (first, second): the charge and neutral modes along the path
  // from its source and where the two half pulses stand at the collider (edge_modes.hpp; docs/models.md
  // "Charge and neutral modes at filling 2").
  bool integer = false;
  // Filling 2: the part of P the fractionalized pulses add, sum_i (I_i / I+) P(X_i) (fractionalized_collider.hpp;
  // docs/models.md "Collider at filling 2: fractionalized pulses"), included in fano and in the matrix.
  std::optional<double> fano_pulses;
  std::array<std::optional<EdgeModes>, 2> modes;
  std::array<std::optional<PulseRegime>, 2> pulses;
  // The same layout with both source-to-collider paths scaled to a mean distance (docs/models.md "Distance
  // from the sources"): P and the drains' cross-correlation SNR there, so a designer reads off the distance
  // to draw. Empty when P is not computed.
  struct DistancePoint {
    double distance_m = 0.0;    // mean of the two inputs' paths
    bool design = false;        // the design's own distance
    std::optional<double> fano;       // the P of the contact matrix's model; nullopt: not predicted there
    std::optional<double> cross_excess_A2_per_Hz;  // the drains' excess cross-correlation S_34 there
    std::optional<double> cross_snr;  // of the drains' cross-correlation (both outputs on amplifiers)
    std::optional<double> delay_s;    // filling 2: the larger of the inputs' pulse delays
    std::optional<double> bias_ratio;  // filling 2: e V dt / hbar for that delay
    bool beyond_relaxation_rule = false;  // fractional fillings: beyond the rule of thumb
    std::string why_not;                  // why P is not predicted (empty when it is)
  };
  std::vector<DistancePoint> distance_curve;
};

// The noise models SolveNoise composes, one tag each (docs/models.md gives each its section).
enum class NoiseModel {
  kCoherentInteger,      // integer channels: coherent scattering matrix in Büttiker's formula
  kFractionalPartition,  // fractional channels: partition noise at each constriction, collider blocks
  kFloatingContacts,     // floating contacts and current sources hold dI = 0
  kAmplifierChain,       // what each amplifier measures, and the amplifiers' cross-correlations
  kIntegerCollider,      // integer channels' colliders: P from the exact scattering, pulse delays at filling 2
  kCollider,             // colliders' generalised Fano factor P and the time to measure it
};
std::string ToString(NoiseModel m);  // "coherent-integer", "fractional-partition", ...

// One row of the table of noise models (noise.cpp holds the table with each model's unit).
struct NoiseModelInfo {
  NoiseModel model;
  const char* name;          // ToString(model)
  const char* docs_section;  // the section of docs/models.md that states the model
};
// Every noise model, in the order SolveNoise applies them.
const std::vector<NoiseModelInfo>& NoiseModels();

// A model that produced numbers of a NoiseResult, and how.
struct NoiseModelUse {
  NoiseModel model = NoiseModel::kCoherentInteger;
  std::string text;          // what it computed, with its assumptions and published source
  std::string docs_section;  // the docs/models.md section
};

struct NoiseResult {
  double field_T = 0.0;
  Matrix total_A2_per_Hz, excess_A2_per_Hz, equilibrium_A2_per_Hz;  // contact order, after floats
  std::vector<CoherentLoop> loops;
  bool phase_averaged = false;
  int phase_samples = 1;
  // Nodes of the energy average at a fixed loop phase (NoiseOptions::piece_time_of_flight_s); 0 when the
  // energy integrals are taken in closed form (no fixed phase, or no loop).
  int energy_points = 0;
  // The integer channels' linear-response conductance of the coherent scattering matrix, contact order,
  // before floating contacts are eliminated, averaged as the noise is (over the loop phases, or over
  // energy with -df/dE at a fixed loop phase): G_ab = (e^2/h) <M_a d_ab - sum |s_ab|^2>. Empty when no
  // integer channel is fed by a contact.
  Matrix coherent_conductance_S;
  double unitarity_error = 0.0;             // max |s^+ s - 1| over channels and phases
  double equilibrium_identity_error = 0.0;  // max |S_eq - 2 k_B T (G + G^T)| / max |2 k_B T G| (integer part)
  std::vector<AmplifierNoise> amplifiers;
  std::vector<CrossNoise> cross;
  std::vector<ColliderPrediction> colliders;
  std::vector<NoiseModelUse> models;  // which model produced which numbers, in the order they ran
  std::vector<Finding> findings;
};

NoiseResult SolveNoise(const Design& design, const EdgeNetwork& network, const TransportResult& transport,
                       const NoiseOptions& options = {});

// The texts of result.models, in order (what a command lists as the models used).
std::vector<std::string> ModelTexts(const NoiseResult& result);

// The measurement chain at one amplifier contact (docs/models.md, Amplifier chain): the sample
// conductance gs seen there in parallel with the load, R = R_s || R_L,
// S_V = R^2 S_exc + e_n^2 + R^2 i_n^2 + J, SNR = S_sig / S_tot sqrt(df t), and the averaging time for
// `target_sigmas`. J is each resistor's Johnson noise divided by the other, the sample at
// `temperature_K` (the design's) and the load at its own T_L (Amplifier::load_temperature_K, default
// the design's; Johnson, Phys. Rev. 32, 97 (1928); Nyquist, Phys. Rev. 32, 110 (1928)):
//   J = 4 k_B T_s R_s (R_L / (R_s + R_L))^2 + 4 k_B T_L R_L (R_s / (R_s + R_L))^2,
// which is 4 k_B T R when T_L = T_s; R_s = infinity (gs = 0) leaves 4 k_B T_L R_L. With
// Amplifier::reference_subtraction (on/off: the difference of two averages, each t long) the variance
// doubles: SNR / sqrt(2) and twice the time (counting the off average at the on level, exact when the
// signal is small against the floor and conservative otherwise).
AmplifierNoise AmplifierChain(double sample_conductance_S, const Amplifier& amplifier, double temperature_K,
                              double excess_A2_per_Hz, double target_sigmas);

// 2 e* V g t (1 - t) [coth(e* V / 2 k_B T) - 2 k_B T / (e* V)] (docs/models.md, Fractional constriction;
// tends to Kane & Fisher's 2 e* I_B [...] with I_B = g (1 - t) V as t -> 1).
double FractionalPartitionNoise_A2_per_Hz(double charge_C, double voltage_V, double conductance_S, double t,
                                          double temperature_K);

// F(x) = x coth(x / 2 k_B T) for an energy x (J), with F(0) = 2 k_B T.
double ThermalShotFactor_J(double energy_J, double temperature_K);

}  // namespace hallway
