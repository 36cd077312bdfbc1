// Collider at filling 2 fed by fractionalized pulses (fractionalized_collider.hpp; docs/models.md,
// Collider at filling 2: fractionalized pulses): the exact finite-size computation against a brute-force
// fermionic oracle and against exact identities, and the runtime table against fresh computations.
#include <gtest/gtest.h>

#include <bit>
#include <cmath>
#include <complex>
#include <cstdint>
#include <map>
#include <numbers>
#include <stdexcept>
#include <tuple>
#include <utility>
#include <vector>

#include "hallway/fractionalized_collider.hpp"

namespace hallway {
namespace {

constexpr double kPi = std::numbers::pi;
// Double-precision sums over a few hundred partitions: identities hold to rounding.
constexpr double kRounding = 1e-12;

// ---- Brute-force oracle: the two-channel fermionic Fock space of one energy sector ----
//
// Each channel is a bit string over the window of levels k in [1 - M, M + 1] (levels (k - 1/2) Delta;
// deeper levels filled, higher ones empty, exact for total excitation M). Channel 1 holds charge 1
// (M + 1 particles in the window), channel 2 charge 0 (M particles). Boson operators are the fermion
// bilinears b_n^dag = n^{-1/2} sum_k c_{k+n}^dag c_k; the propagation is exp(i sum_n theta_n
// (b_1n^dag b_2n + b_2n^dag b_1n)), theta_n = n x / (2p - 1), exponentiated by its Taylor series on the
// state vector (fractionalized_collider.hpp states the model).
struct Window {
  int total = 0;  // M = p - 1
  int Bits() const { return 2 * total + 1; }
  int Level(int bit) const { return bit + 1 - total; }
  // Excitation energy (units of Delta) of a bit string over the ground state with `particles` particles.
  int Energy(std::uint32_t s, int particles) const {
    int e = 0;
    for (int b = 0; b < Bits(); ++b)
      if (s >> b & 1u) e += Level(b);
    for (int i = 0; i < particles; ++i) e -= Level(i);
    return e;
  }
};

using State = std::pair<std::uint32_t, std::uint32_t>;  // (channel 1, channel 2)

// c_{k+n}^dag c_k on one channel: every resulting string with its fermionic sign.
std::vector<std::pair<std::uint32_t, double>> Raise(std::uint32_t s, int n, int bits) {
  std::vector<std::pair<std::uint32_t, double>> out;
  for (int b = 0; b + n < bits; ++b) {
    if (!(s >> b & 1u) || (s >> (b + n) & 1u)) continue;
    int between = 0;
    for (int q = b + 1; q < b + n; ++q) between += static_cast<int>(s >> q & 1u);
    out.emplace_back((s & ~(1u << b)) | (1u << (b + n)), between % 2 ? -1.0 : 1.0);
  }
  return out;
}
std::vector<std::pair<std::uint32_t, double>> Lower(std::uint32_t s, int n, int bits) {
  std::vector<std::pair<std::uint32_t, double>> out;
  for (int b = n; b < bits; ++b) {
    if (!(s >> b & 1u) || (s >> (b - n) & 1u)) continue;
    int between = 0;
    for (int q = b - n + 1; q < b; ++q) between += static_cast<int>(s >> q & 1u);
    out.emplace_back((s & ~(1u << b)) | (1u << (b - n)), between % 2 ? -1.0 : 1.0);
  }
  return out;
}

struct Oracle {
  double holes = 0.0, electrons = 0.0, norm = 0.0;
};

Oracle BruteForceHoles(int levels, double x) {
  const Window w{levels - 1};
  const int bits = w.Bits();
  std::vector<State> basis;
  std::map<State, int> index;
  for (std::uint32_t a = 0; a < (1u << bits); ++a) {
    if (std::popcount(a) != w.total + 1) continue;
    for (std::uint32_t b = 0; b < (1u << bits); ++b) {
      if (std::popcount(b) != w.total || w.Energy(a, w.total + 1) + w.Energy(b, w.total) != w.total) continue;
      index[{a, b}] = static_cast<int>(basis.size());
      basis.emplace_back(a, b);
    }
  }
  // Generator G = sum_n theta_n (b_1n^dag b_2n + h.c.) as a sparse list of (row, col, value).
  std::vector<std::tuple<int, int, double>> g;
  for (int col = 0; col < static_cast<int>(basis.size()); ++col)
    for (int n = 1; n <= w.total; ++n) {
      const double theta = n * x / (2.0 * levels - 1.0), scale = theta / n;
      const auto [a, b] = basis[col];
      for (const auto& [a2, sa] : Raise(a, n, bits))
        for (const auto& [b2, sb] : Lower(b, n, bits)) g.emplace_back(index.at({a2, b2}), col, scale * sa * sb);
      for (const auto& [a2, sa] : Lower(a, n, bits))
        for (const auto& [b2, sb] : Raise(b, n, bits)) g.emplace_back(index.at({a2, b2}), col, scale * sa * sb);
    }
  // Initial state: channel 1 ground (levels 1 - M .. 0 filled) plus the electron at level p; channel 2
  // ground. Bits are ordered by level, so c_p^dag on the string adds no sign.
  const std::uint32_t ground2 = (1u << w.total) - 1u;
  const std::uint32_t start1 = ground2 | (1u << (bits - 1));
  std::vector<std::complex<double>> psi(basis.size(), 0.0);
  psi[index.at({start1, ground2})] = 1.0;
  // exp(iG) = (exp(iG/K))^K, each factor by its Taylor series to 30 terms (|G/K| < 0.1).
  const int steps = 40 + static_cast<int>(8.0 * x * levels);
  for (int s = 0; s < steps; ++s) {
    std::vector<std::complex<double>> term = psi, next = psi;
    for (int order = 1; order <= 30; ++order) {
      std::vector<std::complex<double>> applied(basis.size(), 0.0);
      for (const auto& [row, col, v] : g) applied[row] += std::complex<double>(0.0, v / steps / order) * term[col];
      term = applied;
      for (std::size_t i = 0; i < psi.size(); ++i) next[i] += term[i];
    }
    psi = next;
  }
  Oracle out;
  for (std::size_t i = 0; i < basis.size(); ++i) {
    const double w2 = std::norm(psi[i]);
    int holes = 0, electrons = 0;
    for (int b = 0; b < bits; ++b) {
      const bool filled = basis[i].first >> b & 1u;
      if (w.Level(b) <= 0 && !filled) ++holes;
      if (w.Level(b) >= 1 && filled) ++electrons;
    }
    out.norm += w2;
    out.holes += w2 * holes;
    out.electrons += w2 * electrons;
  }
  return out;
}

TEST(FractionalizedCollider, SymmetricFunctionMethodMatchesBruteForceFermions) {
  for (int p : {3, 5, 6})
    for (double x : {0.7, 2.0, 6.0}) {
      const Oracle o = BruteForceHoles(p, x);
      const FractionalizationSample s = FractionalizedHolesFiniteSize(p, x);
      EXPECT_NEAR(o.norm, 1.0, 1e-10) << "p " << p << " x " << x;
      EXPECT_NEAR(s.holes, o.holes, 1e-10) << "p " << p << " x " << x;
      EXPECT_NEAR(s.electrons, o.electrons, 1e-10) << "p " << p << " x " << x;
      EXPECT_GT(s.holes, 1e-6) << "the oracle comparison must see holes (p " << p << ", x " << x << ")";
    }
}

// Level count for the exact identities: a few milliseconds per evaluation, even under the sanitizers.
constexpr int kSmallLevels = 14;

TEST(FractionalizedCollider, NoHolesWithoutInteraction) {
  // delta_t = 0: the injected electron stays an eigenstate; holes exactly zero (free-fermion scattering,
  // Buttiker, Phys. Rev. B 46, 12485 (1992)).
  const FractionalizationSample s = FractionalizedHolesFiniteSize(kSmallLevels, 0.0);
  EXPECT_EQ(s.holes, 0.0);
  EXPECT_NEAR(s.electrons, 1.0, kRounding);
  EXPECT_NEAR(s.energy_channel1, kSmallLevels - 0.5, kRounding);
}

TEST(FractionalizedCollider, ElectronsMinusHolesInOuterChannelIsOneElectron) {
  // Charge conservation per channel: the sector (Q_1, Q_2) = (1, 0) is kept by the density-density
  // interaction, so N_e - N_h = 1 in the outer channel for every x (counted separately in the Maya diagram).
  for (double x : {0.5, 3.0, 12.0, 40.0}) {
    const FractionalizationSample s = FractionalizedHolesFiniteSize(kSmallLevels, x);
    EXPECT_NEAR(s.electrons - s.holes, 1.0, kRounding) << "x " << x;
    EXPECT_GT(s.holes, 0.0) << "x " << x;
  }
}

TEST(FractionalizedCollider, PropagationIsUnitaryAndCauchyIdentityHolds) {
  // norm = sum_m w_2(M - m) [u^m] exp(sum cos^2 u^n / n) = [u^M] 1 / (1 - u) = 1; the Schur-function sum
  // per m equals its Cauchy-identity value (Macdonald, Symmetric Functions and Hall Polynomials, 2nd ed.
  // (1995), I.4, from memory).
  for (double x : {0.3, 2.0, 9.0, 50.0}) {
    const FractionalizationSample s = FractionalizedHolesFiniteSize(kSmallLevels, x);
    EXPECT_NEAR(s.norm, 1.0, kRounding) << "x " << x;
    EXPECT_LT(s.cauchy_deviation, kRounding) << "x " << x;
  }
}

TEST(FractionalizedCollider, EnergyLeftInOuterChannelEqualsBosonicIdentity) {
  // E_1 = 1/2 + sum_n n cos^2(theta_n) <b_1n^dag b_1n>_in (zero mode 1/2 in the charge-1 sector), with
  // <b_n^dag b_n>_in = 1/n for n <= p - 1: the injected state is the complete symmetric function h_{p-1},
  // whose boson occupations are the cycle counts of a uniform random permutation of p - 1 objects, mean 1/n
  // (Goncharov, Izv. Akad. Nauk SSSR Ser. Mat. 8, 3 (1944), from memory). Below eps = p - 1/2 once x > 0.
  for (double x : {0.0, 1.0, 7.0, 33.0}) {
    const FractionalizationSample s = FractionalizedHolesFiniteSize(kSmallLevels, x);
    double bosonic = 0.5;
    for (int n = 1; n < kSmallLevels; ++n) {
      const double c = std::cos(n * x / (2.0 * kSmallLevels - 1.0));
      bosonic += c * c;
    }
    EXPECT_NEAR(s.energy_channel1, bosonic, kRounding) << "x " << x;
    if (x > 0.0) {
      EXPECT_LT(s.energy_channel1, kSmallLevels - 0.5) << "x " << x;
    }
  }
}

// Monotone cubic interpolation on the table's 0.25 grid: third-order error, below 1e-5 for these n_h.
constexpr double kInterpolation = 1e-5;

TEST(FractionalizedCollider, RuntimeTableAgreesWithFreshExtrapolation) {
  // Richardson in 1/p^2 from p = 20 and 24 against the table (extrapolated from p = 40 and 50): their
  // difference is the smaller extrapolation's own error, which a fresh p = 16 -> 20 -> 24 estimate bounds,
  // plus the interpolation between grid points.
  for (double x : {1.1, 2.6, 4.3, 6.6}) {
    const FractionalizationEstimate fresh = FractionalizedHolesExtrapolated(x, {16, 20, 24});
    EXPECT_NEAR(HolesPerInjectedElectron(x), fresh.holes, 3.0 * fresh.error + kInterpolation) << "x " << x;
  }
}

TEST(FractionalizedCollider, FanoVanishesAtZeroBiasAndDecreasesWithBias) {
  EXPECT_EQ(Filling2ColliderFano(0.0), 0.0);
  EXPECT_EQ(HolesPerInjectedElectron(0.0), 0.0);
  double previous = 0.0;
  for (double big_x = 0.05; big_x < 2000.0; big_x *= 1.1) {
    const double p = Filling2ColliderFano(big_x);
    EXPECT_LT(p, previous) << "X " << big_x;
    previous = p;
  }
}

TEST(FractionalizedCollider, FanoIsMinusTwiceTheBiasAveragedHoles) {
  // P(X) = -2 (1/X) Int_0^X n_h (fractionalized_collider.hpp), by a 200-panel Simpson rule on the runtime n_h.
  for (double big_x : {0.3, 3.0, 25.0, 120.0}) {
    constexpr int kPanels = 200;
    const double h = big_x / kPanels;
    double sum = HolesPerInjectedElectron(0.0) + HolesPerInjectedElectron(big_x);
    for (int i = 1; i < kPanels; ++i) sum += (i % 2 ? 4.0 : 2.0) * HolesPerInjectedElectron(i * h);
    EXPECT_NEAR(Filling2ColliderFano(big_x), -2.0 * sum * h / 3.0 / big_x, 1e-5) << "X " << big_x;
  }
}

// Mean of n_h over one step period (2 pi) centred on x, from Int_0^X n_h = -X P(X) / 2.
double PeriodMeanHoles(double x) {
  auto integral = [](double big_x) { return -0.5 * big_x * Filling2ColliderFano(big_x); };
  return (integral(x + kPi) - integral(x - kPi)) / (2.0 * kPi);
}

TEST(FractionalizedCollider, LargeDelaySlopeIsTwoOverPiSquared) {
  // Time-domain braiding: each e/2 pulse multiplies the outer-channel Green's function by e^{i pi}; Poisson
  // averaging gives delta f(E) = 4 lambda / (pi E) for hbar/delta_t << |E| << eps, so n_h -> (2/pi^2) ln x
  // (derivation in docs/models.md). The exact table's period-averaged slope between x = 20 and its end
  // approaches it; corrections fall as 1/x, hence a 3% tolerance.
  const double x1 = 20.0, x2 = FractionalizationTableEnd() - kPi;
  const double slope = (PeriodMeanHoles(x2) - PeriodMeanHoles(x1)) / std::log(x2 / x1);
  EXPECT_NEAR(slope / (2.0 / (kPi * kPi)), 1.0, 0.03);
  // Beyond the table the Fano factor follows -(4/pi^2) ln X: nbar_h = (2/pi^2)(ln X - 1) + const + O(ln X / X).
  const double far = (Filling2ColliderFano(1e6) - Filling2ColliderFano(1e5)) / std::log(10.0);
  EXPECT_NEAR(far, -4.0 / (kPi * kPi), 1e-3);
}

TEST(FractionalizedCollider, RejectsNegativeOrNonFiniteArguments) {
  EXPECT_THROW(HolesPerInjectedElectron(-0.1), std::invalid_argument);
  EXPECT_THROW(Filling2ColliderFano(std::nan("")), std::invalid_argument);
  EXPECT_THROW(Filling2ColliderFano(HUGE_VAL), std::invalid_argument);
  EXPECT_THROW(FractionalizedHolesFiniteSize(0, 1.0), std::invalid_argument);
  EXPECT_THROW(FractionalizedHolesExtrapolated(1.0, {20, 16}), std::invalid_argument);
}

}  // namespace
}  // namespace hallway
