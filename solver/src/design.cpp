// Small helpers of the design model; see design.hpp.
#include "hallway/design.hpp"

#include <numeric>
#include <stdexcept>

namespace hallway {

std::string SourceLocation::ToString() const {
  std::string s = file;
  if (line > 0) {
    s.append(":").append(std::to_string(line)).append(":").append(std::to_string(column));
  }
  if (!key_path.empty()) s.append(": ").append(key_path);
  return s;
}

Fraction MakeFraction(long num, long den) {
  if (den == 0) throw std::invalid_argument("MakeFraction: zero denominator");
  if (den < 0) {
    num = -num;
    den = -den;
  }
  const long g = std::gcd(num, den);
  return {num / (g == 0 ? 1 : g), den / (g == 0 ? 1 : g)};
}

Fraction operator+(Fraction a, Fraction b) {
  return MakeFraction(a.num * b.den + b.num * a.den, a.den * b.den);
}

std::string Fraction::ToString() const {
  return den == 1 ? std::to_string(num) : std::to_string(num) + "/" + std::to_string(den);
}

std::string ToString(SurfaceModel m) {
  return m == SurfaceModel::kPinned ? "pinned" : "frozen";
}
std::optional<SurfaceModel> SurfaceModelFromString(const std::string& s) {
  if (s == "pinned") return SurfaceModel::kPinned;
  if (s == "frozen") return SurfaceModel::kFrozen;
  return std::nullopt;
}

std::string ToString(Regime r) {
  return r == Regime::kWeak ? "weak" : "strong";
}
std::optional<Regime> RegimeFromString(const std::string& s) {
  if (s == "weak") return Regime::kWeak;
  if (s == "strong") return Regime::kStrong;
  return std::nullopt;
}

std::string ToString(Role r) {
  switch (r) {
    case Role::kSource: return "source";
    case Role::kGround: return "ground";
    case Role::kAmplifier: return "amplifier";
    case Role::kFloat: return "float";
  }
  return "?";
}
std::optional<Role> RoleFromString(const std::string& s) {
  for (Role r : {Role::kSource, Role::kGround, Role::kAmplifier, Role::kFloat})
    if (ToString(r) == s) return r;
  return std::nullopt;
}

const Contact* Design::FindContact(const std::string& n) const {
  for (const auto& c : contacts)
    if (c.name == n) return &c;
  return nullptr;
}
const Gate* Design::FindGate(const std::string& n) const {
  for (const auto& g : gates)
    if (g.name == n) return &g;
  return nullptr;
}
const Wiring* Design::FindWiring(const std::string& contact) const {
  for (const auto& w : wiring)
    if (w.contact == contact) return &w;
  return nullptr;
}

}  // namespace hallway
