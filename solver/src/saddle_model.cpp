// The transmission of a constriction's channels from its gate voltages; see saddle_model.hpp.
#include "hallway/saddle_model.hpp"

#include <algorithm>
#include <cstdio>
#include <cmath>
#include <numbers>
#include <stdexcept>

#include "hallway/constants.hpp"
#include "hallway/gap.hpp"
#include "hallway/heterostructure.hpp"
#include "hallway/map.hpp"
#include "hallway/paths.hpp"

namespace hallway {

using geometry::Point;

double ChannelSaddleTransmission(double energy_J, double hbar_omega_x_J, double hbar_omega_y_J,
                                 double hbar_omega_c_J, double level) {
  double e1 = 0.0, e2 = 0.0;
  SaddleEnergies(hbar_omega_x_J, hbar_omega_y_J, hbar_omega_c_J, &e1, &e2);
  const double eps = (energy_J - 0.5 * e2 * level) / e1;
  return 1.0 / (1.0 + std::exp(-std::numbers::pi * eps));
}

std::vector<double> ChannelLevels(const Design& d) {
  std::vector<double> levels;
  Fraction cumulative{0, 1};
  for (const Channel& c : d.channels) {
    cumulative = cumulative + c.conductance;
    levels.push_back(cumulative.value() - 0.5 * c.conductance.value());
  }
  return levels;
}

std::string ToString(SaddlePotential p) {
  return p == SaddlePotential::kBare ? "bare gate potential (no screening)"
                                     : "self-consistent potential on the constriction's window";
}

std::string ToString(TransmissionSource s) { return s == TransmissionSource::kGates ? "gates" : "design"; }

ConstrictionSaddleModel::ConstrictionSaddleModel(const Design& d, std::size_t ki, SaddlePotential potential,
                                                 const ElectrostaticsOptions& electrostatics, double window_half_m,
                                                 double window_cell_m)
    : d_(d), ki_(ki), potential_(potential) {
  const Constriction& k = d.constrictions.at(ki);
  const WaferQuantities fig = DeriveWaferQuantities(d.heterostructure, d.conditions.field_T, d.conditions.temperature_K);
  ef0_J_ = fig.fermi_energy_J;
  cyclotron_J_ = fig.cyclotron_energy_J;
  depletion_V_ = fig.depletion_voltage_V;
  mass_kg_ = d.heterostructure.effective_mass * constants::kElectronMass_kg;
  const double field = std::abs(d.conditions.field_T);
  per_filling_ = field > 0.0 ? d.heterostructure.density_per_m2 * constants::kPlanck_Js /
                                   (constants::kElementaryCharge_C * field)
                             : 0.0;
  levels_ = ChannelLevels(d);
  for (std::size_t i = 0; i < d.gates.size(); ++i) {
    if (d.gates[i].name == k.first) side_a_ = static_cast<int>(i);
    if (d.gates[i].name == k.second) side_b_ = static_cast<int>(i);
  }
  const auto gap = FindGap(d, k, nullptr);
  if (!gap || !(gap->distance_m > 0.0)) return;
  has_gap_ = true;
  gap_ = *gap;
  across_ = {(gap->on_b.x - gap->on_a.x) / gap->distance_m, (gap->on_b.y - gap->on_a.y) / gap->distance_m};
  along_ = {-across_.y, across_.x};
  const double depth = d.heterostructure.depth_m;
  if (potential == SaddlePotential::kBare) {
    strip_ = SaddleStrip::For(d, k, *gap, std::min(gap->distance_m, depth) / 8.0);
    return;
  }
  const double half = window_half_m > 0.0 ? window_half_m : 0.5 * gap->distance_m + 12.0 * depth;
  ElectrostaticsOptions lo = electrostatics;
  lo.grid_m = window_cell_m > 0.0 ? window_cell_m : ConstrictionWindowCell_m(depth, gap->distance_m, half);
  window_ = std::make_unique<ElectrostaticProblem>(d, lo, ElectrostaticWindow{gap->midpoint(), half, half});
  strip_ = SaddleStrip::For(d, k, *gap, 0.25 * window_->cell_m());
}

ConstrictionSaddleModel::~ConstrictionSaddleModel() = default;

double ConstrictionSaddleModel::window_cell_m() const { return window_ ? window_->cell_m() : 0.0; }

std::vector<double> ConstrictionSaddleModel::WithSides(double v) const {
  std::vector<double> volts;
  for (const Gate& g : d_.gates) volts.push_back(g.voltage_V);
  if (side_a_ >= 0) volts[static_cast<std::size_t>(side_a_)] = v;
  if (side_b_ >= 0) volts[static_cast<std::size_t>(side_b_)] = v;
  return volts;
}

double ConstrictionSaddleModel::design_side_voltage_V() const {
  const int g = side_a_ >= 0 ? side_a_ : side_b_;
  return g >= 0 ? d_.gates[static_cast<std::size_t>(g)].voltage_V : 0.0;
}

// The model at the saddle `at` of the energy U / E_F0 (its value there `at_energy`): curvatures by
// central differences over `step_m` across and along the gap. Where the potential does not curve like
// a saddle (a wide-open gap, or a flat landscape), the model's limit of a vanishing barrier curvature
// is a step: a channel passes where the local filling at the saddle exceeds its level.
SaddleModel ConstrictionSaddleModel::FromEnergy(const std::function<double(Point)>& energy, Point at,
                                                double at_energy, double step_m) const {
  SaddleModel s;
  s.saddle = at;
  auto u = [&](Point dir, double t) { return energy({at.x + t * dir.x, at.y + t * dir.y}) * ef0_J_; };
  const double h = step_m;
  const double uu = (u(across_, h) - 2.0 * u(across_, 0.0) + u(across_, -h)) / (h * h);
  const double nn = (u(along_, h) - 2.0 * u(along_, 0.0) + u(along_, -h)) / (h * h);
  s.energy_over_fermi = at_energy;
  s.barrier_J = (s.energy_over_fermi - 1.0) * ef0_J_;
  s.local_filling = std::max(0.0, 1.0 - s.energy_over_fermi) * per_filling_;
  s.ok = uu > 0.0 && nn < 0.0;
  if (s.ok) {
    s.hbar_omega_y_J = constants::kHbar_Js * std::sqrt(uu / mass_kg_);
    s.hbar_omega_x_J = constants::kHbar_Js * std::sqrt(-nn / mass_kg_);
  }
  for (double level : levels_)
    s.transmission.push_back(s.ok ? ChannelSaddleTransmission(-s.barrier_J, s.hbar_omega_x_J, s.hbar_omega_y_J,
                                                              cyclotron_J_, level)
                                  : (s.local_filling > level ? 1.0 : 0.0));
  return s;
}

SaddleModel ConstrictionSaddleModel::On(const DensityMap& m) const {
  if (!has_gap_) return {};
  const Saddle sd = DensitySaddle(m, strip_);
  if (!sd.found) return {};
  const double h = std::max(m.cell_m, gap_.distance_m / 20.0);
  // The barrier is the refined saddle value (saddle.hpp), the curvatures those of the interpolated map.
  return FromEnergy([&](Point p) { return m.EnergyAt(p); }, sd.point, sd.energy, h);
}

SaddleModel ConstrictionSaddleModel::At(const std::vector<double>& volts, std::optional<DensityMap>* state,
                                        bool* converged) const {
  if (converged) *converged = true;
  if (!has_gap_) return {};
  if (potential_ == SaddlePotential::kBare) {
    const double depth = d_.heterostructure.depth_m;
    auto energy = [&](Point p) {
      double phi = 0.0;
      for (std::size_t g = 0; g < d_.gates.size(); ++g)
        if (volts[g] != 0.0) phi += volts[g] * GatePotentialPerVolt(d_.gates[g].outline, p, depth);
      return phi / depletion_V_;
    };
    const Saddle sd = FindSaddle(energy, strip_);
    if (!sd.found) return {};
    return FromEnergy(energy, sd.point, sd.energy, gap_.distance_m / 20.0);
  }
  const DensityMap* start = state && *state ? &**state : nullptr;
  DensityMap solution = window_->Solve(volts, start);
  if (converged) *converged = solution.stats.converged;
  SaddleModel m = solution.stats.converged ? On(solution) : SaddleModel{};
  if (state) *state = std::move(solution);
  return m;
}

std::optional<double> VoltageForTransmission(const ConstrictionSaddleModel& model, std::size_t channel, double target,
                                             double v_high, double v_low, double resolution_V) {
  if (!model.has_gap() || !(target > 0.0 && target < 1.0)) return std::nullopt;
  std::optional<DensityMap> state;
  auto t_at = [&](double v) -> std::optional<double> {
    bool converged = true;
    const SaddleModel s = model.At(model.WithSides(v), &state, &converged);
    if (!converged || channel >= s.transmission.size()) return std::nullopt;
    return s.transmission[channel];
  };
  const auto hi = t_at(v_high);
  const auto lo = t_at(v_low);
  if (!hi || !lo || (*hi - target) * (*lo - target) > 0.0) return std::nullopt;
  double a = v_high, b = v_low, ta = *hi;
  while (std::abs(a - b) > resolution_V) {
    const double mid = 0.5 * (a + b);
    const auto tm = t_at(mid);
    if (!tm) return std::nullopt;
    if ((ta - target) * (*tm - target) <= 0.0)
      b = mid;
    else {
      a = mid;
      ta = *tm;
    }
  }
  return 0.5 * (a + b);
}

double GateSearchFloor_V(const Design& d, std::size_t ki) {
  const Constriction& k = d.constrictions.at(ki);
  double v0 = 0.0;
  for (const Gate& g : d.gates)
    if (g.name == k.first || g.name == k.second) v0 = std::min(v0, g.voltage_V);
  double floor = std::min(-2.0, v0 - 1.0);
  if (const auto gap = FindGap(d, k, nullptr))
    if (const auto bare = FindBarePinchOff(d, k, *gap)) floor = std::min(floor, 1.5 * bare->voltage_V);
  return floor;
}

std::vector<GateSetting> GateSettings(const Design& d, SaddlePotential potential,
                                      const ElectrostaticsOptions& electrostatics, double resolution) {
  std::vector<GateSetting> out;
  for (std::size_t ki = 0; ki < d.constrictions.size(); ++ki) {
    const Constriction& k = d.constrictions[ki];
    const ConstrictionSaddleModel model(d, ki, potential, electrostatics);
    if (!model.has_gap()) continue;
    for (std::size_t c = 0; c < d.channels.size(); ++c) {
      GateSetting g;
      g.constriction = static_cast<int>(ki);
      g.channel = static_cast<int>(c);
      g.target = k.transmission_from_gates ? 0.5 : std::clamp(k.transmission[c], 0.01, 0.99);
      g.floor_V = GateSearchFloor_V(d, ki);
      g.voltage_V = VoltageForTransmission(model, c, g.target, 0.0, g.floor_V, resolution);
      out.push_back(g);
    }
  }
  return out;
}

namespace {

std::string fmt3(double x) {
  char buf[32];
  std::snprintf(buf, sizeof buf, "%.3g", x);
  return buf;
}

// Declared values against the model: a warning per channel where they differ by more than the
// tolerance.
void compare_declared(const Design& d, const Constriction& k, const SaddleModel& m, double tolerance,
                      std::vector<Finding>* findings) {
  for (std::size_t c = 0; c < k.transmission.size() && c < m.transmission.size(); ++c) {
    const double declared = k.transmission[c], model = m.transmission[c];
    if (!(std::abs(declared - model) > tolerance)) continue;
    std::string what = model > 0.99 ? "the gates leave it open" : model < 0.01 ? "the gates close it" : "";
    findings->push_back(
        {Severity::kWarning, "transmission-contradicts-gates",
         "constriction " + k.name + ": the design declares transmission " + fmt3(declared) + " for channel " +
             std::to_string(c + 1) + ", but at the design gate voltages the saddle-point model gives " + fmt3(model) +
             (what.empty() ? "" : " (" + what + ")") + " (local filling " + fmt3(m.local_filling) +
             " at the saddle" + (d.channels[c].conductance.is_integer() ? "" : "; electron-like model of a fractional channel") +
             "); set the gates to the voltage `hallway check` lists for it, or write `transmission: from-gates` "
             "(docs/models.md \"Transmission from the gates\")",
         k.where});
  }
}

}  // namespace

std::vector<ConstrictionTransmission> ResolveGateTransmissions(Design* design, const GateTransmissionOptions& opt,
                                                               std::vector<Finding>* findings) {
  Design& d = *design;
  std::vector<double> volts;
  for (const Gate& g : d.gates) volts.push_back(g.voltage_V);
  std::vector<ConstrictionTransmission> out;
  for (std::size_t ki = 0; ki < d.constrictions.size(); ++ki) {
    Constriction& k = d.constrictions[ki];
    ConstrictionTransmission ct;
    ct.constriction = static_cast<int>(ki);
    ct.potential = opt.potential;
    ct.source = k.transmission_from_gates ? TransmissionSource::kGates : TransmissionSource::kDesign;
    if (k.transmission_from_gates || opt.check_declared) {
      const ConstrictionSaddleModel model(d, ki, opt.potential, opt.electrostatics);
      bool converged = true;
      SaddleModel m = model.At(volts, nullptr, &converged);
      if (model.has_gap() && converged && !m.transmission.empty()) ct.model = std::move(m);
    }
    if (k.transmission_from_gates) {
      if (ct.model)
        k.transmission = ct.model->transmission;
      else
        findings->push_back({Severity::kError, "transmission-model-failed",
                             "constriction " + k.name +
                                 ": `transmission: from-gates`, but the saddle-point model could not be evaluated at "
                                 "the design voltages (no gap, or the window's electrostatic solve did not converge); "
                                 "give the transmissions in the design",
                             k.where});
    } else if (ct.model) {
      compare_declared(d, k, *ct.model, opt.contradiction_tolerance, findings);
    }
    ct.transmission_used = k.transmission;
    out.push_back(std::move(ct));
  }
  return out;
}

}  // namespace hallway
