// Noise at the contacts, collider Fano factors and the measurement chain, against closed forms of the
// published models (docs/models.md: Coherent noise of integer channels, Fractional constriction, Anyon
// collider, Amplifier chain) evaluated in the tests themselves, each with its source beside it.
#include <gsl/gsl_integration.h>
#include <gtest/gtest.h>
#include <unistd.h>

#include <cmath>
#include <complex>
#include <fstream>
#include <filesystem>
#include <numbers>
#include <set>
#include <sstream>

#include "hallway/collider.hpp"
#include "hallway/constants.hpp"
#include "hallway/design_loader.hpp"
#include "hallway/device.hpp"
#include "hallway/network.hpp"
#include "hallway/noise.hpp"
#include "hallway/quantities.hpp"
#include "hallway/transport.hpp"
#include "test_support.hpp"

namespace hallway {
namespace {

using constants::kBoltzmann_J_per_K;
using constants::kConductanceQuantum_S;
using constants::kElementaryCharge_C;
using test::NearRel;

// Tolerance of the checks below that were once quoted to 7 significant digits; the expected values are
// now computed here from the closed forms, the tolerance is kept.
constexpr double kQuoted7 = 2e-6;

// Closed-form two-terminal partition noise of one channel of transmission t between a contact at V and
// one at 0, both at T: (2e^2/h) t (1 - t) [eV coth(eV / 2 k_B T) - 2 k_B T] (Blanter & Büttiker, Phys.
// Rep. 336, 1 (2000); Büttiker, Phys. Rev. B 46, 12485 (1992)).
double partition_excess(double t, double v, double temperature_K) {
  const double ev = kElementaryCharge_C * v, kt = kBoltzmann_J_per_K * temperature_K;
  return 2 * kConductanceQuantum_S * t * (1 - t) * (ev / std::tanh(ev / (2 * kt)) - 2 * kt);
}

std::string read(const std::string& rel) {
  std::ifstream in(test::SourcePath(rel));
  std::stringstream ss;
  ss << in.rdbuf();
  return ss.str();
}

struct Solved {
  Design d;
  TransportResult t;
  NoiseResult n;
};

Solved run(const std::string& text, const NoiseOptions& opt = {}, double sign = 1.0) {
  Solved r{LoadDesignFromString(text, "test.yaml"), {}, {}};
  const EdgeNetwork net = TraceEdges(r.d, BuildChannelGeometry(r.d), sign * std::abs(r.d.conditions.field_T));
  r.t = SolveTransport(r.d, net);
  r.n = SolveNoise(r.d, net, r.t, opt);
  return r;
}

int at(const Design& d, const std::string& name) {
  for (std::size_t i = 0; i < d.contacts.size(); ++i)
    if (d.contacts[i].name == name) return static_cast<int>(i);
  ADD_FAILURE() << name;
  return 0;
}

double S(const Solved& r, const Matrix& m, const char* a, const char* b) {
  return m[static_cast<std::size_t>(at(r.d, a))][static_cast<std::size_t>(at(r.d, b))];
}

TEST(Noise, SingleQpcFourTerminalAtTwentyMillikelvin) {
  // t = 0.5, V = 50 uV, 20 mK. Each output carries the partition noise S_exc of partition_excess
  // (Blanter & Büttiker, Phys. Rep. 336, 1 (2000)) plus the Johnson noise 4 k_B T e^2/h of the one
  // channel it emits (Johnson, Phys. Rev. 32, 97 (1928); Nyquist, Phys. Rev. 32, 110 (1928)); the
  // two outputs share -S_exc. (S_33 = 1.872648e-28, S_34 = -1.444752e-28, 4 k_B T e^2/h = 4.278958e-29.)
  const Solved r = run(read("tests/data/noise/qpc4_nu1.yaml"));
  const double s_exc = partition_excess(0.5, 50e-6, 0.020);
  const double johnson = 4 * kBoltzmann_J_per_K * 0.020 * kConductanceQuantum_S;
  EXPECT_TRUE(NearRel(S(r, r.n.total_A2_per_Hz, "NE", "NE"), johnson + s_exc, kQuoted7));
  EXPECT_TRUE(NearRel(S(r, r.n.total_A2_per_Hz, "NE", "SW"), -s_exc, kQuoted7));
  EXPECT_TRUE(NearRel(S(r, r.n.equilibrium_A2_per_Hz, "NE", "NE"), johnson, kQuoted7));
  // The excess auto- and cross-correlations are equal and opposite at any temperature.
  EXPECT_TRUE(NearRel(S(r, r.n.excess_A2_per_Hz, "NE", "NE"), -S(r, r.n.excess_A2_per_Hz, "NE", "SW"), 1e-12));
  EXPECT_TRUE(NearRel(S(r, r.n.excess_A2_per_Hz, "SW", "SW"), S(r, r.n.excess_A2_per_Hz, "NE", "NE"), 1e-12));
  EXPECT_LT(r.n.unitarity_error, 1e-12);
  EXPECT_LT(r.n.equilibrium_identity_error, 1e-12);
}

TEST(Noise, SingleQpcShotNoiseAtZeroTemperatureIsTwoEIOneMinusT) {
  // T -> 0: S_exc = 2 e I (1 - t), I = t (e^2/h) V (Blanter & Büttiker, Phys. Rep. 336, 1 (2000));
  // 1.551726e-28 A^2/Hz at t = 0.5, V = 50 uV.
  const Solved r =
      run(test::replace(read("tests/data/noise/qpc4_nu1.yaml"), "temperature: 20 mK", "temperature: 1 nK"));
  const double i = 0.5 * kConductanceQuantum_S * 50e-6;
  // At 1 nK the remaining thermal correction 2 k_B T / eV is 3.4e-9.
  EXPECT_TRUE(NearRel(S(r, r.n.excess_A2_per_Hz, "NE", "NE"), 2 * kElementaryCharge_C * i * 0.5, 1e-8));
  EXPECT_TRUE(NearRel(S(r, r.n.excess_A2_per_Hz, "NE", "NE"), partition_excess(0.5, 50e-6, 1e-9), kQuoted7));
}

TEST(Noise, DilutedSourceIsPartitionedAsIndependentElectrons) {
  // t_1 = 0.1 (QA reflects 0.1 towards C), t_2 = 0.5, V = 50 uV, T = 0: the one incoming channel at V
  // reaches D1 and D2 with p = t_1 t_2 = 0.05 each, so S_aa = (2e^2/h) eV p (1 - p) and
  // S_ab = -(2e^2/h) eV p^2 (Büttiker's multi-terminal formula at T = 0, Büttiker, Phys. Rev. B 46,
  // 12485 (1992); docs/models.md, Coherent noise of integer channels): 2.948280e-29 and -1.551726e-30.
  const Solved r = run(read("tests/data/noise/diluted_nu1.yaml"));
  const double ev = kElementaryCharge_C * 50e-6, p = 0.1 * 0.5;
  const double auto_expected = 2 * kConductanceQuantum_S * ev * p * (1 - p);
  const double cross_expected = -2 * kConductanceQuantum_S * ev * p * p;
  EXPECT_TRUE(NearRel(S(r, r.n.excess_A2_per_Hz, "D1", "D1"), auto_expected, kQuoted7));
  EXPECT_TRUE(NearRel(S(r, r.n.excess_A2_per_Hz, "D2", "D2"), auto_expected, kQuoted7));
  EXPECT_TRUE(NearRel(S(r, r.n.excess_A2_per_Hz, "D1", "D2"), cross_expected, kQuoted7));
}

TEST(Noise, FermionicColliderCrossCorrelation) {
  // A splitter whose two inputs are occupied with probabilities f_1 = t_a, f_2 = t_b inside the bias
  // window: S_34 = -(2e^2/h) t_c (1 - t_c) int (f_1 - f_2)^2 dE = -(2e^2/h) eV t_c(1-t_c)(t_a-t_b)^2 at
  // T = 0 (Büttiker's multi-terminal formula, Büttiker, Phys. Rev. B 46, 12485 (1992), for this network;
  // docs/models.md, Coherent noise of integer channels); t_a = 0.05, t_b = 0.02, t_c = 0.5, 50 uV:
  // -1.396554e-31 A^2/Hz. Balanced: exactly zero.
  std::string text = read("tests/data/noise/diluted_nu1.yaml");
  text = test::replace(text, "SB: source 0 uV", "SB: source 50 uV");
  text = test::replace(text, "{name: QA, gates: [AW, CN], transmission: 0.9}",
                       "{name: QA, gates: [AW, CN], transmission: 0.95}");
  const std::string balanced = test::replace(text, "{name: QB, gates: [BE, CS], transmission: 0.95}",
                                             "{name: QB, gates: [BE, CS], transmission: 0.95}");
  text = test::replace(text, "{name: QB, gates: [BE, CS], transmission: 0.95}",
                       "{name: QB, gates: [BE, CS], transmission: 0.98}");
  const Solved r = run(text);
  const double fermionic =
      -2 * kConductanceQuantum_S * kElementaryCharge_C * 50e-6 * 0.5 * 0.5 * (0.05 - 0.02) * (0.05 - 0.02);
  EXPECT_TRUE(NearRel(S(r, r.n.excess_A2_per_Hz, "D1", "D2"), fermionic, 1e-5));
  const Solved b = run(balanced);
  EXPECT_NEAR(S(b, b.n.excess_A2_per_Hz, "D1", "D2"), 0.0, 1e-40);
}

TEST(Noise, JohnsonNyquistAtZeroBiasForEveryContact) {
  // Johnson, Phys. Rev. 32, 97 (1928); Nyquist, Phys. Rev. 32, 110 (1928) (from memory): at zero bias
  // S_aa = 4 k_B T G_aa, with G the conductance after the floating contacts are eliminated.
  for (const char* f : {"designs/01_hallbar_qpc.yaml", "designs/02_two_source_collider.yaml",
                        "designs/03_fabry_perot.yaml", "tests/data/noise/qpc4_nu1.yaml"}) {
    std::string text = read(f);
    for (const char* from : {"source 10 uV", "source 30 uV", "source 20 uV", "source 50 uV"})
      while (text.find(from) != std::string::npos) text = test::replace(text, from, "source 0 uV");
    const Solved r = run(text);
    const double kt = kBoltzmann_J_per_K * r.d.conditions.temperature_K;
    for (std::size_t a = 0; a < r.d.contacts.size(); ++a) {
      EXPECT_NEAR(r.n.excess_A2_per_Hz[a][a], 0.0, 1e-45) << f;
      if (r.d.wiring[a].role == Role::kFloat) continue;
      // Reduced conductance at a: G_aa - G_aF G_FF^-1 G_Fa, from the amplifier table where available.
      for (const AmplifierNoise& amp : r.n.amplifiers)
        if (amp.contact == static_cast<int>(a)) {
          EXPECT_TRUE(NearRel(r.n.total_A2_per_Hz[a][a], 4 * kt / amp.sample_resistance_Ohm, 1e-9)) << f;
        }
    }
  }
}

TEST(Noise, PhasesDropOutOfALoopFreeNetwork) {
  const std::string text = read("designs/01_hallbar_qpc.yaml");
  NoiseOptions a, b;
  a.loop_phase_rad = 0.0;
  b.loop_phase_rad = 2.1;
  const Solved x = run(text), y = run(text, a), z = run(text, b);
  EXPECT_TRUE(x.n.loops.empty());
  EXPECT_FALSE(x.n.phase_averaged);
  for (std::size_t i = 0; i < x.d.contacts.size(); ++i)
    for (std::size_t j = 0; j < x.d.contacts.size(); ++j) {
      EXPECT_DOUBLE_EQ(x.n.total_A2_per_Hz[i][j], y.n.total_A2_per_Hz[i][j]);
      EXPECT_NEAR(x.n.total_A2_per_Hz[i][j], z.n.total_A2_per_Hz[i][j], 1e-42);
    }
}

TEST(Noise, FabryPerotLoopIsFoundAndItsNoiseDependsOnThePhase) {
  // A symmetric cavity (t1 = t2 = 0.5) transmits perfectly on resonance, so the partition noise
  // vanishes there (Blanter & Büttiker 2000, double barrier); off resonance it does not. Instantaneous
  // edges (every time of flight 0) keep the loop phase the same at every energy, so the resonance is
  // sharp at any temperature (docs/models.md "Thermal average at a fixed loop phase").
  const std::string text = read("designs/03_fabry_perot.yaml");
  const Design design = LoadDesignFromString(text, "test.yaml");
  const std::size_t pieces =
      TraceEdges(design, BuildChannelGeometry(design), std::abs(design.conditions.field_T)).pieces.size();
  NoiseOptions on, off;
  on.loop_phase_rad = 0.0;
  off.loop_phase_rad = std::numbers::pi;
  on.piece_time_of_flight_s.assign(pieces, 0.0);
  off.piece_time_of_flight_s.assign(pieces, 0.0);
  const Solved avg = run(text), res = run(text, on), anti = run(text, off);
  ASSERT_EQ(avg.n.loops.size(), 1u);
  EXPECT_EQ(avg.n.loops[0].constrictions.size(), 2u);
  EXPECT_TRUE(avg.n.phase_averaged);
  const double s_res = S(res, res.n.excess_A2_per_Hz, "E", "E"), s_anti = S(anti, anti.n.excess_A2_per_Hz, "E", "E");
  const double s_avg = S(avg, avg.n.excess_A2_per_Hz, "E", "E");
  EXPECT_NEAR(s_res, 0.0, 1e-40);
  EXPECT_GT(s_anti, 0.0);
  EXPECT_GT(s_avg, s_res);
  EXPECT_LT(avg.n.unitarity_error, 1e-12);
  EXPECT_LT(avg.n.equilibrium_identity_error, 1e-12);
}

TEST(FractionalNoise, WeakBackscatteringChargeOneThirdWithThermalCrossover) {
  // Kane & Fisher, Phys. Rev. Lett. 72, 724 (1994): S_exc = 2 e* I_B [coth(e*V/2kT) - 2kT/e*V];
  // e* = e/3, I_B = 100 pA, V = 30 uV, 20 mK: 7.064172e-30 A^2/Hz (T -> 0: 2 e* I_B = 1.068118e-29).
  // hallway's form 2 e* V g t(1-t)[...] equals t times that at the same I_B = g (1 - t) V.
  const double g = kConductanceQuantum_S / 3, v = 30e-6, ib = 100e-12;
  const double t = 1.0 - ib / (g * v);
  const double e3 = kElementaryCharge_C / 3;
  const double x = e3 * v / (2 * kBoltzmann_J_per_K * 0.020);
  const double kane_fisher = 2 * e3 * ib * (1 / std::tanh(x) - 1 / x);
  EXPECT_TRUE(NearRel(FractionalPartitionNoise_A2_per_Hz(e3, v, g, t, 0.020) / t, kane_fisher, kQuoted7));
  EXPECT_TRUE(NearRel(FractionalPartitionNoise_A2_per_Hz(e3, v, g, t, 1e-7) / t, 2 * e3 * ib, kQuoted7));
  // Shot-noise slope at nu = 1/3 is one third of the electron value at equal backscattered current
  // (common practice).
  EXPECT_TRUE(NearRel(FractionalPartitionNoise_A2_per_Hz(e3, v, g, t, 1e-10) /
                          FractionalPartitionNoise_A2_per_Hz(kElementaryCharge_C, v, g, t, 1e-10),
                      1.0 / 3.0, 1e-8));
  // Johnson term 4 k_B T G at nu = 1/3, 20 mK (Johnson 1928; Nyquist 1928): 1.426319e-29 A^2/Hz, here
  // from the exact SI k_B, e and h (CODATA 2018; Tiesinga et al., Rev. Mod. Phys. 93, 025010 (2021)).
  EXPECT_TRUE(NearRel(4 * kBoltzmann_J_per_K * 0.020 * g,
                      4 * 1.380649e-23 * 0.020 * 1.602176634e-19 * 1.602176634e-19 / (3 * 6.62607015e-34), kQuoted7));
}

TEST(FractionalNoise, ConstrictionAtOneThirdInTheFourTerminalGeometry) {
  std::string text = read("tests/data/noise/qpc4_nu1.yaml");
  text = test::replace(text, "filling: 1", "filling: 1/3");
  text = test::replace(text, "transmission: 0.5", "transmission: 0.9");
  const Solved r = run(text);
  const double expected =
      FractionalPartitionNoise_A2_per_Hz(kElementaryCharge_C / 3, 50e-6, kConductanceQuantum_S / 3, 0.9, 0.020);
  EXPECT_TRUE(NearRel(S(r, r.n.excess_A2_per_Hz, "NE", "NE"), expected, 1e-9));
  EXPECT_TRUE(NearRel(S(r, r.n.excess_A2_per_Hz, "NE", "SW"), -expected, 1e-9));
}

TEST(Collider, BalancedFanoFactorsOfLaughlinStates) {
  // Rosenow, Levkivskyi & Halperin, Phys. Rev. Lett. 116, 156802 (2016): P = -2/(m - 2) for nu = 1/m.
  EXPECT_NEAR(ColliderFanoBalanced(std::numbers::pi / 3, 1.0 / 3), -2.0, 1e-12);
  EXPECT_NEAR(ColliderFanoBalanced(std::numbers::pi / 5, 1.0 / 5), -2.0 / 3, 1e-12);
  EXPECT_NEAR(ColliderFanoBalanced(std::numbers::pi / 7, 1.0 / 7), -0.4, 1e-12);
  EXPECT_NEAR(ColliderFano(0.0, std::numbers::pi / 3, 1.0 / 3), -2.0, 1e-12);
}

// Re and Im of J(z) = int_0^inf t^(-2 delta) e^(-z t) dt by GSL adaptive quadrature (QAGS on [0, 1]
// for the integrable singularity, QAGIU on [1, inf)).
std::complex<double> laplace_power(std::complex<double> z, double delta) {
  struct P {
    std::complex<double> z;
    double delta;
    bool imag;
  };
  auto f = [](double t, void* vp) {
    const P* p = static_cast<P*>(vp);
    const double w = std::pow(t, -2 * p->delta) * std::exp(-p->z.real() * t);
    return p->imag ? -w * std::sin(p->z.imag() * t) : w * std::cos(p->z.imag() * t);
  };
  gsl_integration_workspace* ws = gsl_integration_workspace_alloc(2000);
  double parts[2];
  for (int im = 0; im < 2; ++im) {
    P p{z, delta, im == 1};
    gsl_function F{f, &p};
    double a = 0, b = 0, err = 0;
    gsl_integration_qags(&F, 0.0, 1.0, 1e-13, 1e-11, 2000, ws, &a, &err);
    gsl_integration_qagiu(&F, 1.0, 1e-13, 1e-11, 2000, ws, &b, &err);
    parts[im] = a + b;
  }
  gsl_integration_workspace_free(ws);
  return {parts[0], parts[1]};
}

// The time-domain braiding model (Rosenow, Levkivskyi & Halperin, Phys. Rev. Lett. 116, 156802 (2016);
// docs/models.md, Anyon collider) at T = 0, with its time integrals done by quadrature and
// the derivatives by central differences: P = [I+ dI_T/dI- + I- dI_T/dI+ - I_T^sym] / (I+ dI_T/dI-).
double fano_by_quadrature(double x, double theta, double delta) {
  const std::complex<double> phase = std::polar(1.0, -std::numbers::pi * delta);
  auto rates = [&](double lp, double lm, double* it, double* isym) {
    const double l1 = (lp + lm) / 2, l2 = (lp - lm) / 2;
    const std::complex<double> z = l1 * (1.0 - std::polar(1.0, -2 * theta)) + l2 * (1.0 - std::polar(1.0, 2 * theta));
    const double g12 = (phase * laplace_power(std::conj(z), delta)).real();
    const double g21 = (phase * laplace_power(z, delta)).real();
    *it = g12 - g21;
    *isym = g12 + g21;
  };
  const double lp = 1.0, lm = x, h = 1e-4;
  double it0, is0, itp, itm, ita, itb, dummy;
  rates(lp, lm, &it0, &is0);
  rates(lp, lm + h, &itp, &dummy);
  rates(lp, lm - h, &itm, &dummy);
  rates(lp + h, lm, &ita, &dummy);
  rates(lp - h, lm, &itb, &dummy);
  const double d_minus = (itp - itm) / (2 * h), d_plus = (ita - itb) / (2 * h);
  return (lp * d_minus + lm * d_plus - is0) / (lp * d_minus);
}

TEST(Collider, ClosedFormAgreesWithNumericalTimeIntegralsFromGsl) {
  EXPECT_NEAR(fano_by_quadrature(0.0, std::numbers::pi / 3, 1.0 / 3), -2.0, 1e-5);
  EXPECT_NEAR(fano_by_quadrature(0.25, std::numbers::pi / 3, 1.0 / 3),
              ColliderFano(0.25, std::numbers::pi / 3, 1.0 / 3), 1e-5);
  EXPECT_NEAR(fano_by_quadrature(0.5, std::numbers::pi / 5, 0.2), ColliderFano(0.5, std::numbers::pi / 5, 0.2), 1e-4);
}

TEST(Collider, ImbalancedFanoFactorTable) {
  // P(x) away from balanced injection: our closed form of the lowest-order time-domain braiding model
  // (docs/models.md, Anyon collider), not a published table. Expected values: the same model's time
  // integrals done by quadrature (fano_by_quadrature above, Rosenow, Levkivskyi & Halperin, Phys. Rev.
  // Lett. 116, 156802 (2016)), independently of the closed form. At nu = 1/3 they are -2.02669,
  // -2.16757, -2.68121, -3.57454, -4.31620 for x = 0.1 ... 0.9; at nu = 1/5, -2.84423 and -19.391.
  const double th = std::numbers::pi / 3, de = 1.0 / 3;
  for (double x : {0.10, 0.25, 0.50, 0.75, 0.90}) {
    const double p = fano_by_quadrature(x, th, de);
    EXPECT_NEAR(ColliderFano(x, th, de), p, 5e-5) << x;
    EXPECT_NEAR(ColliderFano(-x, th, de), p, 5e-5) << "P(-x) = P(x)";
  }
  EXPECT_NEAR(ColliderFano(0.5, std::numbers::pi / 5, 0.2), fano_by_quadrature(0.5, std::numbers::pi / 5, 0.2), 5e-5);
  EXPECT_NEAR(ColliderFano(0.9, std::numbers::pi / 5, 0.2), fano_by_quadrature(0.9, std::numbers::pi / 5, 0.2), 5e-3);
}

TEST(Collider, DemoColliderIsBalancedWithFanoFactorMinusTwo) {
  const Solved r = run(read("designs/02_two_source_collider.yaml"));
  ASSERT_EQ(r.n.colliders.size(), 1u);
  const ColliderPrediction& c = r.n.colliders[0];
  EXPECT_EQ(r.d.constrictions[static_cast<std::size_t>(c.constriction)].name, "C");
  ASSERT_TRUE(c.fano);
  EXPECT_NEAR(*c.fano, -2.0, 1e-9);
  // Each stream is the current QA or QB reflects: (1/3)(e^2/h)(1 - 0.95)(30 uV).
  const double stream = kConductanceQuantum_S / 3 * 0.05 * 30e-6;
  EXPECT_TRUE(NearRel(c.stream_first_A, stream, 1e-9));
  EXPECT_TRUE(NearRel(c.i_plus_A, 2 * stream, 1e-9));
  EXPECT_NEAR(c.i_minus_A, 0.0, 1e-20);
  // S_34 = 2 P e* I+ T(1 - T), T = 1 - 0.9 (Rosenow, Levkivskyi & Halperin, Phys. Rev. Lett. 116, 156802
  // (2016), with dI_T/dI- -> T(1 - T); docs/models.md, Anyon collider).
  EXPECT_TRUE(NearRel(*c.s34_A2_per_Hz, 2 * -2.0 * kElementaryCharge_C / 3 * 2 * stream * 0.1 * 0.9, 1e-9));
  EXPECT_TRUE(c.dilute);
  EXPECT_TRUE(c.weak_tunnelling);
  EXPECT_TRUE(c.exchange_below_half_pi);
  ASSERT_TRUE(c.time_for_fano_s);
}

Amplifier amp(double load) {
  Amplifier a;
  a.load_Ohm = load;
  a.voltage_noise_V_per_rtHz = 0.25e-9;
  a.current_noise_A_per_rtHz = 0.0;
  a.bandwidth_Hz = 1e5;
  a.integration_s = 1.0;
  return a;
}

// The worked measurement examples below: what the amplifier chain should give, from the parallel
// resistance, the Johnson noise of both resistors at 20 mK (Johnson, Phys. Rev. 32, 97 (1928); Nyquist,
// Phys. Rev. 32, 110 (1928)) and the radiometer formula SNR = S_sig / (S_sig + S_floor) sqrt(df t)
// (Dicke, Rev. Sci. Instrum. 17, 268 (1946), from memory); docs/models.md, Amplifier chain.
struct ChainExpectation {
  double resistance_Ohm, signal_V2_per_Hz, johnson_V2_per_Hz, snr, time_for_ten_s, floor_A2_per_Hz;
};
ChainExpectation radiometer(double sample_S, double load_Ohm, double excess_A2_per_Hz) {
  const double r = 1 / (sample_S + 1 / load_Ohm), en2 = 0.25e-9 * 0.25e-9;  // amp(): e_n, i_n = 0
  const double df = 1e5, t = 1.0, temperature_K = 0.020;
  const double signal = r * r * excess_A2_per_Hz, johnson = 4 * kBoltzmann_J_per_K * temperature_K * r;
  const double total = signal + en2 + johnson;
  const double ratio = 10 * total / signal;  // 10 standard deviations
  return {r, signal, johnson, signal / total * std::sqrt(df * t), ratio * ratio / df, (en2 + johnson) / (r * r)};
}

TEST(Measurement, WorkedSignalToNoiseExamples) {
  // T = 20 mK, e_n = 0.25 nV/rtHz, signal 2 e* I_B with I_B = 100 pA, df = 100 kHz, t = 1 s. Expected
  // values from radiometer() above; for reference, nu = 1/3 with a 100 kOhm load gives R = 43642.4 Ohm,
  // S_sig = 2.0344e-20 V^2/Hz, 4 k_B T R = 4.8204e-20 V^2/Hz, SNR 49.1 and 0.041 s for 10 sigma.
  const double ib = 100e-12, e = kElementaryCharge_C;
  const AmplifierNoise a = AmplifierChain(kConductanceQuantum_S / 3, amp(1e5), 0.020, 2 * e / 3 * ib, 10);
  const ChainExpectation ea = radiometer(kConductanceQuantum_S / 3, 1e5, 2 * e / 3 * ib);
  EXPECT_TRUE(NearRel(a.effective_resistance_Ohm, ea.resistance_Ohm, 2e-6));
  EXPECT_TRUE(NearRel(a.signal_V2_per_Hz, ea.signal_V2_per_Hz, 1e-4));
  EXPECT_TRUE(NearRel(a.floor_V2_per_Hz - 6.25e-20, ea.johnson_V2_per_Hz, 1e-4));
  EXPECT_NEAR(a.snr, ea.snr, 0.05);
  EXPECT_NEAR(*a.time_for_target_s, ea.time_for_ten_s, 0.0005);
  EXPECT_TRUE(NearRel(a.floor_current_A2_per_Hz, ea.floor_A2_per_Hz, 1e-3));
  // nu = 2 (e* = e): R = 11431.1 Ohm, SNR 16.7, 0.36 s.
  const AmplifierNoise b = AmplifierChain(2 * kConductanceQuantum_S, amp(1e5), 0.020, 2 * e * ib, 10);
  const ChainExpectation eb = radiometer(2 * kConductanceQuantum_S, 1e5, 2 * e * ib);
  EXPECT_TRUE(NearRel(b.effective_resistance_Ohm, eb.resistance_Ohm, 1e-5));
  EXPECT_NEAR(b.snr, eb.snr, 0.05);
  EXPECT_NEAR(*b.time_for_target_s, eb.time_for_ten_s, 0.005);
  // With R_L -> infinity the amplifier sees R_H = h/(nu e^2) = 3 x 25812.807 = 77438.42 Ohm: SNR 95.5,
  // 0.011 s.
  const AmplifierNoise c = AmplifierChain(kConductanceQuantum_S / 3, amp(1e30), 0.020, 2 * e / 3 * ib, 10);
  const ChainExpectation ec = radiometer(kConductanceQuantum_S / 3, 1e30, 2 * e / 3 * ib);
  EXPECT_TRUE(NearRel(c.effective_resistance_Ohm, 3 * constants::kVonKlitzing_Ohm, 1e-12));
  EXPECT_NEAR(c.snr, ec.snr, 0.05);
  EXPECT_NEAR(*c.time_for_target_s, ec.time_for_ten_s, 0.0005);
}

TEST(Noise, DefaultOptionsAreValid) {
  std::string why;
  EXPECT_TRUE(NoiseOptions{}.IsValid(&why)) << why;
  NoiseOptions bad;
  bad.phase_samples = 0;
  EXPECT_FALSE(bad.IsValid(&why));
  EXPECT_NE(why.find("phase_samples"), std::string::npos);
}

// Johnson noise of a resistor at its own temperature, 4 k_B T R (Johnson, Phys. Rev. 32, 97 (1928);
// Nyquist, Phys. Rev. 32, 110 (1928)), each divided by the other resistor: the split floor of
// AmplifierChain written with resistances, independently of the code's conductance form.
double split_johnson(double rs, double ts, double rl, double tl) {
  const double k = kBoltzmann_J_per_K;
  return 4 * k * ts * rs * (rl / (rs + rl)) * (rl / (rs + rl)) + 4 * k * tl * rl * (rs / (rs + rl)) * (rs / (rs + rl));
}

TEST(Measurement, SplitJohnsonFloorEqualsParallelJohnsonWhenLoadIsAtTheSampleTemperature) {
  // The two terms add up to 4 k_B T (R_s || R_L) when T_L = T_s (Johnson 1928; Nyquist 1928).
  const double rs = 3 * constants::kVonKlitzing_Ohm, rl = 1e5, t = 0.020;
  const double r = rs * rl / (rs + rl);
  EXPECT_TRUE(NearRel(split_johnson(rs, t, rl, t), 4 * kBoltzmann_J_per_K * t * r, 1e-14));  // rounding only
  const double en2 = 0.25e-9 * 0.25e-9;  // amp(): e_n = 0.25 nV/rtHz, i_n = 0
  Amplifier same = amp(rl);
  same.load_temperature_K = t;
  const AmplifierNoise given = AmplifierChain(1 / rs, same, t, 1e-29, 10);
  const AmplifierNoise dflt = AmplifierChain(1 / rs, amp(rl), t, 1e-29, 10);  // no load_temperature
  EXPECT_TRUE(NearRel(given.floor_V2_per_Hz, en2 + 4 * kBoltzmann_J_per_K * t * r, 1e-14));
  EXPECT_TRUE(NearRel(dflt.floor_V2_per_Hz, en2 + 4 * kBoltzmann_J_per_K * t * r, 1e-14));
  EXPECT_TRUE(dflt.load_temperature_from_design);
  EXPECT_DOUBLE_EQ(dflt.load_temperature_K, t);
  EXPECT_FALSE(given.load_temperature_from_design);
  EXPECT_DOUBLE_EQ(given.load_temperature_K, t);
}

TEST(Measurement, LoadAtFourKelvinOnTwelveKilohmSampleAddsItsJohnsonNoiseThroughTheDivider) {
  // A 12 kOhm load at 4.2 K (a cold load near the helium bath, common practice) on a 12 kOhm sample at
  // 20 mK: each divider ratio is 1/2, so J = k_B * 12 kOhm * (20 mK + 4.2 K) = 6.9916e-19 V^2/Hz with the
  // exact SI k_B = 1.380649e-23 J/K (from memory).
  const double rs = 12e3, rl = 12e3, ts = 0.020, tl = 4.2;
  Amplifier a = amp(rl);
  a.current_noise_A_per_rtHz = 5e-15;
  a.load_temperature_K = tl;
  const double excess = 1e-28;
  const AmplifierNoise n = AmplifierChain(1 / rs, a, ts, excess, 10);
  const double r = 6e3, j = split_johnson(rs, ts, rl, tl);
  EXPECT_TRUE(NearRel(j, 6.99160654e-19, 1e-8));  // hand value quoted to 9 digits
  EXPECT_TRUE(NearRel(n.effective_resistance_Ohm, r, 1e-14));
  const double floor = 0.25e-9 * 0.25e-9 + r * r * 5e-15 * 5e-15 + j;
  EXPECT_TRUE(NearRel(n.floor_V2_per_Hz, floor, 1e-13));
  EXPECT_TRUE(NearRel(n.floor_current_A2_per_Hz, floor / (r * r), 1e-13));
  // Radiometer SNR with the new floor (Dicke, Rev. Sci. Instrum. 17, 268 (1946), from memory).
  const double signal = r * r * excess;
  EXPECT_TRUE(NearRel(n.snr, signal / (signal + floor) * std::sqrt(1e5 * 1.0), 1e-13));
  EXPECT_DOUBLE_EQ(n.load_temperature_K, tl);
  EXPECT_FALSE(n.load_temperature_from_design);
}

TEST(Measurement, WarmerLoadRaisesTheFloorByTheLoadTermOnly) {
  // d floor / d T_L = 4 k_B R_L (R_s / (R_s + R_L))^2 (Johnson 1928; Nyquist 1928); nothing else moves.
  const double rs = 3 * constants::kVonKlitzing_Ohm, rl = 1e5, ts = 0.020;
  Amplifier cold = amp(rl), warm = amp(rl);
  cold.current_noise_A_per_rtHz = warm.current_noise_A_per_rtHz = 2e-15;
  cold.load_temperature_K = 1.0;
  warm.load_temperature_K = 4.2;
  const double excess = 2 * kElementaryCharge_C / 3 * 100e-12;
  const AmplifierNoise c = AmplifierChain(1 / rs, cold, ts, excess, 10);
  const AmplifierNoise w = AmplifierChain(1 / rs, warm, ts, excess, 10);
  const double divider = rs / (rs + rl);
  // 1e-13: a difference of two floors of the same order as it, each good to ~1e-15.
  EXPECT_TRUE(
      NearRel(w.floor_V2_per_Hz - c.floor_V2_per_Hz, 4 * kBoltzmann_J_per_K * 3.2 * rl * divider * divider, 1e-13));
  EXPECT_DOUBLE_EQ(w.effective_resistance_Ohm, c.effective_resistance_Ohm);
  EXPECT_DOUBLE_EQ(w.signal_V2_per_Hz, c.signal_V2_per_Hz);
  EXPECT_LT(w.snr, c.snr);
  ASSERT_TRUE(w.time_for_target_s && c.time_for_target_s);
  EXPECT_GT(*w.time_for_target_s, *c.time_for_target_s);
}

TEST(Measurement, OpenSampleLeavesOnlyTheLoadJohnsonNoiseAndNoNaN) {
  // R_s = infinity (sample conductance 0): R = R_L and J = 4 k_B T_L R_L (Johnson 1928; Nyquist 1928).
  Amplifier a = amp(1e5);
  a.load_temperature_K = 4.2;
  const AmplifierNoise n = AmplifierChain(0.0, a, 0.020, 0.0, 10);
  EXPECT_TRUE(std::isinf(n.sample_resistance_Ohm));
  EXPECT_TRUE(NearRel(n.effective_resistance_Ohm, 1e5, 1e-15));
  EXPECT_TRUE(NearRel(n.floor_V2_per_Hz, 0.25e-9 * 0.25e-9 + 4 * kBoltzmann_J_per_K * 4.2 * 1e5, 1e-14));
  EXPECT_TRUE(std::isfinite(n.floor_current_A2_per_Hz));
  EXPECT_EQ(n.snr, 0.0);
  EXPECT_FALSE(n.time_for_target_s);
}

TEST(Measurement, ReferenceSubtractionHalvesSnrSquaredAndDoublesTheTime) {
  // On/off: the estimate is the difference of two independent averages of equal length, so its variance
  // is twice that of one (common practice): SNR / sqrt(2) and twice the averaging time for the target.
  const double ib = 100e-12, e = kElementaryCharge_C;
  Amplifier on = amp(1e5);
  on.reference_subtraction = true;
  const AmplifierNoise plain = AmplifierChain(kConductanceQuantum_S / 3, amp(1e5), 0.020, 2 * e / 3 * ib, 10);
  const AmplifierNoise diff = AmplifierChain(kConductanceQuantum_S / 3, on, 0.020, 2 * e / 3 * ib, 10);
  EXPECT_FALSE(plain.reference_subtraction);
  EXPECT_TRUE(diff.reference_subtraction);
  EXPECT_TRUE(NearRel(diff.snr * diff.snr, plain.snr * plain.snr / 2, 1e-14));
  // The worked example of Measurement.WorkedSignalToNoiseExamples (SNR 49.1) divided by sqrt 2.
  const double worked = radiometer(kConductanceQuantum_S / 3, 1e5, 2 * e / 3 * ib).snr;
  EXPECT_TRUE(NearRel(diff.snr, worked / std::sqrt(2.0), 0.05 / 49.1));
  ASSERT_TRUE(plain.time_for_target_s && diff.time_for_target_s);
  EXPECT_TRUE(NearRel(*diff.time_for_target_s, 2 * *plain.time_for_target_s, 1e-14));
  EXPECT_DOUBLE_EQ(diff.floor_V2_per_Hz, plain.floor_V2_per_Hz);  // the floor itself is unchanged
  EXPECT_DOUBLE_EQ(diff.signal_V2_per_Hz, plain.signal_V2_per_Hz);
}

// The table of noise models (noise.hpp): every row has a tag of its own, named by ToString, and its
// docs/models.md section is a heading of that document (the repository's own; common practice that
// each model cites it). The demos' results carry the tags of the models that produced their numbers,
// in the table's order, each with its row's section: rung 1 integer channels with floating contacts
// and an amplifier, rung 2 fractional channels with two amplifiers and a collider, rung 3 an integer
// interferometer with floating contacts and an amplifier.
TEST(NoiseModels, EveryRowHasATagAndItsSectionInModelsMd) {
  const std::string doc = read("docs/models.md");
  const std::vector<NoiseModelInfo>& rows = NoiseModels();
  ASSERT_FALSE(rows.empty());
  std::set<std::string> names;
  std::set<NoiseModel> tags;
  for (const NoiseModelInfo& row : rows) {
    EXPECT_EQ(ToString(row.model), row.name);
    EXPECT_TRUE(names.insert(row.name).second) << row.name;
    EXPECT_TRUE(tags.insert(row.model).second) << row.name;
    EXPECT_NE(doc.find("\n## " + std::string(row.docs_section) + "\n"), std::string::npos)
        << row.name << ": no section \"" << row.docs_section << "\" in docs/models.md";
  }
  const std::vector<std::pair<const char*, std::vector<NoiseModel>>> demos{
      {"designs/01_hallbar_qpc.yaml",
       {NoiseModel::kCoherentInteger, NoiseModel::kFloatingContacts, NoiseModel::kAmplifierChain}},
      {"designs/02_two_source_collider.yaml",
       {NoiseModel::kFractionalPartition, NoiseModel::kAmplifierChain, NoiseModel::kCollider}},
      {"designs/03_fabry_perot.yaml",
       {NoiseModel::kCoherentInteger, NoiseModel::kFloatingContacts, NoiseModel::kAmplifierChain}}};
  for (const auto& [path, expected] : demos) {
    const Solved s = run(read(path));
    std::vector<NoiseModel> got;
    for (const NoiseModelUse& m : s.n.models) {
      got.push_back(m.model);
      EXPECT_FALSE(m.text.empty()) << path;
      for (const NoiseModelInfo& row : rows) {
        if (row.model != m.model) continue;
        EXPECT_EQ(m.docs_section, row.docs_section) << path;
      }
    }
    EXPECT_EQ(got, expected) << path;
  }
}

// A bias scan on one device (quantities.hpp, SolveAtBias): at the design's own biases it gives the
// device's transport to the last bit; at twice the biases every contact current doubles, the linear
// response of the Landauer-Büttiker formula I_a = sum_b G_ab V_b (Büttiker, Phys. Rev. Lett. 57, 1761
// (1986)), and the noise is solved only when asked.
TEST(NoiseSweep, BiasScanReusesTheDeviceAndRespondsLinearly) {
  DeviceOptions options;
  options.bare_estimate = true;
  const Device device(LoadDesign(test::SourcePath("designs/02_two_source_collider.yaml")), options);
  ASSERT_TRUE(device.usable());
  const Design& d = device.design();
  std::vector<int> sources;
  std::vector<double> same, twice;
  for (std::size_t i = 0; i < d.wiring.size(); ++i)
    if (d.wiring[i].role == Role::kSource) {
      sources.push_back(static_cast<int>(i));
      same.push_back(d.wiring[i].bias_own_unit());
      twice.push_back(2 * d.wiring[i].bias_own_unit());
    }
  ASSERT_EQ(sources.size(), 2u);  // SA and SB
  const BiasPoint at_design = SolveAtBias(device, FieldSign::kDesign, sources, same, nullptr);
  EXPECT_EQ(at_design.transport.current_A, device.transport().current_A);
  EXPECT_FALSE(at_design.noise);
  const NoiseOptions nopt;
  const BiasPoint doubled = SolveAtBias(device, FieldSign::kDesign, sources, twice, &nopt);
  ASSERT_TRUE(doubled.noise);
  double largest = 0.0;
  for (double i : device.transport().current_A) largest = std::max(largest, std::abs(i));
  ASSERT_GT(largest, 0.0);
  for (std::size_t a = 0; a < d.contacts.size(); ++a)
    // 1e-12 of the largest current: rounding of the linear solve (common practice)
    EXPECT_NEAR(doubled.transport.current_A[a], 2 * device.transport().current_A[a], 1e-12 * largest) << a;
  const PointResults results = doubled.Results(device);
  EXPECT_EQ(results.transport, &doubled.transport);
  EXPECT_EQ(results.noise, &*doubled.noise);
  EXPECT_THROW(SolveAtBias(device, FieldSign::kDesign, {0}, {1e-6, 2e-6}, nullptr), std::invalid_argument);
  int not_source = 0;
  while (d.wiring[static_cast<std::size_t>(not_source)].role == Role::kSource) ++not_source;
  EXPECT_THROW(SolveAtBias(device, FieldSign::kDesign, {not_source}, {1e-6}, nullptr), std::invalid_argument);
}


// `noise --sweep` takes its columns from the table of quantities (quantities.hpp): after the point and
// the swept biases come exactly the columns of the table's default groups that a bias point gives (all
// but the pinch-off search), in the table's order; its last row's currents are those of the library's
// bias scan at the same biases (printed to 10 significant digits).
TEST(NoiseSweep, ColumnsAreTheQuantityTablesAndValuesTheLibrarysBiasScan) {
  const std::string design = test::SourcePath("designs/02_two_source_collider.yaml");
  const std::filesystem::path csv =
      std::filesystem::temp_directory_path() / ("hallway_noise_sweep_" + std::to_string(::getpid()) + ".csv");
  std::filesystem::remove(csv);
  const test::CommandRun r =
      test::RunHallway("noise '" + design + "' --fast --quiet --sweep SA,SB=0:40uV:3 --ratio 1,0.5 --csv '" +
                       csv.string() + "'");
  ASSERT_EQ(r.exit_code, 0) << r.output;
  std::ifstream in(csv);
  std::string header, line, last;
  std::getline(in, header);
  int rows = 0;
  while (std::getline(in, line)) {
    ++rows;
    last = line;
  }
  std::filesystem::remove(csv);
  DeviceOptions options;
  options.bare_estimate = true;
  const Device device(LoadDesign(design), options);
  ASSERT_TRUE(device.usable());
  const Design& d = device.design();
  std::string expected = "point,bias_SA_V,bias_SB_V";
  std::vector<std::string> columns{"point", "bias_SA_V", "bias_SB_V"};
  for (const QuantityGroup& g : QuantityGroups())
    if (g.default_on && g.needs != QuantityNeeds::kPinchOffSearch)
      for (const std::string& c : g.columns(d)) {
        expected += "," + c;
        columns.push_back(c);
      }
  EXPECT_EQ(header, expected);
  EXPECT_EQ(rows, 3);
  std::vector<std::string> fields;
  std::stringstream ss(last);
  for (std::string f; std::getline(ss, f, ',');) fields.push_back(f);
  fields.resize(columns.size());
  const int sa = static_cast<int>(d.FindWiring("SA") - d.wiring.data());
  const int sb = static_cast<int>(d.FindWiring("SB") - d.wiring.data());
  const BiasPoint point = SolveAtBias(device, FieldSign::kDesign, {sa, sb}, {40e-6, 20e-6}, nullptr);
  int currents = 0;
  for (std::size_t c = 0; c < columns.size(); ++c)
    for (std::size_t a = 0; a < d.contacts.size(); ++a)
      if (columns[c] == "I_" + d.contacts[a].name + "_A" && point.transport.current_A[a] != 0.0) {
        ++currents;
        EXPECT_TRUE(NearRel(std::stod(fields[c]), point.transport.current_A[a], 1e-9)) << columns[c];
      }
  EXPECT_GE(currents, 2);  // the two sources at least
}

}  // namespace
}  // namespace hallway
