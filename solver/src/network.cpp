// Channel regions and edge tracing; the model is described in network.hpp.
#include "hallway/network.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <functional>
#include <numbers>
#include <stdexcept>

#include "hallway/constants.hpp"
#include "hallway/electrostatics.hpp"
#include "hallway/gap.hpp"
#include "hallway/geometry/contour.hpp"
#include "hallway/geometry/exact.hpp"
#include "hallway/geometry/point_index.hpp"
#include "hallway/heterostructure.hpp"
#include "hallway/saddle.hpp"
#include "hallway/units.hpp"

namespace hallway {

using geometry::Point;
using geometry::Polygon;
using geometry::Region;

bool NetworkOptions::IsValid(std::string* why) const {
  auto bad = [&](const char* w) {
    if (why) *why = w;
    return false;
  };
  if (disc_segments < 8 || disc_segments > 1024) return bad("disc_segments must lie in [8, 1024]");
  if (!(slit_fraction > 0.0 && slit_fraction <= 0.25)) return bad("slit_fraction must lie in (0, 0.25]");
  return true;
}

std::string DescribeEnd(const Design& d, const EdgeEnd& e) {
  if (e.kind == EdgeEnd::Kind::kContact) return d.contacts.at(static_cast<std::size_t>(e.index)).name;
  return d.constrictions.at(static_cast<std::size_t>(e.index)).name + "/face " + std::to_string(e.face);
}

namespace {

Point add(Point a, Point b, double s = 1.0) {
  return {a.x + s * b.x, a.y + s * b.y};
}

// Rectangle along the segment [a - u*ext_a, b + u*ext_b] with half-width h.
Polygon strip(Point a, Point b, Point u, Point n, double ext_a, double ext_b, double h) {
  const Point p0 = add(a, u, -ext_a), p1 = add(b, u, ext_b);
  return {{add(p0, n, -h), add(p1, n, -h), add(p1, n, h), add(p0, n, h)}};
}

std::string fmt_g(double x) {
  char buf[32];
  std::snprintf(buf, sizeof buf, "%.3g", x);
  return buf;
}

// The local filling nu n / n_s... at p: n h / (e |B|) from the density map.
double FillingAt(const DensityMap& m, const Design& d, Point p) {
  return m.At(p) * constants::kPlanck_Js / (constants::kElementaryCharge_C * std::abs(d.conditions.field_T));
}

// The slit of constriction k: across its gap through the saddle, reaching through the grown depletion
// into each side so that it always cuts the channel.
ChannelGeometry::Slit MakeSlit(const Design& d, const Constriction& k, const NetworkOptions& opt,
                               const std::vector<double>& lateral_depletion_m, const std::vector<double>& volts) {
  ChannelGeometry::Slit s;
  const auto cp = FindGap(d, k, nullptr);
  if (!cp) return s;
  s.gap_m = cp->distance_m;
  const Point u{(cp->on_b.x - cp->on_a.x) / s.gap_m, (cp->on_b.y - cp->on_a.y) / s.gap_m};
  s.n = {-u.y, u.x};
  const double step = std::min(s.gap_m, d.heterostructure.depth_m) / 8.0;
  const SaddleStrip st = SaddleStrip::For(d, k, *cp, opt.density ? 0.5 * opt.density->cell_m : step);
  const Saddle sd = opt.density ? DensitySaddle(*opt.density, st) : BareSaddle(d, st, volts);
  s.centre = sd.found ? sd.point : cp->midpoint();
  // The slit runs along the gap segment, moved along the current to pass through the saddle.
  const double shift = (s.centre.x - cp->midpoint().x) * s.n.x + (s.centre.y - cp->midpoint().y) * s.n.y;
  s.a = add(cp->on_a, s.n, shift);
  s.b = add(cp->on_b, s.n, shift);
  s.half_width_m = opt.slit_fraction * s.gap_m;
  int ga = -1, gb = -1;
  for (std::size_t i = 0; i < d.gates.size(); ++i) {
    if (d.gates[i].name == k.first) ga = static_cast<int>(i);
    if (d.gates[i].name == k.second) gb = static_cast<int>(i);
  }
  s.ext_a_m = (ga >= 0 ? lateral_depletion_m[static_cast<std::size_t>(ga)] : 0.0) + 0.5 * s.gap_m;
  s.ext_b_m = (gb >= 0 ? lateral_depletion_m[static_cast<std::size_t>(gb)] : d.mesa.etch_depletion_m) + 0.5 * s.gap_m;
  return s;
}

Polygon SlitOutline(const ChannelGeometry::Slit& s) {
  const Point u{s.n.y, -s.n.x};
  return strip(s.a, s.b, u, s.n, s.ext_a_m, s.ext_b_m, s.half_width_m);
}

// The corridor that lets a channel through a gap its region closes (the design's transmission then
// decides what passes): the middle half of the gap, along the current from the saddle out to where the
// region is open on each side (square finger ends make the gap a channel as long as the finger is
// wide), plus two slit widths. Where the gap is open it lies inside the region and changes nothing.
Region Corridor(const ChannelGeometry::Slit& s, const Region& region) {
  const double h = s.half_width_m;
  const double cap = 10.0 * s.gap_m + 20.0 * h;
  auto reach = [&](double sign) {
    for (double t = 2.0 * h; t <= cap; t += h)
      if (region.ContainsInterior(add(s.centre, s.n, sign * t))) return t + 2.0 * h;
    return 2.0 * h;
  };
  const double up = reach(1.0), down = reach(-1.0);
  const Point u{(s.b.x - s.a.x) / s.gap_m, (s.b.y - s.a.y) / s.gap_m};
  const double w = 0.25 * s.gap_m;
  const Point lo = add(s.centre, s.n, -down), hi = add(s.centre, s.n, up);
  return Region(Polygon{{add(lo, u, -w), add(lo, u, w), add(hi, u, w), add(hi, u, -w)}});
}


// The state the steps of BuildChannelGeometry share.
struct GeometryBuild {
  GeometryBuild(const Design& design, const NetworkOptions& options, ChannelGeometry& out)
      : d(design), opt(options), g(out) {}
  const Design& d;
  const NetworkOptions& opt;
  ChannelGeometry& g;
  double vdep = 0.0, nu = 0.0;
  std::vector<Region> depleted;  // per gate: what a depleting gate removes (grown by its lateral depletion)
  std::vector<double> filling;   // self-consistent only: the local filling of each density cell
  Region mesa, base;             // the mesa, and the mesa less its etch depletion

  void warn(std::string code, std::string msg, const SourceLocation& where) {
    g.findings.push_back({Severity::kWarning, std::move(code), std::move(msg), where});
  }
  // Bare estimate only: whether gate `gate` reflects the channels up to cumulative conductance `c`.
  bool reflects(std::size_t gate, double c) const {
    return d.gates[gate].voltage_V <= vdep || c > g.local_filling[gate] + 1e-9;
  }
  int gate_index(const std::string& name) const {
    for (std::size_t i = 0; i < d.gates.size(); ++i)
      if (d.gates[i].name == name) return static_cast<int>(i);
    return -1;
  }
};

// Gates: what each removes (the lateral depletion of docs/models.md "Depletion under a wide gate") and
// the bare local filling under those that do not deplete.
void DepleteGates(GeometryBuild& b) {
  const double depth = b.d.heterostructure.depth_m;
  b.depleted.resize(b.d.gates.size());
  for (std::size_t i = 0; i < b.d.gates.size(); ++i) {
    const Gate& gate = b.d.gates[i];
    double xe = 0.0;
    if (gate.voltage_V <= b.vdep) {
      if (gate.voltage_V < 2.0 * b.vdep) xe = depth / std::tan(std::numbers::pi * b.vdep / gate.voltage_V);
      b.depleted[i] = Region(gate.outline).Offset(xe, b.opt.disc_segments);
      b.g.local_filling.push_back(0.0);
    } else {
      b.g.local_filling.push_back(std::max(0.0, b.nu * (1.0 - gate.voltage_V / b.vdep)));
    }
    b.g.lateral_depletion_m.push_back(xe);
  }
}

// Self-consistent boundaries: the local filling nu(r) = n(r) h / (e |B|) on the density grid, and under
// each gate the median over the gate's cells that lie on the 2DEG more than two depths inside the
// etched edge (so that the edge itself does not count).
void SelfConsistentFilling(GeometryBuild& b) {
  const DensityMap& m = *b.opt.density;
  const Design& d = b.d;
  const double per = constants::kPlanck_Js / (constants::kElementaryCharge_C * std::abs(d.conditions.field_T));
  b.filling.resize(m.density_per_m2.size());
  for (std::size_t c = 0; c < b.filling.size(); ++c) b.filling[c] = m.density_per_m2[c] * per;
  b.g.model = kSelfConsistentBoundaryModel;
  const double inset = d.mesa.etch_depletion_m + 2.0 * d.heterostructure.depth_m;
  for (std::size_t i = 0; i < d.gates.size(); ++i) {
    std::vector<double> under;
    for (int jj = 0; jj < m.ny; ++jj)
      for (int ii = 0; ii < m.nx; ++ii) {
        const Point q{m.x0_m + ii * m.cell_m, m.y0_m + jj * m.cell_m};
        if (geometry::contains(d.gates[i].outline, q) && geometry::contains(d.mesa.outline, q) &&
            geometry::distance_to_boundary(d.mesa.outline, q) >= inset)
          under.push_back(b.filling[static_cast<std::size_t>(jj) * m.nx + ii]);
      }
    if (under.empty()) {
      b.g.local_filling[i] = b.nu;
      continue;
    }
    std::nth_element(under.begin(), under.begin() + static_cast<long>(under.size() / 2), under.end());
    b.g.local_filling[i] = under[under.size() / 2];
  }
}

// The region of channel `ch` from the self-consistent density: inside the level curve of the local
// filling at `level` (the middle of the channel's conductance step).
Region DensityRegion(GeometryBuild& b, std::size_t ch, double level, ChannelRegion& cr) {
  Region r;
  const DensityMap& m = *b.opt.density;
  const geometry::GridField field{m.nx, m.ny, m.x0_m, m.y0_m, m.cell_m, b.filling.data()};
  auto loops = geometry::LevelCurves(field, level);
  std::sort(loops.begin(), loops.end(),
            [](const Polygon& x, const Polygon& y) { return geometry::area(x) > geometry::area(y); });
  int skipped = 0;
  for (Polygon& loop : loops) {
    Polygon simple = geometry::Simplify(loop, 0.25 * m.cell_m);
    if (geometry::find_defect(simple) != geometry::PolygonDefect::kNone) simple = loop;
    if (geometry::find_defect(simple) != geometry::PolygonDefect::kNone ||
        geometry::area(simple) < 4.0 * m.cell_m * m.cell_m) {
      ++skipped;
      continue;
    }
    r = geometry::signed_area(simple) > 0.0 ? r.Union(Region(simple)) : r.Difference(Region(simple));
  }
  if (skipped > 0)
    b.warn("contour-skipped",
           "channel " + std::to_string(ch + 1) + ": " + std::to_string(skipped) +
               " tiny or irregular pieces of its boundary (below four grid cells) were left out",
           b.d.mesa.where);
  for (std::size_t i = 0; i < b.d.gates.size(); ++i)
    (b.g.local_filling[i] < level ? cr.reflecting : cr.passing).push_back(b.d.gates[i].name);
  return r;
}

// The region of the channels up to cumulative conductance `c` from the bare estimate: the etched mesa
// less every gate that reflects them.
Region BareRegion(const GeometryBuild& b, double c, ChannelRegion& cr) {
  Region r = b.base;
  for (std::size_t i = 0; i < b.d.gates.size(); ++i) {
    if (!b.reflects(i, c)) {
      cr.passing.push_back(b.d.gates[i].name);
      continue;
    }
    cr.reflecting.push_back(b.d.gates[i].name);
    r = r.Difference(b.d.gates[i].voltage_V <= b.vdep ? b.depleted[i] : Region(b.d.gates[i].outline));
  }
  return r;
}

// Cuts channel `ch`'s region `r` at every constriction it meets (docs/models.md "Channel boundaries and
// slits"): a corridor where the estimate closes the gap, then the slit whose faces are the ports.
void CutConstrictions(GeometryBuild& b, std::size_t ch, double c, double level, ChannelRegion& cr, Region& r) {
  const Design& d = b.d;
  const Region bare = r;
  for (std::size_t ki = 0; ki < d.constrictions.size(); ++ki) {
    const Constriction& k = d.constrictions[ki];
    const ChannelGeometry::Slit& s = b.g.slits[ki];
    const double t = k.transmission[ch];
    if (s.gap_m <= 0.0) {
      cr.estimate_open.push_back(false);
      continue;
    }
    const Point mid = s.centre;
    const bool open = bare.ContainsInterior(mid);
    cr.estimate_open.push_back(open);
    auto side_reflects = [&](int gate) {
      if (gate < 0) return true;
      return b.opt.density ? b.g.local_filling[static_cast<std::size_t>(gate)] < level
                           : b.reflects(static_cast<std::size_t>(gate), c);
    };
    const bool side_a = side_reflects(b.gate_index(k.first)), side_b = side_reflects(b.gate_index(k.second));
    const std::string chname = "channel " + std::to_string(ch + 1);
    // Who set the transmission: the design, or the saddle-point model of its gates (saddle_model.hpp).
    const std::string gives =
        k.transmission_from_gates ? "the saddle-point model of its gates gives" : "the design gives";
    const std::string used = k.transmission_from_gates ? "that value is used" : "the design's value is used";
    if (!side_a && !side_b) {
      if (t < 1.0)
        b.warn("constriction-passed-under",
               "constriction " + k.name + ": " + chname + " passes under both its gates (their local filling is above " +
                   fmt_g(c) + "), but " + gives + " transmission " + fmt_g(t) + "; this channel ignores the constriction",
               k.where);
      continue;
    }
    const std::string model =
        b.opt.density ? "the self-consistent density (on the whole-mesa grid; at its saddle, local filling " +
                            fmt_g(FillingAt(*b.opt.density, d, mid)) + " against the level " + fmt_g(level) +
                            " where this channel's boundary runs)"
                      : "the bare depletion estimate";
    if (!open && t > 0.0)
      b.warn("estimate-closes",
             "constriction " + k.name + ": " + model + " closes the gap for " + chname +
                 " at the design voltages, but " + gives + " transmission " + fmt_g(t) + "; " + used +
                 " (the channel is let through the gap)",
             k.where);
    if (open && t == 0.0)
      b.warn("estimate-opens",
             "constriction " + k.name + ": " + model + " leaves the gap open for " + chname +
                 ", but " + gives + " transmission 0; " + used,
             k.where);
    r = r.Union(Corridor(s, bare).Intersection(b.mesa)).Difference(Region(SlitOutline(s)));
    cr.slit_constrictions.push_back(static_cast<int>(ki));
  }
}

}  // namespace

ChannelGeometry BuildChannelGeometry(const Design& d, const NetworkOptions& opt) {
  std::string why;
  if (!opt.IsValid(&why)) throw std::invalid_argument("NetworkOptions: " + why);
  ChannelGeometry g;
  GeometryBuild b{d, opt, g};
  b.vdep = DeriveWaferQuantities(d.heterostructure, d.conditions.field_T, d.conditions.temperature_K).depletion_voltage_V;
  b.nu = d.conditions.filling.value();
  DepleteGates(b);
  if (opt.density) SelfConsistentFilling(b);
  b.mesa = Region(d.mesa.outline);
  b.base = b.mesa.Offset(-d.mesa.etch_depletion_m, opt.disc_segments);
  if (b.base.empty())
    g.findings.push_back(
        {Severity::kError, "mesa-etched-away",
         "the etch depletion (" + units::FormatSI(d.mesa.etch_depletion_m, "m") + ") leaves no 2DEG in the mesa",
         d.mesa.where});

  // Slits across every constriction's gap, through its saddle (saddle.hpp): of the self-consistent
  // density when one is given, else of the bare gate potential at the design voltages.
  std::vector<double> design_volts;
  for (const Gate& gate : d.gates) design_volts.push_back(gate.voltage_V);
  for (const Constriction& k : d.constrictions)
    g.slits.push_back(MakeSlit(d, k, opt, g.lateral_depletion_m, design_volts));

  Fraction cumulative{0, 1};
  for (std::size_t ch = 0; ch < d.channels.size(); ++ch) {
    cumulative = cumulative + d.channels[ch].conductance;
    const double c = cumulative.value();
    const double level = c - 0.5 * d.channels[ch].conductance.value();
    ChannelRegion cr;
    cr.channel = static_cast<int>(ch);
    Region r = opt.density ? DensityRegion(b, ch, level, cr) : BareRegion(b, c, cr);
    CutConstrictions(b, ch, c, level, cr, r);
    cr.region = std::move(r);
    if (cr.region.empty())
      b.warn("channel-nowhere", "channel " + std::to_string(ch + 1) + " has no region: the gates remove all of it",
             d.mesa.where);
    g.channels.push_back(std::move(cr));
  }
  return g;
}

namespace {

struct Tag {
  enum Kind { kFree, kContact, kFace } kind = kFree;
  int index = 0;
  int face = 0;
  bool operator==(const Tag& o) const { return kind == o.kind && index == o.index && face == o.face; }
};

struct Face {
  int constriction;
  int face;
  Point p0, p1;  // the face segment
};

struct Run {
  Tag tag;
  double length = 0.0;
  std::vector<Point> pts;  // start point, then every vertex up to and including the end
};

// Parameters t in (0, 1) where segment [p, q] crosses segment [a, b].
void crossings(Point p, Point q, Point a, Point b, std::vector<double>& ts) {
  const double rx = q.x - p.x, ry = q.y - p.y, sx = b.x - a.x, sy = b.y - a.y;
  const double den = rx * sy - ry * sx;
  if (den == 0.0) return;
  const double t = ((a.x - p.x) * sy - (a.y - p.y) * sx) / den;
  const double u = ((a.x - p.x) * ry - (a.y - p.y) * rx) / den;
  if (t > 0.0 && t < 1.0 && u >= 0.0 && u <= 1.0) ts.push_back(t);
}

class Tracer {
 public:
  // Each face is sampled every quarter slit width for the k-d tree, but never with more than its share
  // of kMaxFaceSamples points (a bound on memory whatever the ratio of face length to gap); coarser
  // samples only widen the search radius, not the answer.
  static constexpr std::size_t kMaxFaceSamples = std::size_t{1} << 21;  // 2 Mi points, about 50 MB
  Tracer(const Design& d, const ChannelGeometry& g) : d_(d) {
    std::vector<Point> samples;
    std::size_t faces = 0;
    for (const auto& s : g.slits) faces += s.gap_m > 0.0 ? 2 : 0;
    const double per_face = std::max(16.0, static_cast<double>(kMaxFaceSamples) / std::max<std::size_t>(faces, 1));
    for (std::size_t k = 0; k < g.slits.size(); ++k) {
      const auto& s = g.slits[k];
      if (s.gap_m <= 0.0) continue;
      const Point u{s.n.y, -s.n.x};
      for (int f = 0; f < 2; ++f) {
        const double side = f == 0 ? s.half_width_m : -s.half_width_m;
        Face face{static_cast<int>(k), f, add(add(s.a, u, -s.ext_a_m), s.n, side),
                  add(add(s.b, u, s.ext_b_m), s.n, side)};
        const double len = geometry::distance(face.p0, face.p1);
        const int n = static_cast<int>(std::clamp(std::ceil(len / (0.5 * s.half_width_m)), 2.0, per_face));
        for (int i = 0; i <= n; ++i) {
          const double t = static_cast<double>(i) / n;
          samples.push_back({face.p0.x + t * (face.p1.x - face.p0.x), face.p0.y + t * (face.p1.y - face.p0.y)});
          sample_face_.push_back(faces_.size());
        }
        sample_radius_ = std::max(sample_radius_, len / n);
        faces_.push_back(face);
        tolerance_ = std::max(tolerance_, 1e-6 * s.half_width_m);
      }
    }
    if (!samples.empty()) index_ = std::make_unique<geometry::PointIndex>(std::move(samples));
  }

  void Ring(const Polygon& ring_ccw_or_cw, bool reverse, int channel, EdgeNetwork& out) const {
    std::vector<Point> v = ring_ccw_or_cw.vertices;
    if (reverse) std::reverse(v.begin(), v.end());
    // Split every edge where it crosses a contact outline, and tag each piece.
    std::vector<Run> subs;
    const std::size_t n = v.size();
    for (std::size_t i = 0; i < n; ++i) {
      const Point p = v[i], q = v[(i + 1) % n];
      std::vector<double> ts{0.0, 1.0};
      for (const Contact& c : d_.contacts) {
        const auto& cv = c.outline.vertices;
        for (std::size_t j = 0; j < cv.size(); ++j) crossings(p, q, cv[j], cv[(j + 1) % cv.size()], ts);
      }
      std::sort(ts.begin(), ts.end());
      for (std::size_t j = 0; j + 1 < ts.size(); ++j) {
        const Point a{p.x + ts[j] * (q.x - p.x), p.y + ts[j] * (q.y - p.y)};
        const Point b{p.x + ts[j + 1] * (q.x - p.x), p.y + ts[j + 1] * (q.y - p.y)};
        const double len = geometry::distance(a, b);
        if (len <= 0.0) continue;
        subs.push_back({classify(a, b), len, {a, b}});
      }
    }
    if (subs.empty()) return;
    // Merge neighbours with the same tag into runs (cyclically).
    std::vector<Run> runs;
    for (const Run& s : subs) {
      if (!runs.empty() && runs.back().tag == s.tag) {
        runs.back().length += s.length;
        runs.back().pts.push_back(s.pts[1]);
      } else {
        runs.push_back(s);
      }
    }
    if (runs.size() > 1 && runs.front().tag == runs.back().tag) {
      Run& last = runs.back();
      last.length += runs.front().length;
      last.pts.insert(last.pts.end(), runs.front().pts.begin() + 1, runs.front().pts.end());
      runs.erase(runs.begin());
    }
    const auto first = std::find_if(runs.begin(), runs.end(), [](const Run& r) { return r.tag.kind != Tag::kFree; });
    if (first == runs.end()) {
      double length = 0.0;
      for (const Run& r : runs) length += r.length;
      out.closed.push_back({channel, length, geometry::area(Polygon{v}), Polygon{v}});
      return;
    }
    std::rotate(runs.begin(), first, runs.end());
    EdgePiece piece;
    piece.channel = channel;
    piece.from = end_of(runs[0].tag);
    piece.path = {runs[0].pts.back()};
    for (std::size_t i = 1; i <= runs.size(); ++i) {
      const Run& r = runs[i % runs.size()];
      if (r.tag.kind == Tag::kFree) {
        piece.length_m += r.length;
        piece.path.insert(piece.path.end(), r.pts.begin() + 1, r.pts.end());
        continue;
      }
      piece.to = end_of(r.tag);
      out.pieces.push_back(piece);
      piece = EdgePiece{};
      piece.channel = channel;
      piece.from = end_of(r.tag);
      piece.path = {r.pts.back()};
    }
  }

 private:
  Tag classify(Point a, Point b) const {
    const Point m{(a.x + b.x) / 2, (a.y + b.y) / 2};
    if (index_) {
      for (std::size_t s : index_->Within(m, sample_radius_)) {
        const Face& f = faces_[sample_face_[s]];
        const Point c = geometry::closest_on_segment(m, f.p0, f.p1);
        if (geometry::distance(c, m) <= tolerance_ &&
            geometry::distance(geometry::closest_on_segment(a, f.p0, f.p1), a) <= tolerance_)
          return {Tag::kFace, f.constriction, f.face};
      }
    }
    for (std::size_t i = 0; i < d_.contacts.size(); ++i)
      if (geometry::contains(d_.contacts[i].outline, m)) return {Tag::kContact, static_cast<int>(i), 0};
    return {};
  }

  static EdgeEnd end_of(const Tag& t) {
    return {t.kind == Tag::kContact ? EdgeEnd::Kind::kContact : EdgeEnd::Kind::kConstriction, t.index, t.face};
  }

  const Design& d_;
  std::vector<Face> faces_;
  std::vector<std::size_t> sample_face_;
  std::unique_ptr<geometry::PointIndex> index_;
  double sample_radius_ = 0.0;
  double tolerance_ = 0.0;
};

}  // namespace

EdgeNetwork TraceEdges(const Design& d, const ChannelGeometry& g, double field_T) {
  if (field_T == 0.0) throw std::invalid_argument("TraceEdges: the field must not be zero");
  EdgeNetwork net;
  net.field_T = field_T;
  const Tracer tracer(d, g);
  // Pieces come counter-clockwise (outer) and clockwise (holes); for B > 0 electrons go the other way.
  const bool reverse = field_T > 0.0;
  for (const ChannelRegion& cr : g.channels) {
    for (const auto& piece : cr.region.Pieces()) {
      tracer.Ring(piece.outer, reverse, cr.channel, net);
      for (const Polygon& h : piece.holes) tracer.Ring(h, reverse, cr.channel, net);
    }
    // Every slit face must be met exactly once by this channel's edges.
    for (int k : cr.slit_constrictions) {
      for (int f = 0; f < 2; ++f) {
        int ins = 0, outs = 0;
        for (const EdgePiece& p : net.pieces) {
          if (p.channel != cr.channel) continue;
          const EdgeEnd e{EdgeEnd::Kind::kConstriction, k, f};
          ins += p.to == e;
          outs += p.from == e;
        }
        if (ins != 1 || outs != 1)
          net.findings.push_back({Severity::kError, "ports-not-found",
                                  "constriction " + d.constrictions[static_cast<std::size_t>(k)].name + ": channel " +
                                      std::to_string(cr.channel + 1) + " meets face " + std::to_string(f) +
                                      " of its gap " + std::to_string(ins) +
                                      " times instead of once; the layout around the gap is too irregular to trace" +
                                      (g.model == kBareBoundaryModel ? std::string()
                                                                     : " (try --fast for the bare boundaries)"),
                                  d.constrictions[static_cast<std::size_t>(k)].where});
      }
    }
  }
  return net;
}

int PortPiece(const EdgeNetwork& net, int channel, int constriction, int face, bool outgoing) {
  const EdgeEnd port{EdgeEnd::Kind::kConstriction, constriction, face};
  for (std::size_t p = 0; p < net.pieces.size(); ++p) {
    const EdgePiece& e = net.pieces[p];
    if (e.channel == channel && (outgoing ? e.from : e.to) == port) return static_cast<int>(p);
  }
  return -1;
}

std::optional<PortStep> StepAtPort(const Design& d, const EdgeNetwork& net, int piece) {
  const EdgePiece& e = net.pieces[static_cast<std::size_t>(piece)];
  if (e.to.kind != EdgeEnd::Kind::kConstriction) return std::nullopt;
  return StepAtPort(d, net, e.channel, e.to.index, e.to.face);
}

PortStep StepAtPort(const Design& d, const EdgeNetwork& net, int channel, int constriction, int face) {
  PortStep s;
  s.transmission =
      d.constrictions[static_cast<std::size_t>(constriction)].transmission[static_cast<std::size_t>(channel)];
  s.reflected = PortPiece(net, channel, constriction, face, true);
  s.transmitted = PortPiece(net, channel, constriction, 1 - face, true);
  return s;
}

std::optional<PortStep> StepBackAtPort(const Design& d, const EdgeNetwork& net, int piece) {
  const EdgePiece& e = net.pieces[static_cast<std::size_t>(piece)];
  if (e.from.kind != EdgeEnd::Kind::kConstriction) return std::nullopt;
  PortStep s;
  s.transmission =
      d.constrictions[static_cast<std::size_t>(e.from.index)].transmission[static_cast<std::size_t>(e.channel)];
  s.reflected = PortPiece(net, e.channel, e.from.index, e.from.face, false);
  s.transmitted = PortPiece(net, e.channel, e.from.index, 1 - e.from.face, false);
  return s;
}

ConstrictionPorts PortsOf(const EdgeNetwork& net, int channel, int constriction) {
  ConstrictionPorts ports;
  for (int f = 0; f < 2; ++f) {
    ports.incoming[f] = PortPiece(net, channel, constriction, f, false);
    ports.outgoing[f] = PortPiece(net, channel, constriction, f, true);
  }
  return ports;
}

std::vector<char> ReachablePieces(const Design& d, const EdgeNetwork& net, const std::vector<int>& starts,
                                  const std::vector<int>& channels, Walk walk) {
  std::vector<char> reach(net.pieces.size(), 0);
  auto counts = [&](int p) {
    return channels.empty() || std::find(channels.begin(), channels.end(), net.pieces[static_cast<std::size_t>(p)].channel) !=
                                   channels.end();
  };
  std::vector<int> stack;
  for (int s : starts)
    if (counts(s)) stack.push_back(s);
  while (!stack.empty()) {
    const int p = stack.back();
    stack.pop_back();
    if (reach[static_cast<std::size_t>(p)]) continue;
    reach[static_cast<std::size_t>(p)] = 1;
    const auto step = walk == Walk::kDownstream ? StepAtPort(d, net, p) : StepBackAtPort(d, net, p);
    if (!step) continue;
    if (step->transmission < 1.0 && step->reflected >= 0 && counts(step->reflected)) stack.push_back(step->reflected);
    if (step->transmission > 0.0 && step->transmitted >= 0 && counts(step->transmitted))
      stack.push_back(step->transmitted);
  }
  return reach;
}

// Strongly connected components of the coherent piece graph with a cycle: the loops.
std::vector<std::vector<int>> FindEdgeLoops(const Design& d, const EdgeNetwork& net, const std::vector<int>& channels) {
  const int n = static_cast<int>(net.pieces.size());
  std::vector<std::vector<int>> next(static_cast<std::size_t>(n));
  for (int p = 0; p < n; ++p) {
    const EdgePiece& e = net.pieces[static_cast<std::size_t>(p)];
    if (std::find(channels.begin(), channels.end(), e.channel) == channels.end()) continue;
    const auto step = StepAtPort(d, net, p);
    if (!step) continue;
    if (step->transmission < 1.0 && step->reflected >= 0) next[static_cast<std::size_t>(p)].push_back(step->reflected);
    if (step->transmission > 0.0 && step->transmitted >= 0)
      next[static_cast<std::size_t>(p)].push_back(step->transmitted);
  }
  // Tarjan's algorithm.
  std::vector<int> index(static_cast<std::size_t>(n), -1), low(static_cast<std::size_t>(n), 0), stack;
  std::vector<char> on(static_cast<std::size_t>(n), 0);
  std::vector<std::vector<int>> out;
  int counter = 0;
  std::function<void(int)> visit = [&](int v) {
    index[static_cast<std::size_t>(v)] = low[static_cast<std::size_t>(v)] = counter++;
    stack.push_back(v);
    on[static_cast<std::size_t>(v)] = 1;
    for (int w : next[static_cast<std::size_t>(v)]) {
      if (index[static_cast<std::size_t>(w)] < 0) {
        visit(w);
        low[static_cast<std::size_t>(v)] = std::min(low[static_cast<std::size_t>(v)], low[static_cast<std::size_t>(w)]);
      } else if (on[static_cast<std::size_t>(w)]) {
        low[static_cast<std::size_t>(v)] =
            std::min(low[static_cast<std::size_t>(v)], index[static_cast<std::size_t>(w)]);
      }
    }
    if (low[static_cast<std::size_t>(v)] == index[static_cast<std::size_t>(v)]) {
      std::vector<int> comp;
      int w;
      do {
        w = stack.back();
        stack.pop_back();
        on[static_cast<std::size_t>(w)] = 0;
        comp.push_back(w);
      } while (w != v);
      const bool self = std::find(next[static_cast<std::size_t>(v)].begin(), next[static_cast<std::size_t>(v)].end(),
                                  v) != next[static_cast<std::size_t>(v)].end();
      if (comp.size() > 1 || self) {
        std::sort(comp.begin(), comp.end());
        out.push_back(comp);
      }
    }
  };
  for (int v = 0; v < n; ++v)
    if (index[static_cast<std::size_t>(v)] < 0) visit(v);
  return out;
}

}  // namespace hallway
