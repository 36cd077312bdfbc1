// Collider Fano factor; formulas and sources in collider.hpp.
#include "hallway/collider.hpp"

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

double ColliderRateOverTemperature(double theta, double i_plus, double charge, double temperature) {
  const double st = std::sin(theta);
  return 2.0 * st * st * constants::kHbar_Js * i_plus /
         (2.0 * std::numbers::pi * charge * constants::kBoltzmann_J_per_K * temperature);
}

}  // namespace hallway
