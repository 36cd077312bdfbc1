// Geometric and wiring checks of a design; see check.hpp.
#include "hallway/check.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <stdexcept>

#include "hallway/constants.hpp"
#include "hallway/design_loader.hpp"
#include "hallway/geometry/exact.hpp"
#include "hallway/geometry/region.hpp"
#include "hallway/network.hpp"
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

// The distance between two disjoint outlines when it is below kMinFeature_m (1 nm; common practice:
// no lithography draws a narrower gap), else nothing. The bounding boxes rule out most pairs cheaply.
std::optional<double> too_narrow(const Polygon& a, const Polygon& b) {
  const auto ba = geometry::bounding_box(a), bb = geometry::bounding_box(b);
  const double dx = std::max({0.0, ba.xmin - bb.xmax, bb.xmin - ba.xmax});
  const double dy = std::max({0.0, ba.ymin - bb.ymax, bb.ymin - ba.ymax});
  if (std::hypot(dx, dy) >= kMinFeature_m) return std::nullopt;
  const double d = geometry::closest_boundary_points(a, b).distance_m;
  if (d > 0.0 && d < kMinFeature_m) return d;
  return std::nullopt;
}

std::string narrow_message(const std::string& a, const std::string& b, double d) {
  return a + " and " + b + " are only " + units::FormatSI(d, "m", 3) + " apart, less than " +
         units::FormatSI(kMinFeature_m, "m") +
         ": no lithography draws that gap (common practice), and the solvers would need a grid finer than it";
}

// A current source whose part of the 2DEG (the mesa minus the gates that deplete at their design
// voltage) holds no return contact: the current has nowhere to go. Floating contacts join the
// pieces they touch. Gaps of constrictions stay open here; closing them is the transport's business.
template <class Add>
void warn_islands(const Design& d, double depletion_voltage_V, Add&& add) {
  geometry::Region twodeg(d.mesa.outline);
  for (const Gate& g : d.gates)
    if (g.voltage_V < depletion_voltage_V) twodeg = twodeg.Difference(geometry::Region(g.outline));
  const auto pieces = twodeg.Pieces();
  if (pieces.size() < 2) return;
  std::vector<std::size_t> parent(pieces.size());
  for (std::size_t i = 0; i < parent.size(); ++i) parent[i] = i;
  auto root = [&](std::size_t i) {
    while (parent[i] != i) i = parent[i] = parent[parent[i]];
    return i;
  };
  std::vector<std::vector<std::size_t>> reaches(d.contacts.size());
  for (std::size_t c = 0; c < d.contacts.size(); ++c)
    for (std::size_t p = 0; p < pieces.size(); ++p)
      if (geometry::intersection_area(d.contacts[c].outline, pieces[p].outer) > 0.0) reaches[c].push_back(p);
  auto contact_index = [&](const std::string& name) {
    for (std::size_t c = 0; c < d.contacts.size(); ++c)
      if (d.contacts[c].name == name) return c;
    return d.contacts.size();
  };
  for (const Wiring& w : d.wiring) {  // a floating contact is a wire between the pieces it touches
    const std::size_t c = contact_index(w.contact);
    if (w.role == Role::kFloat && c < d.contacts.size())
      for (std::size_t p : reaches[c]) parent[root(p)] = root(reaches[c].front());
  }
  std::vector<char> has_return(pieces.size(), 0);
  for (const Wiring& w : d.wiring) {
    const bool returns =
        w.role == Role::kGround || w.role == Role::kAmplifier || (w.role == Role::kSource && !w.current_source);
    const std::size_t c = contact_index(w.contact);
    if (returns && c < d.contacts.size())
      for (std::size_t p : reaches[c]) has_return[root(p)] = 1;
  }
  for (const Wiring& w : d.wiring) {
    if (w.role != Role::kSource || !w.current_source) continue;
    const std::size_t c = contact_index(w.contact);
    if (c >= d.contacts.size() || reaches[c].empty()) continue;
    if (!std::any_of(reaches[c].begin(), reaches[c].end(), [&](std::size_t p) { return has_return[root(p)] != 0; }))
      add(Severity::kWarning, "source-on-island",
          "current source " + w.contact +
              " feeds a part of the 2DEG that the depleting gates cut off from every grounded, amplifier or voltage "
              "source contact: the current has no way out",
          w.where);
  }
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

namespace {

// What the checks of one design share: the design, the options and the result being filled.
struct Checking {
  const Design& d;
  const CheckOptions& opt;
  CheckResult r;
  void add(Severity s, std::string code, std::string msg, const SourceLocation& where) {
    r.findings.push_back({s, std::move(code), std::move(msg), where});
  }
};

// Ohmic contacts against the mesa and each other.
void check_contacts(Checking& ctx) {
  const Design& d = ctx.d;
  const Polygon& mesa = d.mesa.outline;
  for (std::size_t i = 0; i < d.contacts.size(); ++i) {
    const Contact& c = d.contacts[i];
    const double inside = geometry::intersection_area(c.outline, mesa);
    const double outside = geometry::difference_area(c.outline, mesa);
    if (inside <= 0.0)
      ctx.add(Severity::kError, "contact-off-mesa",
              "contact " + c.name + " does not overlap the mesa: it reaches no 2DEG", c.where);
    else if (outside <= 0.0)
      ctx.add(
          Severity::kError, "contact-inside-mesa",
          "contact " + c.name +
              " lies wholly inside the mesa; an ohmic contact must cross the mesa edge so that edge channels enter and "
              "leave it",
          c.where);
    for (std::size_t j = i + 1; j < d.contacts.size(); ++j)
      if (overlap_or_touch(c.outline, d.contacts[j].outline))
        ctx.add(Severity::kError, "contacts-touch",
                "contacts " + c.name + " and " + d.contacts[j].name + " overlap or touch: they would be one contact",
                c.where);
      else if (const auto gap = too_narrow(c.outline, d.contacts[j].outline))
        ctx.add(Severity::kError, "gap-below-lithography",
                narrow_message("contacts " + c.name, d.contacts[j].name, *gap), c.where);
  }
}

}  // namespace

std::optional<std::string> GateLimitProblem(const Design& d, double voltage_V) {
  const Conditions& c = d.conditions;
  const std::string tail =
      ": a gate driven past its leakage or breakdown onset can destroy the sample; give your lab's own limit in "
      "the design";
  if (voltage_V < c.gate_voltage_min_V)
    return "is below the gate-voltage limit " + units::FormatSI(c.gate_voltage_min_V, "V") +
           " (conditions.gate_voltage_min; default " + units::FormatSI(kDefaultGateVoltageMin_V, "V") +
           ", common practice for surface Schottky gates on GaAs)" + tail;
  if (voltage_V > c.gate_voltage_max_V)
    return "is above the forward-bias limit " + units::FormatSI(c.gate_voltage_max_V, "V") +
           " (conditions.gate_voltage_max; default " + units::FormatSI(kDefaultGateVoltageMax_V, "V") +
           ": a forward-biased Schottky gate on GaAs leaks into the 2DEG above a few hundred mV, common practice)" +
           tail;
  return std::nullopt;
}

namespace {

// Gates: shorts to each other or to ohmic contacts, position, voltage.
void check_gates(Checking& ctx) {
  const Design& d = ctx.d;
  const Polygon& mesa = d.mesa.outline;
  for (std::size_t i = 0; i < d.gates.size(); ++i) {
    const Gate& g = d.gates[i];
    for (std::size_t j = i + 1; j < d.gates.size(); ++j)
      if (overlap_or_touch(g.outline, d.gates[j].outline))
        ctx.add(Severity::kError, "gate-short",
                "gates " + g.name + " and " + d.gates[j].name + " overlap or touch: that is a short between them",
                g.where);
      else if (const auto gap = too_narrow(g.outline, d.gates[j].outline))
        ctx.add(Severity::kError, "gap-below-lithography", narrow_message("gates " + g.name, d.gates[j].name, *gap),
                g.where);
    for (const Contact& c : d.contacts)
      if (overlap_or_touch(g.outline, c.outline))
        ctx.add(Severity::kError, "gate-on-contact",
                "gate " + g.name + " overlaps or touches ohmic contact " + c.name +
                    ": the gate would be shorted to the 2DEG",
                g.where);
      else if (const auto gap = too_narrow(g.outline, c.outline))
        ctx.add(Severity::kError, "gap-below-lithography", narrow_message("gate " + g.name, "contact " + c.name, *gap),
                g.where);
    if (geometry::intersection_area(g.outline, mesa) <= 0.0)
      ctx.add(Severity::kWarning, "gate-off-mesa",
              "gate " + g.name + " does not cover any of the mesa and has no effect", g.where);
    if (auto why = GateLimitProblem(d, g.voltage_V))
      ctx.add(Severity::kWarning, "gate-voltage-limit",
              "gate " + g.name + " at " + units::FormatSI(g.voltage_V, "V") + " (" + g.voltage_where.key_path +
                  ", line " + std::to_string(g.voltage_where.line) + ") " + *why,
              g.voltage_where);
  }
}

// The etch depletion must leave some 2DEG: the network refuses a mesa eroded away
// ("mesa-etched-away", network.cpp), so check refuses it first, with the same code.
void check_etch_depletion(Checking& ctx) {
  const Design& d = ctx.d;
  if (!(d.mesa.etch_depletion_m > 0.0)) return;
  const Polygon& mesa = d.mesa.outline;
  const geometry::Region left = geometry::Region(mesa).Offset(-d.mesa.etch_depletion_m, NetworkOptions{}.disc_segments);
  if (left.empty())
    ctx.add(Severity::kError, "mesa-etched-away",
            "the etch depletion (" + units::FormatSI(d.mesa.etch_depletion_m, "m") +
                ") is more than half the mesa's width everywhere: it leaves no 2DEG in the mesa",
            d.mesa.where);
  else if (left.Pieces().size() > 1)
    ctx.add(Severity::kWarning, "mesa-etched-apart",
            "the etch depletion (" + units::FormatSI(d.mesa.etch_depletion_m, "m") +
                ") is more than half the mesa's width at a narrow place: the 2DEG falls apart into " +
                std::to_string(left.Pieces().size()) + " pieces",
            d.mesa.where);
}

// Constriction i: the two sides must face each other across the 2DEG.
void check_constriction(Checking& ctx, std::size_t i) {
  const Design& d = ctx.d;
  const CheckOptions& opt = ctx.opt;
  CheckResult& r = ctx.r;
  const Polygon& mesa = d.mesa.outline;
  const double vdep = ctx.r.wafer.depletion_voltage_V;
  const Constriction& k = d.constrictions[i];
  // Two constrictions on the same pair of sides: they measure the same gap, so the network would
  // cut two slits through one beam splitter. An error even when the transmissions agree: the
  // design must say which one it means.
  for (std::size_t j = 0; j < i; ++j) {
    const Constriction& o = d.constrictions[j];
    if ((o.first == k.first && o.second == k.second) || (o.first == k.second && o.second == k.first))
      ctx.add(Severity::kError, "constriction-duplicate",
              "constrictions " + o.name + " and " + k.name + " are both declared on the gap between " + k.first +
                  " and " + k.second + (o.transmission != k.transmission ? ", with different transmissions" : "") +
                  ": a gap is one beam splitter; declare it once",
              k.where);
  }
  ConstrictionGap gap;
  gap.name = k.name;
  gap.first = k.first;
  gap.second = k.second;
  const bool against_mesa = k.first == kMesaName || k.second == kMesaName;
  const Gate* g1 = d.FindGate(against_mesa ? (k.first == kMesaName ? k.second : k.first) : k.first);
  std::string why;
  const auto found = FindGap(d, k, &why);
  if (!found) {
    ctx.add(Severity::kError, "constriction-no-gap", "constriction " + k.name + ": " + why, k.where);
    return;
  }
  const geometry::ClosestPair cp = *found;
  if (cp.distance_m < kMinFeature_m) {
    ctx.add(Severity::kError, "gap-below-lithography",
            narrow_message("constriction " + k.name + ": " + k.first, k.second, cp.distance_m), k.where);
    return;
  }
  gap.gap_m = cp.distance_m;
  gap.on_first = cp.on_a;
  gap.on_second = cp.on_b;
  gap.most_positive_gate_V = g1->voltage_V;
  if (!against_mesa) gap.most_positive_gate_V = std::max(g1->voltage_V, d.FindGate(k.second)->voltage_V);
  const geometry::Point mid = cp.midpoint();
  if (!geometry::contains(mesa, mid) || geometry::distance_to_boundary(mesa, mid) < 0.25 * cp.distance_m) {
    ctx.add(Severity::kError, "constriction-off-mesa",
            "constriction " + k.name + ": the narrowest gap (" + units::FormatSI(cp.distance_m, "m") +
                ") does not lie over the 2DEG, so these sides do not face each other across the mesa",
            k.where);
    return;
  }
  if (const auto bare = FindBarePinchOff(d, k, cp)) {
    gap.bare_pinch_off_V = bare->voltage_V;
    gap.bare_saddle = bare->saddle;
  }
  if (cp.distance_m > opt.wide_gap_in_depths * d.heterostructure.depth_m)
    ctx.add(Severity::kWarning, "constriction-wide",
            "constriction " + k.name + " has a gap of " + units::FormatSI(cp.distance_m, "m") + ", more than " +
                std::to_string(static_cast<int>(opt.wide_gap_in_depths)) +
                " times the 2DEG depth: it pinches off only at large negative voltage",
            k.where);
  if (gap.most_positive_gate_V > vdep)
    ctx.add(Severity::kWarning, "constriction-gates-weak",
            "constriction " + k.name + ": a gate is at " + units::FormatSI(gap.most_positive_gate_V, "V") +
                ", above the wide-gate depletion voltage " + units::FormatSI(vdep, "V") +
                ", so the 2DEG under it is not depleted and some channels pass underneath",
            k.where);
  const bool fractional =
      std::any_of(d.channels.begin(), d.channels.end(), [](const Channel& c) { return !c.conductance.is_integer(); });
  if (k.regime && !fractional)
    ctx.add(Severity::kWarning, "regime-unused",
            "constriction " + k.name + " sets `regime`, which only matters for fractional edge channels", k.where);
  r.constrictions.push_back(gap);
}

// Wiring plan: biases against the cyclotron gap, a driving source, a return path for current
// sources, and something connected.
void check_wiring(Checking& ctx) {
  const Design& d = ctx.d;
  const CheckOptions& opt = ctx.opt;
  CheckResult& r = ctx.r;
  int sources = 0, current_sources = 0, returns = 0, floats = 0;
  const double cyclotron_V = r.wafer.cyclotron_energy_J / constants::kElementaryCharge_C;
  for (const Wiring& w : d.wiring) {
    switch (w.role) {
      case Role::kSource:
        ++sources;
        if (w.current_source)
          ++current_sources;
        else
          ++returns;  // a voltage source holds its contact against the cold ground
        if (!w.current_source && std::abs(w.bias_V) > opt.bias_fraction_of_cyclotron_gap * cyclotron_V)
          ctx.add(Severity::kWarning, "bias-high",
                  "source " + w.contact + " at " + units::FormatSI(w.bias_V, "V") + " exceeds " +
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
    ctx.add(Severity::kWarning, "no-source", "no contact is a source: nothing drives a current through the device",
            wiring_where);
  if (current_sources > 0 && returns == 0)
    ctx.add(Severity::kError, "no-return",
            "a current source needs a return path, but no contact is grounded, an amplifier or a voltage source",
            wiring_where);
  if (current_sources > 0 && returns > 0)
    warn_islands(d, ctx.r.wafer.depletion_voltage_V,
                 [&ctx](auto&&... a) { ctx.add(std::forward<decltype(a)>(a)...); });
  if (floats == static_cast<int>(d.wiring.size()))
    ctx.add(Severity::kWarning, "all-floating", "every contact floats: the device is not connected to anything",
            wiring_where);
}

}  // namespace

CheckResult CheckDesign(const Design& d, const CheckOptions& opt) {
  std::string why;
  if (!opt.IsValid(&why)) throw std::invalid_argument("CheckOptions: " + why);
  Checking ctx{d, opt, {}};
  CheckResult& r = ctx.r;
  r.wafer = DeriveWaferQuantities(d.heterostructure, d.conditions.field_T, d.conditions.temperature_K);
  check_contacts(ctx);
  check_gates(ctx);
  check_etch_depletion(ctx);
  for (std::size_t i = 0; i < d.constrictions.size(); ++i) check_constriction(ctx, i);
  check_wiring(ctx);

  // Conditions.
  if (r.wafer.thermal_energy_J > 0.1 * r.wafer.cyclotron_energy_J)
    ctx.add(Severity::kWarning, "hot",
            "k_B T is more than a tenth of the cyclotron energy: integer plateaus will be poorly developed",
            SourceLocation{d.path, 0, 0, "conditions.temperature"});

  std::stable_sort(r.findings.begin(), r.findings.end(), [](const Finding& a, const Finding& b) {
    return a.severity == Severity::kError && b.severity != Severity::kError;
  });
  return std::move(ctx.r);
}

}  // namespace hallway
