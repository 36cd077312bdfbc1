// Design file reader, format version 1; see design_loader.hpp and README.md ("Design files").
#include "hallway/design_loader.hpp"

#include <yaml-cpp/yaml.h>

#include <algorithm>
#include <cctype>
#include <charconv>
#include <cmath>
#include <filesystem>
#include <fstream>
#include <limits>
#include <map>
#include <set>
#include <sstream>

#include "hallway/channels.hpp"
#include "hallway/constants.hpp"
#include "hallway/geometry/gdsii.hpp"
#include "hallway/geometry/region.hpp"
#include "hallway/units.hpp"

namespace hallway {

namespace {

// Well-formed UTF-8 (RFC 3629): no overlong forms, no surrogates, nothing above U+10FFFF.
bool is_utf8(std::string_view s) {
  std::size_t i = 0;
  auto byte = [&](std::size_t k) { return static_cast<unsigned char>(s[k]); };
  while (i < s.size()) {
    const unsigned char c = byte(i);
    std::size_t n = 0;
    unsigned char lo = 0x80, hi = 0xBF;  // allowed range of the second byte
    if (c < 0x80) {
      ++i;
      continue;
    } else if (c >= 0xC2 && c <= 0xDF) {
      n = 1;
    } else if (c >= 0xE0 && c <= 0xEF) {
      n = 2;
      if (c == 0xE0) lo = 0xA0;
      if (c == 0xED) hi = 0x9F;
    } else if (c >= 0xF0 && c <= 0xF4) {
      n = 3;
      if (c == 0xF0) lo = 0x90;
      if (c == 0xF4) hi = 0x8F;
    } else {
      return false;
    }
    if (i + n >= s.size()) return false;
    if (byte(i + 1) < lo || byte(i + 1) > hi) return false;
    for (std::size_t k = 2; k <= n; ++k)
      if ((byte(i + k) & 0xC0) != 0x80) return false;
    i += n + 1;
  }
  return true;
}

}  // namespace

std::string PrintableText(std::string_view s) {
  std::string out;
  std::size_t i = 0;
  while (i < s.size()) {
    const auto c = static_cast<unsigned char>(s[i]);
    if (c == '\n' || c == '\t') {  // kept: messages span lines, and tabs are harmless
      out += static_cast<char>(c);
      ++i;
      continue;
    }
    const std::size_t n = c < 0x80 ? 1 : (c >> 5) == 0x6 ? 2 : (c >> 4) == 0xE ? 3 : (c >> 3) == 0x1E ? 4 : 0;
    if (n > 1 && i + n <= s.size() && is_utf8(s.substr(i, n)) &&
        !(c == 0xC2 && static_cast<unsigned char>(s[i + 1]) < 0xA0)) {
      out.append(s.substr(i, n));  // a whole UTF-8 character that is not a C1 control
      i += n;
      continue;
    }
    if (n == 1 && c >= 0x20 && c != 0x7F) {
      out += static_cast<char>(c);
    } else {
      char b[8];
      std::snprintf(b, sizeof b, "\\x%02X", c);
      out += b;
    }
    ++i;
  }
  return out;
}

bool IsCleanText(std::string_view s) {
  return is_utf8(s) && PrintableText(s) == s && s.find('\t') == std::string_view::npos &&
         s.find('\n') == std::string_view::npos;
}

DesignError::DesignError(SourceLocation where, const std::string& message)
    : std::runtime_error(PrintableText(where.ToString() + ": " + message)),
      where_(std::move(where)),
      message_(PrintableText(message)) {
  where_.file = PrintableText(where_.file);
  where_.key_path = PrintableText(where_.key_path);
}

namespace {

using units::Kind;

// "" when `s` is a valid object name, else why not. The same rule holds for names in YAML and for
// labels in a layout file.
std::string name_problem(const std::string& s) {
  const bool ok = !s.empty() && s.size() <= 64 && std::all_of(s.begin(), s.end(), [](char c) {
    const auto u = static_cast<unsigned char>(c);
    return u < 0x80 && (std::isalnum(u) || c == '_' || c == '-' || c == '.');
  }) && std::isalpha(static_cast<unsigned char>(s[0]));
  if (!ok) return "names start with a letter and use letters, digits, '_', '-' or '.' (at most 64), got '" + s + "'";
  if (s == kMesaName) return "'mesa' is reserved for constrictions formed against the mesa edge";
  return "";
}

// Where two edges of an outline meet that should not, with the points as the user wrote them (0-based
// indices, coordinates in `unit_name`); "" when the ring is too large to search (find_crossing_edges).
std::string crossing_text(const geometry::Polygon& p, double unit_m, const std::string& unit_name) {
  const auto x = geometry::find_crossing_edges(p);
  if (!x) return "";
  const std::size_t n = p.vertices.size();
  auto pt = [&](std::size_t k) {
    char b[96];
    std::snprintf(b, sizeof b, "[%zu] (%.6g, %.6g)", k, p.vertices[k].x / unit_m, p.vertices[k].y / unit_m);
    return std::string(b);
  };
  auto edge = [&](std::size_t e) { return "the edge from point " + pt(e) + " to point " + pt((e + 1) % n); };
  char at[96];
  std::snprintf(at, sizeof at, "(%.6g, %.6g) %s", x->at.x / unit_m, x->at.y / unit_m, unit_name.c_str());
  return "; " + edge(x->first) + " meets " + edge(x->second) + " at " + at +
         " (points counted from 0 in the order written, coordinates in " + unit_name + ")";
}

// "" when `p` (in metres) is an outline the solvers can use, else the end of a sentence "the outline
// ...". Inline outlines and every polygon from a layout file pass through here; `unit_m` and
// `unit_name` are the unit the user wrote its coordinates in (for messages).
std::string outline_problem(const geometry::Polygon& p, double unit_m = 1e-6, const std::string& unit_name = "um") {
  if (p.vertices.size() < 3) return "needs at least 3 points, got " + std::to_string(p.vertices.size());
  if (p.vertices.size() > 100000) return "has more than 100000 points";
  for (const auto& q : p.vertices)
    if (!(std::abs(q.x) <= kMaxCoordinate_m) || !(std::abs(q.y) <= kMaxCoordinate_m)) {
      char b[128];
      std::snprintf(b, sizeof b, "has a point (%.6g m, %.6g m) more than 10 cm from the origin", q.x, q.y);
      return b;
    }
  const auto defect = geometry::find_defect(p);
  if (defect == geometry::PolygonDefect::kSelfIntersecting)
    return "is not a simple polygon: it is self-intersecting (crosses or touches itself)" +
           crossing_text(p, unit_m, unit_name);
  if (defect != geometry::PolygonDefect::kNone) return "is not a simple polygon: " + geometry::ToString(defect);
  for (std::size_t i = 0; i < p.vertices.size(); ++i) {
    const auto& a = p.vertices[i];
    const auto& b = p.vertices[(i + 1) % p.vertices.size()];
    const double d = std::hypot(b.x - a.x, b.y - a.y);
    if (d < kMinFeature_m) {
      char buf[200];
      std::snprintf(buf, sizeof buf,
                    "has two neighbouring points %s apart near (%.6g um, %.6g um), closer than %s: no lithography "
                    "draws that",
                    units::FormatSI(d, "m", 6).c_str(), a.x * 1e6, a.y * 1e6,
                    units::FormatSI(kMinFeature_m, "m").c_str());
      return buf;
    }
  }
  return "";
}

// A YAML node together with where it is and what it is called.
struct Value {
  YAML::Node node;
  std::string path;
};

class Reader {
 public:
  explicit Reader(std::string file) : file_(std::move(file)) {}

  SourceLocation where(const Value& v) const {
    const YAML::Mark m = v.node.Mark();
    // yaml-cpp counts from 0; an absent node has mark -1.
    return {file_, m.line >= 0 ? m.line + 1 : 0, m.column >= 0 ? m.column + 1 : 0, v.path};
  }
  [[noreturn]] void fail(const Value& v, const std::string& msg) const { throw DesignError(where(v), msg); }

  // The entries of a mapping: unknown and duplicate keys are errors.
  struct Map {
    Value self;
    std::vector<std::pair<std::string, Value>> entries;
    std::optional<Value> get(const std::string& key) const {
      for (const auto& [k, v] : entries)
        if (k == key) return v;
      return std::nullopt;
    }
  };

  Map map(const Value& v, std::initializer_list<const char*> allowed) const {
    if (!v.node.IsMap()) fail(v, "expected a mapping of keys to values here");
    Map out{v, {}};
    std::set<std::string> seen;
    for (auto it = v.node.begin(); it != v.node.end(); ++it) {
      const Value key{it->first, v.path};
      if (!it->first.IsScalar()) fail(key, "keys must be plain words");
      const std::string k = it->first.Scalar();
      clean(key, k);
      const std::string child = v.path.empty() ? k : v.path + "." + k;
      if (std::find_if(allowed.begin(), allowed.end(), [&](const char* a) { return k == a; }) == allowed.end()) {
        std::string list;
        for (const char* a : allowed) list += std::string(list.empty() ? "" : ", ") + a;
        fail(Value{it->first, child}, "unknown key '" + k + "' (allowed here: " + list + ")");
      }
      if (!seen.insert(k).second) fail(Value{it->first, child}, "key '" + k + "' is given twice");
      out.entries.push_back({k, Value{it->second, child}});
    }
    return out;
  }

  Value require(const Map& m, const std::string& key) const {
    auto v = m.get(key);
    if (!v) fail(m.self, "missing key '" + key + "'");
    if (v->node.IsNull()) fail(*v, "'" + key + "' has no value");
    return *v;
  }

  std::string scalar(const Value& v, const std::string& what) const {
    if (!v.node.IsScalar())
      fail(v, "expected " + what + " here, not a " +
                  (v.node.IsMap()        ? "mapping"
                   : v.node.IsSequence() ? "list"
                                         : "empty value"));
    clean(v, v.node.Scalar());
    return v.node.Scalar();
  }

  // Text that reaches messages, the terminal and JSON must be UTF-8 without control characters
  // (an escape sequence in a name would be written raw to the terminal).
  void clean(const Value& v, const std::string& text) const {
    if (!is_utf8(text)) fail(v, "the text '" + text + "' is not valid UTF-8 (the file must be saved as UTF-8)");
    if (!IsCleanText(text)) fail(v, "the text '" + text + "' contains a control character (tab, line break or escape)");
  }

  double quantity(const Value& v, Kind kind) const {
    const std::string text =
        scalar(v, "a " + units::ToString(kind) + " with its unit, e.g. '" + units::ExampleFor(kind) + "'");
    try {
      return units::Parse(text, kind);
    } catch (const units::UnitError& e) {
      fail(v, e.what());
    }
  }

  double number(const Value& v) const {
    const std::string text = scalar(v, "a plain number");
    double x = 0.0;
    const char* b = text.data();
    const char* e = b + text.size();
    if (b != e && *b == '+') ++b;
    auto [ptr, ec] = std::from_chars(b, e, x);
    if (ec != std::errc() || ptr != e || !std::isfinite(x)) fail(v, "expected a plain number, got '" + text + "'");
    return x;
  }

  // A YAML boolean: true or false (also True, TRUE, False, FALSE), unquoted.
  bool boolean(const Value& v) const {
    const std::string text = scalar(v, "true or false");
    if (v.node.Tag() != "!") {
      if (text == "true" || text == "True" || text == "TRUE") return true;
      if (text == "false" || text == "False" || text == "FALSE") return false;
    }
    fail(v, "expected true or false (unquoted), got '" + text + "'");
  }

  long integer(const Value& v) const {
    const std::string text = scalar(v, "a whole number");
    long x = 0;
    auto [ptr, ec] = std::from_chars(text.data(), text.data() + text.size(), x);
    if (ec != std::errc() || ptr != text.data() + text.size()) fail(v, "expected a whole number, got '" + text + "'");
    return x;
  }

  // "2", "1/3", "2/5": a positive fraction.
  Fraction fraction(const Value& v) const {
    const std::string text = scalar(v, "a whole number or a fraction such as \"1/3\"");
    long p = 0, q = 1;
    const char* b = text.data();
    const char* e = b + text.size();
    auto [ptr, ec] = std::from_chars(b, e, p);
    bool ok = ec == std::errc();
    if (ok && ptr != e) {
      ok = *ptr == '/';
      if (ok) {
        auto [ptr2, ec2] = std::from_chars(ptr + 1, e, q);
        ok = ec2 == std::errc() && ptr2 == e;
      }
    }
    if (!ok) fail(v, "expected a whole number or a fraction such as \"1/3\", got '" + text + "'");
    if (p <= 0 || q <= 0 || p > 1000 || q > 1000) fail(v, "the value must be a positive fraction p/q with p, q ≤ 1000");
    return MakeFraction(p, q);
  }

  std::vector<Value> list(const Value& v, const std::string& what) const {
    if (!v.node.IsSequence()) fail(v, "expected a list of " + what);
    std::vector<Value> out;
    std::size_t k = 0;
    for (const auto& item : v.node) out.push_back({item, v.path + "[" + std::to_string(k++) + "]"});
    return out;
  }

  // An outline in the file's unit (`unit_m` metres, written `unit_name`). A last point that repeats the
  // first (a common way to write a closed ring) is dropped, and *note says so; the file is not touched.
  geometry::Polygon outline(const Value& v, double unit_m, const std::string& unit_name, std::string* note) const {
    geometry::Polygon p;
    const auto pts = list(v, "[x, y] points");
    if (pts.size() < 3) fail(v, "an outline needs at least 3 points, got " + std::to_string(pts.size()));
    if (pts.size() > 100000) fail(v, "an outline may have at most 100000 points");
    std::vector<std::pair<double, double>> written;  // as in the file, compared exactly
    for (const Value& pt : pts) {
      const auto xy = list(pt, "two coordinates [x, y]");
      if (xy.size() != 2) fail(pt, "a point is [x, y]: exactly two plain numbers in the file's `units`");
      written.emplace_back(number(xy[0]), number(xy[1]));
      const double x = written.back().first * unit_m, y = written.back().second * unit_m;
      if (!(std::abs(x) <= kMaxCoordinate_m) || !(std::abs(y) <= kMaxCoordinate_m))
        fail(pt, "coordinate lies more than 10 cm from the origin; check `units`");
      p.vertices.push_back({x, y});
    }
    if (written.size() > 3 && written.back() == written.front()) {
      p.vertices.pop_back();
      const SourceLocation at = where(pts.back());
      *note = v.path + ": the last point (line " + std::to_string(at.line) + ", column " + std::to_string(at.column) +
              ") repeats the first; an outline closes by itself, so the repeat is left out (the file is unchanged)";
    }
    if (const std::string why = outline_problem(p, unit_m, unit_name); !why.empty()) fail(v, "the outline " + why);
    geometry::normalise(p);
    return p;
  }

  std::string name(const Value& v) const {
    const std::string s = scalar(v, "a name");
    if (const std::string why = name_problem(s); !why.empty()) fail(v, why);
    return s;
  }

  const std::string& file() const { return file_; }

 private:
  std::string file_;
};

// How a value is shown in a range error: with an SI prefix on a plain symbol ("95 mm"), or scaled
// into a fixed unit that takes no prefix ("9.9e+14 cm^-2").
struct Shown {
  const char* unit;     // "m", "K", or "cm^-2"
  double per_si = 1.0;  // displayed value = SI value * per_si
  bool prefix = true;   // FormatSI picks a prefix
};
std::string show(double x, const Shown& u) {
  if (u.prefix) return units::FormatSI(x, u.unit, 6);
  char b[64];
  std::snprintf(b, sizeof b, "%.6g", x * u.per_si);
  return std::string(b) + (u.unit[0] ? " " : "") + u.unit;
}

void range(const Reader& r, const Value& v, double x, double lo, double hi, const std::string& what,
           const Shown& unit) {
  if (!(x >= lo && x <= hi))
    r.fail(v, what + " must lie between " + show(lo, unit) + " and " + show(hi, unit) + "; got " + show(x, unit));
}

Amplifier read_amplifier(const Reader& r, const Reader::Map& m, const std::optional<Amplifier>& base) {
  Amplifier a = base.value_or(Amplifier{});
  struct Field {
    const char* key;
    Kind kind;
    double Amplifier::*member;
    bool may_be_zero;
    double lo, hi;  // range of a nonzero value
    Shown unit;
  };
  // Ranges of real measurement chains, with room on both sides (common practice): a load of 1 Ohm
  // to 1 TOhm; noise zero (ideal) or 1e-15 .. 1e-6 V/rtHz and 1e-18 .. 1e-9 A/rtHz; a bandwidth of
  // 1 Hz to 10 GHz; an average of 1 ms to one year.
  const Field fields[] = {
      {"load", Kind::kResistance, &Amplifier::load_Ohm, false, 1.0, 1e12, {"Ohm"}},
      {"voltage_noise", Kind::kVoltageNoise, &Amplifier::voltage_noise_V_per_rtHz, true, 1e-15, 1e-6, {"V/rtHz"}},
      {"current_noise", Kind::kCurrentNoise, &Amplifier::current_noise_A_per_rtHz, true, 1e-18, 1e-9, {"A/rtHz"}},
      {"bandwidth", Kind::kFrequency, &Amplifier::bandwidth_Hz, false, 1.0, 1e10, {"Hz"}},
      {"integration", Kind::kTime, &Amplifier::integration_s, false, 1e-3, 3.16e7, {"s"}}};
  for (const Field& f : fields) {
    auto v = m.get(f.key);
    if (!v) {
      if (!base)
        r.fail(m.self,
               std::string("missing key '") + f.key + "' (example: " + f.key + ": " + units::ExampleFor(f.kind) + ")");
      continue;
    }
    const double x = r.quantity(*v, f.kind);
    if (f.may_be_zero ? !(x >= 0.0) : !(x > 0.0))
      r.fail(*v, std::string(f.key) + (f.may_be_zero ? " must not be negative" : " must be positive"));
    if (x != 0.0) range(r, *v, x, f.lo, f.hi, f.key, f.unit);
    a.*(f.member) = x;
  }
  // Optional: absent keeps the shared block's value (or the default: the design temperature, no reference).
  if (auto v = m.get("load_temperature")) {
    const double t = r.quantity(*v, Kind::kTemperature);
    if (!(t > 0.0)) r.fail(*v, "load_temperature must be above absolute zero");
    if (t > 300.0) r.fail(*v, "load_temperature above 300 K: a load resistor is at most at room temperature");
    range(r, *v, t, kMinTemperature_K, 300.0, "load_temperature", {"K"});
    a.load_temperature_K = t;
  }
  if (auto v = m.get("reference_subtraction")) a.reference_subtraction = r.boolean(*v);
  return a;
}

// Refuse pathological nesting before yaml-cpp recurses into it.
void check_nesting(const std::string& text, const std::string& path) {
  int depth = 0, line = 1, col = 0;
  bool in_single = false, in_double = false, comment = false;
  for (char c : text) {
    ++col;
    if (c == '\n') {
      ++line;
      col = 0;
      comment = false;
      continue;
    }
    if (comment) continue;
    if (in_double) {
      if (c == '"') in_double = false;
      continue;
    }
    if (in_single) {
      if (c == '\'') in_single = false;
      continue;
    }
    if (c == '#')
      comment = true;
    else if (c == '"')
      in_double = true;
    else if (c == '\'')
      in_single = true;
    else if (c == '[' || c == '{') {
      if (++depth > kMaxNestingDepth)
        throw DesignError({path, line, col, ""},
                          "lists or mappings nested deeper than " + std::to_string(kMaxNestingDepth) + " levels");
    } else if ((c == ']' || c == '}') && depth > 0) {
      --depth;
    }
  }
}

Wiring read_wiring(const Reader& r, const std::string& contact, const Value& v,
                   const std::optional<Amplifier>& shared) {
  Wiring w;
  w.contact = contact;
  w.where = r.where(v);
  std::string role_text;
  std::optional<Value> bias_value;
  std::string bias_text;
  std::optional<Reader::Map> overrides;
  if (v.node.IsMap()) {
    auto m = r.map(v, {"role", "bias", "load", "voltage_noise", "current_noise", "bandwidth", "integration",
                       "load_temperature", "reference_subtraction"});
    role_text = r.scalar(r.require(m, "role"), "a role");
    if (auto b = m.get("bias")) {
      bias_value = *b;
      bias_text = r.scalar(*b, "a voltage or current");
    }
    overrides = m;
  } else {
    const std::string text = r.scalar(v, "a role: source <bias>, ground, amplifier or float");
    const auto sp = text.find(' ');
    role_text = text.substr(0, sp);
    if (sp != std::string::npos) {
      bias_text = text.substr(sp + 1);
      bias_value = v;
    }
  }
  const auto role = RoleFromString(role_text);
  if (!role) r.fail(v, "unknown role '" + role_text + "' (roles: source <bias>, ground, amplifier, float)");
  w.role = *role;
  if (w.role == Role::kSource) {
    if (!bias_value) r.fail(v, "a source needs its bias, e.g. 'source 10 uV' or 'source 2 nA'");
    units::Quantity q;
    try {
      q = units::ParseQuantity(bias_text);
    } catch (const units::UnitError& e) {
      r.fail(*bias_value, e.what());
    }
    if (q.dimension == units::DimensionOf(Kind::kVoltage)) {
      w.bias_V = q.value_si;
      w.current_source = false;
      if (!(std::abs(w.bias_V) <= 0.1))
        r.fail(*bias_value, "a source bias beyond 100 mV is outside the quantum Hall regime");
      // Zero, or at least 1 fV: smaller biases are below any measurable signal (common practice).
      if (w.bias_V != 0.0 && std::abs(w.bias_V) < 1e-15)
        r.fail(*bias_value,
               "a source bias must be 0 or at least 1 fV in magnitude; got " + units::FormatSI(w.bias_V, "V", 6));
    } else if (q.dimension == units::DimensionOf(Kind::kCurrent)) {
      w.bias_A = q.value_si;
      w.current_source = true;
      if (!(std::abs(w.bias_A) <= 1e-6))
        r.fail(*bias_value, "a source current beyond 1 uA is outside the quantum Hall regime");
      // Zero, or at least 1 aA: a few electrons a second (common practice).
      if (w.bias_A != 0.0 && std::abs(w.bias_A) < 1e-18)
        r.fail(*bias_value,
               "a source current must be 0 or at least 1 aA in magnitude; got " + units::FormatSI(w.bias_A, "A", 6));
    } else {
      r.fail(*bias_value, "a source bias is a voltage ('10 uV') or a current ('2 nA'), got '" + bias_text + "'");
    }
  } else if (bias_value) {
    r.fail(*bias_value, "only a source takes a bias; '" + role_text + "' takes none");
  }
  if (w.role == Role::kAmplifier) {
    if (!shared && !overrides)
      r.fail(v,
             "an amplifier contact needs the `amplifier:` block (load, voltage_noise, current_noise, bandwidth, "
             "integration)");
    if (overrides) {
      Reader::Map only_amp{overrides->self, {}};
      for (const auto& e : overrides->entries)
        if (e.first != "role" && e.first != "bias") only_amp.entries.push_back(e);
      w.amplifier = read_amplifier(r, only_amp, shared);
    } else {
      w.amplifier = shared;
    }
  } else if (overrides && overrides->entries.size() > 1 + (bias_value ? 1 : 0)) {
    r.fail(v, "amplifier settings are only for amplifier contacts");
  }
  return w;
}

// What a layout file contributes: the mesa and the named gates and contacts, in metres.
struct Imported {
  std::optional<geometry::Polygon> mesa;
  std::map<std::string, geometry::Polygon> contacts, gates;
  SourceLocation where;
};

geometry::GdsLayer layer_of(const Reader& r, const Value& v) {
  const std::string s = r.scalar(v, "a layer as \"layer/datatype\", e.g. 5/0");
  int layer = 0, datatype = 0;
  const auto slash = s.find('/');
  try {
    std::size_t used = 0;
    layer = std::stoi(s.substr(0, slash), &used);
    if (used != (slash == std::string::npos ? s.size() : slash)) throw std::invalid_argument("");
    if (slash != std::string::npos) {
      datatype = std::stoi(s.substr(slash + 1), &used);
      if (used != s.size() - slash - 1) throw std::invalid_argument("");
    }
  } catch (...) {
    r.fail(v, "a layer is written \"layer/datatype\", e.g. 5/0; got '" + s + "'");
  }
  if (layer < 0 || layer > 65535 || datatype < 0 || datatype > 65535) r.fail(v, "layer and datatype lie in 0..65535");
  return {layer, datatype};
}

std::string where_text(geometry::Point p) {
  char b[96];
  std::snprintf(b, sizeof b, "(%.4g um, %.4g um)", p.x * 1e6, p.y * 1e6);
  return b;
}

// Every polygon read from a layout passes the checks of an inline outline before CGAL sees it (a
// keyhole, a polygon of equal points or a collapsed placement would crash the Boolean operations).
void check_layout_polygon(const Reader& r, const Value& at, const geometry::Polygon& p, const std::string& what,
                          const std::string& file) {
  if (const std::string why = outline_problem(p); !why.empty())
    r.fail(at, "layout file " + file + ": " + what + " near " +
                   (p.vertices.empty() ? std::string("(no points)") : where_text(p.vertices.front())) +
                   ": the outline " + why);
}

// Named objects of one layer: touching shapes are merged (CGAL), and each merged piece must hold
// exactly one label, from the labels layer or its own.
std::map<std::string, geometry::Polygon> named_objects(const Reader& r, const Value& at, const geometry::GdsFlat& flat,
                                                       geometry::GdsLayer layer,
                                                       std::optional<geometry::GdsLayer> labels,
                                                       const std::string& what, const std::string& file, Design* d) {
  const std::string layer_text = std::to_string(layer.layer) + "/" + std::to_string(layer.datatype);
  geometry::Region all;
  if (const auto it = flat.polygons.find(layer); it != flat.polygons.end())
    for (const auto& p : it->second) {
      check_layout_polygon(r, at, p, "a " + what + " polygon on layer " + layer_text, file);
      all = all.Union(geometry::Region(p));
    }
  std::vector<geometry::GdsLabel> texts;
  for (const auto& l : {std::optional<geometry::GdsLayer>(layer), labels})
    if (l)
      if (const auto it = flat.labels.find(*l); it != flat.labels.end())
        texts.insert(texts.end(), it->second.begin(), it->second.end());
  std::map<std::string, geometry::Polygon> out;
  std::vector<char> used(texts.size(), 0);
  for (const auto& t : texts) {
    if (!IsCleanText(t.text))
      r.fail(at, "layout file " + file + ": the label '" + t.text + "' on a " + what + " layer near " +
                     where_text(t.at) + " is not UTF-8 text without control characters");
  }
  for (const auto& piece : all.Pieces()) {
    check_layout_polygon(r, at, piece.outer, "the merged " + what + " on layer " + layer_text, file);
    std::vector<std::size_t> inside;
    for (std::size_t t = 0; t < texts.size(); ++t)
      if (geometry::contains(piece.outer, texts[t].at)) inside.push_back(t);
    if (inside.empty())
      r.fail(at, "a " + what + " polygon on layer " + layer_text + " near " + where_text(piece.outer.vertices.front()) +
                     " has no label");
    if (inside.size() > 1)
      r.fail(at, "a " + what + " polygon on layer " + layer_text + " holds two labels, '" + texts[inside[0]].text +
                     "' and '" + texts[inside[1]].text + "'");
    const std::string& name = texts[inside[0]].text;
    if (const std::string why = name_problem(name); !why.empty())
      r.fail(at, "layout file " + file + ": the " + what + " label '" + name + "' near " +
                     where_text(texts[inside[0]].at) + " is not a valid name: " + why);
    if (out.count(name))
      r.fail(at, "two " + what + " polygons on layer " + layer_text + " are both labelled '" + name + "'");
    used[inside[0]] = 1;
    out[name] = piece.outer;
  }
  for (std::size_t t = 0; t < texts.size(); ++t)
    if (!used[t] && !labels)
      d->notes.push_back("label '" + texts[t].text + "' at " + where_text(texts[t].at) + " lies in no " + what +
                         " polygon");
  return out;
}

// Reads a whole file of at most max_bytes into *out; returns "" or what went wrong, as the end of a
// sentence "the ... file <what>". Only regular files are read: a device, a pipe or a folder named
// by mistake would block or never end.
std::string read_bounded(const std::filesystem::path& file, std::size_t max_bytes, std::string* out) {
  std::error_code ec;
  const auto status = std::filesystem::status(file, ec);
  if (ec || !std::filesystem::exists(status)) return "cannot be opened (it does not exist)";
  if (!std::filesystem::is_regular_file(status)) return "is not a regular file (a folder, device or pipe)";
  const auto size = std::filesystem::file_size(file, ec);
  if (ec) return "cannot be read";
  if (size > max_bytes) return "is larger than " + std::to_string(max_bytes >> 20) + " MiB";
  std::ifstream in(file, std::ios::binary);
  if (!in) return "cannot be opened (no permission?)";
  out->assign(static_cast<std::size_t>(size), '\0');
  in.read(out->data(), static_cast<std::streamsize>(size));
  if (in.gcount() != static_cast<std::streamsize>(size)) return "cannot be read to its end";
  return "";
}

Imported read_layout(const Reader& r, const Value& lv, const std::string& design_path, Design* d) {
  const auto lm = r.map(lv, {"file", "cell", "layers"});
  const Value fv = r.require(lm, "file");
  std::filesystem::path file(r.scalar(fv, "a file name"));
  if (file.is_relative()) file = std::filesystem::path(design_path).parent_path() / file;
  const geometry::GdsLimits limits;
  std::string bytes;
  if (const std::string why = read_bounded(file, limits.max_file_bytes, &bytes); !why.empty())
    r.fail(fv, "the layout file " + file.string() + " " + why);
  std::string cell;
  if (auto cv = lm.get("cell")) cell = r.scalar(*cv, "a structure name");
  geometry::GdsFlat flat;
  try {
    flat = geometry::ReadGds(bytes, cell, limits);
  } catch (const geometry::GdsError& e) {
    r.fail(fv, "layout file " + file.string() + ": " + e.what());
  }
  const auto layers = r.map(r.require(lm, "layers"), {"mesa", "contacts", "gates", "labels"});
  std::optional<geometry::GdsLayer> labels;
  if (auto v = layers.get("labels")) labels = layer_of(r, *v);
  Imported im;
  im.where = r.where(lv);
  if (auto v = layers.get("mesa")) {
    const geometry::GdsLayer L = layer_of(r, *v);
    const std::string layer_text = std::to_string(L.layer) + "/" + std::to_string(L.datatype);
    geometry::Region all;
    if (const auto it = flat.polygons.find(L); it != flat.polygons.end())
      for (const auto& p : it->second) {
        check_layout_polygon(r, *v, p, "a mesa polygon on layer " + layer_text, file.string());
        all = all.Union(geometry::Region(p));
      }
    const auto pieces = all.Pieces();
    if (pieces.size() != 1 || !pieces.front().holes.empty()) {
      const std::size_t holes = pieces.size() == 1 ? pieces.front().holes.size() : 0;
      r.fail(*v, "layout file " + file.string() + ": the mesa layer " + layer_text +
                     " must hold one connected polygon without holes; it has " + std::to_string(pieces.size()) +
                     (pieces.size() == 1 ? " piece" : " pieces") +
                     (holes ? " with " + std::to_string(holes) + (holes == 1 ? " hole" : " holes") : std::string()));
    }
    check_layout_polygon(r, *v, pieces.front().outer, "the merged mesa on layer " + layer_text, file.string());
    im.mesa = pieces.front().outer;
  }
  if (auto v = layers.get("contacts"))
    im.contacts = named_objects(r, *v, flat, layer_of(r, *v), labels, "contact", file.string(), d);
  if (auto v = layers.get("gates"))
    im.gates = named_objects(r, *v, flat, layer_of(r, *v), labels, "gate", file.string(), d);
  char buf[256];
  std::snprintf(buf, sizeof buf,
                "layout %s: %zu structures, database unit %.3g m; imported %s%zu contacts and %zu gates",
                file.filename().string().c_str(), flat.cells.size(), flat.database_unit_m, im.mesa ? "the mesa, " : "",
                im.contacts.size(), im.gates.size());
  d->notes.push_back(buf);
  for (const auto& [name, p] : im.contacts) {
    const auto bb = geometry::bounding_box(p);
    std::snprintf(buf, sizeof buf, "  contact %s: area %.4g um^2, box (%.4g, %.4g)-(%.4g, %.4g) um", name.c_str(),
                  geometry::area(p) * 1e12, bb.xmin * 1e6, bb.ymin * 1e6, bb.xmax * 1e6, bb.ymax * 1e6);
    d->notes.push_back(buf);
  }
  for (const auto& [name, p] : im.gates) {
    const auto bb = geometry::bounding_box(p);
    std::snprintf(buf, sizeof buf, "  gate %s: area %.4g um^2, box (%.4g, %.4g)-(%.4g, %.4g) um", name.c_str(),
                  geometry::area(p) * 1e12, bb.xmin * 1e6, bb.ymin * 1e6, bb.xmax * 1e6, bb.ymax * 1e6);
    d->notes.push_back(buf);
  }
  return im;
}

}  // namespace

// The line of a document marker ("---" or "..." at the start of a line) that has content both before
// and after it, i.e. that starts a second document; 0 when there is none.
int SecondDocumentLine(const std::string& text) {
  std::istringstream in(text);
  std::string l;
  int line = 0, marker = 0;
  bool before = false;
  while (std::getline(in, l)) {
    ++line;
    const bool is_marker =
        (l.rfind("---", 0) == 0 || l.rfind("...", 0) == 0) && (l.size() == 3 || l[3] == ' ' || l[3] == '\t');
    if (is_marker) {
      if (before && !marker) marker = line;
      continue;
    }
    const auto first = l.find_first_not_of(" \t");
    if (first == std::string::npos || l[first] == '#') continue;
    if (marker) return line;  // the first line of the second document
    before = true;
  }
  return 0;
}

namespace {

// The line and column (1-based) of the first tab in the indentation of a line that holds content (not
// blank, not only a comment), at or before `last_line`; nothing when there is none.
std::optional<std::pair<int, int>> indentation_tab(const std::string& text, int last_line) {
  int line = 1;
  for (std::size_t start = 0; start <= text.size() && line <= last_line; ++line) {
    std::size_t end = text.find('\n', start);
    if (end == std::string::npos) end = text.size();
    const std::size_t content = text.find_first_not_of(" \t", start);
    const bool has_content = content < end && text[content] != '#' && text[content] != '\r';
    const std::size_t tab = text.find('\t', start);
    if (has_content && tab < content) return std::pair<int, int>{line, static_cast<int>(tab - start) + 1};
    start = end + 1;
  }
  return std::nullopt;
}

// The text of a design file parsed as one YAML document; a DesignError names the line otherwise.
YAML::Node parse_document(const std::string& original_text, const std::string& path) {
  // The file name reaches messages and JSON output: it must be text.
  if (!IsCleanText(path))
    throw DesignError({path, 0, 0, ""},
                      "the design file's name is not UTF-8 text without control characters; rename the file");
  // Line ends: LF, CR LF, or CR alone (old Mac editors). A lone CR becomes LF, so that line numbers in
  // messages count the lines the editor shows.
  std::string text = original_text;
  for (std::size_t i = 0; i < text.size(); ++i)
    if (text[i] == '\r' && (i + 1 == text.size() || text[i + 1] != '\n')) text[i] = '\n';
  check_nesting(text, path);
  YAML::Node root;
  try {
    // A second document would be ignored silently; an empty one after a trailing '---' is harmless. It is
    // found by its marker in the text: loading every document of a malformed file can run away in
    // yaml-cpp 0.7 (the design-loader fuzz target found one that allocated for minutes).
    if (const int line = SecondDocumentLine(text))
      throw DesignError({path, line, 1, ""},
                        "the file holds a second YAML document (after '---'); a design file is exactly one document");
    root = YAML::Load(text);
  } catch (const YAML::Exception& e) {
    // yaml-cpp reports a tab in the indentation as some other error ("illegal map value"), often lines
    // later; YAML forbids tabs there (YAML 1.2, section 6.1), so name the first one up to the error.
    if (const auto tab = indentation_tab(text, e.mark.line + 1))
      throw DesignError({path, tab->first, tab->second, ""},
                        "a tab in the indentation: YAML does not allow tabs for indentation; indent with spaces");
    throw DesignError({path, e.mark.line + 1, e.mark.column + 1, ""}, "YAML syntax: " + e.msg);
  }
  return root;
}

// What the steps of reading one design share: the reader, the top-level keys, the design being
// filled, and what earlier steps found that later ones need.
struct Loading {
  Loading(const Reader& reader, const Reader::Map& top, Design& design) : r(reader), m(top), d(design) {}

  const Reader& r;
  const Reader::Map& m;  // the top-level keys
  Design& d;
  Imported imported;                         // objects drawn in the layout file, if any
  bool have_layout = false;                  // `layout:` is given
  std::optional<Value> units_value;          // `units:`, needed only for inline outlines
  std::optional<Value> filling_value;        // `filling:` or `field:`, where a filling error points
  std::map<std::string, std::string> taken;  // name -> what it names

  geometry::Polygon inline_outline(const Value& v) const {
    if (!units_value) r.fail(v, "an inline outline needs the file's `units` (nm, um or mm)");
    std::string note;
    geometry::Polygon p = r.outline(v, d.unit_m, d.unit_name, &note);
    if (!note.empty()) d.notes.push_back(note);
    return p;
  }
  void claim(const Value& v, const std::string& n, const std::string& what) {
    auto [it, fresh] = taken.emplace(n, what);
    if (!fresh) r.fail(v, "the name '" + n + "' is already used by a " + it->second);
  }
};

// Format version and name.
void read_version_and_name(Loading& ctx) {
  const Reader& r = ctx.r;
  const Reader::Map& m = ctx.m;
  Design& d = ctx.d;
  const Value version = r.require(m, "hallway");
  d.format_version = static_cast<int>(r.integer(version));
  if (d.format_version != 1)
    r.fail(version, "this hallway reads design format 1, the file says " + std::to_string(d.format_version));
  if (auto v = m.get("name")) d.name = r.scalar(*v, "free text");
}

// Layout file (GDSII), if any: objects drawn there need no inline outline. Then the outline unit
// (needed only for inline outlines).
void read_layout_and_units(Loading& ctx) {
  const Reader& r = ctx.r;
  const Reader::Map& m = ctx.m;
  Design& d = ctx.d;
  if (auto lv = m.get("layout")) ctx.imported = read_layout(r, *lv, d.path, &d);
  ctx.have_layout = m.get("layout").has_value();
  ctx.units_value = m.get("units");
  if (!ctx.units_value && !ctx.have_layout) r.require(m, "units");
  if (ctx.units_value) {
    const Value v = *ctx.units_value;
    d.unit_name = r.scalar(v, "nm, um or mm");
    if (d.unit_name == "nm")
      d.unit_m = 1e-9;
    else if (d.unit_name == "um" || d.unit_name == "\xC2\xB5m" || d.unit_name == "\xCE\xBCm")
      d.unit_m = 1e-6;
    else if (d.unit_name == "mm")
      d.unit_m = 1e-3;
    else
      r.fail(v, "units must be nm, um or mm, got '" + d.unit_name + "'");
  }
}

// Heterostructure: depth, density and the optional material constants.
void read_heterostructure(Loading& ctx) {
  const Reader& r = ctx.r;
  const Reader::Map& m = ctx.m;
  Design& d = ctx.d;
  const auto h = r.map(r.require(m, "heterostructure"),
                       {"depth", "density", "mobility", "permittivity", "effective_mass", "surface"});
  auto& hs = d.heterostructure;
  const Value depth = r.require(h, "depth");
  hs.depth_m = r.quantity(depth, Kind::kLength);
  range(r, depth, hs.depth_m, 1e-9, 10e-6, "depth", {"m"});
  const Value dens = r.require(h, "density");
  hs.density_per_m2 = r.quantity(dens, Kind::kSheetDensity);
  range(r, dens, hs.density_per_m2, 1e13, 1e17, "density", {"cm^-2", 1e-4, false});
  if (auto v = h.get("mobility")) {
    hs.mobility_m2_per_Vs = r.quantity(*v, Kind::kMobility);
    // 1 cm^2/Vs (a disordered film) to 1e9 cm^2/Vs, above the best GaAs wafers (common practice).
    range(r, *v, *hs.mobility_m2_per_Vs, 1e-4, 1e5, "mobility", {"cm^2/Vs", 1e4, false});
  }
  if (auto v = h.get("permittivity")) {
    hs.permittivity = r.number(*v);
    // Relative permittivity of a semiconductor host: 1 (vacuum) to 100 (common practice).
    range(r, *v, hs.permittivity, 1.0, 100.0, "permittivity", {"", 1.0, false});
  }
  if (auto v = h.get("effective_mass")) {
    hs.effective_mass = r.number(*v);
    // In electron masses: 0.001 to 10 covers every known 2DEG host (common practice).
    range(r, *v, hs.effective_mass, 1e-3, 10.0, "effective_mass", {"m_e", 1.0, false});
  }
  if (auto v = h.get("surface")) {
    const auto s = SurfaceModelFromString(r.scalar(*v, "pinned or frozen"));
    if (!s) r.fail(*v, "surface must be 'pinned' or 'frozen'");
    hs.surface = *s;
  }
}

// The lab's own gate-voltage window (design.hpp, kDefaultGateVoltageMin_V and kDefaultGateVoltageMax_V
// when absent): the minimum between -20 V and 0 V, the maximum between 0 V and +20 V, the range a gate
// voltage may take at all.
void read_gate_limits(const Reader& r, const Reader::Map& c, Conditions& cd) {
  if (auto v = c.get("gate_voltage_min")) {
    cd.gate_voltage_min_V = r.quantity(*v, Kind::kVoltage);
    range(r, *v, cd.gate_voltage_min_V, -20.0, 0.0, "gate_voltage_min", {"V"});
  }
  if (auto v = c.get("gate_voltage_max")) {
    cd.gate_voltage_max_V = r.quantity(*v, Kind::kVoltage);
    range(r, *v, cd.gate_voltage_max_V, 0.0, 20.0, "gate_voltage_max", {"V"});
  }
}

// The charge and neutral mode velocities at filling 2 (design.hpp): both or neither, each between
// 1e3 and 1e7 m/s (an edge slower than 1 km/s or faster than 1 % of light in vacuum is not a GaAs edge,
// common practice), the charge mode the faster one (the Coulomb coupling adds to it and subtracts from
// the neutral mode: docs/models.md "Charge and neutral modes at filling 2").
void read_mode_velocities(const Reader& r, const Reader::Map& c, Conditions& cd) {
  const auto vc = c.get("charge_mode_velocity"), vn = c.get("neutral_mode_velocity");
  if (!vc && !vn) return;
  if (!vc || !vn)
    r.fail(vc ? *vc : *vn, "give both `charge_mode_velocity` and `neutral_mode_velocity`, or neither (hallway then "
                           "estimates both; docs/models.md \"Charge and neutral modes at filling 2\")");
  cd.charge_mode_velocity_m_per_s = r.quantity(*vc, Kind::kVelocity);
  range(r, *vc, *cd.charge_mode_velocity_m_per_s, 1e3, 1e7, "charge_mode_velocity", {"m/s"});
  cd.neutral_mode_velocity_m_per_s = r.quantity(*vn, Kind::kVelocity);
  range(r, *vn, *cd.neutral_mode_velocity_m_per_s, 1e3, 1e7, "neutral_mode_velocity", {"m/s"});
  if (!(*cd.charge_mode_velocity_m_per_s > *cd.neutral_mode_velocity_m_per_s))
    r.fail(*vn, "the neutral mode must be slower than the charge mode (the Coulomb coupling speeds up the charge "
                "mode and slows down the neutral one)");
}

// Conditions: temperature and exactly one of filling / field.
void read_conditions(Loading& ctx) {
  const Reader& r = ctx.r;
  const Reader::Map& m = ctx.m;
  Design& d = ctx.d;
  const auto c =
      r.map(r.require(m, "conditions"), {"temperature", "filling", "field", "gate_voltage_min", "gate_voltage_max",
                                         "charge_mode_velocity", "neutral_mode_velocity"});
  auto& cd = d.conditions;
  read_gate_limits(r, c, cd);
  read_mode_velocities(r, c, cd);
  const Value t = r.require(c, "temperature");
  cd.temperature_K = r.quantity(t, Kind::kTemperature);
  if (!(cd.temperature_K > 0.0)) r.fail(t, "temperature must be above absolute zero");
  if (cd.temperature_K > 300.0) r.fail(t, "temperature above 300 K: no quantum Hall effect to design for");
  // Lower bound: kMinTemperature_K (1 nK; design_loader.hpp, common practice).
  range(r, t, cd.temperature_K, kMinTemperature_K, 300.0, "temperature", {"K"});
  const auto fill = c.get("filling");
  const auto field = c.get("field");
  if (fill && field) r.fail(*field, "give either `filling` or `field`, not both (the other is derived)");
  if (!fill && !field) r.fail(c.self, "give the bulk `filling` (e.g. 2 or \"1/3\") or the `field` (e.g. 4.75 T)");
  const double n = d.heterostructure.density_per_m2;
  if (fill) {
    ctx.filling_value = *fill;
    cd.filling = r.fraction(*fill);
    // B = n h / (e nu), positive by convention.
    cd.field_T = n * constants::kPlanck_Js / (constants::kElementaryCharge_C * cd.filling.value());
    if (cd.field_T > 100.0) r.fail(*fill, "this filling needs a field above 100 T at this density");
    if (cd.field_T < kMinField_T)
      r.fail(*fill, "this filling needs a field below " + units::FormatSI(kMinField_T, "T") + " at this density (" +
                        units::FormatSI(cd.field_T, "T", 6) + "): no quantum Hall edges to design for");
  } else {
    ctx.filling_value = *field;
    cd.field_given = true;
    cd.field_T = r.quantity(*field, Kind::kField);
    if (cd.field_T == 0.0) r.fail(*field, "a zero field has no quantum Hall edges; give a signed field such as 4.75 T");
    if (std::abs(cd.field_T) > 100.0) r.fail(*field, "fields beyond 100 T are not supported");
    // Below 1 mT no 2DEG of the allowed densities shows a plateau (filling beyond 1000; common practice).
    if (std::abs(cd.field_T) < kMinField_T)
      r.fail(*field, "the field must be at least " + units::FormatSI(kMinField_T, "T") + " in magnitude; got " +
                         units::FormatSI(cd.field_T, "T", 6));
    cd.filling_from_field = n * constants::kPlanck_Js / (constants::kElementaryCharge_C * std::abs(cd.field_T));
    const auto match = NearestPlateau(cd.filling_from_field, kPlateauTolerance);
    if (!match) {
      char buf[160];
      std::snprintf(buf, sizeof buf,
                    "at this field and density the bulk filling is %.3f, not within %.0f%% of a supported "
                    "plateau; adjust the field or give `filling:`",
                    cd.filling_from_field, 100 * kPlateauTolerance);
      r.fail(*field, buf);
    }
    cd.filling = match->filling;
    char buf[200];
    std::snprintf(buf, sizeof buf, "field %.4g T gives bulk filling %.3f; using the nearest plateau nu = %s",
                  cd.field_T, cd.filling_from_field, cd.filling.ToString().c_str());
    d.notes.push_back(buf);
  }
}

// Channels: the file's list, or the defaults for the filling.
void read_channels(Loading& ctx) {
  const Reader& r = ctx.r;
  const Reader::Map& m = ctx.m;
  Design& d = ctx.d;
  if (auto cv = m.get("channels")) {
    d.channels_given = true;
    Fraction sum{0, 1};
    for (const Value& item : r.list(*cv, "channels")) {
      const auto cm = r.map(item, {"conductance", "charge", "scaling", "exchange"});
      Channel ch;
      ch.conductance = r.fraction(r.require(cm, "conductance"));
      ch.charge_e = ch.conductance.is_integer() ? 1.0 : ch.conductance.value();
      if (auto v = cm.get("charge")) {
        const Fraction q = r.fraction(*v);
        ch.charge_e = q.value();
        if (ch.charge_e > 1.0) r.fail(*v, "a quasiparticle charge is at most one electron charge");
      }
      if (auto v = cm.get("scaling")) ch.scaling = r.fraction(*v).value();
      if (auto v = cm.get("exchange")) {
        ch.exchange_pi = r.fraction(*v).value();
        if (*ch.exchange_pi > 1.0) r.fail(*v, "the exchange phase is given in units of pi and lies in (0, 1]");
      }
      sum = sum + ch.conductance;
      d.channels.push_back(ch);
    }
    if (d.channels.empty()) r.fail(*cv, "`channels:` lists no channel");
    if (!(sum == d.conditions.filling))
      r.fail(*cv, "the channel conductances add up to " + sum.ToString() + " but the bulk filling is " +
                      d.conditions.filling.ToString());
  } else {
    auto def = DefaultChannels(d.conditions.filling);
    if (!def)
      r.fail(*ctx.filling_value, "hallway has no default edge channels for filling " + d.conditions.filling.ToString() +
                                     "; list them under `channels:` (each with conductance in e^2/h, and charge, "
                                     "scaling and exchange where known)");
    d.channels = *def;
  }
}

// Mesa: inline or from the layout, and its etch depletion.
void read_mesa(Loading& ctx) {
  const Reader& r = ctx.r;
  const Reader::Map& m = ctx.m;
  Design& d = ctx.d;
  const auto given = m.get("mesa");
  const Value mv = given ? *given : Value{YAML::Node(YAML::NodeType::Map), "mesa"};
  if (!given && !ctx.imported.mesa) r.require(m, "mesa");
  const auto mm = r.map(mv, {"outline", "etch_depletion"});
  d.mesa.where = given ? r.where(mv) : ctx.imported.where;
  if (auto ov = mm.get("outline")) {
    if (ctx.imported.mesa) r.fail(*ov, "the mesa is also drawn in the layout file; give it in one place only");
    d.mesa.outline = ctx.inline_outline(*ov);
  } else if (ctx.imported.mesa) {
    d.mesa.outline = *ctx.imported.mesa;
  } else {
    r.require(mm, "outline");
  }
  if (auto v = mm.get("etch_depletion")) {
    d.mesa.etch_depletion_m = r.quantity(*v, Kind::kLength);
    d.mesa.etch_depletion_given = true;
    range(r, *v, d.mesa.etch_depletion_m, 0.0, 10e-6, "etch_depletion", {"m"});
  } else {
    d.notes.push_back("mesa.etch_depletion not given: the etched edge is taken to deplete nothing beyond itself");
  }
}

// Contacts: the listed ones, then those only drawn in the layout.
void read_contacts(Loading& ctx) {
  const Reader& r = ctx.r;
  const Reader::Map& m = ctx.m;
  Design& d = ctx.d;
  // Names listed in YAML, per kind: a layout object is skipped below only when YAML lists it as the
  // same kind (a layout gate labelled like a listed contact must be refused, not dropped).
  std::set<std::string> listed;
  if (auto cv = m.get("contacts"); cv && !cv->node.IsNull()) {
    for (const Value& item : r.list(*cv, "ohmic contacts")) {
      const auto cm = r.map(item, {"name", "outline"});
      Contact c;
      const Value nv = r.require(cm, "name");
      c.name = r.name(nv);
      ctx.claim(nv, c.name, "contact");
      listed.insert(c.name);
      c.where = r.where(item);
      c.where.key_path = item.path + " (" + c.name + ")";
      const auto drawn = ctx.imported.contacts.find(c.name);
      if (auto ov = cm.get("outline")) {
        if (drawn != ctx.imported.contacts.end())
          r.fail(*ov, "contact " + c.name + " is also drawn in the layout file; give it in one place only");
        c.outline = ctx.inline_outline(*ov);
      } else if (drawn != ctx.imported.contacts.end()) {
        c.outline = drawn->second;
      } else {
        r.fail(item, "contact " + c.name + " has no outline here and is not in the layout file");
      }
      d.contacts.push_back(std::move(c));
    }
  } else if (!ctx.have_layout) {
    r.require(m, "contacts");
  }
  for (const auto& [name, outline] : ctx.imported.contacts) {
    if (listed.count(name)) continue;
    if (ctx.taken.count(name))
      r.fail(m.self, "the layout's contact " + name + " has the name of a " + ctx.taken.at(name));
    ctx.taken.emplace(name, "contact");
    d.contacts.push_back({name, outline, ctx.imported.where});
  }
  if (d.contacts.empty()) r.fail(m.self, "a design needs at least one ohmic contact");
}

// Gates (optional: an ungated Hall bar has none): the listed ones, then those only drawn in the
// layout (at 0 V).
void read_gates(Loading& ctx) {
  const Reader& r = ctx.r;
  const Reader::Map& m = ctx.m;
  Design& d = ctx.d;
  std::set<std::string> listed_gates;
  if (auto gv = m.get("gates"); gv && !gv->node.IsNull()) {
    for (const Value& item : r.list(*gv, "gates")) {
      const auto gm = r.map(item, {"name", "voltage", "outline"});
      Gate g;
      const Value nv = r.require(gm, "name");
      g.name = r.name(nv);
      ctx.claim(nv, g.name, "gate");
      listed_gates.insert(g.name);
      g.where = r.where(item);
      g.where.key_path = item.path + " (" + g.name + ")";
      const Value vv = r.require(gm, "voltage");
      g.voltage_V = r.quantity(vv, Kind::kVoltage);
      g.voltage_where = r.where(vv);
      range(r, vv, g.voltage_V, -20.0, 20.0, "a gate voltage", {"V"});
      const auto drawn = ctx.imported.gates.find(g.name);
      if (auto ov = gm.get("outline")) {
        if (drawn != ctx.imported.gates.end())
          r.fail(*ov, "gate " + g.name + " is also drawn in the layout file; give it in one place only");
        g.outline = ctx.inline_outline(*ov);
      } else if (drawn != ctx.imported.gates.end()) {
        g.outline = drawn->second;
      } else {
        r.fail(item, "gate " + g.name + " has no outline here and is not in the layout file");
      }
      d.gates.push_back(std::move(g));
    }
  }
  for (const auto& [name, outline] : ctx.imported.gates) {
    if (listed_gates.count(name)) continue;
    if (ctx.taken.count(name)) r.fail(m.self, "the layout's gate " + name + " has the name of a " + ctx.taken.at(name));
    ctx.taken.emplace(name, "gate");
    d.gates.push_back({name, 0.0, outline, ctx.imported.where, ctx.imported.where});
    d.notes.push_back("gate " + name + " from the layout has no voltage in the design: taken as 0 V");
  }
}

// Constrictions: two gates (or a gate and the mesa) and one transmission per edge channel, or
// `from-gates` (the saddle-point model at the design voltages, saddle_model.hpp).
constexpr const char* kFromGates = "from-gates";
void read_constrictions(Loading& ctx) {
  const Reader& r = ctx.r;
  const Reader::Map& m = ctx.m;
  Design& d = ctx.d;
  if (auto kv = m.get("constrictions"); kv && !kv->node.IsNull()) {
    for (const Value& item : r.list(*kv, "constrictions")) {
      const auto km = r.map(item, {"name", "gates", "transmission", "regime"});
      Constriction k;
      const Value nv = r.require(km, "name");
      k.name = r.name(nv);
      ctx.claim(nv, k.name, "constriction");
      k.where = r.where(item);
      k.where.key_path = item.path + " (" + k.name + ")";
      const Value gv = r.require(km, "gates");
      const auto gl = r.list(gv, "two gate names");
      if (gl.size() != 2) r.fail(gv, "a constriction is formed by exactly two gates (or a gate and `mesa`)");
      std::string names[2];
      for (int i = 0; i < 2; ++i) {
        names[i] = r.scalar(gl[static_cast<std::size_t>(i)], "a gate name");
        if (names[i] != kMesaName && !d.FindGate(names[i]))
          r.fail(gl[static_cast<std::size_t>(i)],
                 "no gate named '" + names[i] + "'" +
                     (d.FindContact(names[i]) ? " ('" + names[i] + "' is a contact)" : ""));
      }
      if (names[0] == names[1]) r.fail(gv, "a constriction needs two different gates");
      k.first = names[0];
      k.second = names[1];
      const Value tv = r.require(km, "transmission");
      std::vector<Value> tvals;
      if (tv.node.IsScalar() && tv.node.Scalar() == kFromGates) {
        // The saddle-point model fills these in (saddle_model.hpp); NaN marks them not yet computed.
        k.transmission_from_gates = true;
        k.transmission.assign(d.channels.size(), std::numeric_limits<double>::quiet_NaN());
      } else if (tv.node.IsScalar() && !tv.node.Scalar().empty() && std::isalpha(static_cast<unsigned char>(tv.node.Scalar()[0]))) {
        r.fail(tv, "transmission is one number between 0 and 1 per channel (a list, outermost first), or `" +
                       std::string(kFromGates) + "` to compute it from the gate voltages; got '" + tv.node.Scalar() + "'");
      } else if (tv.node.IsSequence())
        tvals = r.list(tv, "transmissions");
      else {
        if (d.channels.size() != 1)
          r.fail(tv, "filling " + d.conditions.filling.ToString() + " has " + std::to_string(d.channels.size()) +
                         " edge channels: give one transmission per channel as a list, outermost first");
        tvals.push_back(tv);
      }
      if (!k.transmission_from_gates && tvals.size() != d.channels.size())
        r.fail(tv, "expected " + std::to_string(d.channels.size()) +
                       " transmissions (one per edge channel, outermost first), got " + std::to_string(tvals.size()));
      for (const Value& t : tvals) {
        const double x = r.number(t);
        if (!(x >= 0.0 && x <= 1.0)) r.fail(t, "a transmission is a probability between 0 and 1");
        k.transmission.push_back(x);
      }
      if (auto rv = km.get("regime")) {
        const auto reg = RegimeFromString(r.scalar(*rv, "weak or strong"));
        if (!reg) r.fail(*rv, "regime must be 'weak' or 'strong'");
        k.regime = *reg;
      }
      d.constrictions.push_back(std::move(k));
    }
  }
}

// Wiring: every contact exactly once.
void read_wiring_section(Loading& ctx) {
  const Reader& r = ctx.r;
  const Reader::Map& m = ctx.m;
  Design& d = ctx.d;
  const Value wv = r.require(m, "wiring");
  const auto wm = [&] {
    if (!wv.node.IsMap()) r.fail(wv, "expected a mapping of contact names to roles");
    Reader::Map out{wv, {}};
    std::set<std::string> seen;
    for (auto it = wv.node.begin(); it != wv.node.end(); ++it) {
      const std::string k = it->first.IsScalar() ? it->first.Scalar() : "";
      const Value key{it->first, "wiring." + k};
      if (!d.FindContact(k))
        r.fail(key, "no contact named '" + k + "'" + (d.FindGate(k) ? " ('" + k + "' is a gate)" : ""));
      if (!seen.insert(k).second) r.fail(key, "contact '" + k + "' is wired twice");
      out.entries.push_back({k, Value{it->second, "wiring." + k}});
    }
    return out;
  }();
  for (const Contact& c : d.contacts) {
    auto v = wm.get(c.name);
    if (!v) r.fail(wv, "contact '" + c.name + "' has no role; give it one of source <bias>, ground, amplifier, float");
    d.wiring.push_back(read_wiring(r, c.name, *v, d.amplifier));
  }
}

}  // namespace

Design LoadDesignFromString(const std::string& original_text, const std::string& path) {
  const YAML::Node root = parse_document(original_text, path);
  const Reader r(path);
  if (!root.IsDefined() || root.IsNull()) throw DesignError({path, 1, 1, ""}, "the design file is empty");
  const Value top{root, ""};
  const auto m = r.map(top, {"hallway", "name", "units", "layout", "heterostructure", "conditions", "mesa", "contacts",
                             "gates", "constrictions", "wiring", "amplifier", "channels"});
  Design d;
  d.path = path;
  Loading ctx{r, m, d};
  read_version_and_name(ctx);
  read_layout_and_units(ctx);
  read_heterostructure(ctx);
  read_conditions(ctx);
  read_channels(ctx);
  read_mesa(ctx);
  read_contacts(ctx);
  read_gates(ctx);
  read_constrictions(ctx);

  // Amplifier block.
  if (auto av = m.get("amplifier"))
    d.amplifier = read_amplifier(r,
                                 r.map(*av, {"load", "voltage_noise", "current_noise", "bandwidth", "integration",
                                             "load_temperature", "reference_subtraction"}),
                                 std::nullopt);
  read_wiring_section(ctx);
  return d;
}

Design LoadDesign(const std::string& path) {
  std::string text;
  if (const std::string why = read_bounded(path, kMaxDesignBytes, &text); !why.empty())
    throw DesignError(
        {path, 0, 0, ""},
        "the design file " + why + (why.rfind("is larger", 0) == 0 ? "; that is not a hand-written design" : ""));
  return LoadDesignFromString(text, path);
}

}  // namespace hallway
