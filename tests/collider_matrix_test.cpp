// Colliders inside the contact matrix: the drains' cross-correlation is the collider model's S_34
// (Rosenow, Levkivskyi & Halperin, Phys. Rev. Lett. 116, 156802 (2016)), the rest of the matrix follows
// from current conservation; inputs come from the transport solution; a swapped source and ground is
// not dilute; one-beam partitioning; channels the model cannot treat are listed, not dropped.
#include <gtest/gtest.h>

#include <cmath>
#include <fstream>
#include <numbers>
#include <sstream>

#include "hallway/collider.hpp"
#include "hallway/constants.hpp"
#include "hallway/design_loader.hpp"
#include "hallway/network.hpp"
#include "hallway/noise.hpp"
#include "hallway/transport.hpp"
#include "test_support.hpp"

namespace hallway {
namespace {

using test::NearRel;
using test::replace;

std::string Collider() {
  std::ifstream in(test::SourcePath("designs/02_two_source_collider.yaml"));
  std::stringstream ss;
  ss << in.rdbuf();
  std::string t = ss.str();
  t = replace(t, "SA: source 30 uV", "SA: source 40 uV");
  t = replace(t, "SB: source 30 uV", "SB: source 40 uV");
  t = replace(t, "temperature: 12 mK", "temperature: 20 mK");
  t = replace(t, "load: 100 kOhm", "load: 12 kOhm");
  return t;
}

struct Solved {
  Design d;
  TransportResult tr;
  NoiseResult n;
};

Solved Solve(const std::string& text, NoiseOptions o = {}) {
  Solved r{LoadDesignFromString(text, "collider.yaml"), {}, {}};
  const ChannelGeometry g = BuildChannelGeometry(r.d);
  const EdgeNetwork net = TraceEdges(r.d, g, r.d.conditions.field_T);
  r.tr = SolveTransport(r.d, net);
  r.n = SolveNoise(r.d, net, r.tr, o);
  return r;
}

int Contact(const Design& d, const std::string& name) {
  for (std::size_t i = 0; i < d.contacts.size(); ++i)
    if (d.contacts[i].name == name) return static_cast<int>(i);
  return -1;
}

const ColliderPrediction* Of(const NoiseResult& n, const Design& d, const std::string& name) {
  for (const ColliderPrediction& c : n.colliders)
    if (d.constrictions[static_cast<std::size_t>(c.constriction)].name == name) return &c;
  return nullptr;
}

constexpr double kE = constants::kElementaryCharge_C;

// Balanced 1/3 collider: I1 = I2 = (e^2 / 3h) (1 - 0.95) 40 uV, I+ = I1 + I2, collider tunnelling 0.1,
// P = -2 (Rosenow, Levkivskyi & Halperin 2016, balanced closed form at theta = pi delta = pi/3):
// S_34 = 2 P (e/3) I+ 0.1 (1 - 0.1) = -9.93e-31 A^2/Hz.
TEST(ColliderMatrix, DrainCrossCorrelationIsTheColliderTermNotTheClassicalSplitting) {
  const Solved r = Solve(Collider());
  const double i1 = constants::kConductanceQuantum_S / 3.0 * 0.05 * 40e-6;
  const double s34 = 2.0 * -2.0 * kE / 3.0 * 2.0 * i1 * 0.1 * 0.9;
  EXPECT_TRUE(NearRel(s34, -9.93e-31, 1e-3));
  const ColliderPrediction* c = Of(r.n, r.d, "C");
  ASSERT_NE(c, nullptr);
  EXPECT_TRUE(c->in_contact_matrix);
  EXPECT_TRUE(NearRel(c->stream_first_A, i1, 1e-9));
  EXPECT_TRUE(NearRel(c->stream_second_A, i1, 1e-9));
  ASSERT_TRUE(c->fano && c->s34_A2_per_Hz);
  EXPECT_TRUE(NearRel(*c->fano, -2.0, 1e-9));
  EXPECT_TRUE(NearRel(*c->s34_A2_per_Hz, s34, 1e-9));
  const int d1 = Contact(r.d, "D1"), d2 = Contact(r.d, "D2");
  const auto& x = r.n.excess_A2_per_Hz;
  EXPECT_TRUE(NearRel(x[d1][d2], s34, 0.01)) << "the contact matrix holds the collider term";
  // Autocorrelation from current conservation for balanced beams: S_33 = S_11 - S_34, S_11 the source
  // constriction's partition noise (Kane & Fisher, Phys. Rev. Lett. 72, 724 (1994), finite-temperature form).
  const double s11 =
      FractionalPartitionNoise_A2_per_Hz(kE / 3.0, 40e-6, constants::kConductanceQuantum_S / 3.0, 0.95, 20e-3);
  EXPECT_TRUE(NearRel(x[d1][d1], s11 - s34, 0.01));
  // Rows and columns sum to zero (current conservation).
  for (std::size_t i = 0; i < x.size(); ++i) {
    double row = 0.0;
    for (double v : x[i]) row += v;
    EXPECT_NEAR(row, 0.0, 1e-6 * std::abs(s11));
  }
  // Every consumer uses the same number: the amplifiers' cross-correlation.
  ASSERT_FALSE(r.n.cross.empty());
  for (const CrossNoise& cn : r.n.cross) {
    if ((cn.first == d1 && cn.second == d2) || (cn.first == d2 && cn.second == d1)) {
      EXPECT_DOUBLE_EQ(cn.excess_current_A2_per_Hz, x[d1][d2]);
    }
  }
}

TEST(ColliderMatrix, SwappedSourceAndGroundIsNotDiluteAndLeavesTheMatrix) {
  std::string t = replace(Collider(), "SA: source 40 uV", "SA: ground");
  t = replace(t, "GA: ground", "GA: source 40 uV");
  const Solved r = Solve(t);
  const ColliderPrediction* c = Of(r.n, r.d, "C");
  ASSERT_NE(c, nullptr);
  EXPECT_FALSE(c->dilute);
  EXPECT_FALSE(c->in_contact_matrix);
  EXPECT_NEAR(std::max(c->dilution_first, c->dilution_second), 0.95, 1e-6);
  bool warned = false;
  for (const Finding& f : r.n.findings) warned = warned || f.code == "collider-not-applicable";
  EXPECT_TRUE(warned);
}

TEST(ColliderMatrix, OppositeSignStreamsAreOutsideTheFormulasDomain) {
  const Solved r = Solve(replace(Collider(), "SB: source 40 uV", "SB: source -40 uV"));
  const ColliderPrediction* c = Of(r.n, r.d, "C");
  ASSERT_NE(c, nullptr);
  EXPECT_LT(c->stream_first_A * c->stream_second_A, 0.0);
  EXPECT_FALSE(c->fano);
  EXPECT_NE(c->not_computed.find("opposite signs"), std::string::npos);
}

// One dilute beam, the other input at equilibrium (SB grounded): the same model at I-/I+ = 1.
TEST(ColliderMatrix, OneBeamPartitioningIsItsOwnCase) {
  const Solved r = Solve(replace(Collider(), "SB: source 40 uV", "SB: ground"));
  const ColliderPrediction* c = Of(r.n, r.d, "C");
  ASSERT_NE(c, nullptr);
  EXPECT_TRUE(c->one_beam);
  ASSERT_TRUE(c->fano);
  EXPECT_TRUE(c->in_contact_matrix);
  // P(1) = -4.90672 at nu = 1/3 (the imbalance form of the Rosenow-Levkivskyi-Halperin model, evaluated
  // at x = 1 by ColliderShape; ColliderFano itself is defined for |x| < 1, so compare with its limit).
  EXPECT_NEAR(*c->fano, ColliderFano(0.999999, std::numbers::pi / 3.0, 1.0 / 3.0), 1e-3);
}

TEST(ColliderMatrix, InnerTwoFifthsChannelIsListedAsNotComputed) {
  std::string t = replace(Collider(), "filling: 1/3", "filling: 2/5");
  t = replace(t, "transmission: 0.95}", "transmission: [0.95, 0.95]}");
  t = replace(t, "transmission: 0.95}", "transmission: [0.95, 0.95]}");
  t = replace(t, "transmission: 0.9, regime: weak}", "transmission: [0.9, 0.9], regime: weak}");
  const Solved r = Solve(t);
  int inner = 0, outer = 0;
  for (const ColliderPrediction& c : r.n.colliders) {
    if (c.channel == 1) {
      ++inner;
      EXPECT_FALSE(c.fano);
      EXPECT_NE(c.not_computed.find("arXiv:2312.04475"), std::string::npos);
    }
    if (c.channel == 0) ++outer;
  }
  EXPECT_EQ(inner, 1);
  EXPECT_EQ(outer, 1);
}

// --collider-model finite-temperature: the contact matrix holds 2 P(T) e* I+ T(1 - T) with P(T) from the
// thermal-correlator form, and the collider section prints both.
TEST(ColliderMatrix, FiniteTemperatureModelFillsTheMatrixWhenChosen) {
  NoiseOptions o;
  o.collider_model = ColliderModel::kFiniteTemperature;
  const Solved r = Solve(Collider(), o);
  const ColliderPrediction* c = Of(r.n, r.d, "C");
  ASSERT_NE(c, nullptr);
  ASSERT_TRUE(c->fano && c->fano_finite_temperature);
  EXPECT_TRUE(NearRel(*c->fano, -2.0, 1e-9));
  const double zeta = ColliderRateOverTemperature(std::numbers::pi / 3.0, c->i_plus_A, kE / 3.0, 20e-3);
  EXPECT_TRUE(
      NearRel(*c->fano_finite_temperature, ColliderShape(0.0, std::numbers::pi / 3.0, 1.0 / 3.0, zeta).p, 1e-9));
  EXPECT_GT(*c->fano_finite_temperature, -2.0);  // thermal smearing weakens the braiding term at zeta < 1
  const double unit = 2.0 * kE / 3.0 * c->i_plus_A * 0.1 * 0.9;
  const int d1 = Contact(r.d, "D1"), d2 = Contact(r.d, "D2");
  EXPECT_TRUE(NearRel(r.n.excess_A2_per_Hz[d1][d2], *c->fano_finite_temperature * unit, 0.01));
}

// Without `regime:` a fractional constriction keeps the charge e* across t = 1/2: the partition noise is
// continuous there (it jumped by the ratio of charges, 3x, before), and a warning says the charge in the
// crossover is uncertain (Kane & Fisher, Phys. Rev. Lett. 72, 724 (1994)).
TEST(ColliderMatrix, FractionalNoiseHasNoJumpAtHalfTransmission) {
  std::string base = replace(Collider(), "SB: source 40 uV", "SB: ground");
  base = replace(base, "SA: source 40 uV", "SA: ground");
  base = replace(base, "GA: ground", "GA: source 40 uV");
  auto noise_at = [&](const std::string& t) {
    const Solved r = Solve(replace(base, "{name: QA, gates: [AW, CN], transmission: 0.95}",
                                   "{name: QA, gates: [AW, CN], transmission: " + t + "}"));
    bool warned = false;
    for (const Finding& f : r.n.findings) warned = warned || f.code == "fractional-charge-uncertain";
    EXPECT_TRUE(warned) << t;
    const int ga = Contact(r.d, "GA");
    return r.n.excess_A2_per_Hz[ga][ga];
  };
  const double above = noise_at("0.5"), below = noise_at("0.4999");
  EXPECT_GT(above, 0.0);
  EXPECT_TRUE(NearRel(below, above, 1e-3));
}

}  // namespace
}  // namespace hallway
