// hallway/saddle_model.hpp: the transmission of a constriction's channels from its gate voltages.
//
// The saddle-point model (Büttiker, Phys. Rev. B 41, 7906 (1990)) evaluated on the potential at the
// saddle of the constriction (saddle.hpp): of a self-consistent solve on the constriction's own window
// (the window `hallway map` finds the pinch-off on), or, under the bare estimate, of the gates'
// closed-form potential scaled so that a wide gate empties the 2DEG at the wide-gate depletion voltage
// (U / E_F0 = phi_g / V_dep, the plate-capacitor density n = n_s (1 - phi_g / V_dep)). One definition,
// used by `transmission: from-gates`, the contradiction warnings, the voltage table of `check`, and the
// constriction models of `paths` (docs/models.md "Transmission from the gates").
//
// Channel k passes where E_F - V0 exceeds l_k E_2 / 2, l_k the local filling at which its boundary
// runs in the edge network (the middle of its conductance step: k + 1/2 for spin-resolved integer
// channels), so that the saddle model and the channel boundaries agree on where a channel closes.
// Fractional channels use the same form at their own level: the electron-like region of the saddle;
// the bias dependence of tunnelling through a fractional edge (Kane & Fisher, Phys. Rev. Lett. 72, 724
// (1994)) is left out, and results say so.
#pragma once

#include <cstddef>
#include <functional>
#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "hallway/design.hpp"
#include "hallway/electrostatics.hpp"
#include "hallway/finding.hpp"
#include "hallway/geometry/polygon.hpp"
#include "hallway/saddle.hpp"

namespace hallway {

// Transmission of the channel whose boundary runs at local filling `level`, at E - V0 = energy_J, for
// Büttiker's saddle with curvature energies hbar_omega_x (along the current), hbar_omega_y (across)
// and the cyclotron energy: 1 / (1 + exp(-pi (E - V0 - level E_2 / 2) / E_1)).
double ChannelSaddleTransmission(double energy_J, double hbar_omega_x_J, double hbar_omega_y_J,
                                 double hbar_omega_c_J, double level);

// The local filling at which each channel's boundary runs: cumulative conductance less half its own.
std::vector<double> ChannelLevels(const Design& design);

// The saddle model of a constriction at one set of gate voltages.
struct SaddleModel {
  bool ok = false;  // a saddle that curves up across the gap and down along the current
  geometry::Point saddle;
  double energy_over_fermi = 0.0;  // U / E_F0 at the saddle
  double barrier_J = 0.0;          // U - E_F at the saddle (negative: open)
  double hbar_omega_x_J = 0.0;     // along the current (the barrier)
  double hbar_omega_y_J = 0.0;     // across (the confinement)
  double local_filling = 0.0;      // Thomas-Fermi n h / (e |B|) at the saddle
  std::vector<double> transmission;  // per channel, outermost first; empty when !ok
};

enum class SaddlePotential { kSelfConsistentWindow, kBare };
std::string ToString(SaddlePotential p);

// One constriction, set up once: its gap, its window solver (self-consistent only) and the strip its
// saddle is searched in; then the model at any gate voltages.
class ConstrictionSaddleModel {
 public:
  // Throws GridTooLarge when the window exceeds electrostatics.max_memory_bytes. window_half_m and
  // window_cell_m of 0 choose the defaults (half: 12 depths beyond the half gap; cell: see map.hpp).
  ConstrictionSaddleModel(const Design& design, std::size_t constriction, SaddlePotential potential,
                          const ElectrostaticsOptions& electrostatics = {}, double window_half_m = 0.0,
                          double window_cell_m = 0.0);
  ~ConstrictionSaddleModel();
  ConstrictionSaddleModel(const ConstrictionSaddleModel&) = delete;
  ConstrictionSaddleModel& operator=(const ConstrictionSaddleModel&) = delete;

  bool has_gap() const { return has_gap_; }
  SaddlePotential potential() const { return potential_; }
  const ElectrostaticProblem* window() const { return window_.get(); }  // null: bare, or no gap
  double window_cell_m() const;
  const geometry::ClosestPair& gap() const { return gap_; }
  geometry::Point across() const { return across_; }  // unit vector from the first side to the second
  // The design voltages with both of the constriction's gates at v.
  std::vector<double> WithSides(double v) const;
  double design_side_voltage_V() const;  // the first gate's (else the second's) design voltage

  // At gate voltages `volts` (one per design gate). Self-consistent: a window solve started from
  // *window_state when it holds a solution, which is then replaced by the new one (warm starts along
  // a scan); *converged says whether the solve converged.
  SaddleModel At(const std::vector<double>& volts, std::optional<DensityMap>* window_state = nullptr,
                 bool* converged = nullptr) const;
  // On a window solution at hand (self-consistent only).
  SaddleModel On(const DensityMap& window_solution) const;

 private:
  SaddleModel FromEnergy(const std::function<double(geometry::Point)>& energy_over_fermi, geometry::Point at,
                         double at_energy, double step_m) const;
  const Design& d_;
  std::size_t ki_;
  SaddlePotential potential_;
  bool has_gap_ = false;
  geometry::ClosestPair gap_;
  geometry::Point across_, along_;
  int side_a_ = -1, side_b_ = -1;  // design gate indices of the two sides (-1: the mesa)
  double ef0_J_ = 0.0, cyclotron_J_ = 0.0, mass_kg_ = 0.0, depletion_V_ = 0.0, per_filling_ = 0.0;
  std::vector<double> levels_;
  std::unique_ptr<ElectrostaticProblem> window_;
  SaddleStrip strip_;
};

// Where the transmissions a constriction uses come from.
enum class TransmissionSource { kDesign, kGates };
std::string ToString(TransmissionSource s);

struct ConstrictionTransmission {
  int constriction = 0;
  TransmissionSource source = TransmissionSource::kDesign;
  std::vector<double> transmission_used;  // per channel, outermost first
  std::optional<SaddleModel> model;       // the model at the design voltages, when it was computed
  SaddlePotential potential = SaddlePotential::kSelfConsistentWindow;
};

struct GateTransmissionOptions {
  SaddlePotential potential = SaddlePotential::kSelfConsistentWindow;
  ElectrostaticsOptions electrostatics;  // of the windows (their cell is chosen per window)
  // Also model the constrictions whose transmissions the design declares, and warn where the model
  // contradicts them (|declared - model| > contradiction_tolerance on some integer channel).
  bool check_declared = true;
  double contradiction_tolerance = 0.3;
};

// For every constriction with `transmission: from-gates`, the model's transmissions at the design
// voltages, written into the design; for the others (check_declared), the declared values compared
// with the model. Findings: "transmission-model-failed" (error: a from-gates constriction without a
// saddle model), "transmission-contradicts-gates" (warning), "transmission-fractional-model" (note).
std::vector<ConstrictionTransmission> ResolveGateTransmissions(Design* design, const GateTransmissionOptions& options,
                                                               std::vector<Finding>* findings);

// The voltage of both of the constriction's gates (the others at their design voltages) at which
// channel `channel` reaches transmission `target` (0 < target < 1), by bisection between v_high
// (more open) and v_low; nullopt when it is not crossed there. Self-consistent: warm-started window
// solves.
std::optional<double> VoltageForTransmission(const ConstrictionSaddleModel& model, std::size_t channel, double target,
                                             double v_high, double v_low, double resolution_V = 1e-3);

// The gate voltage each constriction needs for its declared transmissions (both of its gates together,
// the others at their design voltages), so that the gates can be set before cooldown. A declared 1 or
// 0 is searched as 0.99 or 0.01 (where the channel starts to close); a `from-gates` constriction lists
// where each channel is half open (0.5). Searched between 0 V and GateSearchFloor_V.
struct GateSetting {
  int constriction = 0;
  int channel = 0;
  double target = 0.0;               // the transmission searched for
  double floor_V = 0.0;              // the search went from 0 V to here
  std::optional<double> voltage_V;   // nullopt: not reached
};
std::vector<GateSetting> GateSettings(const Design& design, SaddlePotential potential,
                                      const ElectrostaticsOptions& electrostatics, double resolution_V = 1e-3);
// The most negative voltage the searches above go to for constriction ki: -2 V, 1 V below its design
// voltage, or 1.5 times its bare pinch-off (saddle.hpp), whichever is lowest.
double GateSearchFloor_V(const Design& design, std::size_t constriction);

}  // namespace hallway
