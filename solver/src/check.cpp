// Geometric and wiring checks of a design; see check.hpp.
#include "hallway/check.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <stdexcept>

#include "hallway/constants.hpp"
#include "hallway/geometry/exact.hpp"
#include "hallway/saddle.hpp"
#include "hallway/units.hpp"

namespace hallway {

std::string ToString(Severity s) {
  return s == Severity::kError ? "error" : "warning";
}

bool CheckOptions::IsValid(std::string* why) const {
  auto bad = [&](const char* what) {
    if (why) *why = what;
    return false;
  };
  if (!(forward_bias_warning_V >= 0.0)) return bad("forward_bias_warning_V must be >= 0");
  if (!(wide_gap_in_depths > 0.0)) return bad("wide_gap_in_depths must be > 0");
  if (!(bias_fraction_of_cyclotron_gap > 0.0)) return bad("bias_fraction_of_cyclotron_gap must be > 0");
  return true;
}

bool CheckResult::ok() const {
  return error_count() == 0;
}
int CheckResult::error_count() const {
  return static_cast<int>(
      std::count_if(findings.begin(), findings.end(), [](const Finding& f) { return f.severity == Severity::kError; }));
}
int CheckResult::warning_count() const {
  return static_cast<int>(findings.size()) - error_count();
}

namespace {

using geometry::Polygon;

// Do two outlines share area or boundary points? (exact)
bool overlap_or_touch(const Polygon& a, const Polygon& b) {
  return geometry::boundaries_meet(a, b) || geometry::intersection_area(a, b) > 0.0;
}

}  // namespace

std::optional<geometry::ClosestPair> FindGap(const Design& d, const Constriction& k, std::string* why) {
  auto fail = [&](const std::string& w) {
    if (why) *why = w;
    return std::nullopt;
  };
  const bool against_mesa = k.first == kMesaName || k.second == kMesaName;
  const Gate* g1 = d.FindGate(against_mesa ? (k.first == kMesaName ? k.second : k.first) : k.first);
  if (!g1) return fail("no gate named " + k.first);
  geometry::ClosestPair cp;
  if (against_mesa) {
    // Measure to the mesa edges the gate does not itself reach (the gate usually crosses one edge
    // on its way to its bond pad); see docs/design-format.md, `constrictions`.
    const geometry::Polygon& mesa = d.mesa.outline;
    const auto touching = geometry::edges_meeting(g1->outline, mesa);
    std::vector<std::size_t> others;
    for (std::size_t e = 0; e < mesa.vertices.size(); ++e)
      if (std::find(touching.begin(), touching.end(), e) == touching.end()) others.push_back(e);
    if (others.empty())
      return fail("gate " + g1->name + " reaches every edge of the mesa, so no gap to the mesa edge is left");
    cp = geometry::closest_boundary_points(g1->outline, mesa, others);
  } else {
    const Gate* g2 = d.FindGate(k.second);
    if (!g2) return fail("no gate named " + k.second);
    cp = geometry::closest_boundary_points(g1->outline, g2->outline);
  }
  if (!(cp.distance_m > 0.0)) return fail("its two sides touch, there is no gap");
  return cp;
}

CheckResult CheckDesign(const Design& d, const CheckOptions& opt) {
  std::string why;
  if (!opt.IsValid(&why)) throw std::invalid_argument("CheckOptions: " + why);
  CheckResult r;
  r.figures = DeriveFigures(d.heterostructure, d.conditions.field_T, d.conditions.temperature_K);
  auto add = [&](Severity s, std::string code, std::string msg, const SourceLocation& where) {
    r.findings.push_back({s, std::move(code), std::move(msg), where});
  };
  const Polygon& mesa = d.mesa.outline;

  // Ohmic contacts against the mesa and each other.
  for (std::size_t i = 0; i < d.contacts.size(); ++i) {
    const Contact& c = d.contacts[i];
    const double inside = geometry::intersection_area(c.outline, mesa);
    const double outside = geometry::difference_area(c.outline, mesa);
    if (inside <= 0.0)
      add(Severity::kError, "contact-off-mesa", "contact " + c.name + " does not overlap the mesa: it reaches no 2DEG",
          c.where);
    else if (outside <= 0.0)
      add(Severity::kError, "contact-inside-mesa",
          "contact " + c.name +
              " lies wholly inside the mesa; an ohmic contact must cross the mesa edge so that edge channels enter and "
              "leave it",
          c.where);
    for (std::size_t j = i + 1; j < d.contacts.size(); ++j)
      if (overlap_or_touch(c.outline, d.contacts[j].outline))
        add(Severity::kError, "contacts-touch",
            "contacts " + c.name + " and " + d.contacts[j].name + " overlap or touch: they would be one contact",
            c.where);
  }

  // Gates: shorts to each other or to ohmic contacts, position, voltage.
  const double vdep = r.figures.depletion_voltage_V;
  for (std::size_t i = 0; i < d.gates.size(); ++i) {
    const Gate& g = d.gates[i];
    for (std::size_t j = i + 1; j < d.gates.size(); ++j)
      if (overlap_or_touch(g.outline, d.gates[j].outline))
        add(Severity::kError, "gate-short",
            "gates " + g.name + " and " + d.gates[j].name + " overlap or touch: that is a short between them", g.where);
    for (const Contact& c : d.contacts)
      if (overlap_or_touch(g.outline, c.outline))
        add(Severity::kError, "gate-on-contact",
            "gate " + g.name + " overlaps or touches ohmic contact " + c.name +
                ": the gate would be shorted to the 2DEG",
            g.where);
    if (geometry::intersection_area(g.outline, mesa) <= 0.0)
      add(Severity::kWarning, "gate-off-mesa", "gate " + g.name + " does not cover any of the mesa and has no effect",
          g.where);
    if (g.voltage_V > opt.forward_bias_warning_V)
      add(Severity::kWarning, "gate-forward-bias",
          "gate " + g.name + " at " + units::FormatSI(g.voltage_V, "V") +
              " is forward biased: a Schottky gate starts to conduct into the 2DEG from about +0.5 V (common practice) "
              "and can be damaged",
          g.where);
  }

  // Constrictions: the two sides must face each other across the 2DEG.
  for (const Constriction& k : d.constrictions) {
    ConstrictionGap gap;
    gap.name = k.name;
    gap.first = k.first;
    gap.second = k.second;
    const bool against_mesa = k.first == kMesaName || k.second == kMesaName;
    const Gate* g1 = d.FindGate(against_mesa ? (k.first == kMesaName ? k.second : k.first) : k.first);
    std::string why;
    const auto found = FindGap(d, k, &why);
    if (!found) {
      add(Severity::kError, "constriction-no-gap", "constriction " + k.name + ": " + why, k.where);
      continue;
    }
    const geometry::ClosestPair cp = *found;
    gap.gap_m = cp.distance_m;
    gap.on_first = cp.on_a;
    gap.on_second = cp.on_b;
    gap.most_positive_gate_V = g1->voltage_V;
    if (!against_mesa) gap.most_positive_gate_V = std::max(g1->voltage_V, d.FindGate(k.second)->voltage_V);
    const geometry::Point mid = cp.midpoint();
    if (!geometry::contains(mesa, mid) || geometry::distance_to_boundary(mesa, mid) < 0.25 * cp.distance_m) {
      add(Severity::kError, "constriction-off-mesa",
          "constriction " + k.name + ": the narrowest gap (" + units::FormatSI(cp.distance_m, "m") +
              ") does not lie over the 2DEG, so these sides do not face each other across the mesa",
          k.where);
      continue;
    }
    if (const auto bare = FindBarePinchOff(d, k, cp)) {
      gap.bare_pinch_off_V = bare->voltage_V;
      gap.bare_saddle = bare->saddle;
    }
    if (cp.distance_m > opt.wide_gap_in_depths * d.heterostructure.depth_m)
      add(Severity::kWarning, "constriction-wide",
          "constriction " + k.name + " has a gap of " + units::FormatSI(cp.distance_m, "m") + ", more than " +
              std::to_string(static_cast<int>(opt.wide_gap_in_depths)) +
              " times the 2DEG depth: it pinches off only at large negative voltage",
          k.where);
    if (gap.most_positive_gate_V > vdep)
      add(Severity::kWarning, "constriction-gates-weak",
          "constriction " + k.name + ": a gate is at " + units::FormatSI(gap.most_positive_gate_V, "V") +
              ", above the wide-gate depletion voltage " + units::FormatSI(vdep, "V") +
              ", so the 2DEG under it is not depleted and some channels pass underneath",
          k.where);
    const bool fractional =
        std::any_of(d.channels.begin(), d.channels.end(), [](const Channel& c) { return !c.conductance.is_integer(); });
    if (k.regime && !fractional)
      add(Severity::kWarning, "regime-unused",
          "constriction " + k.name + " sets `regime`, which only matters for fractional edge channels", k.where);
    r.constrictions.push_back(gap);
  }

  // Wiring plan.
  int sources = 0, current_sources = 0, returns = 0, floats = 0;
  const double cyclotron_V = r.figures.cyclotron_energy_J / constants::kElementaryCharge_C;
  for (const Wiring& w : d.wiring) {
    switch (w.role) {
      case Role::kSource:
        ++sources;
        if (w.bias_is_current)
          ++current_sources;
        else
          ++returns;  // a voltage source holds its contact against the cold ground
        if (!w.bias_is_current && std::abs(w.bias) > opt.bias_fraction_of_cyclotron_gap * cyclotron_V)
          add(Severity::kWarning, "bias-high",
              "source " + w.contact + " at " + units::FormatSI(w.bias, "V") + " exceeds " +
                  units::FormatSI(opt.bias_fraction_of_cyclotron_gap * cyclotron_V, "V") +
                  " (a tenth of the cyclotron energy over e): the quantum Hall state may break down",
              w.where);
        break;
      case Role::kGround:
      case Role::kAmplifier: ++returns; break;
      case Role::kFloat: ++floats; break;
    }
  }
  const SourceLocation wiring_where{d.path, d.wiring.empty() ? 0 : d.wiring.front().where.line, 1, "wiring"};
  if (sources == 0)
    add(Severity::kWarning, "no-source", "no contact is a source: nothing drives a current through the device",
        wiring_where);
  if (current_sources > 0 && returns == 0)
    add(Severity::kError, "no-return",
        "a current source needs a return path, but no contact is grounded, an amplifier or a voltage source",
        wiring_where);
  if (floats == static_cast<int>(d.wiring.size()))
    add(Severity::kWarning, "all-floating", "every contact floats: the device is not connected to anything",
        wiring_where);

  // Conditions.
  if (r.figures.thermal_energy_J > 0.1 * r.figures.cyclotron_energy_J)
    add(Severity::kWarning, "hot",
        "k_B T is more than a tenth of the cyclotron energy: integer plateaus will be poorly developed",
        SourceLocation{d.path, 0, 0, "conditions.temperature"});

  std::stable_sort(r.findings.begin(), r.findings.end(), [](const Finding& a, const Finding& b) {
    return a.severity == Severity::kError && b.severity != Severity::kError;
  });
  return r;
}

}  // namespace hallway
