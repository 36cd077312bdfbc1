// The wiring verdict; see wiring.hpp and docs/design-format.md "Wiring verdict".
#include "hallway/wiring.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <stdexcept>

#include "hallway/noise.hpp"
#include "hallway/units.hpp"

namespace hallway {
namespace {

using units::FormatSI;
constexpr double kTiny = 1e-9;  // fractions of a current below this are numerical zero

std::string Field(double b) {
  char buf[32];
  std::snprintf(buf, sizeof buf, "%+.4g T", b);
  return buf;
}

std::string Percent(double x) {
  char buf[32];
  std::snprintf(buf, sizeof buf, "%.3g %%", 100.0 * x);
  return buf;
}

// Everything one field's verdict is computed from.
struct FieldData {
  const Design& d;
  const EdgeNetwork& net;
  const TransportResult& tr;
  std::vector<ColliderPrediction> colliders;
  std::vector<std::vector<char>> reach;  // reach[a][b]: what a absorbs gets to b (a itself, or via floats)

  const std::string& name(int c) const { return d.contacts[static_cast<std::size_t>(c)].name; }
  const std::string& qname(int q) const { return d.constrictions[static_cast<std::size_t>(q)].name; }
  Role role(int c) const { return d.wiring[static_cast<std::size_t>(c)].role; }
  int contacts() const { return static_cast<int>(d.contacts.size()); }
  // Total transmission from contact j into contact i, every channel, weighted by its conductance.
  double t(int i, int j) const {
    double s = 0.0;
    for (std::size_t k = 0; k < tr.transmission.size(); ++k)
      s += d.channels[k].conductance.value() *
           tr.transmission[k][static_cast<std::size_t>(i)][static_cast<std::size_t>(j)];
    return s;
  }
  double m(int j) const {
    double s = 0.0;
    for (std::size_t k = 0; k < tr.emitted.size(); ++k)
      s += d.channels[k].conductance.value() * tr.emitted[k][static_cast<std::size_t>(j)];
    return s;
  }
};

std::vector<ColliderPrediction> CollidersOf(const Design& d, const EdgeNetwork& net, const TransportResult& tr,
                                            const WiringOptions& opt) {
  NoiseOptions no;
  no.phase_samples = 1;  // the colliders do not depend on the loop phases
  no.dilution_limit = opt.dilution_limit;
  return SolveNoise(d, net, tr, no).colliders;
}

FieldData MakeField(const Design& d, const EdgeNetwork& net, const TransportResult& tr, const WiringOptions& opt) {
  FieldData f{d, net, tr, CollidersOf(d, net, tr, opt), {}};
  const int nc = f.contacts();
  f.reach.assign(static_cast<std::size_t>(nc), std::vector<char>(static_cast<std::size_t>(nc), 0));
  for (int a = 0; a < nc; ++a) {
    std::vector<int> stack{a};
    while (!stack.empty()) {
      const int x = stack.back();
      stack.pop_back();
      if (f.reach[static_cast<std::size_t>(a)][static_cast<std::size_t>(x)]) continue;
      f.reach[static_cast<std::size_t>(a)][static_cast<std::size_t>(x)] = 1;
      if (f.role(x) != Role::kFloat) continue;
      for (int y = 0; y < nc; ++y)
        if (y != x && f.t(y, x) > kTiny) stack.push_back(y);
    }
  }
  return f;
}

bool Reaches(const FieldData& f, int a, int b) {
  return f.reach[static_cast<std::size_t>(a)][static_cast<std::size_t>(b)] != 0;
}

// Sources whose current travels along `piece` (their routes have a leg on it).
std::vector<int> SourcesOnPiece(const FieldData& f, int piece) {
  std::vector<int> out;
  for (const Route& r : f.tr.routes)
    for (const RouteLeg& leg : r.legs)
      if (leg.piece == piece && leg.fraction > kTiny && std::find(out.begin(), out.end(), r.source) == out.end())
        out.push_back(r.source);
  return out;
}

// Sources whose current arrives along `piece`: their routes run along it, or it carries what a floating
// contact re-emits (found by walking back through constrictions) and they feed that contact.
std::vector<int> SourcesFeeding(const FieldData& f, int piece) {
  std::vector<int> out = SourcesOnPiece(f, piece);
  if (piece < 0) return out;
  // Walk back through constrictions (network.hpp, the scattering rule read backwards) to the contacts
  // whose emission can arrive on `piece`; the floating ones pass on what their sources send them.
  const std::vector<char> feeding = ReachablePieces(f.d, f.net, {piece}, {}, Walk::kUpstream);
  std::vector<int> floats;
  for (std::size_t p = 0; p < f.net.pieces.size(); ++p) {
    const EdgePiece& e = f.net.pieces[p];
    if (feeding[p] && e.from.kind == EdgeEnd::Kind::kContact && f.role(e.from.index) == Role::kFloat)
      floats.push_back(e.from.index);
  }
  for (const Route& r : f.tr.routes)
    for (int x = 0; x < f.contacts(); ++x)
      for (int fl : floats)
        if (r.reaching[static_cast<std::size_t>(x)] > kTiny && Reaches(f, x, fl) &&
            std::find(out.begin(), out.end(), r.source) == out.end())
          out.push_back(r.source);
  return out;
}

// Where a source's emitted current ends: absorbed at each contact, floats passing on what they get.
std::vector<std::pair<int, double>> Returns(const FieldData& f, int s) {
  const int nc = f.contacts();
  std::vector<double> x(static_cast<std::size_t>(nc), 0.0), done(static_cast<std::size_t>(nc), 0.0);
  if (f.m(s) <= 0.0) return {};
  for (int i = 0; i < nc; ++i) x[static_cast<std::size_t>(i)] = f.t(i, s) / f.m(s);
  for (int it = 0; it < 500; ++it) {
    std::vector<double> next(static_cast<std::size_t>(nc), 0.0);
    double moving = 0.0;
    for (int i = 0; i < nc; ++i) {
      const double xi = x[static_cast<std::size_t>(i)];
      if (f.role(i) != Role::kFloat || i == s || f.m(i) <= 0.0) {
        done[static_cast<std::size_t>(i)] += xi;
        continue;
      }
      moving += xi;
      for (int j = 0; j < nc; ++j) next[static_cast<std::size_t>(j)] += xi * f.t(j, i) / f.m(i);
    }
    x = next;
    if (moving < 1e-12) break;
  }
  std::vector<std::pair<int, double>> out;
  for (int i = 0; i < nc; ++i)
    if (done[static_cast<std::size_t>(i)] > kTiny) out.push_back({i, done[static_cast<std::size_t>(i)]});
  std::sort(out.begin(), out.end(), [](const auto& a, const auto& b) { return a.second > b.second; });
  return out;
}

AmplifierView ViewAmplifier(const FieldData& f, int a) {
  AmplifierView v;
  v.contact = a;
  for (const TransportResult::PartitionSite& site : f.tr.partitioning) {
    bool seen = false;
    for (int face = 0; face < 2 && !seen; ++face) {
      const int out = PortPiece(f.net, site.channel, site.constriction, face, true);
      if (out < 0) continue;
      for (int x = 0; x < f.contacts(); ++x)
        if (f.tr.piece_absorption[static_cast<std::size_t>(out)][static_cast<std::size_t>(x)] > kTiny &&
            Reaches(f, x, a))
          seen = true;
    }
    if (!seen) continue;
    for (int face = 0; face < 2; ++face) {
      const int in = PortPiece(f.net, site.channel, site.constriction, face, false);
      if (in < 0) continue;
      for (int s : SourcesFeeding(f, in))
        if (std::none_of(v.partitioned.begin(), v.partitioned.end(), [&](const AmplifierView::Partition& p) {
              return p.source == s && p.constriction == site.constriction && p.channel == site.channel;
            }))
          v.partitioned.push_back({s, site.constriction, site.channel});
    }
  }
  for (const ColliderPrediction& c : f.colliders)
    for (int o : {c.output_first, c.output_second})
      if (o >= 0 && Reaches(f, o, a) &&
          std::find(v.collider_outputs.begin(), v.collider_outputs.end(), c.constriction) == v.collider_outputs.end())
        v.collider_outputs.push_back(c.constriction);
  for (const EdgePiece& p : f.net.pieces)
    if (p.to.kind == EdgeEnd::Kind::kContact && p.to.index == a && p.from.kind == EdgeEnd::Kind::kContact &&
        f.role(p.from.index) == Role::kSource &&
        std::find(v.direct_sources.begin(), v.direct_sources.end(), p.from.index) == v.direct_sources.end())
      v.direct_sources.push_back(p.from.index);
  return v;
}

std::string Names(const FieldData& f, const std::vector<int>& contacts) {
  std::string s;
  for (std::size_t i = 0; i < contacts.size(); ++i)
    s += (i == 0 ? "" : i + 1 == contacts.size() ? " and " : ", ") + f.name(contacts[i]);
  return s;
}

void Add(std::vector<WiringProblem>* out, std::string code, bool mistake, std::vector<int> contacts,
         std::vector<int> constrictions, std::string message, std::string fix) {
  out->push_back(
      {std::move(code), mistake, std::move(contacts), std::move(constrictions), std::move(message), std::move(fix)});
}

// The constriction with 0 < t < 1 that an amplifier's own outgoing edge runs into, or -1.
int ConstrictionDownstreamOf(const FieldData& f, int a) {
  for (const EdgePiece& p : f.net.pieces) {
    if (!(p.from.kind == EdgeEnd::Kind::kContact && p.from.index == a && p.to.kind == EdgeEnd::Kind::kConstriction))
      continue;
    const double t =
        f.d.constrictions[static_cast<std::size_t>(p.to.index)].transmission[static_cast<std::size_t>(p.channel)];
    if (t > 0.0 && t < 1.0) return p.to.index;
  }
  return -1;
}

void AmplifierProblems(const FieldData& f, const AmplifierView& v, std::vector<WiringProblem>* out) {
  const int a = v.contact;
  const std::string at = " at B = " + Field(f.net.field_T);
  for (int s : v.direct_sources)
    Add(out, "source-feeds-amplifier", true, {s, a}, {},
        "source " + f.name(s) + " feeds amplifier " + f.name(a) + " directly" + at +
            ": its edge reaches the amplifier without crossing any constriction, so the amplifier takes the full "
            "DC current and sees none of it partitioned",
        "put a constriction between " + f.name(s) + " and " + f.name(a) + ", or make " + f.name(a) +
            " a cold ground and measure at a contact behind a constriction");
  if (v.sees_signal()) return;
  const int q = ConstrictionDownstreamOf(f, a);
  bool fed = false;
  for (const Route& r : f.tr.routes)
    if (r.reaching[static_cast<std::size_t>(a)] > kTiny && r.via[static_cast<std::size_t>(a)].empty()) fed = true;
  if (q >= 0 && fed) {
    std::vector<int> behind;
    for (int face = 0; face < 2; ++face)
      for (std::size_t k = 0; k < f.d.channels.size(); ++k) {
        const int o = PortPiece(f.net, static_cast<int>(k), q, face, true);
        for (int x = 0; o >= 0 && x < f.contacts(); ++x)
          if (x != a && f.tr.piece_absorption[static_cast<std::size_t>(o)][static_cast<std::size_t>(x)] > kTiny &&
              std::find(behind.begin(), behind.end(), x) == behind.end())
            behind.push_back(x);
      }
    Add(out, "amplifier-upstream", true, {a}, {q},
        "amplifier " + f.name(a) + " sits upstream of constriction " + f.qname(q) + at +
            ": it absorbs the source current before " + f.qname(q) + " can partition it, and sends " + f.qname(q) +
            " a cold edge",
        "leave " + f.name(a) + " floating (or unconnected) so that the source's edge goes on to " + f.qname(q) +
            ", and put the amplifier behind " + f.qname(q) +
            (behind.empty() ? std::string() : " (its outputs reach " + Names(f, behind) + ")"));
    return;
  }
  std::string straight;  // where source current ends without crossing any constriction
  for (const Route& r : f.tr.routes)
    for (int x = 0; x < f.contacts(); ++x)
      if (x != r.source && f.role(x) != Role::kFloat && r.reaching[static_cast<std::size_t>(x)] > kTiny &&
          r.via[static_cast<std::size_t>(x)].empty() &&
          straight.find(f.name(r.source) + " goes straight to " + f.name(x)) == std::string::npos)
        straight += "; the current of " + f.name(r.source) + " goes straight to " + f.name(x);
  Add(out, "amplifier-sees-nothing", false, {a}, {},
      "amplifier " + f.name(a) + " sees no partitioned current and no collider output" + at +
          ": its noise would be thermal only" + straight,
      "move the amplifier to a contact that receives the output of a constriction with 0 < t < 1");
}

// The colliders found in either field, as (constriction, channel).
std::vector<std::pair<int, int>> ColliderSites(const FieldData& a, const FieldData& b) {
  std::vector<std::pair<int, int>> out;
  for (const FieldData* f : {&a, &b})
    for (const ColliderPrediction& c : f->colliders)
      if (std::find(out.begin(), out.end(), std::make_pair(c.constriction, c.channel)) == out.end())
        out.push_back({c.constriction, c.channel});
  return out;
}

ColliderView ViewCollider(const FieldData& f, int q, int k, const WiringOptions& opt) {
  ColliderView v;
  v.constriction = q;
  v.channel = k;
  for (const ColliderPrediction& c : f.colliders) {
    if (c.constriction != q || c.channel != k) continue;
    v.fed = true;
    v.feed_first = c.source_first;
    v.feed_second = c.source_second;
    v.contact_first = c.contact_first;
    v.contact_second = c.contact_second;
    v.dilution_first = c.dilution_first;
    v.dilution_second = c.dilution_second;
    v.output_first = c.output_first;
    v.output_second = c.output_second;
  }
  if (!v.fed) return v;
  v.sources_first = SourcesFeeding(f, PortPiece(f.net, k, q, 0, false));
  v.sources_second = SourcesFeeding(f, PortPiece(f.net, k, q, 1, false));
  v.inputs_dilute = v.dilution_first <= opt.dilution_limit && v.dilution_second <= opt.dilution_limit;
  auto measured = [&](int o) {
    for (int a = 0; o >= 0 && a < f.contacts(); ++a)
      if (f.role(a) == Role::kAmplifier && Reaches(f, o, a)) return true;
    return false;
  };
  v.outputs_measured = measured(v.output_first) && measured(v.output_second);
  return v;
}

void ColliderProblems(const FieldData& f, const ColliderView& v, const WiringOptions& opt,
                      std::vector<WiringProblem>* out) {
  const std::string c = "collider " + f.qname(v.constriction);
  const std::string at = " at B = " + Field(f.net.field_T);
  if (!v.fed) {
    std::string from;
    for (int face = 0; face < 2; ++face) {
      const int in = PortPiece(f.net, v.channel, v.constriction, face, false);
      if (in >= 0)
        from += (from.empty() ? "" : " and ") + DescribeEnd(f.d, f.net.pieces[static_cast<std::size_t>(in)].from);
    }
    Add(out, "collider-not-fed", false, {}, {v.constriction},
        c + " receives no quasiparticle stream" + at + ": its inputs come from " + from + ", which carry no bias",
        "feed each input from a biased source through its own source constriction");
    return;
  }
  for (int i = 0; i < 2; ++i) {
    const double dil = i == 0 ? v.dilution_first : v.dilution_second;
    if (dil <= opt.dilution_limit) continue;
    const int contact = i == 0 ? v.contact_first : v.contact_second;
    const int feed = i == 0 ? v.feed_first : v.feed_second;
    std::vector<int> who = i == 0 ? v.sources_first : v.sources_second;
    const std::string input = "input " + std::to_string(i + 1) + " of " + c;
    if (contact >= 0 && f.role(contact) == Role::kFloat) {
      Add(out, "float-should-be-ground", true, {contact}, {v.constriction},
          input + " comes straight from floating contact " + f.name(contact) + at +
              ", which passes on the DC it receives: a full edge, not a dilute stream",
          "make " + f.name(contact) +
              " a cold ground so that the input is at equilibrium or fed by a source constriction");
      continue;
    }
    if (contact >= 0 && std::find(who.begin(), who.end(), contact) == who.end()) who.insert(who.begin(), contact);
    Add(out, "collider-input-not-dilute", false, who, {v.constriction},
        input +
            (feed >= 0 ? " carries " + Percent(dil) + " of the bias of the hot input of " + f.qname(feed)
                       : " comes straight from contact " + f.name(contact)) +
            " (dilute means at most " + Percent(opt.dilution_limit) + ")" + at +
            (who.empty() ? std::string() : "; it is fed by " + Names(f, who)),
        "feed the input through a source constriction in weak backscattering from a biased source, with the "
        "transmitted beam going to a cold ground");
  }
  if (!v.outputs_measured) {
    std::vector<int> outs;
    for (int o : {v.output_first, v.output_second})
      if (o >= 0) outs.push_back(o);
    Add(out, "collider-output-unmeasured", false, outs, {v.constriction},
        c + ": its outputs go to " + (outs.empty() ? std::string("no contact") : Names(f, outs)) + at +
            ", not both to amplifiers",
        "make the contacts that receive the two outputs amplifiers");
  }
}

void SourceProblems(const FieldData& f, const SourceView& v, std::vector<WiringProblem>* out) {
  const int s = v.contact;
  const std::string at = " at B = " + Field(f.net.field_T);
  if (f.m(s) <= 0.0) {
    Add(out, "contact-untouched", false, {s}, {}, "no edge channel touches source " + f.name(s),
        "move the contact onto the mesa edge where the 2DEG carries an edge");
    return;
  }
  double away = 0.0;
  for (const auto& [c, x] : v.returns)
    if (c != s && f.role(c) != Role::kFloat) away += x;
  if (away > kTiny) return;
  std::vector<int> island{s};
  for (int x = 0; x < f.contacts(); ++x)
    if (x != s && f.role(x) == Role::kFloat && f.t(x, s) > kTiny) island.push_back(x);
  if (island.size() == 1)
    Add(out, "source-returns", false, {s}, {},
        "all of the current that source " + f.name(s) + " emits returns to it" + at,
        "check the gates around " + f.name(s) + ": its edge must leave towards a ground or an amplifier");
  else {
    const std::vector<int> floats(island.begin() + 1, island.end());
    const std::string one = floats.size() == 1 ? "floating contact " : "floating contacts ";
    Add(out, "island-no-return", true, island, {},
        "source " + f.name(s) + " and " + one + Names(f, floats) + " form an island with no return" + at +
            ": no current flows to any ground or amplifier",
        (floats.size() == 1 ? "make " : "make one of ") + Names(f, floats) +
            " a cold ground, or open the gate that cuts the island off");
  }
}

void FloatProblems(const FieldData& f, int x, std::vector<WiringProblem>* out) {
  const auto& vx = f.tr.voltage_V[static_cast<std::size_t>(x)];
  if (!vx || *vx == 0.0) return;
  std::vector<int> straight;  // sources whose current reaches x without crossing a constriction
  for (const Route& r : f.tr.routes)
    if (r.reaching[static_cast<std::size_t>(x)] > kTiny && r.via[static_cast<std::size_t>(x)].empty() &&
        std::find(straight.begin(), straight.end(), r.source) == straight.end())
      straight.push_back(r.source);
  if (straight.empty()) return;
  for (const EdgePiece& p : f.net.pieces)
    if (p.from.kind == EdgeEnd::Kind::kContact && p.from.index == x && p.to.kind == EdgeEnd::Kind::kContact &&
        f.role(p.to.index) == Role::kAmplifier) {
      std::vector<int> named = straight;
      named.push_back(x);
      named.push_back(p.to.index);
      Add(out, "float-should-be-ground", true, named, {},
          "floating contact " + f.name(x) + " passes the DC of source " + Names(f, straight) +
              " straight on to amplifier " + f.name(p.to.index) + " at B = " + Field(f.net.field_T),
          "make " + f.name(x) + " a cold ground");
      return;
    }
}

FieldAssessment AssessField(const FieldData& f, const std::vector<std::pair<int, int>>& colliders,
                            const WiringOptions& opt) {
  FieldAssessment a;
  a.field_T = f.net.field_T;
  for (int c = 0; c < f.contacts(); ++c) {
    if (f.role(c) == Role::kSource) {
      a.sources.push_back({c, f.tr.current_A[static_cast<std::size_t>(c)], Returns(f, c)});
      SourceProblems(f, a.sources.back(), &a.problems);
    }
    if (f.role(c) == Role::kFloat) FloatProblems(f, c, &a.problems);
  }
  for (const auto& [q, k] : colliders) {
    a.colliders.push_back(ViewCollider(f, q, k, opt));
    ColliderProblems(f, a.colliders.back(), opt, &a.problems);
  }
  for (int c = 0; c < f.contacts(); ++c) {
    if (f.role(c) != Role::kAmplifier) continue;
    if (f.m(c) <= 0.0) {
      Add(&a.problems, "contact-untouched", false, {c}, {}, "no edge channel touches amplifier " + f.name(c),
          "move the contact onto the mesa edge where the 2DEG carries an edge");
      continue;
    }
    a.amplifiers.push_back(ViewAmplifier(f, c));
    AmplifierProblems(f, a.amplifiers.back(), &a.problems);
  }
  return a;
}

// Floating contacts with a potential in both fields, paired: Hall when V_i - V_j changes sign with B.
std::vector<VoltagePair> VoltagePairs(const FieldData& plus, const FieldData& minus) {
  std::vector<int> probes;
  double scale = 0.0;
  for (int c = 0; c < plus.contacts(); ++c) {
    for (const FieldData* f : {&plus, &minus})
      scale = std::max(scale, std::abs(f->tr.voltage_V[static_cast<std::size_t>(c)].value_or(0.0)));
    if (plus.role(c) == Role::kFloat && plus.tr.voltage_V[static_cast<std::size_t>(c)] &&
        minus.tr.voltage_V[static_cast<std::size_t>(c)])
      probes.push_back(c);
  }
  std::vector<VoltagePair> out;
  for (std::size_t i = 0; i < probes.size(); ++i)
    for (std::size_t j = i + 1; j < probes.size(); ++j) {
      auto v = [&](const FieldData& f, int c) { return *f.tr.voltage_V[static_cast<std::size_t>(c)]; };
      VoltagePair p;
      p.first = probes[i];
      p.second = probes[j];
      p.voltage_V = v(plus, p.first) - v(plus, p.second);
      p.reversed_voltage_V = v(minus, p.first) - v(minus, p.second);
      const double odd = std::abs(p.voltage_V - p.reversed_voltage_V),
                   even = std::abs(p.voltage_V + p.reversed_voltage_V);
      p.hall = odd > 1e-9 * scale && odd > even;
      out.push_back(p);
    }
  return out;
}

std::string Purpose(const FieldData& f, const FieldAssessment& a, int c) {
  std::string s;
  const std::string sep = f.role(c) == Role::kAmplifier ? "; " : ", ";
  auto add = [&](const std::string& x) { s += (s.empty() ? "" : sep) + x; };
  switch (f.role(c)) {
    case Role::kSource:
      for (const SourceView& v : a.sources)
        if (v.contact == c)
          for (const auto& [x, share] : v.returns)
            add(x == c ? f.name(x) + " itself (" + Percent(share) + ", reflected back)"
                       : f.name(x) + " (" + Percent(share) + ")");
      return s.empty() ? "its current returns nowhere" : "drives the device; its current returns at " + s;
    case Role::kGround:
      for (const SourceView& v : a.sources)
        for (const auto& [x, share] : v.returns)
          if (x == c) add(Percent(share) + " of the current of " + f.name(v.contact));
      return s.empty() ? "cold reference; receives no source current" : "takes " + s;
    case Role::kAmplifier:
      for (const AmplifierView& v : a.amplifiers) {
        if (v.contact != c) continue;
        for (const auto& p : v.partitioned)
          add("partitioned current of " + f.name(p.source) + " through " + f.qname(p.constriction) + " (channel " +
              std::to_string(p.channel + 1) + ")");
        for (int q : v.collider_outputs) add("output of collider " + f.qname(q));
      }
      return s.empty() ? "sees nothing partitioned (see the verdict)" : "measures the noise of: " + s;
    case Role::kFloat: return "floating ohmic contact: voltage probe, no net current";
  }
  return s;
}

std::string Connect(const Design& d, int c) {
  const Wiring& w = d.wiring[static_cast<std::size_t>(c)];
  switch (w.role) {
    case Role::kSource:
      return w.current_source ? "current source, " + FormatSI(w.bias_A, "A") + " into the device"
                              : "voltage source, " + FormatSI(w.bias_V, "V") + " against the cold ground";
    case Role::kGround: return "cold ground";
    case Role::kAmplifier:
      return "amplifier input, DC-grounded through its " + FormatSI(w.amplifier ? w.amplifier->load_Ohm : 0.0, "Ohm") +
             " load";
    case Role::kFloat: return "nothing to ground: leave floating, or a high-impedance voltmeter";
  }
  return "";
}

std::vector<CardRow> Card(const FieldData& f, const FieldAssessment& a) {
  std::vector<CardRow> card;
  for (int c = 0; c < f.contacts(); ++c) {
    const Wiring& w = f.d.wiring[static_cast<std::size_t>(c)];
    CardRow r;
    r.contact = c;
    r.role = w.role;
    r.connect = Connect(f.d, c);
    r.purpose = Purpose(f, a, c);
    if (w.role == Role::kSource) (w.current_source ? r.bias_A : r.bias_V) = w.bias_own_unit();
    r.voltage_V = f.tr.voltage_V[static_cast<std::size_t>(c)];
    r.current_A = f.tr.current_A[static_cast<std::size_t>(c)];
    card.push_back(r);
  }
  return card;
}

// Does the design field work on the same edges with the wiring changed by `change`?
template <class Change>
bool WorksWith(const Design& d, const EdgeNetwork& net, std::vector<std::pair<int, int>> sites,
               const WiringOptions& opt, Change change) {
  Design dd = d;
  change(dd.wiring);
  try {
    const TransportResult tr = SolveTransport(dd, net);
    for (const Finding& x : tr.findings)
      if (x.severity == Severity::kError) return false;
    const FieldData f = MakeField(dd, net, tr, opt);
    for (const ColliderPrediction& c : f.colliders)
      if (std::find(sites.begin(), sites.end(), std::make_pair(c.constriction, c.channel)) == sites.end())
        sites.push_back({c.constriction, c.channel});
    return AssessField(f, sites, opt).ok();
  } catch (const std::runtime_error&) {
    return false;
  }
}

// The roles of contacts a and b exchanged, a source's bias and an amplifier's chain moving with the role.
bool WorksSwapped(const Design& d, const EdgeNetwork& net, int a, int b, const std::vector<std::pair<int, int>>& sites,
                  const WiringOptions& opt) {
  return WorksWith(d, net, sites, opt, [a, b](std::vector<Wiring>& w) {
    Wiring& wa = w[static_cast<std::size_t>(a)];
    Wiring& wb = w[static_cast<std::size_t>(b)];
    std::swap(wa.role, wb.role);
    std::swap(wa.bias_V, wb.bias_V);
    std::swap(wa.bias_A, wb.bias_A);
    std::swap(wa.current_source, wb.current_source);
    std::swap(wa.amplifier, wb.amplifier);
  });
}

// The named diagnoses of a design field that fails: the field sign, swapped roles.
void Diagnose(const FieldData& plus, const WiringVerdict& v, const std::vector<std::pair<int, int>>& sites,
              const WiringOptions& opt, std::vector<WiringProblem>* out) {
  const Design& d = plus.d;
  const double b = d.conditions.field_T;
  if (v.reversed_field_ok) {
    std::vector<int> named;
    for (const WiringProblem& p : v.design.problems)
      for (int c : p.contacts)
        if (std::find(named.begin(), named.end(), c) == named.end()) named.push_back(c);
    std::stable_partition(named.begin(), named.end(), [&](int c) { return plus.role(c) == Role::kAmplifier; });
    Add(out, "field-sign", true, named, {},
        "the field sign is wrong for this wiring" +
            (named.empty() ? std::string() : " (affected: " + Names(plus, named) + ")") +
            ": it fails at B = " + Field(b) + " and works at B = " + Field(-b),
        "run at B = " + Field(-b) + " (reverse the magnet; in the design, `field: " + Field(-b) +
            "` under `conditions`" + (d.conditions.field_given ? std::string() : " instead of `filling`") +
            "), or mirror the wiring");
  }
  if (!opt.diagnose_swaps) return;
  for (int x = 0; x < plus.contacts(); ++x)
    if (plus.role(x) == Role::kFloat && WorksWith(d, plus.net, sites, opt, [x](std::vector<Wiring>& w) {
          w[static_cast<std::size_t>(x)].role = Role::kGround;
        }))
      Add(out, "float-should-be-ground", true, {x}, {},
          "floating contact " + plus.name(x) + " should be a cold ground: with " + plus.name(x) +
              " grounded the wiring works at B = " + Field(b),
          "connect " + plus.name(x) + " to the cold ground");
  for (int s = 0; s < plus.contacts(); ++s)
    for (int g = 0; g < plus.contacts(); ++g) {
      if (plus.role(g) != Role::kGround) continue;
      const Role rs = plus.role(s);
      if (rs == Role::kSource && WorksSwapped(d, plus.net, s, g, sites, opt))
        Add(out, "source-ground-swapped", true, {s, g}, {},
            "source " + plus.name(s) + " and ground " + plus.name(g) + " look swapped: with " + plus.name(g) +
                " as the source and " + plus.name(s) + " as the ground the wiring works at B = " + Field(b),
            "exchange the wires of " + plus.name(s) + " and " + plus.name(g) + " (or their roles in the design)");
      if (rs == Role::kAmplifier && WorksSwapped(d, plus.net, s, g, sites, opt))
        Add(out, "amplifier-ground-swapped", false, {s, g}, {},
            "amplifier " + plus.name(s) + " and ground " + plus.name(g) + " look swapped: with " + plus.name(g) +
                " as the amplifier and " + plus.name(s) + " as the ground the wiring works at B = " + Field(b),
            "exchange the wires of " + plus.name(s) + " and " + plus.name(g) + " (or their roles in the design)");
    }
}

// The reason the summary gives: the first problem by how specific a diagnosis it is.
std::string Reason(const std::vector<WiringProblem>& problems) {
  for (const char* code : {"field-sign", "source-ground-swapped", "amplifier-ground-swapped", "amplifier-upstream",
                           "island-no-return", "float-should-be-ground", "source-feeds-amplifier"})
    for (const WiringProblem& p : problems)
      if (p.code == code) return p.code == "field-sign" ? p.message.substr(0, p.message.find(": it fails")) : p.message;
  return problems.empty() ? std::string() : problems.front().message;
}

std::string Summary(const WiringVerdict& v, double b) {
  if (v.ok)
    return "works in the design field (B = " + Field(b) + ")" +
           (v.reversed_field_ok ? "" : "; with the field reversed, which this design does not use, it would not");
  if (!v.reversed_field_ok) return "FAILS in both field directions: " + Reason(v.problems);
  std::string also;  // a role swap that also fixes the design field
  for (const WiringProblem& p : v.problems)
    if (p.code.find("swapped") != std::string::npos) also = "; or " + p.message.substr(0, p.message.find(": with"));
  return "FAILS in the design field (B = " + Field(b) + ") but works with the field reversed: " + Reason(v.problems) +
         also;
}

}  // namespace

bool WiringOptions::IsValid(std::string* why) const {
  if (!(dilution_limit > 0.0 && dilution_limit < 1.0)) {
    if (why) *why = "dilution_limit must lie in (0, 1)";
    return false;
  }
  return true;
}

WiringVerdict AssessWiring(const Design& d, const EdgeNetwork& plus_net, const TransportResult& plus_tr,
                           const EdgeNetwork& minus_net, const TransportResult& minus_tr, const WiringOptions& opt) {
  std::string why;
  if (!opt.IsValid(&why)) throw std::invalid_argument("WiringOptions: " + why);
  WiringVerdict v;
  const FieldData plus = MakeField(d, plus_net, plus_tr, opt), minus = MakeField(d, minus_net, minus_tr, opt);
  const auto sites = ColliderSites(plus, minus);
  v.assessed = true;
  v.design = AssessField(plus, sites, opt);
  v.reversed = AssessField(minus, sites, opt);
  v.ok = v.design.ok();
  v.reversed_field_ok = v.reversed.ok();
  if (!v.ok) Diagnose(plus, v, sites, opt, &v.problems);
  v.problems.insert(v.problems.end(), v.design.problems.begin(), v.design.problems.end());
  v.card = Card(plus, v.design);
  v.voltage_pairs = VoltagePairs(plus, minus);
  v.summary = Summary(v, d.conditions.field_T);
  return v;
}

WiringVerdict AssessWiring(const Design& d, const ChannelGeometry& geometry, const WiringOptions& opt) {
  WiringVerdict v;
  for (const Finding& x : geometry.findings)
    if (x.severity == Severity::kError) {
      v.not_assessed = "the edges could not be traced: " + x.message;
      return v;
    }
  try {
    const EdgeNetwork plus = TraceEdges(d, geometry, d.conditions.field_T);
    const EdgeNetwork minus = TraceEdges(d, geometry, -d.conditions.field_T);
    for (const EdgeNetwork* n : {&plus, &minus})
      for (const Finding& x : n->findings)
        if (x.severity == Severity::kError) {
          v.not_assessed = "the edges could not be traced at B = " + Field(n->field_T) + ": " + x.message;
          return v;
        }
    const TransportResult tp = SolveTransport(d, plus), tm = SolveTransport(d, minus);
    return AssessWiring(d, plus, tp, minus, tm, opt);
  } catch (const std::runtime_error& e) {
    v.not_assessed = std::string("the transport could not be solved: ") + e.what();
    return v;
  }
}

std::string ReversedFieldLabel(const Design& d, const WiringVerdict& v, double field_T) {
  if (field_T == d.conditions.field_T) return "";
  if (!v.assessed) return "with the field reversed";
  if (v.ok) return "with the field reversed, which this design does not use";
  if (v.reversed_field_ok) return "with the field reversed, where this wiring would work";
  return "with the field reversed";
}

}  // namespace hallway
