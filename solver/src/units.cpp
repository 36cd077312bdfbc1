// Unit parsing and SI formatting; see units.hpp.
#include "hallway/units.hpp"

#include <algorithm>
#include <array>
#include <cctype>
#include <charconv>
#include <cmath>
#include <cstdio>
#include <optional>
#include <vector>

#include "hallway/constants.hpp"

namespace hallway::units {
namespace {

struct Symbol {
  std::string_view name;
  double scale;
  Dimension dim;  // doubled exponents
  bool prefixable;
};

constexpr Dimension kMetre{2, 0, 0, 0, 0};
constexpr Dimension kSecond{0, 0, 2, 0, 0};
constexpr Dimension kVolt{4, 2, -6, -2, 0};  // kg m^2 s^-3 A^-1
constexpr Dimension kAmpere{0, 0, 0, 2, 0};
constexpr Dimension kOhm{4, 2, -6, -4, 0};  // kg m^2 s^-3 A^-2
constexpr Dimension kSiemens{-4, -2, 6, 4, 0};
constexpr Dimension kTesla{0, 2, -4, -2, 0};  // kg s^-2 A^-1
constexpr Dimension kKelvin{0, 0, 0, 0, 2};
constexpr Dimension kHertz{0, 0, -2, 0, 0};
constexpr Dimension kRootHertz{0, 0, -1, 0, 0};
constexpr Dimension kJoule{4, 2, -4, 0, 0};
constexpr Dimension kWatt{4, 2, -6, 0, 0};
constexpr Dimension kCoulomb{0, 0, 2, 2, 0};
constexpr Dimension kFarad{-4, -2, 8, 4, 0};
constexpr Dimension kGram{0, 2, 0, 0, 0};
constexpr Dimension kVoltSecond{4, 2, -4, -2, 0};
constexpr Dimension kNone{};

Dimension add(Dimension a, Dimension b, int times = 1) {
  return {a.m2 + times * b.m2, a.kg2 + times * b.kg2, a.s2 + times * b.s2, a.A2 + times * b.A2, a.K2 + times * b.K2};
}

const std::array<Symbol, 22>& symbols() {
  static const std::array<Symbol, 22> table{{
      {"m", 1.0, kMetre, true},      {"s", 1.0, kSecond, true},
      {"min", 60.0, kSecond, false}, {"h", 3600.0, kSecond, false},
      {"Hz", 1.0, kHertz, true},     {"rtHz", 1.0, kRootHertz, false},
      {"V", 1.0, kVolt, true},       {"Vs", 1.0, kVoltSecond, false},
      {"A", 1.0, kAmpere, true},     {"Ohm", 1.0, kOhm, true},
      {"ohm", 1.0, kOhm, true},      {"\xCE\xA9", 1.0, kOhm, true},  // Ω (U+03A9)
      {"S", 1.0, kSiemens, true},    {"T", 1.0, kTesla, true},
      {"K", 1.0, kKelvin, true},     {"eV", constants::kElementaryCharge_C, kJoule, true},
      {"J", 1.0, kJoule, true},      {"W", 1.0, kWatt, true},
      {"C", 1.0, kCoulomb, true},    {"F", 1.0, kFarad, true},
      {"g", 1e-3, kGram, true},      {"\xE2\x84\xA6", 1.0, kOhm, true},  // Ω (U+2126, ohm sign)
  }};
  return table;
}

struct Prefix {
  std::string_view name;
  double scale;
};
constexpr std::array<Prefix, 11> kPrefixes{{{"f", 1e-15},
                                            {"p", 1e-12},
                                            {"n", 1e-9},
                                            {"u", 1e-6},
                                            {"\xC2\xB5", 1e-6},  // µ (U+00B5, micro sign)
                                            {"\xCE\xBC", 1e-6},  // μ (U+03BC, Greek mu)
                                            {"m", 1e-3},
                                            {"c", 1e-2},
                                            {"k", 1e3},
                                            {"M", 1e6},
                                            {"G", 1e9}}};

const Symbol* find_symbol(std::string_view s) {
  for (const Symbol& sym : symbols())
    if (sym.name == s) return &sym;
  return nullptr;
}

[[noreturn]] void fail(std::string_view text, const std::string& why) {
  throw UnitError("'" + std::string(text) + "': " + why);
}

// One factor such as "cm", "kOhm", "Hz", "rtHz" (no power); returns scale and dimension, or nothing for a
// token that is not a unit.
std::optional<Quantity> try_factor(std::string_view tok) {
  if (tok == "sqrt(Hz)") return Quantity{1.0, kRootHertz};
  if (const Symbol* s = find_symbol(tok)) return Quantity{s->scale, s->dim};
  for (const Prefix& p : kPrefixes) {
    if (tok.size() > p.name.size() && tok.substr(0, p.name.size()) == p.name) {
      const Symbol* s = find_symbol(tok.substr(p.name.size()));
      if (!s || !s->prefixable) continue;
      if (p.name == "c" && s->name != "m") continue;  // only the centimetre
      return Quantity{p.scale * s->scale, s->dim};
    }
  }
  return std::nullopt;
}

// Every factor a unit may be made of: the symbols, each prefixable one with every prefix, sqrt(Hz).
const std::vector<std::string>& all_factors() {
  static const std::vector<std::string> list = [] {
    std::vector<std::string> out{"sqrt(Hz)"};
    for (const Symbol& s : symbols()) {
      out.emplace_back(s.name);
      if (!s.prefixable) continue;
      for (const Prefix& p : kPrefixes)
        if (p.name != "c" || s.name == "m") out.push_back(std::string(p.name) + std::string(s.name));
    }
    return out;
  }();
  return list;
}

char lower(char c) {
  return static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
}

// How far `typed` is from the known factor `known`: 1 + the number of letters whose case differs when
// the two are equal ignoring case, 10 for one insertion, deletion, substitution or swap of neighbours
// (edit distance 1), nothing when further apart.
std::optional<int> typo_distance(std::string_view typed, std::string_view known) {
  if (typed.size() == known.size()) {
    int case_changes = 0, other = 0;
    std::vector<std::size_t> differ;
    for (std::size_t k = 0; k < typed.size(); ++k) {
      if (typed[k] == known[k]) continue;
      differ.push_back(k);
      lower(typed[k]) == lower(known[k]) ? ++case_changes : ++other;
    }
    if (other == 0) return 1 + case_changes;
    if (differ.size() == 1) return 10;
    if (differ.size() == 2 && differ[1] == differ[0] + 1 && typed[differ[0]] == known[differ[1]] &&
        typed[differ[1]] == known[differ[0]])
      return 10;
    return std::nullopt;
  }
  const std::string_view longer = typed.size() > known.size() ? typed : known;
  const std::string_view shorter = typed.size() > known.size() ? known : typed;
  if (longer.size() != shorter.size() + 1) return std::nullopt;
  for (std::size_t k = 0; k < longer.size(); ++k)
    if (std::string(longer.substr(0, k)) + std::string(longer.substr(k + 1)) == shorter) return 10;
  return std::nullopt;
}

Quantity parse_unit(std::string_view unit, const Dimension* want, bool suggest);

// The known factors closest to the unknown token `tok` at `at` in `whole` (equal ignoring case first, then
// one edit away) that make the whole unit parse, with the dimension `want` when given.
std::vector<std::string> suggestions(std::string_view whole, std::size_t at, std::string_view tok,
                                     const Dimension* want) {
  std::vector<std::string> best;
  int best_distance = 1000;
  for (const std::string& cand : all_factors()) {
    const auto dist = typo_distance(tok, cand);
    if (!dist || *dist > best_distance) continue;
    const std::string fixed = std::string(whole.substr(0, at)) + cand + std::string(whole.substr(at + tok.size()));
    try {
      const Quantity q = parse_unit(fixed, nullptr, false);
      if (want && !(q.dimension == *want)) continue;
    } catch (const UnitError&) {
      continue;
    }
    if (*dist < best_distance) best.clear();
    best_distance = *dist;
    if (std::find(best.begin(), best.end(), cand) == best.end()) best.push_back(cand);
  }
  return best;
}

// One factor of `whole` (the token `tok` at offset `at`); an unknown one fails, with suggestions when asked
// (never while testing a suggestion, so a unit with several typos costs one pass over the candidates).
Quantity factor(std::string_view whole, std::size_t at, std::string_view tok, const Dimension* want, bool suggest) {
  if (const auto q = try_factor(tok)) return *q;
  if (!suggest) fail(whole, "unknown unit '" + std::string(tok) + "'");
  std::string hint;
  const std::vector<std::string> near = suggestions(whole, at, tok, want);
  for (std::size_t k = 0; k < near.size() && k < 3; ++k)
    hint += (k == 0                                           ? "; did you mean '"
             : k + 1 == std::min<std::size_t>(near.size(), 3) ? "' or '"
                                                              : "', '") +
            near[k];
  if (!hint.empty()) hint += "'?";
  fail(whole, "unknown unit '" + std::string(tok) + "'" + hint +
                  " (known: m, s, min, h, Hz, rtHz, V, Vs, A, Ohm, S, T, K, eV, J, W, C, F, g with prefixes "
                  "f p n u/µ m c k M G)");
}

bool is_unit_char(char c) {
  const auto u = static_cast<unsigned char>(c);
  return std::isalpha(u) || u >= 0x80 || c == '(' || c == ')';
}

// Parses a unit; `want`, when given, is the dimension the caller expects (used only for suggestions).
Quantity parse_unit(std::string_view unit, const Dimension* want, bool suggest) {
  Quantity q{1.0, kNone};
  bool denominator = false;
  std::size_t i = 0;
  bool any = false;
  while (i < unit.size()) {
    const char c = unit[i];
    if (c == ' ' || c == '*') {
      ++i;
      continue;
    }
    if (c == '/') {
      if (denominator) fail(unit, "use at most one '/' in a unit, e.g. 'cm^2/Vs'");
      if (!any) fail(unit, "a unit cannot start with '/'");
      denominator = true;
      ++i;
      continue;
    }
    std::size_t j = i;
    while (j < unit.size() && is_unit_char(unit[j])) ++j;
    if (j == i) fail(unit, std::string("unexpected character '") + c + "' in the unit");
    const std::string_view tok = unit.substr(i, j - i);
    Quantity f = factor(unit, i, tok, want, suggest);
    int power = 1;
    if (j < unit.size() && unit[j] == '^') {
      ++j;
      const char* b = unit.data() + j;
      const char* e = unit.data() + unit.size();
      auto [ptr, ec] = std::from_chars(b, e, power);
      if (ec != std::errc() || power == 0 || std::abs(power) > 4)
        fail(unit, "the power after '^' must be a small non-zero integer, e.g. 'cm^-2'");
      j += static_cast<std::size_t>(ptr - b);
    } else if (j < unit.size() && (unit[j] == '-' || std::isdigit(static_cast<unsigned char>(unit[j])))) {
      fail(unit, "write powers with '^', e.g. 'cm^-2'");
    }
    if (denominator) power = -power;
    q.value_si *= std::pow(f.value_si, power);
    q.dimension = add(q.dimension, f.dimension, power);
    any = true;
    i = j;
  }
  if (!any) fail(unit, "no unit given");
  return q;
}

Quantity parse_quantity(std::string_view text, const Dimension* want) {
  std::size_t b = 0, e = text.size();
  while (b < e && std::isspace(static_cast<unsigned char>(text[b]))) ++b;
  while (e > b && std::isspace(static_cast<unsigned char>(text[e - 1]))) --e;
  const std::string_view t = text.substr(b, e - b);
  if (t.empty()) fail(text, "empty value; expected a number and a unit");
  const char* first = t.data();
  if (*first == '+') ++first;
  double value = 0.0;
  auto [ptr, ec] = std::from_chars(first, t.data() + t.size(), value);
  if (ec == std::errc::result_out_of_range) fail(text, "the number is out of the range of a double");
  if (ec != std::errc()) fail(text, "expected a number first, e.g. '95 nm'");
  if (!std::isfinite(value)) fail(text, "the number is not finite");
  std::string_view rest = t.substr(static_cast<std::size_t>(ptr - t.data()));
  while (!rest.empty() && rest.front() == ' ') rest.remove_prefix(1);
  if (rest.empty()) return {value, kNone};
  Quantity u = parse_unit(rest, want, true);
  // A scale below 1 that is the reciprocal of a whole number (a power of ten such as 1e-6 for uV) is
  // applied by dividing by that number, exact in floating point, so that "20 uV" is the double nearest
  // to 2e-05 rather than 20 * 1e-6 = 1.9999999999999998e-05.
  const double inverse = 1.0 / u.value_si;
  const double whole = std::round(inverse);
  const double v = u.value_si < 1.0 && whole >= 1.0 && std::abs(inverse - whole) <= 1e-9 * whole
                       ? value / whole
                       : value * u.value_si;
  if (!std::isfinite(v)) fail(text, "the value overflows in SI units");
  return {v, u.dimension};
}

}  // namespace

Quantity ParseUnit(std::string_view unit) {
  return parse_unit(unit, nullptr, true);
}

Quantity ParseQuantity(std::string_view text) {
  return parse_quantity(text, nullptr);
}

std::string ToString(Kind k) {
  switch (k) {
    case Kind::kDimensionless: return "plain number";
    case Kind::kLength: return "length";
    case Kind::kArea: return "area";
    case Kind::kSheetDensity: return "sheet density";
    case Kind::kMobility: return "mobility";
    case Kind::kVoltage: return "voltage";
    case Kind::kCurrent: return "current";
    case Kind::kTemperature: return "temperature";
    case Kind::kField: return "magnetic field";
    case Kind::kResistance: return "resistance";
    case Kind::kVoltageNoise: return "voltage noise density";
    case Kind::kCurrentNoise: return "current noise density";
    case Kind::kFrequency: return "frequency";
    case Kind::kTime: return "time";
    case Kind::kEnergy: return "energy";
    case Kind::kCapacitance: return "capacitance";
    case Kind::kVelocity: return "velocity";
  }
  return "?";
}

std::string ExampleFor(Kind k) {
  switch (k) {
    case Kind::kDimensionless: return "12.9";
    case Kind::kLength: return "95 nm";
    case Kind::kArea: return "4 um^2";
    case Kind::kSheetDensity: return "2.3e11 cm^-2";
    case Kind::kMobility: return "2.5e6 cm^2/Vs";
    case Kind::kVoltage: return "-0.8 V";
    case Kind::kCurrent: return "2 nA";
    case Kind::kTemperature: return "15 mK";
    case Kind::kField: return "4.75 T";
    case Kind::kResistance: return "10 kOhm";
    case Kind::kVoltageNoise: return "0.25 nV/rtHz";
    case Kind::kCurrentNoise: return "5 fA/rtHz";
    case Kind::kFrequency: return "200 kHz";
    case Kind::kTime: return "20 min";
    case Kind::kEnergy: return "10 ueV";
    case Kind::kCapacitance: return "2 fF";
    case Kind::kVelocity: return "5e4 m/s";
  }
  return "?";
}

Dimension DimensionOf(Kind k) {
  switch (k) {
    case Kind::kDimensionless: return kNone;
    case Kind::kLength: return kMetre;
    case Kind::kArea: return add(kNone, kMetre, 2);
    case Kind::kSheetDensity: return add(kNone, kMetre, -2);
    case Kind::kMobility: return add(add(kNone, kMetre, 2), kVoltSecond, -1);
    case Kind::kVoltage: return kVolt;
    case Kind::kCurrent: return kAmpere;
    case Kind::kTemperature: return kKelvin;
    case Kind::kField: return kTesla;
    case Kind::kResistance: return kOhm;
    case Kind::kVoltageNoise: return add(kVolt, kRootHertz, -1);
    case Kind::kCurrentNoise: return add(kAmpere, kRootHertz, -1);
    case Kind::kFrequency: return kHertz;
    case Kind::kTime: return kSecond;
    case Kind::kEnergy: return kJoule;
    case Kind::kCapacitance: return kFarad;
    case Kind::kVelocity: return add(kMetre, kSecond, -1);
  }
  return kNone;
}

std::string ToString(const Dimension& d) {
  const std::pair<const char*, int> parts[] = {{"kg", d.kg2}, {"m", d.m2}, {"s", d.s2}, {"A", d.A2}, {"K", d.K2}};
  std::string out;
  for (const auto& [name, twice] : parts) {
    if (twice == 0) continue;
    if (!out.empty()) out += ' ';
    out += name;
    if (twice != 2) {
      out += '^';
      if (twice % 2 == 0)
        out += std::to_string(twice / 2);
      else
        out.append("(").append(std::to_string(twice)).append("/2)");
    }
  }
  return out.empty() ? "dimensionless" : out;
}

double Parse(std::string_view text, Kind kind) {
  const Dimension want = DimensionOf(kind);
  const Quantity q = parse_quantity(text, &want);
  if (q.dimension == want) return q.value_si;
  if (q.dimension == kNone) fail(text, "a " + ToString(kind) + " needs a unit, e.g. '" + ExampleFor(kind) + "'");
  if (want == kNone) fail(text, "expected a plain number without a unit, e.g. '" + ExampleFor(kind) + "'");
  fail(text, "expected a " + ToString(kind) + " such as '" + ExampleFor(kind) + "', but the unit has dimension " +
                 ToString(q.dimension));
}

std::string FormatSI(double value_si, std::string_view unit, int digits) {
  if (!std::isfinite(value_si)) return "not finite";
  if (value_si == 0.0) return "0 " + std::string(unit);
  static const std::array<std::pair<double, const char*>, 10> prefixes{{{1e-18, "a"},
                                                                        {1e-15, "f"},
                                                                        {1e-12, "p"},
                                                                        {1e-9, "n"},
                                                                        {1e-6, "u"},
                                                                        {1e-3, "m"},
                                                                        {1.0, ""},
                                                                        {1e3, "k"},
                                                                        {1e6, "M"},
                                                                        {1e9, "G"}}};
  const double a = std::abs(value_si);
  char buf[64];
  // Beyond the prefixes (below 1 a, from 1000 G on): plain scientific notation with the bare unit,
  // never a prefix that would be read as a different number.
  if (a < prefixes.front().first * 0.9995 || a >= prefixes.back().first * 999.5) {
    std::snprintf(buf, sizeof buf, "%.*e", std::max(digits - 1, 0), value_si);
    // Trim trailing zeros of the mantissa: "1.000e-282" -> "1e-282".
    std::string t(buf);
    const auto e = t.find('e');
    std::string mant = t.substr(0, e), expo = t.substr(e);
    if (mant.find('.') != std::string::npos) {
      while (!mant.empty() && mant.back() == '0') mant.pop_back();
      if (!mant.empty() && mant.back() == '.') mant.pop_back();
    }
    return mant + expo + " " + std::string(unit);
  }
  std::size_t k = 0;
  while (k + 1 < prefixes.size() && a >= prefixes[k + 1].first * 0.9995) ++k;
  const double scaled = value_si / prefixes[k].first;
  std::snprintf(buf, sizeof buf, "%.*g", digits, scaled);
  return std::string(buf) + " " + prefixes[k].second + std::string(unit);
}

}  // namespace hallway::units
