// The collider's noise shape (ColliderShape, collider.hpp) at T = 0 and at finite temperature, and the
// thermal time integral J_k behind it, against ColliderFano (Rosenow, Levkivskyi & Halperin, Phys. Rev.
// Lett. 116, 156802 (2016)), against GSL quadrature and special functions, and against limits worked out
// from the model of collider.hpp (each derivation is given beside its test).
#include <gsl/gsl_integration.h>
#include <gsl/gsl_sf_gamma.h>
#include <gsl/gsl_sf_psi.h>
#include <gsl/gsl_sf_result.h>
#include <gtest/gtest.h>

#include <cmath>
#include <complex>
#include <numbers>
#include <stdexcept>
#include <utility>

#include "hallway/collider.hpp"
#include "test_support.hpp"

namespace hallway {
namespace {

using test::NearRel;
constexpr double kPi = std::numbers::pi;
constexpr double kInf = HUGE_VAL;

// |a - b| <= rel |b| for complex numbers.
::testing::AssertionResult NearRelC(std::complex<double> a, std::complex<double> b, double rel) {
  if (std::abs(a - b) <= rel * std::abs(b)) return ::testing::AssertionSuccess();
  return ::testing::AssertionFailure() << "actual " << a << " expected " << b << " relative error "
                                       << std::abs(a - b) / std::abs(b) << " > " << rel;
}

// J_k(z) = int_0^inf u^k sinh(u)^(-2 delta) e^(-z u) du by GSL adaptive quadrature: QAGS on [0, 1] (the
// integrable u^(-2 delta) end point), QAGIU on [1, inf).
std::complex<double> j_by_gsl(std::complex<double> z, double delta, int k) {
  struct P {
    std::complex<double> z;
    double delta;
    int k;
    bool imag;
  };
  auto f = [](double u, void* vp) {
    const P* p = static_cast<P*>(vp);
    const double w = std::pow(u, p->k) * std::pow(std::sinh(u), -2 * p->delta) * std::exp(-p->z.real() * u);
    return p->imag ? -w * std::sin(p->z.imag() * u) : w * std::cos(p->z.imag() * u);
  };
  gsl_integration_workspace* ws = gsl_integration_workspace_alloc(4000);
  double parts[2];
  for (int im = 0; im < 2; ++im) {
    P p{z, delta, k, im == 1};
    gsl_function F{f, &p};
    double a = 0, b = 0, err = 0;
    gsl_integration_qags(&F, 0.0, 1.0, 1e-14, 1e-12, 4000, ws, &a, &err);
    gsl_integration_qagiu(&F, 1.0, 1e-14, 1e-12, 4000, ws, &b, &err);
    parts[im] = a + b;
  }
  gsl_integration_workspace_free(ws);
  return {parts[0], parts[1]};
}

std::complex<double> lngamma(std::complex<double> z) {
  gsl_sf_result lnr, arg;
  gsl_sf_lngamma_complex_e(z.real(), z.imag(), &lnr, &arg);
  return {lnr.val, arg.val};
}
std::complex<double> digamma(std::complex<double> z) {
  gsl_sf_result re, im;
  gsl_sf_complex_psi_e(z.real(), z.imag(), &re, &im);
  return {re.val, im.val};
}

// Closed forms. With sinh(u)^(-2 delta) = 2^(2 delta) e^(-2 delta u) (1 - e^(-2u))^(-2 delta) and y = e^(-2u), J_0 is
// Euler's Beta integral: J_0(z) = 2^(2 delta - 1) B(delta + z/2, 1 - 2 delta) (also Gradshteyn & Ryzhik 3.541.1,
// from memory), and J_1 = -dJ_0/dz = J_0 [psi(1 - delta + z/2) - psi(delta + z/2)] / 2.
std::complex<double> j0_closed(std::complex<double> z, double delta) {
  const std::complex<double> h = z / 2.0;
  return std::pow(2.0, 2 * delta - 1) * std::tgamma(1 - 2 * delta) *
         std::exp(lngamma(delta + h) - lngamma(1 - delta + h));
}
std::complex<double> j1_closed(std::complex<double> z, double delta) {
  const std::complex<double> h = z / 2.0;
  return j0_closed(z, delta) * (digamma(1 - delta + h) - digamma(delta + h)) / 2.0;
}

// psi'(delta) - psi'(1 - delta), which sets the zeta -> 0 limits below.
double trigamma_gap(double delta) {
  return gsl_sf_psi_1(delta) - gsl_sf_psi_1(1 - delta);
}

// ---- T = 0 ----

TEST(ColliderShape, ZeroTemperatureIsColliderFano) {
  const double th = kPi / 3, de = 1.0 / 3;
  for (double x : {0.0, 0.1, 0.25, 0.5, 0.75, 0.9}) {
    EXPECT_NEAR(ColliderShape(x, th, de, kInf).p, ColliderFano(x, th, de), 1e-9) << x;
    EXPECT_NEAR(ColliderShape(-x, th, de, kInf).p, ColliderFano(x, th, de), 1e-9) << "P(-x) = P(x) " << x;
  }
  for (double x : {0.0, 0.3, 0.6, 0.9})
    EXPECT_NEAR(ColliderShape(x, kPi / 5, 0.2, kInf).p, ColliderFano(x, kPi / 5, 0.2), 1e-9) << x;
  // The imbalance table of tests/noise_test.cpp (ColliderFano, nu = 1/3, theta = pi/3, delta = 1/3), quoted
  // to 5 decimals.
  const std::pair<double, double> third[] = {{0.0, -2.00000},  {0.10, -2.02669}, {0.25, -2.16757},
                                             {0.50, -2.68121}, {0.75, -3.57454}, {0.90, -4.31620}};
  for (const auto& [x, p] : third) EXPECT_NEAR(ColliderShape(x, th, de, kInf).p, p, 5e-6) << x;
  // Balanced closed form P(0) = 1 - tan(theta) / tan(pi delta) / (1 - 2 delta) of Rosenow, Levkivskyi & Halperin
  // 2016: -2 at nu = 1/3, -2/3 at nu = 1/5.
  EXPECT_NEAR(ColliderShape(0.0, kPi / 5, 0.2, kInf).p, -2.0 / 3, 1e-12);
  EXPECT_NEAR(ColliderShape(0.0, kPi / 5, 0.2, kInf).p, 1 - std::tan(kPi / 5) / std::tan(kPi * 0.2) / (1 - 2 * 0.2),
              1e-12);
}

TEST(ColliderShape, ZeroTemperatureBalancedStreamsSplitTheUnitEvenly) {
  // At x = 0, I_T = 0 for every I+, so dI_T/dI+ = 0 and S_iT = 2 e* I_i dI_T/dI_i = +-e* I+ dI_T/dI-:
  // s1t = 1/2, s2t = -1/2, and stt = 1 - P(0) = tan(theta) / tan(pi delta) / (1 - 2 delta) (RLH 2016 closed form).
  for (const auto& [th, de] : {std::pair{kPi / 3, 1.0 / 3}, std::pair{kPi / 5, 0.2}, std::pair{0.7, 0.3}}) {
    const ColliderNoiseShape s = ColliderShape(0.0, th, de, kInf);
    EXPECT_NEAR(s.s1t, 0.5, 1e-12);
    EXPECT_NEAR(s.s2t, -0.5, 1e-12);
    EXPECT_NEAR(s.stt, std::tan(th) / std::tan(kPi * de) / (1 - 2 * de), 1e-12);
    EXPECT_NEAR(s.p, s.s1t - s.s2t - s.stt, 1e-15);
  }
}

TEST(ColliderShape, SwappingTheInputsSwapsTheCrossCorrelations) {
  // 1 <-> 2 turns x into -x and I_T into -I_T; dI_T/dI- is unchanged, so s1t(-x) = -s2t(x), stt and p even.
  for (double zeta : {kInf, 0.2, 5.0}) {
    const ColliderNoiseShape a = ColliderShape(0.4, kPi / 3, 1.0 / 3, zeta),
                             b = ColliderShape(-0.4, kPi / 3, 1.0 / 3, zeta);
    EXPECT_TRUE(NearRel(b.s1t, -a.s2t, 1e-9)) << zeta;
    EXPECT_TRUE(NearRel(b.s2t, -a.s1t, 1e-9)) << zeta;
    EXPECT_TRUE(NearRel(b.stt, a.stt, 1e-9)) << zeta;
    EXPECT_TRUE(NearRel(b.p, a.p, 1e-9)) << zeta;
  }
}

TEST(ColliderShape, OneBeamIsTheLimitOfTheImbalancedFormula) {
  // x = 1 is outside ColliderFano's domain but the formula is continuous there.
  for (const auto& [th, de] : {std::pair{kPi / 3, 1.0 / 3}, std::pair{kPi / 5, 0.2}})
    EXPECT_TRUE(NearRel(ColliderShape(1.0, th, de, kInf).p, ColliderFano(1 - 1e-9, th, de), 1e-6));
}

TEST(ColliderShape, RejectsArgumentsOutsideTheModel) {
  EXPECT_THROW(ColliderShape(1.01, kPi / 3, 1.0 / 3, 1.0), std::invalid_argument);
  EXPECT_THROW(ColliderShape(0.0, kPi / 3, 1.0 / 3, 0.0), std::invalid_argument);
  EXPECT_THROW(ColliderShape(0.0, kPi / 3, 1.0 / 3, -1.0), std::invalid_argument);
  EXPECT_THROW(ColliderShape(0.0, 2.0, 1.0 / 3, 1.0), std::invalid_argument);  // theta > pi/2
  EXPECT_THROW(ColliderShape(0.0, kPi / 3, 0.5, 1.0), std::invalid_argument);
  EXPECT_THROW(ColliderShape(std::nan(""), kPi / 3, 1.0 / 3, 1.0), std::invalid_argument);
  EXPECT_THROW(ColliderThermalIntegral({-1.0, 0.0}, 1.0 / 3), std::invalid_argument);
  EXPECT_THROW(ColliderThermalIntegral({1.0, 0.0}, 1.0 / 3, 2), std::invalid_argument);
}

// ---- The thermal integral ----

TEST(ColliderThermalIntegral, AgreesWithGslQuadrature) {
  const std::complex<double> zs[] = {{0.0, 0.0}, {0.7, 0.0}, {2.0, 3.0}, {0.5, -4.0}, {10.0, 17.0}, {0.05, 0.2}};
  for (double de : {1.0 / 3, 0.2, 0.45})
    for (std::complex<double> z : zs)
      for (int k : {0, 1})
        EXPECT_TRUE(NearRelC(ColliderThermalIntegral(z, de, k), j_by_gsl(z, de, k), 1e-9))
            << "delta " << de << " z " << z << " k " << k;
}

TEST(ColliderThermalIntegral, AgreesWithTheBetaFunctionClosedForm) {
  // (Beyond |z| ~ 1e4 GSL's complex log-Gamma difference loses digits; LargeArgument... covers that range.)
  const std::complex<double> zs[] = {{0.0, 0.0},   {0.3, 0.0},     {1.0, 1.7},       {4.0, -9.0},
                                     {60.0, 80.0}, {400.0, 700.0}, {3000.0, 5000.0}, {1e-6, 2e-6}};
  for (double de : {1.0 / 3, 0.2, 0.1})
    for (std::complex<double> z : zs) {
      EXPECT_TRUE(NearRelC(ColliderThermalIntegral(z, de, 0), j0_closed(z, de), 1e-10)) << de << " " << z;
      EXPECT_TRUE(NearRelC(ColliderThermalIntegral(z, de, 1), j1_closed(z, de), 1e-10)) << de << " " << z;
    }
}

TEST(ColliderThermalIntegral, ZeroBiasValuesSatisfyTheFluctuationDissipationIdentity) {
  // J_1(0) / J_0(0) = [psi(1 - delta) - psi(delta)] / 2 = (pi/2) cot(pi delta) (digamma reflection formula,
  // Abramowitz & Stegun 6.3.7, from memory); this is what makes the equilibrium S_34 vanish (collider.hpp).
  // J_0(0) = 2^(2 delta - 1) B(delta, 1 - 2 delta) (Euler's Beta integral, see j0_closed).
  for (double de : {1.0 / 3, 0.2, 0.1, 0.45}) {
    const double j0 = ColliderThermalIntegral(0.0, de, 0).real(), j1 = ColliderThermalIntegral(0.0, de, 1).real();
    EXPECT_TRUE(NearRel(j0, std::pow(2.0, 2 * de - 1) * gsl_sf_beta(de, 1 - 2 * de), 1e-11)) << de;
    EXPECT_TRUE(NearRel(j1 / j0, kPi / 2 / std::tan(kPi * de), 1e-11)) << de;
  }
}

TEST(ColliderThermalIntegral, LargeArgumentMeetsTheZeroTemperatureForm) {
  // For |z| >> 1 only u << 1 contributes, sinh(u)^(-2 delta) -> u^(-2 delta), and J_k -> Gamma(k + 1 - 2 delta)
  // z^(2 delta - 1 - k) (Euler's Gamma integral). The expansion
  //   Gamma(w + a) / Gamma(w + b) = w^(a - b) [1 + (a - b)(a + b - 1) / (2w) + O(w^-2)]
  // (Tricomi & Erdelyi, Pacific J. Math. 1, 133 (1951), from memory) with w = z/2, a = delta, b = 1 - delta has
  // no 1/w term, so the relative difference is O(|z|^-2): below 10 / |z|^2 here.
  for (double de : {1.0 / 3, 0.2})
    for (std::complex<double> z : {std::complex<double>(1e3, 0.0), std::complex<double>(1e3, 1.7e3),
                                   std::complex<double>(8e3, 6e3), std::complex<double>(1e5, 2e5)}) {
      const double tol = 10.0 / std::norm(z);
      EXPECT_TRUE(NearRelC(ColliderThermalIntegral(z, de, 0), std::tgamma(1 - 2 * de) * std::pow(z, 2 * de - 1), tol))
          << de << " " << z;
      EXPECT_TRUE(NearRelC(ColliderThermalIntegral(z, de, 1), std::tgamma(2 - 2 * de) * std::pow(z, 2 * de - 2), tol))
          << de << " " << z;
    }
}

// ---- Finite temperature ----

TEST(ColliderFiniteTemperature, BalancedShapeMatchesTheDigammaClosedForm) {
  // x = 0: zhat = A = 2 zeta is real, and with J_1 / J_0 = Delta(zeta) / 2, Delta = psi(1 - delta + zeta) -
  // psi(delta + zeta) (see j1_closed), the model of collider.hpp gives
  //   p = 1 + tan(theta) / (pi zeta) - tan(theta) / tan(pi delta) / (zeta Delta(zeta)),
  //   stt = [1 - J_0(0) / J_0(A)] tan(theta) / tan(pi delta) / (zeta Delta),
  //   J_0(0) / J_0(A) = Gamma(delta) Gamma(1 - delta + zeta) / [Gamma(1 - delta) Gamma(delta + zeta)],
  // and s1t = -s2t = 1/2 + h with p = 1 + 2h - stt, i.e. s1t = -s2t = (p + stt) / 2. (The zero-bias terms cancel in p
  // by J_1(0) / J_0(0) = (pi/2) cot(pi delta).) Only real psi and Gamma functions (GSL).
  for (const auto& [th, de] : {std::pair{kPi / 3, 1.0 / 3}, std::pair{kPi / 5, 0.2}})
    for (double zeta : {0.01, 0.1, 1.0, 7.0, 50.0}) {
      const double delta_psi = gsl_sf_psi(1 - de + zeta) - gsl_sf_psi(de + zeta);
      const double ratio = std::tan(th) / std::tan(kPi * de);
      const double p = 1 + std::tan(th) / (kPi * zeta) - ratio / (zeta * delta_psi);
      const double j_ratio = std::exp(gsl_sf_lngamma(de) + gsl_sf_lngamma(1 - de + zeta) - gsl_sf_lngamma(1 - de) -
                                      gsl_sf_lngamma(de + zeta));
      const double stt = (1 - j_ratio) * ratio / (zeta * delta_psi);
      const ColliderNoiseShape s = ColliderShape(0.0, th, de, zeta);
      EXPECT_TRUE(NearRel(s.p, p, 1e-9)) << de << " " << zeta;
      EXPECT_TRUE(NearRel(s.stt, stt, 1e-9)) << de << " " << zeta;
      EXPECT_TRUE(NearRel(s.s1t, (p + stt) / 2, 1e-9)) << de << " " << zeta;
      EXPECT_TRUE(NearRel(s.s2t, -(p + stt) / 2, 1e-9)) << de << " " << zeta;
    }
}

TEST(ColliderFiniteTemperature, ImbalancedShapeMatchesTheClosedFormIntegrals) {
  // Same assembly as collider.hpp with J_0, J_1 from the Beta / digamma closed forms instead of quadrature.
  const double th = kPi / 3, de = 1.0 / 3, phi = kPi * de;
  for (double x : {0.3, 0.8, 1.0})
    for (double zeta : {0.05, 1.0, 30.0}) {
      const double a = 2 * zeta, cot = 1 / std::tan(th);
      const std::complex<double> z(a, a * x * cot), j0 = j0_closed(z, de), j1 = j1_closed(z, de);
      const double r = std::tan(th) * j1.imag() / j1.real();
      const double h = std::tan(th) / (2 * kPi * zeta) * (1 - j1_closed(0.0, de).real() / j1.real());
      const double stt = (j0.real() - j0_closed(0.0, de).real()) / (a * cot * std::tan(phi) * j1.real());
      const ColliderNoiseShape s = ColliderShape(x, th, de, zeta);
      EXPECT_TRUE(NearRel(s.s1t, (1 + x) * (1 + r) / 2 + h, 1e-9)) << x << " " << zeta;
      EXPECT_TRUE(NearRel(s.s2t, (1 - x) * (r - 1) / 2 - h, 1e-9)) << x << " " << zeta;
      EXPECT_TRUE(NearRel(s.stt, stt, 1e-9)) << x << " " << zeta;
    }
}

TEST(ColliderFiniteTemperature, MeetsZeroTemperatureForLargeZeta) {
  // zeta = 200: within 1 % of ColliderFano (RLH 2016) at nu = 1/3 (the imbalance table) and nu = 1/5.
  for (double x : {0.0, 0.1, 0.25, 0.5, 0.75, 0.9})
    EXPECT_TRUE(NearRel(ColliderShape(x, kPi / 3, 1.0 / 3, 200.0).p, ColliderFano(x, kPi / 3, 1.0 / 3), 0.01)) << x;
  for (double x : {0.0, 0.5})
    EXPECT_TRUE(NearRel(ColliderShape(x, kPi / 5, 0.2, 200.0).p, ColliderFano(x, kPi / 5, 0.2), 0.01)) << x;
  // The approach is 1/zeta: at x = 0, zeta Delta(zeta) = 1 - 2 delta + O(zeta^-2) (Stirling series of psi), so
  // p - P(0) = tan(theta) / (pi zeta) + O(zeta^-2) from the closed form above.
  for (const auto& [th, de] : {std::pair{kPi / 3, 1.0 / 3}, std::pair{kPi / 5, 0.2}}) {
    const double zeta = 1e3;
    EXPECT_TRUE(
        NearRel((ColliderShape(0.0, th, de, zeta).p - ColliderFanoBalanced(th, de)) * zeta, std::tan(th) / kPi, 1e-2));
  }
}

TEST(ColliderFiniteTemperature, ExcessCrossCorrelationVanishesAtZeroBias) {
  // First order in zhat (J_k(zhat) = J_k(0) - zhat J_{k+1}(0) + ...) in the formulas of collider.hpp: R -> 0 and
  //   p -> 1 + tan(theta) / tan(pi delta) - (2 tan(theta) / pi) J_2(0) / J_1(0),
  //   J_2 / J_1 = Delta / 2 + Delta' / (2 Delta) at zeta = 0 (differentiating j1_closed),
  // Delta = pi cot(pi delta), Delta' = psi'(delta) - psi'(1 - delta); so, for every x,
  //   p -> 1 - tan(theta) tan(pi delta) [psi'(delta) - psi'(1 - delta)] / pi^2   (finite).
  // The unnormalised excess S_34 = 2 e* I+ (dI_T/dI-) p is, in units of 4 e*^2 K' sin(pi delta) (K' fixed by T),
  // A cot(theta) Re J_1(zhat) p with A = 2 zeta proportional to I+.
  for (const auto& [th_b, de_b] : {std::pair{kPi / 3, 1.0 / 3}, std::pair{kPi / 5, 0.2}}) {
    const double th = th_b, de = de_b;  // copies: a lambda below captures them (clang 14: no bindings)
    const double limit = 1 - std::tan(th) * std::tan(kPi * de) * trigamma_gap(de) / (kPi * kPi);
    for (double x : {0.0, 0.5, 1.0}) {
      EXPECT_NEAR(ColliderShape(x, th, de, 1e-6).p, limit, 1e-4) << de << " " << x;
      auto s34 = [&](double zeta) {
        const double a = 2 * zeta;
        const std::complex<double> z(a, a * x / std::tan(th));
        return a / std::tan(th) * ColliderThermalIntegral(z, de, 1).real() * ColliderShape(x, th, de, zeta).p;
      };
      // s34 / zeta -> 2 cot(theta) J_1(0) p(0): finite and nonzero, so S_34 -> 0 linearly.
      const double slope = 2 / std::tan(th) * ColliderThermalIntegral(0.0, de, 1).real() * limit;
      EXPECT_TRUE(NearRel(s34(1e-7) / 1e-7, slope, 1e-3)) << de << " " << x;
      EXPECT_TRUE(NearRel(s34(1e-8) / s34(1e-7), 0.1, 1e-3)) << de << " " << x;
    }
  }
}

// ---- One beam ----

TEST(ColliderOneBeam, TunnellingNoiseFallsBelowItsEquilibriumValue) {
  // Lee, Han & Sim, Phys. Rev. Lett. 123, 016803 (2019): anyons injected dilutely on one edge lower the noise
  // of the tunnelling current below its thermal equilibrium value, by 2 e* I_T for Laughlin states.
  const double th = kPi / 3, de = 1.0 / 3;
  EXPECT_LT(ColliderShape(1.0, th, de, 0.1).stt, 0.0);
  EXPECT_LT(ColliderShape(1.0, kPi / 5, 0.2, 0.1).stt, 0.0);
  // From the rates directly (collider.hpp): S_TT - S_TT(0) = 4 e*^2 K' cos(phi) [Re J_0(zhat) - J_0(0)],
  // I_T = -2 e* K' sin(phi) Im J_0(zhat); at x = 1, zhat = 2 zeta (1 + i cot(theta)). Small zeta: the ratio
  // (S_TT - S_TT(0)) / (2 e* I_T) -> -tan(theta) / tan(pi delta) (first order in zhat), -1 at nu = 1/3.
  for (const auto& [t, d] : {std::pair{th, de}, std::pair{kPi / 5, 0.2}}) {
    const double zeta = 1e-5, phi = kPi * d;
    const std::complex<double> z(2 * zeta, 2 * zeta / std::tan(t));
    const std::complex<double> j0 = ColliderThermalIntegral(z, d, 0);
    const double excess = 2 * std::cos(phi) * (j0.real() - ColliderThermalIntegral(0.0, d, 0).real());
    const double current = -2 * std::sin(phi) * j0.imag();
    EXPECT_NEAR(excess / current, -std::tan(t) / std::tan(phi), 1e-3) << d;
    EXPECT_NEAR(ColliderShape(1.0, t, d, zeta).stt, -std::tan(t) / std::tan(phi), 1e-3) << d;
  }
  // The output that receives only tunnelled charge (output 4, I4 = I2 + I_T) has S_44 = S_TT + 2 S_2T, and S_2T
  // keeps the thermal part 2 k_B T dI_T/dV_2 although I2 = 0. Its zeta -> 0 limit per unit, from the limits above:
  // stt + 2 s2t -> tan(theta) tan(pi delta) [psi'(delta) - psi'(1 - delta)] / pi^2 (> 0).
  const ColliderNoiseShape s = ColliderShape(1.0, th, de, 1e-6);
  EXPECT_NEAR(s.stt + 2 * s.s2t, std::tan(th) * std::tan(kPi * de) * trigamma_gap(de) / (kPi * kPi), 1e-4);
}

}  // namespace
}  // namespace hallway
