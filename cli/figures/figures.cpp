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
#include <stdexcept>

#include "hallway/constants.hpp"
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

// Opens a surface of the format on a temporary file, runs `draw`, finishes and renames into place.
void render(const std::string& path, Format f, int w, int h, const std::function<void(cairo_t*)>& draw) {
  const std::string tmp = path + ".part";
  cairo_surface_t* s = nullptr;
  switch (f) {
    case Format::kPng: s = cairo_image_surface_create(CAIRO_FORMAT_ARGB32, w, h); break;
    case Format::kSvg: s = cairo_svg_surface_create(tmp.c_str(), w, h); break;
    case Format::kPdf: s = cairo_pdf_surface_create(tmp.c_str(), w, h); break;
  }
  cairo_t* cr = cairo_create(s);
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

void text(cairo_t* cr, double x, double y, const std::string& s, double size = 11, bool centred = false) {
  cairo_set_font_size(cr, size);
  cairo_text_extents_t e;
  cairo_text_extents(cr, s.c_str(), &e);
  cairo_move_to(cr, centred ? x - e.width / 2 : x, y);
  cairo_show_text(cr, s.c_str());
}

double nice(double x) {
  const double p = std::pow(10.0, std::floor(std::log10(x)));
  for (double m : {1.0, 2.0, 5.0, 10.0})
    if (m * p >= x) return m * p;
  return 10 * p;
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

// The mesa, the gates shaded by voltage and the contacts with their names and roles.
void draw_shapes(cairo_t* cr, const View& v, const Design& d, double vmin) {
  // Mesa.
  polygon(cr, v, d.mesa.outline);
  cairo_set_source_rgb(cr, 0.90, 0.90, 0.88);
  cairo_fill_preserve(cr);
  cairo_set_source_rgb(cr, 0.45, 0.45, 0.45);
  cairo_set_line_width(cr, 1);
  cairo_stroke(cr);
  // Gates, shaded by voltage.
  for (const Gate& g : d.gates) {
    polygon(cr, v, g.outline);
    set(cr, sequential(vmin < 0 ? g.voltage_V / vmin : 0.0), 0.85);
    cairo_fill_preserve(cr);
    cairo_set_source_rgb(cr, 0.2, 0.2, 0.2);
    cairo_stroke(cr);
  }
  // Contacts: a gold fill with a diagonal hatch, name and role.
  for (std::size_t i = 0; i < d.contacts.size(); ++i) {
    const Contact& c = d.contacts[i];
    polygon(cr, v, c.outline);
    cairo_set_source_rgb(cr, 0.86, 0.74, 0.38);
    cairo_fill_preserve(cr);
    cairo_set_source_rgb(cr, 0.35, 0.27, 0.05);
    cairo_set_line_width(cr, 1.2);
    cairo_stroke(cr);
    const auto bb = geometry::bounding_box(c.outline);
    cairo_set_source_rgb(cr, 0.1, 0.1, 0.1);
    const Wiring* w = d.FindWiring(c.name);
    text(cr, v.px(0.5 * (bb.xmin + bb.xmax)), v.py(0.5 * (bb.ymin + bb.ymax)) + 4,
         c.name + (w ? " (" + ToString(w->role) + ")" : ""), 11, true);
  }
}

void draw_edges(cairo_t* cr, const View& v, const EdgeNetwork& net, const std::vector<Arrow>& arrows) {
  // Edges with arrows.
  for (const EdgePiece& e : net.pieces) {
    const int ch = e.channel % 4;
    set(cr, kChannel[ch]);
    cairo_set_line_width(cr, 2.0);
    cairo_set_dash(cr, kDash[ch], kDash[ch][1] > 0 ? 2 : 0, 0);
    for (std::size_t k = 0; k < e.path.size(); ++k)
      k == 0 ? cairo_move_to(cr, v.px(e.path[k].x), v.py(e.path[k].y))
             : cairo_line_to(cr, v.px(e.path[k].x), v.py(e.path[k].y));
    cairo_stroke(cr);
  }
  cairo_set_dash(cr, nullptr, 0, 0);
  for (const Arrow& a : arrows) {
    set(cr, kChannel[a.channel % 4]);
    const double x = v.px(a.at.x), y = v.py(a.at.y), dx = a.direction.x, dy = -a.direction.y;  // y flips on screen
    const double s = 9;
    cairo_move_to(cr, x + dx * s, y + dy * s);
    cairo_line_to(cr, x - dx * s - dy * s * 0.6, y - dy * s + dx * s * 0.6);
    cairo_line_to(cr, x - dx * s + dy * s * 0.6, y - dy * s - dx * s * 0.6);
    cairo_close_path(cr);
    cairo_fill(cr);
  }
}

void draw_constriction_labels(cairo_t* cr, const View& v, const Design& d) {
  // Constriction labels.
  for (const Constriction& k : d.constrictions) {
    if (const auto gap = FindGap(d, k, nullptr)) {
      std::string t;
      for (double x : k.transmission) {
        char b[16];
        std::snprintf(b, sizeof b, "%.3g", x);
        t += (t.empty() ? "" : ", ") + std::string(b);
      }
      cairo_set_source_rgb(cr, 0.05, 0.05, 0.05);
      const Point m = gap->midpoint();
      text(cr, v.px(m.x) + 8, v.py(m.y) - 8, k.name + " [" + t + "]", 11);
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

LayoutDrawing DrawLayout(const Design& d, const EdgeNetwork& net, const std::string& path, Format format,
                         const std::string& title) {
  const View v = fit(extent(d), 1000, 40, 170);
  LayoutDrawing out;
  out.width_px = v.width;
  out.height_px = v.height;
  out.arrows = place_arrows(net, v);
  double vmin = 0.0;
  for (const Gate& g : d.gates) vmin = std::min(vmin, g.voltage_V);
  render(path, format, v.width, v.height, [&](cairo_t* cr) {
    draw_shapes(cr, v, d, vmin);
    draw_edges(cr, v, net, out.arrows);
    draw_constriction_labels(cr, v, d);
    draw_legend(cr, v, d, net, vmin);
    text(cr, v.margin, 24, title, 14);
    scale_bar(cr, v);
  });
  return out;
}

void DrawDensity(const Design& d, const DensityMap& m, const std::string& path, Format format) {
  const double per = constants::kPlanck_Js / (constants::kElementaryCharge_C * std::abs(d.conditions.field_T));
  double top = d.conditions.filling.value();
  for (double n : m.density_per_m2) top = std::max(top, n * per);
  const geometry::BoundingBox bb{m.x0_m - 0.5 * m.cell_m, m.y0_m - 0.5 * m.cell_m, m.x0_m + (m.nx - 0.5) * m.cell_m,
                                 m.y0_m + (m.ny - 0.5) * m.cell_m};
  const View v = fit(bb, 1000, 40, 110);
  render(path, format, v.width, v.height, [&](cairo_t* cr) {
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
    // Colour bar.
    const double cx = v.width - 90, cy = 50, ch = std::min(260.0, v.height - 100.0);
    for (int k = 0; k < 100; ++k) {
      set(cr, sequential(1.0 - k / 100.0));
      cairo_rectangle(cr, cx, cy + k * ch / 100, 18, ch / 100 + 0.5);
      cairo_fill(cr);
    }
    cairo_set_source_rgb(cr, 0.1, 0.1, 0.1);
    for (int k = 0; k <= 4; ++k) {
      char b[32];
      std::snprintf(b, sizeof b, "%.2g", top * (1.0 - k / 4.0));
      text(cr, cx + 24, cy + k * ch / 4 + 4, b, 10);
    }
    text(cr, cx - 10, cy - 12, "local filling", 11);
    text(cr, v.margin, 24, "local filling factor n h / e|B| (Thomas-Fermi)", 14);
    scale_bar(cr, v);
  });
}

void DrawPlot(const std::vector<Series>& series, const std::string& xl, const std::string& yl, const std::string& title,
              const std::string& path, Format format) {
  double xmin = HUGE_VAL, xmax = -HUGE_VAL, ymin = HUGE_VAL, ymax = -HUGE_VAL;
  for (const Series& s : series)
    for (std::size_t i = 0; i < s.x.size() && i < s.y.size(); ++i) {
      if (!std::isfinite(s.y[i])) continue;
      xmin = std::min(xmin, s.x[i]);
      xmax = std::max(xmax, s.x[i]);
      ymin = std::min(ymin, s.y[i]);
      ymax = std::max(ymax, s.y[i]);
    }
  if (!(xmax > xmin)) xmax = xmin + 1;
  if (!(ymax > ymin)) {
    ymin -= 1;
    ymax += 1;
  }
  const double pad = 0.05 * (ymax - ymin);
  ymin -= pad;
  ymax += pad;
  const int w = 720, h = 440;
  const double l = 80, r = 170, t = 40, b = 60;
  auto X = [&](double x) { return l + (x - xmin) / (xmax - xmin) * (w - l - r); };
  auto Y = [&](double y) { return h - b - (y - ymin) / (ymax - ymin) * (h - t - b); };
  render(path, format, w, h, [&](cairo_t* cr) {
    cairo_set_source_rgb(cr, 0.1, 0.1, 0.1);
    cairo_set_line_width(cr, 1);
    cairo_rectangle(cr, l, t, w - l - r, h - t - b);
    cairo_stroke(cr);
    for (int k = 0; k <= 4; ++k) {
      char bx[32], by[32];
      const double xv = xmin + k * (xmax - xmin) / 4, yv = ymin + k * (ymax - ymin) / 4;
      std::snprintf(bx, sizeof bx, "%.3g", xv);
      std::snprintf(by, sizeof by, "%.3g", yv);
      text(cr, X(xv), h - b + 18, bx, 10, true);
      text(cr, 8, Y(yv) + 4, by, 10);
      cairo_set_source_rgba(cr, 0.1, 0.1, 0.1, 0.15);
      cairo_move_to(cr, l, Y(yv));
      cairo_line_to(cr, w - r, Y(yv));
      cairo_stroke(cr);
      cairo_set_source_rgb(cr, 0.1, 0.1, 0.1);
    }
    text(cr, l + (w - l - r) / 2, h - 18, xl, 12, true);
    cairo_save(cr);
    cairo_translate(cr, 22, t + (h - t - b) / 2);
    cairo_rotate(cr, -std::numbers::pi / 2);
    text(cr, 0, -6, yl, 12, true);
    cairo_restore(cr);
    text(cr, l, 24, title, 14);
    for (std::size_t si = 0; si < series.size(); ++si) {
      const Series& s = series[si];
      set(cr, kChannel[si % 4]);
      cairo_set_line_width(cr, 2);
      cairo_set_dash(cr, kDash[si % 4], kDash[si % 4][1] > 0 ? 2 : 0, 0);
      bool pen = false;
      for (std::size_t i = 0; i < s.x.size() && i < s.y.size(); ++i) {
        if (!std::isfinite(s.y[i])) {
          pen = false;
          continue;
        }
        pen ? cairo_line_to(cr, X(s.x[i]), Y(s.y[i])) : cairo_move_to(cr, X(s.x[i]), Y(s.y[i]));
        pen = true;
      }
      cairo_stroke(cr);
      cairo_set_dash(cr, nullptr, 0, 0);
      cairo_move_to(cr, w - r + 12, t + 14 + 18 * si);
      cairo_line_to(cr, w - r + 38, t + 14 + 18 * si);
      set(cr, kChannel[si % 4]);
      cairo_stroke(cr);
      cairo_set_source_rgb(cr, 0.1, 0.1, 0.1);
      text(cr, w - r + 44, t + 18 + 18 * si, s.label, 10);
    }
  });
}

}  // namespace hallway::figures
