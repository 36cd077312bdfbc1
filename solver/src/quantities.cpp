// The table of output quantities (quantities.hpp): one row per group.
#include "hallway/quantities.hpp"

#include <algorithm>
#include <cmath>
#include <stdexcept>

#include "hallway/gap.hpp"
#include "hallway/saddle.hpp"

namespace hallway {
namespace {

using Values = std::vector<std::optional<double>>;
using Columns = std::vector<std::string>;

std::vector<std::size_t> amplifiers(const Design& d) {
  std::vector<std::size_t> out;
  for (std::size_t i = 0; i < d.wiring.size(); ++i)
    if (d.wiring[i].role == Role::kAmplifier) out.push_back(i);
  return out;
}

Columns current_columns(const Design& d) {
  Columns c;
  for (const Contact& x : d.contacts) c.push_back("I_" + x.name + "_A");
  return c;
}
Values current_values(const PointResults& r) { return {r.transport->current_A.begin(), r.transport->current_A.end()}; }

Columns voltage_columns(const Design& d) {
  Columns c;
  for (const Contact& x : d.contacts) c.push_back("V_" + x.name + "_V");
  return c;
}
// The voltage of an isolated floating contact does not exist: an empty field.
Values voltage_values(const PointResults& r) { return r.transport->voltage_V; }

Columns conductance_columns(const Design& d) {
  Columns c;
  for (const Contact& a : d.contacts)
    for (const Contact& b : d.contacts) c.push_back("G_" + a.name + "_" + b.name + "_S");
  return c;
}
Values conductance_values(const PointResults& r) {
  Values v;
  for (const auto& row : r.transport->conductance_S) v.insert(v.end(), row.begin(), row.end());
  return v;
}

// The excess noise of every pair of amplifiers (each pair once, autocorrelations included).
Columns noise_columns(const Design& d) {
  Columns c;
  const auto amps = amplifiers(d);
  for (std::size_t a = 0; a < amps.size(); ++a)
    for (std::size_t b = a; b < amps.size(); ++b)
      c.push_back("S_exc_" + d.wiring[amps[a]].contact + "_" + d.wiring[amps[b]].contact + "_A2_per_Hz");
  return c;
}
Values noise_values(const PointResults& r) {
  Values v;
  const auto amps = amplifiers(*r.design);
  for (std::size_t a = 0; a < amps.size(); ++a)
    for (std::size_t b = a; b < amps.size(); ++b) v.push_back(r.noise->excess_A2_per_Hz[amps[a]][amps[b]]);
  return v;
}

Columns snr_columns(const Design& d) {
  Columns c;
  for (std::size_t i : amplifiers(d)) c.push_back("SNR_" + d.wiring[i].contact);
  return c;
}
Values snr_values(const PointResults& r) {
  Values v;
  for (const AmplifierNoise& a : r.noise->amplifiers) v.push_back(a.snr);
  return v;
}

// The collider's generalised Fano factor at T = 0 and at the design temperature (docs/models.md
// "Anyon collider"); empty for a constriction that is no collider or whose P is not computed.
Columns fano_columns(const Design& d) {
  Columns c;
  for (const Constriction& k : d.constrictions) {
    c.push_back("P_" + k.name);
    c.push_back("P_finite_temperature_" + k.name);
  }
  return c;
}
Values fano_values(const PointResults& r) {
  Values v;
  for (std::size_t k = 0; k < r.design->constrictions.size(); ++k) {
    std::optional<double> p, pt;
    for (const ColliderPrediction& c : r.noise->colliders)
      if (c.constriction == static_cast<int>(k) && c.fano) {
        p = *c.fano;
        pt = c.fano_finite_temperature;
      }
    v.push_back(p);
    v.push_back(pt);
  }
  return v;
}

// The density at each constriction's saddle (saddle.hpp) on the point's whole-mesa map: the same
// definition as `hallway map`, whose figure comes from its finer window around the gap. Empty without
// a self-consistent density.
Columns saddle_columns(const Design& d) {
  Columns c;
  for (const Constriction& k : d.constrictions) c.push_back("saddle_density_" + k.name + "_per_m2");
  return c;
}
Values saddle_values(const PointResults& r) {
  Values v;
  const Design& d = *r.design;
  for (const Constriction& k : d.constrictions) {
    const auto gap = FindGap(d, k, nullptr);
    std::optional<double> n;
    if (r.density && gap) {
      const Saddle s = DensitySaddle(*r.density, SaddleStrip::For(d, k, *gap, 0.5 * r.density->cell_m));
      n = d.heterostructure.density_per_m2 * std::max(0.0, 1.0 - s.energy);
    }
    v.push_back(n);
  }
  return v;
}

// The transmission each constriction uses for each channel: the design's, or the saddle-point model's
// at the point's gate voltages for `transmission: from-gates` (saddle_model.hpp).
Columns transmission_columns(const Design& d) {
  Columns c;
  for (const Constriction& k : d.constrictions)
    for (std::size_t ch = 0; ch < d.channels.size(); ++ch)
      c.push_back("transmission_" + k.name + "_ch" + std::to_string(ch + 1));
  return c;
}
Values transmission_values(const PointResults& r) {
  Values v;
  for (const Constriction& k : r.design->constrictions)
    for (double t : k.transmission) v.push_back(std::isfinite(t) ? std::optional<double>(t) : std::nullopt);
  return v;
}

// The voltage where the density at the saddle reaches zero (both sides swept together), from the
// pinch-off search of `hallway map`; empty when the channel is still open at the search limit.
Columns pinchoff_columns(const Design& d) {
  Columns c;
  for (const Constriction& k : d.constrictions) c.push_back("pinch_off_density_zero_" + k.name + "_V");
  return c;
}
Values pinchoff_values(const PointResults& r) {
  Values v;
  for (const Constriction& k : r.design->constrictions) {
    std::optional<double> x;
    for (const ConstrictionMap& c : r.pinch_off->constrictions)
      if (c.name == k.name) x = c.pinch_off_V;
    v.push_back(x);
  }
  return v;
}

}  // namespace

const std::vector<QuantityGroup>& QuantityGroups() {
  static const std::vector<QuantityGroup> table{
      {"currents", "current into the device at every contact", true, QuantityNeeds::kTransport, current_columns,
       current_values},
      {"voltages", "voltage of every contact", true, QuantityNeeds::kTransport, voltage_columns, voltage_values},
      {"conductance", "the conductance matrix G_ij", false, QuantityNeeds::kTransport, conductance_columns,
       conductance_values},
      {"noise", "excess noise of every amplifier pair", true, QuantityNeeds::kNoise, noise_columns, noise_values},
      {"snr", "signal-to-noise ratio of every amplifier", true, QuantityNeeds::kNoise, snr_columns, snr_values},
      {"fano", "collider Fano factors P at T = 0 and at the design temperature", true, QuantityNeeds::kNoise,
       fano_columns, fano_values},
      {"transmission", "transmission each constriction uses per channel (from the gates under `from-gates`)", true,
       QuantityNeeds::kTransport, transmission_columns, transmission_values},
      {"saddle", "density at each constriction's saddle", true, QuantityNeeds::kTransport, saddle_columns,
       saddle_values},
      {"pinchoff", "voltage where each constriction's saddle density reaches zero", false,
       QuantityNeeds::kPinchOffSearch, pinchoff_columns, pinchoff_values},
  };
  return table;
}

const QuantityGroup* FindQuantityGroup(std::string_view name) {
  for (const QuantityGroup& g : QuantityGroups())
    if (name == g.name) return &g;
  return nullptr;
}

BiasPoint SolveAtBias(const Device& device, FieldSign sign, const std::vector<int>& contacts,
                      const std::vector<double>& biases, const NoiseOptions* noise) {
  if (contacts.size() != biases.size()) throw std::invalid_argument("SolveAtBias: one bias per contact");
  BiasPoint point{device.design(), {}, std::nullopt};
  for (std::size_t i = 0; i < contacts.size(); ++i) {
    if (contacts[i] < 0 || static_cast<std::size_t>(contacts[i]) >= point.design.wiring.size() ||
        point.design.wiring[static_cast<std::size_t>(contacts[i])].role != Role::kSource)
      throw std::invalid_argument("SolveAtBias: contact " + std::to_string(contacts[i]) + " is not a source");
    point.design.wiring[static_cast<std::size_t>(contacts[i])].bias_own_unit() = biases[i];
  }
  const EdgeNetwork& edges = device.edges(sign);
  point.transport = SolveTransport(point.design, edges);
  if (noise) point.noise = SolveNoise(point.design, edges, point.transport, *noise);
  return point;
}

PointResults BiasPoint::Results(const Device& device) const {
  return {&design, &transport, noise ? &*noise : nullptr, device.density(), nullptr};
}

}  // namespace hallway
