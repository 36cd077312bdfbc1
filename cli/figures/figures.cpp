// Cairo figures; see figures.hpp for the visual language.
#include "figures.hpp"

#include <cairo-pdf.h>
#include <cairo-svg.h>
#include <cairo.h>

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <cstdio>
#include <filesystem>
#include <functional>
#include <numbers>
#include <optional>
#include <stdexcept>

#include "hallway/constants.hpp"
#include "hallway/gap.hpp"
#include "hallway/units.hpp"

namespace hallway::figures {
namespace {

using geometry::Point;
using geometry::Polygon;

struct Rgb {
  double r, g, b;
};

// Sequential: pale sand -> dusty rose -> deep indigo; lightness falls monotonically.
Rgb sequential(double t) {
  t = std::clamp(t, 0.0, 1.0);
  const Rgb a{0.97, 0.93, 0.82}, m{0.78, 0.52, 0.56}, z{0.17, 0.11, 0.38};
  if (t < 0.5) {
    const double s = t / 0.5;
    return {a.r + s * (m.r - a.r), a.g + s * (m.g - a.g), a.b + s * (m.b - a.b)};
  }
  const double s = (t - 0.5) / 0.5;
  return {m.r + s * (z.r - m.r), m.g + s * (z.g - m.g), m.b + s * (z.b - m.b)};
}

const Rgb kChannel[] = {{0.04, 0.43, 0.60}, {0.78, 0.39, 0.04}, {0.42, 0.25, 0.63}, {0.25, 0.25, 0.25}};
const double kDash[][2] = {{1, 0}, {7, 3}, {2, 3}, {9, 3}};

void set(cairo_t* cr, Rgb c, double alpha = 1.0) {
  cairo_set_source_rgba(cr, c.r, c.g, c.b, alpha);
}

const cairo_user_data_key_t kTextsKey{};

// The list every text drawn on `cr` is recorded into (set by render).
std::vector<TextBox>* texts_of(cairo_t* cr) {
  return static_cast<std::vector<TextBox>*>(cairo_get_user_data(cr, &kTextsKey));
}

// Opens a surface of the format on a temporary file, runs `draw`, finishes and renames into place; the
// texts drawn are recorded into `texts`.
void render(const std::string& path, Format f, int w, int h, std::vector<TextBox>* texts,
            const std::function<void(cairo_t*)>& draw) {
  const std::string tmp = path + ".part";
  cairo_surface_t* s = nullptr;
  switch (f) {
    case Format::kPng: s = cairo_image_surface_create(CAIRO_FORMAT_ARGB32, w, h); break;
    case Format::kSvg: s = cairo_svg_surface_create(tmp.c_str(), w, h); break;
    case Format::kPdf: s = cairo_pdf_surface_create(tmp.c_str(), w, h); break;
  }
  cairo_t* cr = cairo_create(s);
  cairo_set_user_data(cr, &kTextsKey, texts, nullptr);
  cairo_set_source_rgb(cr, 1, 1, 1);
  cairo_paint(cr);
  cairo_select_font_face(cr, "sans-serif", CAIRO_FONT_SLANT_NORMAL, CAIRO_FONT_WEIGHT_NORMAL);
  draw(cr);
  cairo_destroy(cr);
  if (f == Format::kPng && cairo_surface_write_to_png(s, tmp.c_str()) != CAIRO_STATUS_SUCCESS) {
    cairo_surface_destroy(s);
    throw std::runtime_error("cannot write " + path);
  }
  cairo_surface_finish(s);
  const cairo_status_t status = cairo_surface_status(s);
  cairo_surface_destroy(s);
  if (status != CAIRO_STATUS_SUCCESS)
    throw std::runtime_error("cannot write " + path + ": " + cairo_status_to_string(status));
  std::filesystem::rename(tmp, path);
}

struct View {
  double x0, y0, scale;  // pixel = (x - x0) * scale + margin; y flipped
  int width, height;
  double margin = 40;
  double px(double x) const { return margin + (x - x0) * scale; }
  double py(double y) const { return height - margin - (y - y0) * scale; }
};

View fit(const geometry::BoundingBox& bb, int width, double margin, int extra_right = 0) {
  View v;
  v.margin = margin;
  v.x0 = bb.xmin;
  v.y0 = bb.ymin;
  v.scale = (width - 2 * margin - extra_right) / bb.width();
  v.width = width;
  v.height = static_cast<int>(std::max(260.0, bb.height() * v.scale + 2 * margin + 40));
  return v;
}

void polygon(cairo_t* cr, const View& v, const Polygon& p) {
  for (std::size_t k = 0; k < p.vertices.size(); ++k) {
    const double x = v.px(p.vertices[k].x), y = v.py(p.vertices[k].y);
    k == 0 ? cairo_move_to(cr, x, y) : cairo_line_to(cr, x, y);
  }
  cairo_close_path(cr);
}

enum class Align { kLeft, kCentre, kRight };

// The ink box of `s` at `size` drawn with its baseline starting at (0, 0), in user space.
cairo_text_extents_t measure(cairo_t* cr, const std::string& s, double size) {
  cairo_set_font_size(cr, size);
  cairo_text_extents_t e;
  cairo_text_extents(cr, s.c_str(), &e);
  return e;
}

// Draws `s` with its baseline at y, starting at x (or centred on / ending at x), and records its ink box
// in device pixels (the corners mapped through the current transformation).
TextBox text(cairo_t* cr, double x, double y, const std::string& s, double size = 11, Align align = Align::kLeft) {
  const cairo_text_extents_t e = measure(cr, s, size);
  const double x_start = align == Align::kLeft     ? x
                         : align == Align::kCentre ? x - e.width / 2 - e.x_bearing
                                                   : x - e.width - e.x_bearing;
  cairo_move_to(cr, x_start, y);
  cairo_show_text(cr, s.c_str());
  TextBox box{s, HUGE_VAL, HUGE_VAL, -HUGE_VAL, -HUGE_VAL};
  for (const double cx : {x_start + e.x_bearing, x_start + e.x_bearing + e.width})
    for (const double cy : {y + e.y_bearing, y + e.y_bearing + e.height}) {
      double dx = cx, dy = cy;
      cairo_user_to_device(cr, &dx, &dy);
      box.x0 = std::min(box.x0, dx);
      box.x1 = std::max(box.x1, dx);
      box.y0 = std::min(box.y0, dy);
      box.y1 = std::max(box.y1, dy);
    }
  if (std::vector<TextBox>* texts = texts_of(cr)) texts->push_back(box);
  return box;
}

// Draws `s` so that its ink fills the box `b` (found by a placement), recording it.
void text_in(cairo_t* cr, const TextBox& b, const std::string& s, double size) {
  const cairo_text_extents_t e = measure(cr, s, size);
  text(cr, b.x0 - e.x_bearing, b.y0 - e.y_bearing, s, size);
}

double nice(double x) {
  const double p = std::pow(10.0, std::floor(std::log10(x)));
  for (double m : {1.0, 2.0, 5.0, 10.0})
    if (m * p >= x * (1 - 1e-9)) return m * p;
  return 10 * p;
}

// Ticks on whole multiples of a 1-2-5 step, with the common power of ten (a multiple of 3, used when
// the largest tick is 1e4 or more, or below 1e-2) and the decimals each label needs.
struct Ticks {
  std::vector<double> values;
  int exponent = 0, decimals = 0;
};

Ticks make_ticks(double lo, double hi, int target) {
  Ticks t;
  const double step = nice((hi - lo) / std::max(target, 1));
  const auto k0 = static_cast<long long>(std::ceil(lo / step - 1e-9)),
             k1 = static_cast<long long>(std::floor(hi / step + 1e-9));
  for (long long k = k0; k <= k1; ++k) t.values.push_back(k == 0 ? 0.0 : static_cast<double>(k) * step);
  double biggest = 0;
  for (double v : t.values) biggest = std::max(biggest, std::abs(v));
  if (biggest > 0) {
    const int e = static_cast<int>(std::floor(std::log10(biggest) + 1e-9));
    if (e >= 4 || e <= -3) t.exponent = 3 * static_cast<int>(std::floor(e / 3.0));
  }
  const int p = static_cast<int>(std::floor(std::log10(step) + 1e-9));
  t.decimals = std::max(0, t.exponent - p);
  return t;
}

// A tick label: "0" for zero, never "-0", the value divided by the common power of ten.
std::string tick_label(double v, const Ticks& t) {
  if (v == 0.0) return "0";
  char b[48];
  std::snprintf(b, sizeof b, "%.*f", t.decimals, v / std::pow(10.0, t.exponent));
  std::string s(b);
  if (s.find_first_not_of("-0.") == std::string::npos) return "0";
  return s;
}

// The axis title with the common power of ten of its ticks.
std::string axis_title(const std::string& title, const Ticks& t) {
  return t.exponent == 0 ? title : title + "  \xC3\x97 1e" + std::to_string(t.exponent);
}

geometry::BoundingBox extent(const Design& d) {
  geometry::BoundingBox bb = geometry::bounding_box(d.mesa.outline);
  for (const Contact& c : d.contacts) {
    const auto b = geometry::bounding_box(c.outline);
    bb.xmin = std::min(bb.xmin, b.xmin);
    bb.ymin = std::min(bb.ymin, b.ymin);
    bb.xmax = std::max(bb.xmax, b.xmax);
    bb.ymax = std::max(bb.ymax, b.ymax);
  }
  const double pad = 0.04 * std::max(bb.width(), bb.height());
  return {bb.xmin - pad, bb.ymin - pad, bb.xmax + pad, bb.ymax + pad};
}

void scale_bar(cairo_t* cr, const View& v) {
  const double len = nice(0.18 * (v.width - 2 * v.margin) / v.scale);
  const double x = v.margin, y = v.height - 14;
  cairo_set_source_rgb(cr, 0.1, 0.1, 0.1);
  cairo_set_line_width(cr, 3);
  cairo_move_to(cr, x, y);
  cairo_line_to(cr, x + len * v.scale, y);
  cairo_stroke(cr);
  text(cr, x + len * v.scale + 6, y + 4, units::FormatSI(len, "m"));
}

}  // namespace

std::string ToString(Format f) {
  return f == Format::kPng ? "png" : f == Format::kSvg ? "svg" : "pdf";
}

namespace {

// Arrows: at the middle of each piece and every ~160 px along longer ones, in travel direction.
std::vector<Arrow> place_arrows(const EdgeNetwork& net, const View& v) {
  std::vector<Arrow> arrows;
  for (std::size_t p = 0; p < net.pieces.size(); ++p) {
    const EdgePiece& e = net.pieces[p];
    if (e.path.size() < 2 || e.length_m <= 0) continue;
    const int count = std::max(1, static_cast<int>(e.length_m * v.scale / 160.0));
    for (int a = 0; a < count; ++a) {
      double target = e.length_m * (a + 0.5) / count, walked = 0.0;
      for (std::size_t k = 0; k + 1 < e.path.size(); ++k) {
        const double seg = geometry::distance(e.path[k], e.path[k + 1]);
        if (seg > 0 && walked + seg >= target) {
          const double f = (target - walked) / seg;
          const Point at{e.path[k].x + f * (e.path[k + 1].x - e.path[k].x),
                         e.path[k].y + f * (e.path[k + 1].y - e.path[k].y)};
          arrows.push_back({e.channel,
                            static_cast<int>(p),
                            at,
                            {(e.path[k + 1].x - e.path[k].x) / seg, (e.path[k + 1].y - e.path[k].y) / seg}});
          break;
        }
        walked += seg;
      }
    }
  }
  return arrows;
}

// The mesa, the gates shaded by voltage and the contacts (their labels come later, placed around the rest).
void draw_shapes(cairo_t* cr, const View& v, const Design& d, double vmin) {
  polygon(cr, v, d.mesa.outline);
  cairo_set_source_rgb(cr, 0.90, 0.90, 0.88);
  cairo_fill_preserve(cr);
  cairo_set_source_rgb(cr, 0.45, 0.45, 0.45);
  cairo_set_line_width(cr, 1);
  cairo_stroke(cr);
  for (const Gate& g : d.gates) {
    polygon(cr, v, g.outline);
    set(cr, sequential(vmin < 0 ? g.voltage_V / vmin : 0.0), 0.85);
    cairo_fill_preserve(cr);
    cairo_set_source_rgb(cr, 0.2, 0.2, 0.2);
    cairo_stroke(cr);
  }
  // Contacts: a gold fill with a dark outline.
  for (const Contact& c : d.contacts) {
    polygon(cr, v, c.outline);
    cairo_set_source_rgb(cr, 0.86, 0.74, 0.38);
    cairo_fill_preserve(cr);
    cairo_set_source_rgb(cr, 0.35, 0.27, 0.05);
    cairo_set_line_width(cr, 1.2);
    cairo_stroke(cr);
  }
}

// Pixels an edge of channel `channel` is drawn towards the 2DEG from its traced path.
double edge_offset_px(int channel) {
  return 2.0 + 3.0 * channel;
}

// The traced path in pixels, moved `offset` pixels sideways: for B > 0 electrons keep the 2DEG on their
// right (docs/models.md, Conventions), so a positive `side` (the sign of B) moves towards the 2DEG.
PixelLine displaced(const View& v, const std::vector<Point>& path, double offset, double side) {
  PixelLine out;
  const std::size_t n = path.size();
  for (std::size_t k = 0; k < n; ++k) {
    // Screen normals (y down) of the segments before and after vertex k, averaged.
    double nx = 0, ny = 0;
    int count = 0;
    for (std::size_t s = (k == 0 ? 0 : k - 1); s <= k && s + 1 < n; ++s) {
      const double sx = v.px(path[s + 1].x) - v.px(path[s].x), sy = v.py(path[s + 1].y) - v.py(path[s].y);
      const double len = std::hypot(sx, sy);
      if (len > 0) {
        nx += -sy / len;
        ny += sx / len;
        ++count;
      }
    }
    if (count > 0) {
      nx /= count;
      ny /= count;
    }
    // At a corner the averaged normal is cos(half the turn) long; dividing by its square keeps both
    // sides at the offset (at most twice it at sharp turns).
    const double len2 = std::max(nx * nx + ny * ny, 0.25);
    const double f = count > 0 ? side * offset / len2 : 0.0;
    out.push_back({v.px(path[k].x) + f * nx, v.py(path[k].y) + f * ny});
  }
  return out;
}

// Edges (displaced towards the 2DEG, channel 1 outermost) with arrows; returns the lines drawn, one per
// piece, then the outline of each arrow head.
std::vector<PixelLine> draw_edges(cairo_t* cr, const View& v, const EdgeNetwork& net,
                                  const std::vector<Arrow>& arrows) {
  const double side = net.field_T >= 0 ? 1.0 : -1.0;
  std::vector<PixelLine> lines;
  for (const EdgePiece& e : net.pieces) {
    const int ch = e.channel % 4;
    set(cr, kChannel[ch]);
    cairo_set_line_width(cr, 2.0);
    cairo_set_dash(cr, kDash[ch], kDash[ch][1] > 0 ? 2 : 0, 0);
    const PixelLine line = displaced(v, e.path, edge_offset_px(e.channel), side);
    for (std::size_t k = 0; k < line.size(); ++k)
      k == 0 ? cairo_move_to(cr, line[k].x, line[k].y) : cairo_line_to(cr, line[k].x, line[k].y);
    cairo_stroke(cr);
    lines.push_back(line);
  }
  cairo_set_dash(cr, nullptr, 0, 0);
  for (const Arrow& a : arrows) {
    set(cr, kChannel[a.channel % 4]);
    const double dx = a.direction.x, dy = -a.direction.y;  // y flips on screen
    const double off = side * edge_offset_px(a.channel);   // the screen normal of (dx, dy) is (-dy, dx)
    const double x = v.px(a.at.x) - dy * off, y = v.py(a.at.y) + dx * off;
    const double s = 9;
    const PixelLine head{{x + dx * s, y + dy * s},
                         {x - dx * s - dy * s * 0.6, y - dy * s + dx * s * 0.6},
                         {x - dx * s + dy * s * 0.6, y - dy * s - dx * s * 0.6},
                         {x + dx * s, y + dy * s}};
    cairo_move_to(cr, head[0].x, head[0].y);
    cairo_line_to(cr, head[1].x, head[1].y);
    cairo_line_to(cr, head[2].x, head[2].y);
    cairo_close_path(cr);
    cairo_fill(cr);
    lines.push_back(head);  // after the pieces: line k < pieces.size() is piece k
  }
  return lines;
}

// True when the point lies inside the closed pixel outline (even-odd rule).
bool inside(const PixelLine& outline, Point q) {
  bool in = false;
  for (std::size_t i = 0, j = outline.size() - 1; i < outline.size(); j = i++) {
    const Point& a = outline[i];
    const Point& b = outline[j];
    if ((a.y > q.y) != (b.y > q.y) && q.x < (b.x - a.x) * (q.y - a.y) / (b.y - a.y) + a.x) in = !in;
  }
  return in;
}

// What a label must keep clear of: the texts drawn so far, other boxes (contacts), the data lines, the
// gates (a label on a dark gate is hard to read) and the edges of the page.
struct Obstacles {
  const std::vector<TextBox>* texts = nullptr;
  std::vector<TextBox> boxes;
  const std::vector<PixelLine>* lines = nullptr;
  std::vector<PixelLine> gates;  // closed outlines in pixels
  double width = 0, height = 0;
  bool Free(const TextBox& b, const TextBox* own = nullptr) const {
    if (b.x0 < 2 || b.y0 < 2 || b.x1 > width - 2 || b.y1 > height - 2) return false;
    TextBox padded{"", b.x0 - 2, b.y0 - 2, b.x1 + 2, b.y1 + 2};
    for (const TextBox& t : *texts)
      if (Overlap(padded, t)) return false;
    for (const TextBox& t : boxes)
      if ((!own || t.x0 != own->x0 || t.y0 != own->y0) && Overlap(padded, t)) return false;
    for (const PixelLine& l : *lines)
      for (std::size_t k = 0; k + 1 < l.size(); ++k)
        if (Crosses(padded, l[k], l[k + 1])) return false;
    for (const PixelLine& g : gates) {
      if (g.size() < 3 || inside(g, {0.5 * (b.x0 + b.x1), 0.5 * (b.y0 + b.y1)})) return false;
      for (std::size_t k = 0; k < g.size(); ++k)
        if (Crosses(padded, g[k], g[(k + 1) % g.size()])) return false;
    }
    return true;
  }
};

// A free box of w x h pixels near (ax, ay): tried at growing distances in eight directions, first up and
// to the right. Nothing when the page has no room.
std::optional<TextBox> find_spot(double w, double h, double ax, double ay, const Obstacles& o, double r0 = 6,
                                 const TextBox* own = nullptr) {
  static const int kDirs[8][2] = {{1, -1}, {1, 1}, {-1, -1}, {-1, 1}, {1, 0}, {-1, 0}, {0, -1}, {0, 1}};
  for (double r = r0; r < 400; r += 8)
    for (const auto& d : kDirs) {
      const double x0 = ax + r * d[0] + (d[0] > 0 ? 0 : d[0] < 0 ? -w : -w / 2);
      const double y0 = ay + r * d[1] + (d[1] > 0 ? 0 : d[1] < 0 ? -h : -h / 2);
      const TextBox b{"", x0, y0, x0 + w, y0 + h};
      if (o.Free(b, own)) return b;
    }
  return std::nullopt;
}

// A thin grey line from (ax, ay) to the nearest point of the box, when the box is not next to it.
void leader(cairo_t* cr, double ax, double ay, const TextBox& b) {
  const double x = std::clamp(ax, b.x0, b.x1), y = std::clamp(ay, b.y0, b.y1);
  if (std::hypot(x - ax, y - ay) < 10) return;
  cairo_set_source_rgb(cr, 0.35, 0.35, 0.35);
  cairo_set_line_width(cr, 0.8);
  cairo_move_to(cr, ax, ay);
  cairo_line_to(cr, x, y);
  cairo_stroke(cr);
}

// Contact labels: name and role on one line inside the box, else on two lines, else smaller, else
// beside the box (with a leader when it has to go further).
void draw_contact_labels(cairo_t* cr, const View& v, const Design& d, const Obstacles& o) {
  for (const Contact& c : d.contacts) {
    const auto bb = geometry::bounding_box(c.outline);
    const TextBox own{"", v.px(bb.xmin), v.py(bb.ymax), v.px(bb.xmax), v.py(bb.ymin)};
    const Wiring* w = d.FindWiring(c.name);
    const std::string role = w ? "(" + ToString(w->role) + ")" : "";
    std::vector<std::vector<std::string>> layouts{{role.empty() ? c.name : c.name + " " + role}};
    if (!role.empty()) layouts.push_back({c.name, role});
    bool placed = false;
    cairo_set_source_rgb(cr, 0.1, 0.1, 0.1);
    for (const double size : {11.0, 9.0, 8.0}) {
      for (const auto& lines : layouts) {
        double lw = 0, lh = 0;
        std::vector<cairo_text_extents_t> ext;
        for (const std::string& l : lines) {
          ext.push_back(measure(cr, l, size));
          lw = std::max(lw, ext.back().width);
          lh += ext.back().height + (lh > 0 ? 3 : 0);
        }
        const double cx = 0.5 * (own.x0 + own.x1), cy = 0.5 * (own.y0 + own.y1);
        if (lw > own.x1 - own.x0 - 4 || lh > own.y1 - own.y0 - 4) continue;
        if (!o.Free({"", cx - lw / 2, cy - lh / 2, cx + lw / 2, cy + lh / 2}, &own)) continue;
        double top = cy - lh / 2;
        for (std::size_t k = 0; k < lines.size(); ++k) {
          text_in(cr, {"", cx - ext[k].width / 2, top, 0, 0}, lines[k], size);
          top += ext[k].height + 3;
        }
        placed = true;
        break;
      }
      if (placed) break;
    }
    if (placed) continue;
    const std::string one = layouts.front().front();
    const cairo_text_extents_t e = measure(cr, one, 10);
    const double cx = 0.5 * (own.x0 + own.x1), cy = 0.5 * (own.y0 + own.y1);
    const double reach = 0.5 * std::max(own.x1 - own.x0, own.y1 - own.y0) + 3;
    std::optional<TextBox> spot;
    // Right below, above, right of or left of the box first; further away with a leader if all are taken.
    const TextBox beside[4] = {{"", cx - e.width / 2, own.y1 + 3, cx + e.width / 2, own.y1 + 3 + e.height},
                               {"", cx - e.width / 2, own.y0 - 3 - e.height, cx + e.width / 2, own.y0 - 3},
                               {"", own.x1 + 3, cy - e.height / 2, own.x1 + 3 + e.width, cy + e.height / 2},
                               {"", own.x0 - 3 - e.width, cy - e.height / 2, own.x0 - 3, cy + e.height / 2}};
    for (const TextBox& b : beside)
      if (!spot && o.Free(b, &own)) spot = b;
    if (!spot) spot = find_spot(e.width, e.height, cx, cy, o, reach, &own);
    if (spot) {
      leader(cr, std::clamp(0.5 * (spot->x0 + spot->x1), own.x0, own.x1),
             std::clamp(0.5 * (spot->y0 + spot->y1), own.y0, own.y1), *spot);
      cairo_set_source_rgb(cr, 0.1, 0.1, 0.1);
      text_in(cr, *spot, one, 10);
    }
  }
}

// Constriction labels (name and transmissions) next to the gap, moved with a leader where that is taken.
void draw_constriction_labels(cairo_t* cr, const View& v, const Design& d, const Obstacles& o) {
  for (const Constriction& k : d.constrictions) {
    const auto gap = FindGap(d, k, nullptr);
    if (!gap) continue;
    std::string t;
    for (double x : k.transmission) {
      char b[16];
      std::snprintf(b, sizeof b, "%.3g", x);
      t += (t.empty() ? "" : ", ") + std::string(b);
    }
    const std::string label = k.name + " [" + t + "]";
    const cairo_text_extents_t e = measure(cr, label, 11);
    const Point m = gap->midpoint();
    const double ax = v.px(m.x), ay = v.py(m.y);
    if (const auto spot = find_spot(e.width, e.height, ax, ay, o)) {
      leader(cr, ax, ay, *spot);
      cairo_set_source_rgb(cr, 0.05, 0.05, 0.05);
      text_in(cr, *spot, label, 11);
    }
  }
}

// The legend (channels, gate voltage scale) and the field direction.
void draw_legend(cairo_t* cr, const View& v, const Design& d, const EdgeNetwork& net, double vmin) {
  // Legend, field direction, title, scale bar.
  const double lx = v.width - 160;
  double ly = 50;
  cairo_set_source_rgb(cr, 0.1, 0.1, 0.1);
  text(cr, lx, ly, "edge channels", 12);
  for (std::size_t c = 0; c < d.channels.size(); ++c) {
    ly += 18;
    set(cr, kChannel[c % 4]);
    cairo_set_line_width(cr, 2.0);
    cairo_set_dash(cr, kDash[c % 4], kDash[c % 4][1] > 0 ? 2 : 0, 0);
    cairo_move_to(cr, lx, ly - 4);
    cairo_line_to(cr, lx + 30, ly - 4);
    cairo_stroke(cr);
    cairo_set_dash(cr, nullptr, 0, 0);
    cairo_set_source_rgb(cr, 0.1, 0.1, 0.1);
    text(cr, lx + 36, ly, std::to_string(c + 1) + ": " + d.channels[c].conductance.ToString() + " e^2/h", 11);
  }
  ly += 30;
  text(cr, lx, ly, "gate voltage", 12);
  for (int i = 0; i <= 4; ++i) {
    const double t = i / 4.0;
    set(cr, sequential(t));
    cairo_rectangle(cr, lx, ly + 8 + i * 16, 24, 14);
    cairo_fill(cr);
    cairo_set_source_rgb(cr, 0.1, 0.1, 0.1);
    text(cr, lx + 30, ly + 19 + i * 16, units::FormatSI(t * vmin, "V"), 10);
  }
  ly += 110;
  const double bx = lx + 14, by = ly;
  cairo_set_source_rgb(cr, 0.1, 0.1, 0.1);
  cairo_set_line_width(cr, 1.5);
  cairo_new_path(cr);
  cairo_arc(cr, bx, by, 9, 0, 2 * std::numbers::pi);
  cairo_stroke(cr);
  if (net.field_T > 0) {
    cairo_new_path(cr);
    cairo_arc(cr, bx, by, 2.5, 0, 2 * std::numbers::pi);
    cairo_fill(cr);
  } else {
    cairo_move_to(cr, bx - 6, by - 6);
    cairo_line_to(cr, bx + 6, by + 6);
    cairo_move_to(cr, bx + 6, by - 6);
    cairo_line_to(cr, bx - 6, by + 6);
    cairo_stroke(cr);
  }
  char b[64];
  std::snprintf(b, sizeof b, "B = %+.3g T", net.field_T);
  text(cr, bx + 16, by + 4, b, 11);
  text(cr, bx - 14, by + 24, net.field_T > 0 ? "(out of the page)" : "(into the page)", 10);
}

}  // namespace

bool Overlap(const TextBox& a, const TextBox& b) {
  return a.x0 < b.x1 && b.x0 < a.x1 && a.y0 < b.y1 && b.y0 < a.y1;
}

bool Crosses(const TextBox& box, Point p, Point q) {
  // Liang-Barsky clipping of the segment against the box: it crosses when some parameter range is left.
  double t0 = 0, t1 = 1;
  const double dx = q.x - p.x, dy = q.y - p.y;
  const double pk[4] = {-dx, dx, -dy, dy}, qk[4] = {p.x - box.x0, box.x1 - p.x, p.y - box.y0, box.y1 - p.y};
  for (int k = 0; k < 4; ++k) {
    if (pk[k] == 0) {
      if (qk[k] <= 0) return false;
      continue;
    }
    const double r = qk[k] / pk[k];
    if (pk[k] < 0)
      t0 = std::max(t0, r);
    else
      t1 = std::min(t1, r);
    if (t0 >= t1) return false;
  }
  return true;
}

LayoutDrawing DrawLayout(const Design& d, const EdgeNetwork& net, const std::string& path, Format format,
                         const std::string& title) {
  const View v = fit(extent(d), 1000, 40, 170);
  LayoutDrawing out;
  out.width_px = v.width;
  out.height_px = v.height;
  out.arrows = place_arrows(net, v);
  double vmin = 0.0;
  for (const Gate& g : d.gates) vmin = std::min(vmin, g.voltage_V);
  render(path, format, v.width, v.height, &out.texts, [&](cairo_t* cr) {
    draw_shapes(cr, v, d, vmin);
    out.data = draw_edges(cr, v, net, out.arrows);
    draw_legend(cr, v, d, net, vmin);
    cairo_set_source_rgb(cr, 0.1, 0.1, 0.1);
    text(cr, v.margin, 24, title, 14);
    scale_bar(cr, v);
    Obstacles o{&out.texts, {}, &out.data, {}, static_cast<double>(v.width), static_cast<double>(v.height)};
    for (const Contact& c : d.contacts) {
      const auto bb = geometry::bounding_box(c.outline);
      o.boxes.push_back({"", v.px(bb.xmin), v.py(bb.ymax), v.px(bb.xmax), v.py(bb.ymin)});
    }
    for (const Gate& g : d.gates) {
      PixelLine outline;
      for (const Point& p : g.outline.vertices) outline.push_back({v.px(p.x), v.py(p.y)});
      o.gates.push_back(outline);
    }
    draw_contact_labels(cr, v, d, o);
    draw_constriction_labels(cr, v, d, o);
  });
  return out;
}

namespace {

// The colour bar of the density map: 0 to `top` with 1-2-5 ticks and the bulk filling marked.
void density_bar(cairo_t* cr, const View& v, double top, double bulk, const std::string& bulk_text) {
  const double cx = v.width - 96, cy = 50, ch = std::min(260.0, v.height - 100.0);
  for (int k = 0; k < 100; ++k) {
    set(cr, sequential(1.0 - k / 100.0));
    cairo_rectangle(cr, cx, cy + k * ch / 100, 18, ch / 100 + 0.5);
    cairo_fill(cr);
  }
  cairo_set_source_rgb(cr, 0.1, 0.1, 0.1);
  auto y_of = [&](double f) { return cy + (1.0 - f / top) * ch; };
  const double bulk_y = y_of(bulk);
  cairo_set_line_width(cr, 1.5);
  cairo_move_to(cr, cx - 4, bulk_y);
  cairo_line_to(cr, cx + 22, bulk_y);
  cairo_stroke(cr);
  text(cr, cx + 24, bulk_y + 4, bulk_text, 10);
  const Ticks t = make_ticks(0.0, top, 4);
  cairo_set_line_width(cr, 1);
  for (double f : t.values) {
    const double y = y_of(f);
    cairo_move_to(cr, cx + 18, y);
    cairo_line_to(cr, cx + 22, y);
    cairo_stroke(cr);
    if (std::abs(y - bulk_y) < 14) continue;  // the bulk mark's label is there
    text(cr, cx + 24, y + 4, tick_label(f, t), 10);
  }
  text(cr, cx - 16, cy - 12, axis_title("local filling", t), 11);
}

}  // namespace

Drawing DrawDensity(const Design& d, const DensityMap& m, const std::string& path, Format format) {
  const double per = constants::kPlanck_Js / (constants::kElementaryCharge_C * std::abs(d.conditions.field_T));
  const double bulk = d.conditions.filling.value();
  const double top = 1.25 * bulk;
  const geometry::BoundingBox bb{m.x0_m - 0.5 * m.cell_m, m.y0_m - 0.5 * m.cell_m, m.x0_m + (m.nx - 0.5) * m.cell_m,
                                 m.y0_m + (m.ny - 0.5) * m.cell_m};
  const View v = fit(bb, 1000, 40, 116);
  Drawing out;
  out.width_px = v.width;
  out.height_px = v.height;
  render(path, format, v.width, v.height, &out.texts, [&](cairo_t* cr) {
    // The grid as an image (one pixel per cell, nearest-neighbour scaling), so vector formats embed
    // one bitmap rather than a rectangle per cell.
    cairo_surface_t* img = cairo_image_surface_create(CAIRO_FORMAT_RGB24, m.nx, m.ny);
    const int stride = cairo_image_surface_get_stride(img);
    unsigned char* data = cairo_image_surface_get_data(img);
    cairo_surface_flush(img);
    for (int j = 0; j < m.ny; ++j)
      for (int i = 0; i < m.nx; ++i) {
        const Rgb c = sequential(m.density_per_m2[static_cast<std::size_t>(j) * m.nx + i] * per / top);
        auto* px = reinterpret_cast<std::uint32_t*>(data + static_cast<std::ptrdiff_t>(m.ny - 1 - j) * stride) + i;
        *px = (static_cast<std::uint32_t>(c.r * 255) << 16) | (static_cast<std::uint32_t>(c.g * 255) << 8) |
              static_cast<std::uint32_t>(c.b * 255);
      }
    cairo_surface_mark_dirty(img);
    cairo_save(cr);
    cairo_translate(cr, v.px(bb.xmin), v.py(bb.ymax));
    cairo_scale(cr, m.cell_m * v.scale, m.cell_m * v.scale);
    cairo_set_source_surface(cr, img, 0, 0);
    cairo_pattern_set_filter(cairo_get_source(cr), CAIRO_FILTER_NEAREST);
    cairo_paint(cr);
    cairo_restore(cr);
    cairo_surface_destroy(img);
    // Outlines, clipped to the map so that contacts reaching past it do not run into the colour bar.
    cairo_save(cr);
    cairo_rectangle(cr, v.px(bb.xmin), v.py(bb.ymax), bb.width() * v.scale, bb.height() * v.scale);
    cairo_clip(cr);
    cairo_set_line_width(cr, 1.0);
    for (const Gate& g : d.gates) {
      polygon(cr, v, g.outline);
      cairo_set_source_rgb(cr, 0.0, 0.55, 0.45);
      cairo_stroke(cr);
    }
    for (const Contact& c : d.contacts) {
      polygon(cr, v, c.outline);
      cairo_set_source_rgb(cr, 0.55, 0.40, 0.0);
      cairo_stroke(cr);
    }
    polygon(cr, v, d.mesa.outline);
    cairo_set_source_rgb(cr, 0.3, 0.3, 0.3);
    cairo_stroke(cr);
    cairo_restore(cr);
    density_bar(cr, v, top, bulk, "bulk " + d.conditions.filling.ToString());
    cairo_set_source_rgb(cr, 0.1, 0.1, 0.1);
    text(cr, v.margin, 24, "local filling factor n h / e|B| (Thomas-Fermi)", 14);
    scale_bar(cr, v);
  });
  return out;
}

namespace {

// The frame of a plot: data ranges, pixel box and ticks, measured so that no label runs into another.
struct PlotFrame {
  double xmin = 0, xmax = 1, ymin = 0, ymax = 1;
  double l = 0, r = 170, t = 40, b = 64;
  int w = 720, h = 440;
  Ticks xt, yt;
  double X(double x) const { return l + (x - xmin) / (xmax - xmin) * (w - l - r); }
  double Y(double y) const { return h - b - (y - ymin) / (ymax - ymin) * (h - t - b); }
};

void data_range(const std::vector<Series>& series, PlotFrame* f) {
  double xmin = HUGE_VAL, xmax = -HUGE_VAL, ymin = HUGE_VAL, ymax = -HUGE_VAL;
  for (const Series& s : series)
    for (std::size_t i = 0; i < s.x.size() && i < s.y.size(); ++i) {
      if (!std::isfinite(s.y[i]) || !std::isfinite(s.x[i])) continue;
      xmin = std::min(xmin, s.x[i]);
      xmax = std::max(xmax, s.x[i]);
      ymin = std::min(ymin, s.y[i]);
      ymax = std::max(ymax, s.y[i]);
    }
  if (!std::isfinite(xmin)) xmin = 0, xmax = 1, ymin = 0, ymax = 1;
  if (!(xmax > xmin)) xmax = xmin + 1;
  if (!(ymax > ymin)) {
    const double half = ymin == 0 ? 1.0 : 0.1 * std::abs(ymin);
    ymin -= half;
    ymax += half;
  }
  const double pad = 0.05 * (ymax - ymin);
  f->xmin = xmin;
  f->xmax = xmax;
  f->ymin = ymin - pad;
  f->ymax = ymax + pad;
}

// Ticks for both axes and the left margin that holds the y labels and the y title beside them.
void lay_out_axes(cairo_t* cr, PlotFrame* f) {
  f->yt = make_ticks(f->ymin, f->ymax, 5);
  double widest = 0;
  for (double v : f->yt.values) widest = std::max(widest, measure(cr, tick_label(v, f->yt), 10).width);
  f->l = 10 + 16 + 8 + widest + 6;  // page edge, rotated title, gap, labels, gap to the frame
  // x ticks: as many as fit with at least 12 px between neighbouring labels.
  for (int target = 7; target >= 1; --target) {
    f->xt = make_ticks(f->xmin, f->xmax, target);
    bool fits = true;
    double last_right = -HUGE_VAL;
    for (double v : f->xt.values) {
      const double half = measure(cr, tick_label(v, f->xt), 10).width / 2;
      if (f->X(v) - half < last_right + 12) fits = false;
      last_right = f->X(v) + half;
    }
    if (fits) break;
  }
}

void draw_axes(cairo_t* cr, const PlotFrame& f, const std::string& xl, const std::string& yl) {
  cairo_set_source_rgb(cr, 0.1, 0.1, 0.1);
  cairo_set_line_width(cr, 1);
  cairo_rectangle(cr, f.l, f.t, f.w - f.l - f.r, f.h - f.t - f.b);
  cairo_stroke(cr);
  for (double xv : f.xt.values) {
    cairo_set_source_rgb(cr, 0.1, 0.1, 0.1);
    cairo_move_to(cr, f.X(xv), f.h - f.b);
    cairo_line_to(cr, f.X(xv), f.h - f.b + 4);
    cairo_stroke(cr);
    text(cr, f.X(xv), f.h - f.b + 17, tick_label(xv, f.xt), 10, Align::kCentre);
  }
  for (double yv : f.yt.values) {
    cairo_set_source_rgb(cr, 0.1, 0.1, 0.1);
    text(cr, f.l - 6, f.Y(yv) + 4, tick_label(yv, f.yt), 10, Align::kRight);
    cairo_set_source_rgba(cr, 0.1, 0.1, 0.1, 0.15);
    cairo_move_to(cr, f.l, f.Y(yv));
    cairo_line_to(cr, f.w - f.r, f.Y(yv));
    cairo_stroke(cr);
  }
  cairo_set_source_rgb(cr, 0.1, 0.1, 0.1);
  text(cr, f.l + (f.w - f.l - f.r) / 2, f.h - 16, axis_title(xl, f.xt), 12, Align::kCentre);
  // The y title, rotated, with its baseline 10 px + its size from the page edge: clear of the labels,
  // which start at l - 6 - widest = 34 px. A title longer than the frame is written smaller.
  const std::string ytitle = axis_title(yl, f.yt);
  const double room = f.h - f.t - f.b;
  const double size = std::min(12.0, 12.0 * room / std::max(1.0, measure(cr, ytitle, 12).width));
  cairo_save(cr);
  cairo_translate(cr, 10 + 12, f.t + room / 2);
  cairo_rotate(cr, -std::numbers::pi / 2);
  text(cr, 0, 0, ytitle, size, Align::kCentre);
  cairo_restore(cr);
}

// The curves (finite points joined by straight lines) and their legend; returns the lines in pixels.
std::vector<PixelLine> draw_series(cairo_t* cr, const PlotFrame& f, const std::vector<Series>& series) {
  std::vector<PixelLine> lines;
  for (std::size_t si = 0; si < series.size(); ++si) {
    const Series& s = series[si];
    set(cr, kChannel[si % 4]);
    cairo_set_line_width(cr, 2);
    cairo_set_dash(cr, kDash[si % 4], kDash[si % 4][1] > 0 ? 2 : 0, 0);
    PixelLine line;
    for (std::size_t i = 0; i <= s.x.size() && i <= s.y.size(); ++i) {
      const bool end = i == s.x.size() || i == s.y.size();
      if (end || !std::isfinite(s.y[i]) || !std::isfinite(s.x[i])) {
        if (line.size() > 1) lines.push_back(line);
        line.clear();
        continue;
      }
      const Point p{f.X(s.x[i]), f.Y(s.y[i])};
      line.empty() ? cairo_move_to(cr, p.x, p.y) : cairo_line_to(cr, p.x, p.y);
      line.push_back(p);
    }
    cairo_stroke(cr);
    cairo_set_dash(cr, kDash[si % 4], kDash[si % 4][1] > 0 ? 2 : 0, 0);
    cairo_move_to(cr, f.w - f.r + 12, f.t + 14 + 18 * si);
    cairo_line_to(cr, f.w - f.r + 38, f.t + 14 + 18 * si);
    cairo_stroke(cr);
    cairo_set_dash(cr, nullptr, 0, 0);
    cairo_set_source_rgb(cr, 0.1, 0.1, 0.1);
    const double room = f.r - 44 - 6;
    const double size = std::min(10.0, 10.0 * room / std::max(1.0, measure(cr, s.label, 10).width));
    text(cr, f.w - f.r + 44, f.t + 18 + 18 * si, s.label, size);
  }
  return lines;
}

}  // namespace

Drawing DrawPlot(const std::vector<Series>& series, const std::string& xl, const std::string& yl,
                 const std::string& title, const std::string& path, Format format) {
  PlotFrame f;
  data_range(series, &f);
  Drawing out;
  out.width_px = f.w;
  out.height_px = f.h;
  render(path, format, f.w, f.h, &out.texts, [&](cairo_t* cr) {
    lay_out_axes(cr, &f);
    draw_axes(cr, f, xl, yl);
    const double size = std::min(14.0, 14.0 * (f.w - 20.0) / std::max(1.0, measure(cr, title, 14).width));
    text(cr, 10, 24, title, size);
    out.data = draw_series(cr, f, series);
  });
  return out;
}

namespace {

// The colour bar of a grid map: zmin (palette start, bottom) to zmax (top), ticks inside the range.
void grid_bar(cairo_t* cr, const PlotFrame& f, double zmin, double zmax, const std::string& label) {
  const double cx = f.w - f.r + 22, cy = f.t, ch = f.h - f.t - f.b;
  for (int k = 0; k < 100; ++k) {
    set(cr, sequential(1.0 - k / 100.0));
    cairo_rectangle(cr, cx, cy + k * ch / 100, 16, ch / 100 + 0.5);
    cairo_fill(cr);
  }
  cairo_set_source_rgb(cr, 0.1, 0.1, 0.1);
  const Ticks t = make_ticks(zmin, zmax, 4);
  cairo_set_line_width(cr, 1);
  for (double z : t.values) {
    const double y = cy + (1.0 - (z - zmin) / (zmax - zmin)) * ch;
    cairo_move_to(cr, cx + 16, y);
    cairo_line_to(cr, cx + 20, y);
    cairo_stroke(cr);
    text(cr, cx + 22, y + 4, tick_label(z, t), 10);
  }
  text(cr, f.w - f.r + 4, cy - 10, axis_title(label, t), 11);
}

}  // namespace

Drawing DrawGridMap(const GridMap& m, const std::string& path, Format format) {
  const std::size_t nx = m.x.size(), ny = m.y.size();
  if (nx < 2 || ny < 2 || m.z.size() != nx * ny)
    throw std::invalid_argument("DrawGridMap: need at least 2 x 2 points and one z per point");
  PlotFrame f;
  f.l = 84;
  f.r = 150;
  f.xmin = m.x.front();
  f.xmax = m.x.back();
  f.ymin = m.y.front();
  f.ymax = m.y.back();
  f.xt = make_ticks(f.xmin, f.xmax, 5);
  f.yt = make_ticks(f.ymin, f.ymax, 5);
  const auto [lo, hi] = std::minmax_element(m.z.begin(), m.z.end());
  double zmin = *lo, zmax = *hi;
  // A flat map (no visibility left) still gets a bar: a range of one part in 1e6 around its value.
  if (!(zmax > zmin + 1e-6 * std::abs(zmin))) {
    const double half = std::max(5e-7 * std::abs(zmin), 1e-300);
    zmin -= half;
    zmax += half;
  }
  Drawing out;
  out.width_px = f.w;
  out.height_px = f.h;
  render(path, format, f.w, f.h, &out.texts, [&](cairo_t* cr) {
    const double dx = (f.xmax - f.xmin) / static_cast<double>(nx - 1), dy = (f.ymax - f.ymin) / static_cast<double>(ny - 1);
    cairo_save(cr);
    cairo_rectangle(cr, f.l, f.t, f.w - f.l - f.r, f.h - f.t - f.b);
    cairo_clip(cr);
    for (std::size_t j = 0; j < ny; ++j)
      for (std::size_t i = 0; i < nx; ++i) {
        set(cr, sequential((m.z[j * nx + i] - zmin) / (zmax - zmin)));
        const double x0 = f.X(m.x[i] - dx / 2), x1 = f.X(m.x[i] + dx / 2);
        const double y0 = f.Y(m.y[j] + dy / 2), y1 = f.Y(m.y[j] - dy / 2);
        cairo_rectangle(cr, x0, y0, x1 - x0 + 0.5, y1 - y0 + 0.5);
        cairo_fill(cr);
      }
    cairo_restore(cr);
    draw_axes(cr, f, m.x_label, m.y_label);
    grid_bar(cr, f, zmin, zmax, m.z_label);
    cairo_set_source_rgb(cr, 0.1, 0.1, 0.1);
    text(cr, 10, 24, m.title, 13);
  });
  return out;
}

}  // namespace hallway::figures
