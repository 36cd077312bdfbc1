// Charge and neutral modes at filling 2; formulas and sources in edge_modes.hpp.
#include "hallway/edge_modes.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <numbers>
#include <stdexcept>
#include <vector>

#include "hallway/constants.hpp"
#include "hallway/geometry/polygon.hpp"
#include "hallway/units.hpp"

namespace hallway {

using namespace constants;

EdgeModes CapacitanceModelModes(double drift, double separation, double screening, double width, double eps_r) {
  if (!(drift > 0.0 && separation > 0.0 && screening > 0.0 && width > 0.0 && eps_r > 0.0))
    throw std::invalid_argument("edge modes: drift velocity, separation, screening depth, width and permittivity "
                                "must be positive");
  // (e^2 / h) / (2 pi eps_r eps_0): about 5.4e4 m/s in GaAs (eps_r = 12.9).
  const double scale = kElementaryCharge_C * kElementaryCharge_C /
                       (kPlanck_Js * 2.0 * std::numbers::pi * eps_r * kVacuumPermittivity_F_per_m);
  auto u = [&](double r) { return scale * std::log(std::sqrt(r * r + 4.0 * screening * screening) / r); };
  EdgeModes m;
  m.charge_velocity_m_per_s = drift + u(width) + u(separation);
  m.neutral_velocity_m_per_s = drift + u(width) - u(separation);
  m.drift_velocity_m_per_s = drift;
  m.separation_m = separation;
  m.screening_m = screening;
  m.width_m = width;
  return m;
}

double PulseDelay_s(double length_m, const EdgeModes& m) {
  return length_m * (1.0 / m.neutral_velocity_m_per_s - 1.0 / m.charge_velocity_m_per_s);
}

PulseRegime PulseRegimeOf(double delay_s, double source_bias_V, double temperature_K, double stream_A) {
  PulseRegime r;
  r.delay_s = delay_s;
  r.bias_ratio = kElementaryCharge_C * std::abs(source_bias_V) * delay_s / kHbar_Js;
  r.thermal_ratio = kBoltzmann_J_per_K * temperature_K * delay_s / kHbar_Js;
  r.injection_ratio = std::abs(stream_A) / kElementaryCharge_C * delay_s;
  return r;
}

namespace {

// Distance from q to the nearest segment of any piece of `channel`.
double distance_to_channel(const EdgeNetwork& net, int channel, geometry::Point q) {
  double best = std::numeric_limits<double>::infinity();
  for (const EdgePiece& p : net.pieces) {
    if (p.channel != channel) continue;
    for (std::size_t i = 0; i + 1 < p.path.size(); ++i)
      best = std::min(best, geometry::distance(q, geometry::closest_on_segment(q, p.path[i], p.path[i + 1])));
  }
  return best;
}

// The median distance from the points of a piece (resampled every 50 nm along it, at most 400 points) to
// the inner channel: the separation of the two channels where they run side by side.
double median_separation(const EdgeNetwork& net, const EdgePiece& outer) {
  std::vector<geometry::Point> samples;
  double along = 0.0;
  for (std::size_t i = 0; i + 1 < outer.path.size(); ++i) along += geometry::distance(outer.path[i], outer.path[i + 1]);
  const double step = std::max(50e-9, along / 400.0);
  double next = 0.0, walked = 0.0;
  for (std::size_t i = 0; i + 1 < outer.path.size(); ++i) {
    const geometry::Point a = outer.path[i], b = outer.path[i + 1];
    const double len = geometry::distance(a, b);
    for (; next <= walked + len && len > 0.0; next += step) {
      const double f = (next - walked) / len;
      samples.push_back({a.x + f * (b.x - a.x), a.y + f * (b.y - a.y)});
    }
    walked += len;
  }
  if (samples.empty()) return std::numeric_limits<double>::infinity();
  std::vector<double> d;
  for (const geometry::Point& q : samples) d.push_back(distance_to_channel(net, 1, q));
  std::nth_element(d.begin(), d.begin() + static_cast<std::ptrdiff_t>(d.size() / 2), d.end());
  return d[d.size() / 2];
}

}  // namespace

std::optional<EdgeModes> ModesAlongPiece(const Design& d, const EdgeNetwork& net, int piece, double drift) {
  const Fraction& nu = d.conditions.filling;
  if (!(nu.is_integer() && nu.num == 2) || d.channels.size() != 2) return std::nullopt;
  if (piece < 0 || static_cast<std::size_t>(piece) >= net.pieces.size()) return std::nullopt;
  const EdgePiece& p = net.pieces[static_cast<std::size_t>(piece)];
  if (p.channel != 0) return std::nullopt;
  const double separation = median_separation(net, p);
  // Beside it: within 1 um (common practice: the channels of one edge lie a few hundred nm apart at most).
  if (!(separation <= 1e-6)) return std::nullopt;
  if (d.conditions.charge_mode_velocity_m_per_s && d.conditions.neutral_mode_velocity_m_per_s) {
    EdgeModes m;
    m.charge_velocity_m_per_s = *d.conditions.charge_mode_velocity_m_per_s;
    m.neutral_velocity_m_per_s = *d.conditions.neutral_mode_velocity_m_per_s;
    m.from_design = true;
    m.separation_m = separation;
    return m;
  }
  const double magnetic_length = std::sqrt(kHbar_Js / (kElementaryCharge_C * std::abs(d.conditions.field_T)));
  // Channels that touch on the resampled path (a separation below the magnetic length) are taken a
  // magnetic length apart: the model's line charges need a finite distance.
  return CapacitanceModelModes(drift, std::max(separation, magnetic_length), d.heterostructure.depth_m,
                               magnetic_length, d.heterostructure.permittivity);
}

std::string DescribeModes(const EdgeModes& m) {
  using units::FormatSI;
  std::string out = "charge mode " + FormatSI(m.charge_velocity_m_per_s, "m", 3) + "/s, neutral mode " +
                    FormatSI(m.neutral_velocity_m_per_s, "m", 3) + "/s";
  if (m.from_design) return out + " (from the design)";
  return out + " (capacitance model: drift " + FormatSI(m.drift_velocity_m_per_s, "m", 3) + "/s, channels " +
         FormatSI(m.separation_m, "m", 3) + " apart, screening plane " + FormatSI(m.screening_m, "m", 3) +
         " above, width " + FormatSI(m.width_m, "m", 3) +
         "; docs/models.md \"Charge and neutral modes at filling 2\")";
}

std::string DescribePulses(const PulseRegime& r) {
  if (r.bias_ratio <= kOverlappingPulses)
    return "the two pulses overlap within the electron's own duration hbar / eV";
  if (r.bias_ratio < kSeparatePulses) return "the two pulses are partly separated";
  return "the two pulses arrive as separate half charges";
}

}  // namespace hallway
