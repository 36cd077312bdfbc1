// Default channels per bulk filling; see channels.hpp for the table and its sources.
#include "hallway/channels.hpp"

#include <cmath>

namespace hallway {
namespace {

Channel integer_channel() {
  return {MakeFraction(1, 1), 1.0, std::nullopt, std::nullopt, ""};
}

Channel laughlin(long m) {
  const double inv = 1.0 / static_cast<double>(m);
  return {MakeFraction(1, m), inv, inv, inv, ""};
}

}  // namespace

const std::vector<Fraction>& SupportedFractions() {
  static const std::vector<Fraction> list{MakeFraction(1, 3), MakeFraction(1, 5), MakeFraction(1, 7),
                                          MakeFraction(1, 9), MakeFraction(2, 5), MakeFraction(2, 3),
                                          MakeFraction(4, 3), MakeFraction(5, 3)};
  return list;
}

std::optional<std::vector<Channel>> DefaultChannels(Fraction f) {
  if (f.num <= 0) return std::nullopt;
  if (f.is_integer()) {
    if (f.num > kMaxIntegerFilling) return std::nullopt;
    return std::vector<Channel>(static_cast<std::size_t>(f.num), integer_channel());
  }
  if (f.num == 1 && f.den % 2 == 1 && f.den <= 9) return std::vector<Channel>{laughlin(f.den)};
  if (f == MakeFraction(2, 5)) {
    Channel inner{MakeFraction(1, 15), 0.2, std::nullopt, std::nullopt,
                  "inner 2/5 channel: exchange phase above pi/2, collider formulas do not apply"};
    return std::vector<Channel>{laughlin(3), inner};
  }
  if (f == MakeFraction(2, 3)) {
    Channel c{MakeFraction(2, 3), 1.0 / 3.0, std::nullopt, std::nullopt,
              "hole-conjugate 2/3: equilibrated channel, neutral upstream mode not modelled; noise approximate"};
    return std::vector<Channel>{c};
  }
  if (f == MakeFraction(4, 3) || f == MakeFraction(5, 3)) {
    Channel frac = laughlin(3);
    frac.conductance = MakeFraction(f.num - 3, 3);
    return std::vector<Channel>{integer_channel(), frac};
  }
  return std::nullopt;
}

std::optional<PlateauMatch> NearestPlateau(double raw, double tol) {
  if (!(raw > 0.0) || !std::isfinite(raw)) return std::nullopt;
  std::optional<PlateauMatch> best;
  auto consider = [&](Fraction f) {
    const double d = std::abs(raw / f.value() - 1.0);
    if (!best || d < best->relative_distance) best = PlateauMatch{f, d};
  };
  for (long n = 1; n <= kMaxIntegerFilling; ++n) consider(MakeFraction(n, 1));
  for (Fraction f : SupportedFractions()) consider(f);
  if (best && best->relative_distance <= tol) return best;
  return std::nullopt;
}

}  // namespace hallway
