// hallway/collider.hpp: generalized Fano factor P of an anyon collider (docs/models.md, Anyon collider).
//
// Rosenow, Levkivskyi & Halperin, Phys. Rev. Lett. 116, 156802 (2016): two dilute Poissonian streams
// of quasiparticles (exchange phase theta, tunnelling scaling dimension delta) meet at a central
// constriction in weak tunnelling, at T = 0 and to lowest order in the tunnelling. With I+- = I1 +- I2,
// x = I- / I+ and S_34 = 2 P e* I+ dI_T/dI- (one-sided convention):
//   balanced   P(0) = 1 - tan(theta) / tan(pi delta) / (1 - 2 delta),     0 < delta < 1/2
//   imbalanced P(x) = (1 - x^2) + [a x sin(pi delta) Im w^a + cos(pi delta) Re w^a]
//                                 / [a sin(pi delta) cos(theta) Re w^(a-1)],
//              a = 2 delta - 1, w = sin(theta) + i x cos(theta)   (our derivation in the same model)
// Not valid for theta > pi/2 (finite anyon width: Thamm & Rosenow, arXiv:2312.04475) nor at finite
// temperature (the zero-temperature form; docs/models.md, Anyon collider); see ColliderValidity.
#pragma once

#include <complex>
#include <string>
#include <vector>

namespace hallway {

double ColliderFanoBalanced(double theta_rad, double delta);
double ColliderFano(double x, double theta_rad, double delta);  // |x| < 1

// zeta = 2 sin^2(theta) hbar I+ / (2 pi e* k_B T): injection rate against temperature (docs/models.md,
// Anyon collider).
double ColliderRateOverTemperature(double theta_rad, double i_plus_A, double charge_C, double temperature_K);

// ---- Noise shape at T = 0 and at finite temperature ----
//
// Same model (time-domain braiding, lowest order in the collider tunnelling), Rosenow, Levkivskyi &
// Halperin 2016; finite-temperature correlator as in Lee, Han & Sim, Phys. Rev. Lett. 123, 016803 (2019).
// Streams i = 1, 2 are Poisson with rates lambda_i = I_i / e*. Averaging the braiding phases over them,
//   z = lambda1 (1 - e^{-2i theta}) + lambda2 (1 - e^{2i theta})
//     = 2 sin(theta) [lambda+ sin(theta) + i lambda- cos(theta)].
// Golden-rule rates of tunnelling 1 -> 2 and 2 -> 1, with C(t) the equilibrium tunnelling correlator
// without its phase e^{-i pi delta} (T = 0: t^{-2 delta}; temperature T:
// (pi k_B T / hbar / sinh(pi k_B T t / hbar))^{2 delta}, the standard chiral-boson correlator, e.g. Kane &
// Fisher, Phys. Rev. B 46, 15233 (1992)):
//   Gamma_12 = K Re[e^{-i pi delta} int_0^inf dt C(t) e^{-z* t}],
//   Gamma_21 = K Re[e^{-i pi delta} int_0^inf dt C(t) e^{-z t}],
//   I_T = e* (Gamma_12 - Gamma_21),  S_TT = 2 e*^2 (Gamma_12 + Gamma_21),  S_34 = S_1T - S_2T - S_TT
// (I3 = I1 - I_T, I4 = I2 + I_T, S_12 = 0). S_iT has two parts:
//   stream (Poisson covariance):  2 e* I_i dI_T/dI_i;
//   thermal: the zero-frequency thermal current fluctuations of input i act as a slow potential V_i on
//     it, so (classical Gaussian fluctuations, 2 k_B T g per chiral edge of conductance g) S_iT = 2 k_B T dI_T/dV_i,
//     where V_i shifts Im z by +-e* V_i / hbar (V_1: +, V_2: -). At zero bias this is +-2 k_B T G_T and makes
//     the equilibrium S_34 = 0 (outputs 3 and 4 share no conductance; Buttiker's equilibrium relation,
//     Phys. Rev. B 46, 12485 (1992), from memory), as the identity J_1(0) / J_0(0) = (pi/2) cot(pi delta) below shows.
// All four are excess values (their zero-bias values subtracted).
// Dimensionless time u = pi k_B T t / hbar and zhat = z hbar / (pi k_B T) = A + i B with
//   A = 2 zeta,  B = 2 zeta x cot(theta)   (zeta of ColliderRateOverTemperature, x = I- / I+),
// and J_k(zhat) = int_0^inf u^k sinh(u)^{-2 delta} e^{-zhat u} du (ColliderThermalIntegral; dJ_0/dzhat = -J_1;
// J_0(zhat) = 2^{2 delta - 1} B(delta + zhat/2, 1 - 2 delta) by u -> e^{-2u}). Since J_k(zhat*) = J_k(zhat)*, with
// phi = pi delta and K' = K (pi k_B T / hbar)^{2 delta - 1}:
//   I_T / e* = -2 K' sin(phi) Im J_0,     S_TT / (2 e*^2) = 2 K' cos(phi) Re J_0,
//   I+ dI_T/dI- = 2 e* K' sin(phi) A cot(theta) Re J_1,   R = (dI_T/dI+) / (dI_T/dI-) = tan(theta) Im J_1 / Re J_1,
// so that, per unit of 2 e* I+ dI_T/dI- (K' cancels), with the thermal part
//   h = tan(theta) / (2 pi zeta) [1 - J_1(0) / Re J_1(zhat)],
//   s1t = (1 + x)(1 + R) / 2 + h,   s2t = (1 - x)(R - 1) / 2 - h,
//   stt = [Re J_0(zhat) - J_0(0)] / [A cot(theta) tan(phi) Re J_1(zhat)],   p = s1t - s2t - stt
//       = 1 + x R + tan(theta) / (pi zeta) - Re J_0(zhat) / [A cot(theta) tan(phi) Re J_1(zhat)]
// (the zero-bias terms cancel in p). At x = 0, J is real: I_T = 0, R = 0, s1t = -s2t = 1/2 + h.
// T = 0 (zeta = +infinity): J_k -> Gamma(k + 1 - 2 delta) zhat^{2 delta - 1 - k}, h = 0, no zero-bias terms, and
// p equals ColliderFano for |x| < 1 (an algebraic identity). Finite temperature, zeta -> infinity: p, s1t, s2t meet
// T = 0 as 1/zeta; stt alone does not (its zero-bias term J_0(0) / [A cot(theta) tan(phi) Re J_1] grows as
// zeta^{1 - 2 delta}; it cancels against the thermal parts of s1t - s2t). zeta -> 0, every x:
//   p -> 1 - tan(theta) tan(pi delta) [psi'(delta) - psi'(1 - delta)] / pi^2,   stt -> -tan(theta) / tan(pi delta),
// so the excess S_34 = 2 e* I+ (dI_T/dI-) p vanishes linearly in I+, and the anyons lower the tunnelling noise below
// its equilibrium value: at x = +-1, S_TT - S_TT(0) -> -2 e* |I_T| tan(theta) / tan(pi delta), -2 e* |I_T| for Laughlin
// states (Lee, Han & Sim 2019). The output that receives only tunnelled charge (x = 1: output 4) has excess
// S_44 = S_TT + 2 S_2T, i.e. stt + 2 s2t per unit, which includes the thermal part of S_2T.
// Numerics: composite 24-point Gauss-Legendre, panels graded geometrically towards u = 0 (innermost panel
// by u = eps s^{1/(1 - 2 delta)}), width <= 8 / |zhat + 2 delta| elsewhere, cut where e^{-(2 delta + A) u} < e^{-46}.
struct ColliderNoiseShape {
  double p = 0.0, s1t = 0.0, s2t = 0.0, stt = 0.0;
};
// x = I- / I+ in [-1, 1] (both streams >= 0; x = +-1 is one beam: the other input at equilibrium);
// zeta = 2 sin^2(theta) hbar I+ / (2 pi e* k_B T) (ColliderRateOverTemperature); zeta = +infinity means T = 0.
ColliderNoiseShape ColliderShape(double x, double theta_rad, double delta, double zeta);

// J_k(zhat) = int_0^inf u^k sinh(u)^{-2 delta} e^{-zhat u} du, k = 0 or 1, Re zhat >= 0, 0 < delta < 1/2.
std::complex<double> ColliderThermalIntegral(std::complex<double> zhat, double delta, int k = 0);

}  // namespace hallway
