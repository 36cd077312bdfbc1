// GDSII stream reader and flattener; see gdsii.hpp. The record layout is that of the published
// stream format: a 2-byte big-endian length (including the 4-byte header), a record type and a data
// type byte, then the data.
#include "hallway/geometry/gdsii.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <functional>
#include <numbers>
#include <set>

namespace hallway::geometry {
namespace {

enum Rec : std::uint8_t {
  kHeader = 0x00,
  kBgnLib = 0x01,
  kLibName = 0x02,
  kUnits = 0x03,
  kEndLib = 0x04,
  kBgnStr = 0x05,
  kStrName = 0x06,
  kEndStr = 0x07,
  kBoundary = 0x08,
  kPath = 0x09,
  kSref = 0x0A,
  kAref = 0x0B,
  kText = 0x0C,
  kLayer = 0x0D,
  kDatatype = 0x0E,
  kWidth = 0x0F,
  kXy = 0x10,
  kEndEl = 0x11,
  kSname = 0x12,
  kColRow = 0x13,
  kTextType = 0x16,
  kString = 0x19,
  kStrans = 0x1A,
  kMag = 0x1B,
  kAngle = 0x1C,
  kPathType = 0x21,
  kBox = 0x2D,
  kBoxType = 0x2E,
  kBgnExtn = 0x30,
  kEndExtn = 0x31,
};

struct Record {
  std::size_t offset = 0;
  std::uint8_t type = 0, dtype = 0;
  const unsigned char* data = nullptr;
  std::size_t size = 0;
};

std::int32_t i32(const unsigned char* p) {
  return static_cast<std::int32_t>((std::uint32_t{p[0]} << 24) | (std::uint32_t{p[1]} << 16) |
                                   (std::uint32_t{p[2]} << 8) | p[3]);
}
std::int16_t i16(const unsigned char* p) {
  return static_cast<std::int16_t>((p[0] << 8) | p[1]);
}
// 8-byte real: sign, 7-bit excess-64 base-16 exponent, 56-bit fraction.
double real8(const unsigned char* p) {
  const int sign = p[0] & 0x80 ? -1 : 1;
  const int exponent = (p[0] & 0x7F) - 64;
  std::uint64_t mantissa = 0;
  for (int k = 1; k < 8; ++k) mantissa = (mantissa << 8) | p[k];
  return sign * static_cast<double>(mantissa) / 72057594037927936.0 * std::pow(16.0, exponent);
}

struct Transform {  // q = T p: reflect about x, scale, rotate, translate
  double a = 1, b = 0, c = 0, d = 1, tx = 0, ty = 0;
  Point operator()(Point p) const { return {a * p.x + b * p.y + tx, c * p.x + d * p.y + ty}; }
  Transform then(const Transform& outer) const {  // outer(this(p))
    return {outer.a * a + outer.b * c,
            outer.a * b + outer.b * d,
            outer.c * a + outer.d * c,
            outer.c * b + outer.d * d,
            outer.a * tx + outer.b * ty + outer.tx,
            outer.c * tx + outer.d * ty + outer.ty};
  }
  bool reflects() const { return a * d - b * c < 0; }
};

Transform placement(bool reflect, double mag, double angle_deg, Point at) {
  const double r = angle_deg * std::numbers::pi / 180.0, cs = std::cos(r), sn = std::sin(r);
  const double ry = reflect ? -1.0 : 1.0;
  return {mag * cs, -mag * sn * ry, mag * sn, mag * cs * ry, at.x, at.y};
}

struct Element {
  Rec kind = kBoundary;
  int layer = 0, datatype = 0;
  std::vector<Point> xy;  // database units
  std::int32_t width = 0;
  int path_type = 0;
  std::int32_t ext_begin = 0, ext_end = 0;
  std::string sname, text;
  bool reflect = false;
  double mag = 1.0, angle = 0.0;
  int cols = 1, rows = 1;
  std::size_t offset = 0;
};

struct Cell {
  std::string name;
  std::vector<Element> elements;
  std::size_t offset = 0;
};

// Polygon of a path: offset lines at +-w/2 with mitred joins, ends extended by (b, e).
std::vector<Point> path_outline(const std::vector<Point>& v, double w, double b, double e, int type) {
  std::vector<Point> pts;
  for (const Point& p : v)
    if (pts.empty() || distance(pts.back(), p) > 0) pts.push_back(p);
  if (pts.size() < 2 || w <= 0) return {};
  const double h = 0.5 * w;
  auto dir = [&](std::size_t i) {
    const double len = distance(pts[i], pts[i + 1]);
    return Point{(pts[i + 1].x - pts[i].x) / len, (pts[i + 1].y - pts[i].y) / len};
  };
  const std::size_t n = pts.size();
  std::vector<Point> left, right;
  for (std::size_t i = 0; i < n; ++i) {
    Point nrm;
    if (i == 0 || i == n - 1) {
      const Point t = dir(i == 0 ? 0 : n - 2);
      nrm = {-t.y * h, t.x * h};
    } else {
      const Point t0 = dir(i - 1), t1 = dir(i);
      const Point n0{-t0.y, t0.x}, n1{-t1.y, t1.x};
      const Point m{n0.x + n1.x, n0.y + n1.y};
      const double dot = m.x * n0.x + m.y * n0.y;  // = 1 + cos(turn)
      nrm = dot > 1e-9 ? Point{m.x * h / dot, m.y * h / dot} : Point{n0.x * h, n0.y * h};
    }
    Point base = pts[i];
    if (i == 0 || i == n - 1) {
      const Point t = dir(i == 0 ? 0 : n - 2);
      const double ext = i == 0 ? -b : e;
      base = {base.x + t.x * ext, base.y + t.y * ext};
    }
    left.push_back({base.x + nrm.x, base.y + nrm.y});
    right.push_back({base.x - nrm.x, base.y - nrm.y});
  }
  std::vector<Point> out(left.begin(), left.end());
  if (type == 1) {  // round end: a half disc of 8 segments
    const Point t = dir(n - 2);
    const double a0 = std::atan2(t.x, -t.y);
    for (int k = 1; k < 8; ++k) {
      const double a = a0 - std::numbers::pi * k / 8.0;
      out.push_back({pts[n - 1].x + h * std::cos(a), pts[n - 1].y + h * std::sin(a)});
    }
  }
  out.insert(out.end(), right.rbegin(), right.rend());
  if (type == 1) {
    const Point t = dir(0);
    const double a0 = std::atan2(-t.x, t.y);
    for (int k = 1; k < 8; ++k) {
      const double a = a0 - std::numbers::pi * k / 8.0;
      out.push_back({pts[0].x + h * std::cos(a), pts[0].y + h * std::sin(a)});
    }
  }
  return out;
}

// The records of a stream file, one after the other.
struct RecordStream {
  const std::string& bytes;
  const unsigned char* base;
  std::size_t pos = 0;

  Record next() {
    if (pos + 4 > bytes.size()) throw GdsError(pos, "truncated: a record header is cut off");
    Record r;
    r.offset = pos;
    const std::size_t len = (std::size_t{base[pos]} << 8) | base[pos + 1];
    r.type = base[pos + 2];
    r.dtype = base[pos + 3];
    if (len < 4 || len % 2) throw GdsError(pos, "record length " + std::to_string(len) + " is not valid");
    if (pos + len > bytes.size()) throw GdsError(pos, "truncated: the record runs past the end of the file");
    r.data = base + pos + 4;
    r.size = len - 4;
    pos += len;
    return r;
  }
};

void need(const Record& r, std::size_t n) {
  if (r.size < n) throw GdsError(r.offset, "record too short for its data");
}

// A string record's text without its NUL padding.
std::string text_of(const Record& r) {
  std::string s(reinterpret_cast<const char*>(r.data), r.size);
  while (!s.empty() && s.back() == '\0') s.pop_back();
  return s;
}

// UNITS: the user unit per database unit (unused) and the database unit in metres.
void read_units(const Record& r, GdsFlat& flat) {
  need(r, 16);
  double user_per_db = real8(r.data);
  flat.database_unit_m = real8(r.data + 8);
  if (!(flat.database_unit_m > 0 && flat.database_unit_m < 1))
    throw GdsError(r.offset, "database unit is not a positive length");
  // Layout tools use 1 nm or 0.1 nm, rarely 1 pm; a unit coarser than 1 um is a corrupt or
  // mistyped header (common practice). Bounded here so no coordinate is scaled by nonsense.
  if (!(flat.database_unit_m >= 1e-12 && flat.database_unit_m <= 1e-6)) {
    char b[160];
    std::snprintf(b, sizeof b, "database unit %.6g m lies outside 1e-12 m .. 1e-06 m", flat.database_unit_m);
    throw GdsError(r.offset, b);
  }
  (void)user_per_db;
}

// The data records of an element: layer, types, width, path ends, reference name, text, placement,
// array size and points. Other records (properties, flags) carry nothing hallway uses.
void read_element_data(const Record& r, Element& el) {
  switch (r.type) {
    case kLayer:
      need(r, 2);
      el.layer = i16(r.data);
      break;
    case kDatatype:
    case kTextType:
    case kBoxType:
      need(r, 2);
      el.datatype = i16(r.data);
      break;
    case kWidth:
      need(r, 4);
      el.width = i32(r.data);
      break;
    case kPathType:
      need(r, 2);
      el.path_type = i16(r.data);
      break;
    case kBgnExtn:
      need(r, 4);
      el.ext_begin = i32(r.data);
      break;
    case kEndExtn:
      need(r, 4);
      el.ext_end = i32(r.data);
      break;
    case kSname: el.sname = text_of(r); break;
    case kString: el.text = text_of(r); break;
    case kStrans:
      need(r, 2);
      el.reflect = r.data[0] & 0x80;
      break;
    case kMag:
      need(r, 8);
      el.mag = real8(r.data);
      // A zero, negative or absurd magnification collapses or blows up the placed structure.
      if (!(el.mag >= 1e-6 && el.mag <= 1e6)) {
        char b[128];
        std::snprintf(b, sizeof b, "magnification %.6g lies outside 1e-06 .. 1e+06", el.mag);
        throw GdsError(r.offset, b);
      }
      break;
    case kAngle:
      need(r, 8);
      el.angle = real8(r.data);
      break;
    case kColRow:
      need(r, 4);
      el.cols = i16(r.data);
      el.rows = i16(r.data + 2);
      if (el.cols < 1 || el.rows < 1 || static_cast<long>(el.cols) * el.rows > 1'000'000)
        throw GdsError(r.offset,
                       "array size " + std::to_string(el.cols) + " x " + std::to_string(el.rows) + " is not valid");
      break;
    case kXy:
      if (r.size % 8) throw GdsError(r.offset, "XY data is not a list of points");
      if (r.size / 8 > 8200) throw GdsError(r.offset, "more than 8200 points in one element");
      for (std::size_t k = 0; k < r.size; k += 8)
        el.xy.push_back({static_cast<double>(i32(r.data + k)), static_cast<double>(i32(r.data + k + 4))});
      break;
    default: break;  // properties, flags and other records carry nothing hallway uses
  }
}

// Reads the records up to ENDLIB: the database unit, the structure names in file order, and the
// elements of every structure.
void read_library(const std::string& bytes, GdsFlat& flat, std::map<std::string, Cell>& cells) {
  const auto* base = reinterpret_cast<const unsigned char*>(bytes.data());
  // A stream file opens with a 6-byte HEADER record (length 6, type HEADER, two-byte integer data).
  if (bytes.size() < 6 || base[0] != 0 || base[1] != 6 || base[2] != kHeader || base[3] != 2)
    throw GdsError(0, "not a GDSII stream file (it does not begin with a HEADER record)");
  RecordStream in{bytes, base};
  Cell* cell = nullptr;
  Element el;
  bool in_element = false, ended = false;
  while (!ended) {
    if (in.pos >= bytes.size()) throw GdsError(in.pos, "truncated: no ENDLIB record");
    const Record r = in.next();
    switch (r.type) {
      case kHeader:
      case kBgnLib:
      case kLibName: break;
      case kUnits: read_units(r, flat); break;
      case kEndLib: ended = true; break;
      case kBgnStr:
        if (cell) throw GdsError(r.offset, "BGNSTR inside a structure");
        cell = &cells["\x01pending"];
        *cell = Cell{};
        cell->offset = r.offset;
        break;
      case kStrName: {
        if (!cell) throw GdsError(r.offset, "STRNAME outside a structure");
        const std::string name = text_of(r);
        if (cells.count(name)) throw GdsError(r.offset, "structure '" + name + "' defined twice");
        Cell c = std::move(*cell);
        cells.erase("\x01pending");
        c.name = name;
        cell = &(cells[name] = std::move(c));
        flat.cells.push_back(name);
        break;
      }
      case kEndStr:
        if (!cell || in_element) throw GdsError(r.offset, "ENDSTR out of place");
        cell = nullptr;
        break;
      case kBoundary:
      case kPath:
      case kSref:
      case kAref:
      case kText:
      case kBox:
        if (!cell || cell->name.empty() || in_element) throw GdsError(r.offset, "element out of place");
        el = Element{};
        el.kind = static_cast<Rec>(r.type);
        el.offset = r.offset;
        in_element = true;
        break;
      case kEndEl:
        if (!in_element || !cell) throw GdsError(r.offset, "ENDEL out of place");
        cell->elements.push_back(el);
        in_element = false;
        break;
      default: read_element_data(r, el); break;
    }
  }
}

// Top cell: the given one, or the single structure no other references.
std::string top_cell(const std::string& top, const GdsFlat& flat, const std::map<std::string, Cell>& cells) {
  std::string root = top;
  if (root.empty()) {
    std::set<std::string> referenced;
    for (const auto& [n, c] : cells)
      for (const Element& e : c.elements)
        if (e.kind == kSref || e.kind == kAref) referenced.insert(e.sname);
    std::vector<std::string> tops;
    for (const auto& n : flat.cells)
      if (!referenced.count(n)) tops.push_back(n);
    if (tops.size() != 1)
      throw GdsError(0, "the file has " + std::to_string(tops.size()) + " top structures; name one with `cell:`");
    root = tops.front();
  }
  if (!cells.count(root)) throw GdsError(0, "no structure named '" + root + "'");
  return root;
}

// Flattens a structure into polygons and labels in metres. Nested arrays multiply: a few hundred
// bytes can place a structure 10^12 times. Every placement and every emitted vertex or label counts
// against the limits, so that flattening always ends.
struct Flattener {
  const std::map<std::string, Cell>& cells;
  const GdsLimits& limits;
  GdsFlat& flat;
  double u = 0.0;  // metres per database unit
  std::size_t vertices = 0, placements = 0, label_count = 0, visits = 0;
  std::vector<std::string> stack;  // the structures being flattened, outermost first

  void flatten(const Cell& c, const Transform& t, int depth) {
    if (depth > limits.max_depth)
      throw GdsError(c.offset, "references nested deeper than " + std::to_string(limits.max_depth));
    if (std::find(stack.begin(), stack.end(), c.name) != stack.end())
      throw GdsError(c.offset, "structure '" + c.name + "' refers to itself");
    stack.push_back(c.name);
    for (const Element& e : c.elements) {
      if (++visits > limits.max_element_visits)
        throw GdsError(e.offset, "flattening the layout visits more than " + std::to_string(limits.max_element_visits) +
                                     " elements (arrays of structures that produce nothing still cost work)");
      element(e, t, depth);
    }
    stack.pop_back();
  }

  // A polygon of element e, placed by t, in metres.
  void emit(const Element& e, const Transform& t, std::vector<Point> pts) {
    vertices += pts.size();
    if (vertices > limits.max_output_vertices)
      throw GdsError(e.offset,
                     "the flattened layout has more than " + std::to_string(limits.max_output_vertices) + " vertices");
    Polygon p;
    for (const Point& q : pts) {
      const Point w = t(q);
      p.vertices.push_back({w.x * u, w.y * u});
    }
    if (p.vertices.size() >= 3) flat.polygons[{e.layer, e.datatype}].push_back(std::move(p));
  }

  void element(const Element& e, const Transform& t, int depth) {
    switch (e.kind) {
      case kBoundary: {
        std::vector<Point> pts = e.xy;
        if (pts.size() >= 2 && pts.front().x == pts.back().x && pts.front().y == pts.back().y) pts.pop_back();
        if (pts.size() < 3) throw GdsError(e.offset, "BOUNDARY with fewer than 3 points");
        emit(e, t, pts);
        break;
      }
      case kBox: {
        if (e.xy.size() < 4) throw GdsError(e.offset, "BOX with fewer than 4 points");
        emit(e, t, {e.xy.begin(), e.xy.begin() + 4});
        break;
      }
      case kPath: {
        const double w = std::abs(static_cast<double>(e.width));
        double b = 0, x = 0;
        if (e.path_type == 2) b = x = 0.5 * w;
        if (e.path_type == 4) {
          b = e.ext_begin;
          x = e.ext_end;
        }
        auto pts = path_outline(e.xy, w, b, x, e.path_type);
        if (!pts.empty()) emit(e, t, pts);
        break;
      }
      case kText:
        if (!e.xy.empty()) {
          if (++label_count > limits.max_labels)
            throw GdsError(e.offset,
                           "the flattened layout has more than " + std::to_string(limits.max_labels) + " labels");
          const Point w = t(e.xy.front());
          flat.labels[{e.layer, e.datatype}].push_back({e.text, {w.x * u, w.y * u}});
        }
        break;
      case kSref:
      case kAref: place(e, t, depth); break;
      default: break;
    }
  }

  // A structure reference or array: each placement flattened one level deeper.
  void place(const Element& e, const Transform& t, int depth) {
    const auto it = cells.find(e.sname);
    if (it == cells.end()) throw GdsError(e.offset, "reference to a missing structure '" + e.sname + "'");
    if (e.xy.empty() || (e.kind == kAref && e.xy.size() < 3))
      throw GdsError(e.offset, "reference without its XY points");
    const int cols = e.kind == kAref ? e.cols : 1, rows = e.kind == kAref ? e.rows : 1;
    for (int cc = 0; cc < cols; ++cc)
      for (int rr = 0; rr < rows; ++rr) {
        Point at = e.xy[0];
        if (e.kind == kAref) {
          at.x += cc * (e.xy[1].x - e.xy[0].x) / cols + rr * (e.xy[2].x - e.xy[0].x) / rows;
          at.y += cc * (e.xy[1].y - e.xy[0].y) / cols + rr * (e.xy[2].y - e.xy[0].y) / rows;
        }
        if (++placements > limits.max_placements)
          throw GdsError(e.offset, "the flattened layout places structures more than " +
                                       std::to_string(limits.max_placements) + " times");
        flatten(it->second, placement(e.reflect, e.mag, e.angle, at).then(t), depth + 1);
      }
  }
};

}  // namespace

GdsFlat ReadGds(const std::string& bytes, const std::string& top, const GdsLimits& limits) {
  if (bytes.size() > limits.max_file_bytes)
    throw GdsError(0, "file larger than the limit of " + std::to_string(limits.max_file_bytes >> 20) + " MiB");
  GdsFlat flat;
  std::map<std::string, Cell> cells;
  read_library(bytes, flat, cells);
  if (flat.database_unit_m <= 0) throw GdsError(0, "no UNITS record");
  const std::string root = top_cell(top, flat, cells);
  Flattener f{cells, limits, flat, flat.database_unit_m, 0, 0, 0, 0, {}};
  f.flatten(cells.at(root), Transform{}, 0);
  return flat;
}

}  // namespace hallway::geometry
