// hallway/collider.hpp: generalized Fano factor P of an anyon collider (physics.md section 6).
//
// Rosenow, Levkivskyi & Halperin, Phys. Rev. Lett. 116, 156802 (2016): two dilute Poissonian streams
// of quasiparticles (exchange phase theta, tunnelling scaling dimension delta) meet at a central
// constriction in weak tunnelling, at T = 0 and to lowest order in the tunnelling. With I+- = I1 +- I2,
// x = I- / I+ and S_34 = 2 P e* I+ dI_T/dI- (one-sided convention):
//   balanced   P(0) = 1 - tan(theta) / tan(pi delta) / (1 - 2 delta),     0 < delta < 1/2
//   imbalanced P(x) = (1 - x^2) + [a x sin(pi delta) Im w^a + cos(pi delta) Re w^a]
//                                 / [a sin(pi delta) cos(theta) Re w^(a-1)],
//              a = 2 delta - 1, w = sin(theta) + i x cos(theta)   (physics.md 6.4, derived there)
// Not valid for theta > pi/2 (finite anyon width: Thamm & Rosenow, arXiv:2312.04475) nor at finite
// temperature (physics.md 6.6); see ColliderValidity.
#pragma once

#include <string>
#include <vector>

namespace hallway {

double ColliderFanoBalanced(double theta_rad, double delta);
double ColliderFano(double x, double theta_rad, double delta);  // |x| < 1

// zeta = 2 sin^2(theta) hbar I+ / (2 pi e* k_B T): injection rate against temperature (physics.md 6.6).
double ColliderRateOverTemperature(double theta_rad, double i_plus_A, double charge_C, double temperature_K);

}  // namespace hallway
