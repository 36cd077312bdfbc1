// Collider Fano factor; formulas and sources in collider.hpp.
#include "hallway/collider.hpp"

#include <algorithm>
#include <cmath>
#include <complex>
#include <numbers>
#include <stdexcept>

#include "hallway/constants.hpp"

namespace hallway {

namespace {
void check(double theta, double delta) {
  if (!(theta > 0.0 && theta < std::numbers::pi / 2))
    throw std::invalid_argument("collider: theta must lie in (0, pi/2)");
  if (!(delta > 0.0 && delta < 0.5)) throw std::invalid_argument("collider: delta must lie in (0, 1/2)");
}
}  // namespace

double ColliderFanoBalanced(double theta, double delta) {
  check(theta, delta);
  return 1.0 - std::tan(theta) / std::tan(std::numbers::pi * delta) / (1.0 - 2.0 * delta);
}

double ColliderFano(double x, double theta, double delta) {
  check(theta, delta);
  if (!(std::abs(x) < 1.0)) throw std::invalid_argument("collider: |I-/I+| must be below 1");
  const double a = 2.0 * delta - 1.0;
  const std::complex<double> w(std::sin(theta), x * std::cos(theta));
  const std::complex<double> wa = std::pow(w, a), wa1 = std::pow(w, a - 1.0);
  const double s = std::sin(std::numbers::pi * delta), c = std::cos(std::numbers::pi * delta);
  return (1.0 - x * x) + (a * x * s * wa.imag() + c * wa.real()) / (a * s * std::cos(theta) * wa1.real());
}

namespace {

// 24-point Gauss-Legendre rule on [-1, 1]: Newton iteration on P_n from the usual cosine first guess
// (common practice), done once.
constexpr int kGaussPoints = 24;
struct GaussLegendre {
  double node[kGaussPoints], weight[kGaussPoints];
  GaussLegendre() {
    const int n = kGaussPoints;
    for (int i = 0; i < n; ++i) {
      double t = std::cos(std::numbers::pi * (i + 0.75) / (n + 0.5)), dp = 1.0;
      for (int it = 0; it < 100; ++it) {
        double p0 = 1.0, p1 = t;  // P_0, P_1; recurrence (k + 1) P_{k+1} = (2k + 1) t P_k - k P_{k-1}
        for (int k = 1; k < n; ++k) {
          const double p2 = ((2.0 * k + 1.0) * t * p1 - k * p0) / (k + 1.0);
          p0 = p1;
          p1 = p2;
        }
        dp = n * (t * p1 - p0) / (t * t - 1.0);
        const double step = p1 / dp;
        t -= step;
        if (std::abs(step) < 1e-16) break;
      }
      node[i] = t;
      weight[i] = 2.0 / ((1.0 - t * t) * dp * dp);
    }
  }
};
const GaussLegendre& gauss() {
  static const GaussLegendre g;
  return g;
}

// log sinh(u) for u > 0 without overflow.
double log_sinh(double u) {
  return u < 1.0 ? std::log(std::sinh(u)) : u - std::numbers::ln2 + std::log1p(-std::exp(-2.0 * u));
}

// J_0 and J_1 together (same nodes): int_0^inf u^k sinh(u)^{-2 delta} e^{-zhat u} du.
void thermal_integrals(std::complex<double> zhat, double delta, std::complex<double>* j0, std::complex<double>* j1) {
  const GaussLegendre& g = gauss();
  const double decay = 2.0 * delta + zhat.real();
  const double h_max = std::min(2.0, 8.0 / std::abs(zhat + 2.0 * delta));
  const double u_end = 46.0 / decay;
  // Only reached with Re zhat << |Im zhat| (not by ColliderShape, where |Im / Re| = |x| cot(theta)).
  if (u_end / h_max > 4e6)
    throw std::invalid_argument("collider: thermal integral too oscillatory (|Im zhat| >> Re zhat)");
  std::complex<double> s0 = 0.0, s1 = 0.0;
  // Innermost panel [0, eps]: u = eps s^q, q = 1 / (1 - 2 delta), removes u^{-2 delta}:
  // int_0^eps u^{-2 delta} f(u) du = q eps^{1 - 2 delta} int_0^1 f(eps s^q) ds, f = (u / sinh u)^{2 delta} e^{-zhat u}.
  const double eps = h_max * std::ldexp(1.0, -40), q = 1.0 / (1.0 - 2.0 * delta);
  {
    const double scale = 0.5 * q * std::pow(eps, 1.0 - 2.0 * delta);
    for (int i = 0; i < kGaussPoints; ++i) {
      const double u = eps * std::pow(0.5 * (g.node[i] + 1.0), q);
      const std::complex<double> f =
          std::exp(std::complex<double>(-2.0 * delta * std::log(std::sinh(u) / u), 0.0) - zhat * u);
      s0 += scale * g.weight[i] * f;
      s1 += scale * g.weight[i] * u * f;
    }
  }
  // Panels [c, c + min(c, h_max)]: geometric towards 0, then of width h_max.
  for (double c = eps; c < u_end;) {
    const double h = std::min(c, h_max), mid = c + 0.5 * h;
    for (int i = 0; i < kGaussPoints; ++i) {
      const double u = mid + 0.5 * h * g.node[i];
      const std::complex<double> f = std::exp(std::complex<double>(-2.0 * delta * log_sinh(u), 0.0) - zhat * u);
      s0 += 0.5 * h * g.weight[i] * f;
      s1 += 0.5 * h * g.weight[i] * u * f;
    }
    c += h;
  }
  *j0 = s0;
  *j1 = s1;
}

}  // namespace

std::complex<double> ColliderThermalIntegral(std::complex<double> zhat, double delta, int k) {
  if (!(delta > 0.0 && delta < 0.5)) throw std::invalid_argument("collider: delta must lie in (0, 1/2)");
  if (!(zhat.real() >= 0.0) || !std::isfinite(zhat.real()) || !std::isfinite(zhat.imag()))
    throw std::invalid_argument("collider: the thermal integral needs finite zhat with Re zhat >= 0");
  if (k != 0 && k != 1) throw std::invalid_argument("collider: thermal integral of order 0 or 1 only");
  std::complex<double> j0, j1;
  thermal_integrals(zhat, delta, &j0, &j1);
  return k == 0 ? j0 : j1;
}

ColliderNoiseShape ColliderShape(double x, double theta, double delta, double zeta) {
  check(theta, delta);
  if (!(std::abs(x) <= 1.0)) throw std::invalid_argument("collider: I-/I+ must lie in [-1, 1]");
  if (!(zeta > 0.0)) throw std::invalid_argument("collider: zeta must be positive (+infinity for T = 0)");
  const double phi = std::numbers::pi * delta, cot = 1.0 / std::tan(theta);
  std::complex<double> j0, j1;
  double a, thermal = 0.0, zero_bias = 0.0;
  if (std::isinf(zeta)) {
    // T = 0: J_k = Gamma(k + 1 - 2 delta) zhat^{2 delta - 1 - k}; only the direction of zhat matters (K' cancels),
    // so take A = 1; no thermal terms.
    a = 1.0;
    const std::complex<double> z(1.0, x * cot);
    const double g0 = std::tgamma(1.0 - 2.0 * delta);
    j0 = g0 * std::pow(z, 2.0 * delta - 1.0);
    j1 = (1.0 - 2.0 * delta) * g0 * std::pow(z, 2.0 * delta - 2.0);
  } else {
    a = 2.0 * zeta;
    thermal_integrals({a, a * x * cot}, delta, &j0, &j1);
    std::complex<double> e0, e1;
    thermal_integrals(0.0, delta, &e0, &e1);
    zero_bias = e0.real();
    thermal = std::tan(theta) / (2.0 * std::numbers::pi * zeta) * (1.0 - e1.real() / j1.real());
  }
  const double norm = a * cot * std::tan(phi) * j1.real();   // (I+ dI_T/dI-) / (2 e* K' cos phi)
  const double r = std::tan(theta) * j1.imag() / j1.real();  // (dI_T/dI+) / (dI_T/dI-)
  ColliderNoiseShape s;
  s.s1t = 0.5 * (1.0 + x) * (1.0 + r) + thermal;
  s.s2t = 0.5 * (1.0 - x) * (r - 1.0) - thermal + 0.0;  // + 0.0: no -0 at x = 1, T = 0
  s.stt = (j0.real() - zero_bias) / norm;
  s.p = s.s1t - s.s2t - s.stt;
  return s;
}

double ColliderRateOverTemperature(double theta, double i_plus, double charge, double temperature) {
  const double st = std::sin(theta);
  return 2.0 * st * st * constants::kHbar_Js * i_plus /
         (2.0 * std::numbers::pi * charge * constants::kBoltzmann_J_per_K * temperature);
}

}  // namespace hallway
