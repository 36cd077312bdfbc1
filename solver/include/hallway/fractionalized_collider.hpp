// hallway/fractionalized_collider.hpp: collider at bulk filling 2 fed by fractionalized electron pulses
// (docs/models.md, Collider at filling 2: fractionalized pulses).
//
// Model. At filling 2 the outer (1) and inner (2) integer edge channels are coupled by the Coulomb
// interaction. Strong coupling with equal bare velocities: the eigenmodes are the charge mode
// (phi_1 + phi_2)/sqrt2 at v_c and the neutral mode (phi_1 - phi_2)/sqrt2 at v_n < v_c (mode picture of
// Levkivskyi & Sukhorukov, Phys. Rev. B 78, 045322 (2008), from memory). An electron injected into the
// outer channel splits into two e/2 pulses there (and +e/2, -e/2 in the inner channel) that reach the
// collider delta_t = L (1/v_n - 1/v_c) apart. The collider is a point-like constriction of
// energy-independent transmission tau on the outer channel, fed by two dilute source constrictions
// (tunnelling probability T_s << 1, biases V_1, V_2); the inner channel is not partitioned.
//
// Derivation (ours). For an energy-independent free-fermion scatterer fed by statistically independent,
// stationary inputs the zero-frequency output cross-correlation is exactly
//   S_34 = tau (1 - tau) [S_11 + S_22 - Q],  Q = (2e^2/h) Int dE [f_1 (1 - f_2) + f_2 (1 - f_1)]
// (excess over equilibrium; scattering approach of Buttiker, Phys. Rev. B 46, 12485 (1992) and Blanter &
// Buttiker, Phys. Rep. 336, 1 (2000)), f_i the energy distribution of the incoming outer channel i at the
// collider. Both pulses of an injected electron end in channel 1, so S_ii = 2 e I_i to first order in T_s;
// the inner channel carries no net charge per injection and adds nothing at zero frequency. At T = 0 and
// first order in T_s the products of two excitation densities drop out, Q = 2e^2 sum_i (Ndot_e,i +
// Ndot_h,i) (rates of excited electrons above and holes below the Fermi level), and charge conservation
// gives Ndot_e - Ndot_h = Ndot_injected. With S_34 = 2 P e I_+ tau (1 - tau), I_+ = I_1 + I_2:
//   P = -2 (Ndot_h,1 + Ndot_h,2) / (Ndot_inj,1 + Ndot_inj,2).
// A dilute QPC source at T = 0 injects electrons uniformly in (0, eV), so with n_h(x) the mean number of
// holes left in the outer channel at the collider by one electron injected at energy eps,
// x = eps delta_t / hbar, and X = e V delta_t / hbar, for balanced beams (V_1 = V_2 = V)
//   P(X) = -2 nbar_h(X),   nbar_h(X) = (1/X) Int_0^X n_h(x) dx.
// Without interaction (delta_t = 0) no holes are made and P = 0, the free-fermion scattering result.
//
// Exact method (ours): finite-size bosonization. Chiral fermions on a ring, levels (k - 1/2) Delta, the
// electron injected at level p of channel 1 (eps = (p - 1/2) Delta) into the sector of channel charges
// (1, 0); propagation rotates boson mode n as b_1n -> cos(theta_n) b_1n + i sin(theta_n) b_2n with
// theta_n = n Delta delta_t / 2 = n x / (2p - 1). The injected state is the complete symmetric function
// h_{p-1} of channel-1 bosons, so the propagated state is the degree-(p-1) part of
//   exp(sum_n cos(theta_n) p_n^(1) u^n / n) exp(sum_n i sin(theta_n) p_n^(2) u^n / n) |0>,
// a product over the energy m left in channel 1; by Cauchy's identity the channel-1 part is
// sum_{lambda |- m} s_lambda(c) |lambda>, s_lambda at the specialisation p_n -> cos(theta_n), evaluated by
// the Jacobi-Trudi determinant; channel 2 enters through the weight w_2(m2) = [u^m2] exp(sum sin^2 u^n / n).
// The hole count of |lambda> is read off its Maya diagram. p -> infinity at fixed x by Richardson
// extrapolation in 1/p^2 (the half-integer levels remove the 1/p term; convergence shown in
// docs/models.md). Same finite-size construction as Kovrizhin & Chalker, Phys. Rev. B 84, 085105 (2011),
// from memory.
//
// Result: n_h ~ x^4 at small x; n_h rises in steps near x = 2 pi k (period 2 pi in eps delta_t / hbar) on
// top of the large-x law below, the steps' amplitude falling as 1/x; n_h(60) - (2/pi^2) ln 60 = -0.103.
//
// Validity: T = 0 and first order in T_s, i.e. k_B T delta_t / hbar << 1 and (I / e) delta_t << 1; strong
// coupling, equal bare velocities; point-like energy-independent collider; balanced beams. Large x:
// n_h(x) -> (2/pi^2) ln x + const (time-domain braiding: each e/2 pulse multiplies the outer-channel
// Green's function by e^{i pi}), so P(X) -> -(4/pi^2)(ln X - 1) + const. Predictions are estimates.
#pragma once

#include <vector>

namespace hallway {

// ---- Runtime API (tables made by tools/fractionalization_table.cpp) ----

// n_h(x): mean number of holes left in the outer channel at the collider by one electron injected at
// energy eps, x = eps delta_t / hbar >= 0. Table on [0, FractionalizationTableEnd()] (monotone cubic
// interpolation), beyond it (2/pi^2) ln x + a + b / x, a the table's mean over its last step period and b
// making it continuous (the steps beyond the table are left out; their amplitude there is below 0.005).
// Throws std::invalid_argument for x < 0, infinite x or NaN.
double HolesPerInjectedElectron(double x);

// P(X) = -2 nbar_h(X), X = e V delta_t / hbar >= 0, T = 0, first order in T_s, strong coupling, balanced
// beams. Table on [0, FractionalizationTableEnd()], beyond it the exact average of the large-x form.
// Throws std::invalid_argument for X < 0, infinite X or NaN.
double Filling2ColliderFano(double bias_delay_ratio);

// Last x (and X) of the tables; beyond it the asymptotic forms above are used.
double FractionalizationTableEnd();

// ---- Exact finite-size computation (used by the table generator and the tests) ----

// One finite-size evaluation at p levels (eps = (p - 1/2) Delta) and x = eps delta_t / hbar. Energies in
// units of Delta, measured from the Fermi level of channel 1.
struct FractionalizationSample {
  int levels = 0;              // p
  double x = 0.0;
  double holes = 0.0;          // <N_h>: empty levels below the Fermi level of channel 1
  double electrons = 0.0;      // <N_e>: filled levels above it (counted separately from the holes)
  double norm = 0.0;           // <psi|psi> of the propagated state (1 by unitarity)
  double energy_channel1 = 0.0;  // sum over filled levels above of their energy plus holes below
  double cauchy_deviation = 0.0;  // max_m |sum_{lambda |- m} s_lambda(c)^2 - [u^m] exp(sum cos^2 u^n / n)|
};
// p in [1, 80]; cost grows as the number of partitions of p - 1 (p = 60: a few seconds).
FractionalizationSample FractionalizedHolesFiniteSize(int levels, double x);

// Richardson extrapolation in 1/p^2 from the two largest of `levels` (ascending, at least 2 values);
// error = |difference from the extrapolation of the two before them| when 3 or more values are given,
// otherwise |difference from the largest-p value|.
struct FractionalizationEstimate {
  double holes = 0.0;
  double error = 0.0;
  std::vector<FractionalizationSample> samples;  // one per p of `levels`
};
FractionalizationEstimate FractionalizedHolesExtrapolated(double x, const std::vector<int>& levels);

}  // namespace hallway
