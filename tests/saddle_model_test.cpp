// Transmission from the gates (saddle_model.hpp): the saddle-point formula against Büttiker's, the
// staircase of a split gate against its pinch-off, contradictions between declared values and gates,
// and the model's transmissions in transport.
#include "hallway/saddle_model.hpp"

#include <gtest/gtest.h>

#include <cmath>
#include <numbers>

#include "hallway/constants.hpp"
#include "hallway/design_loader.hpp"
#include "hallway/device.hpp"
#include "hallway/gap.hpp"
#include "hallway/map.hpp"
#include "hallway/saddle.hpp"
#include "test_support.hpp"

namespace hallway {
namespace {

using test::kBase;
using test::replace;

constexpr double kMeV = 1e-3 * constants::kElementaryCharge_C;

Design base_design(const std::string& text = kBase) { return LoadDesignFromString(text, "base.yaml"); }

bool has_finding(const std::vector<Finding>& fs, const std::string& code, const std::string& text) {
  for (const Finding& f : fs)
    if (f.code == code && f.message.find(text) != std::string::npos) return true;
  return false;
}

// Büttiker, Phys. Rev. B 41, 7906 (1990): at B = 0 subband n of the saddle passes with
// 1 / (1 + exp(-2 pi (E - (n + 1/2) hbar w_y) / hbar w_x)); both spins of subband n sit at level 2n + 1
// in hallway's convention (level l at l E_2 / 2).
TEST(SaddleModel, ChannelTransmissionIsButtikersParabolicSaddleAtZeroField) {
  const double hx = 0.3 * kMeV, hy = 2.0 * kMeV;
  for (int n = 0; n < 3; ++n)
    for (double e_meV : {0.2, 0.9, 1.0, 1.1, 2.5, 3.0, 3.4, 5.0}) {
      const double e = e_meV * kMeV;
      const double expected = 1.0 / (1.0 + std::exp(-2.0 * std::numbers::pi * (e - (n + 0.5) * hy) / hx));
      EXPECT_NEAR(ChannelSaddleTransmission(e, hx, hy, 0.0, 2.0 * n + 1.0), expected, 1e-12) << n << " " << e_meV;
    }
}

// Büttiker (1990): in a field, E_2 = (hbar / sqrt 2) [(W^4 + 4 w_x^2 w_y^2)^(1/2) + W^2]^(1/2) with
// W^2 = w_c^2 + w_y^2 - w_x^2, computed here from that formula. For hbar w_y >> hbar w_x the steps are
// sharp and equally spaced: between the levels the summed transmission is an integer.
TEST(SaddleModel, PlateausAreEquallySpacedWhenConfinementDominates) {
  const double hx = 0.05 * kMeV, hy = 3.0 * kMeV, hc = 4.0 * kMeV;
  const double w2 = hc * hc + hy * hy - hx * hx;
  const double e2 = std::sqrt(std::sqrt(w2 * w2 + 4.0 * hx * hx * hy * hy) + w2) / std::numbers::sqrt2;
  const std::vector<double> levels{0.5, 1.5, 2.5, 3.5};
  for (int plateau = 0; plateau <= 3; ++plateau) {
    const double e = plateau * e2 / 2.0;  // midway between levels plateau - 1/2 and plateau + 1/2
    double sum = 0.0;
    for (double l : levels) sum += ChannelSaddleTransmission(e, hx, hy, hc, l);
    EXPECT_NEAR(sum, plateau, 1e-6) << "plateau " << plateau;
  }
  for (double l : levels) EXPECT_NEAR(ChannelSaddleTransmission(l * e2 / 2.0, hx, hy, hc, l), 0.5, 1e-12);
}

// Levels are the middles of the conductance steps (docs/models.md "Channel boundaries and slits").
TEST(SaddleModel, ChannelLevelsAreTheMiddlesOfTheSteps) {
  const Design d = base_design();  // filling 2: two spin-resolved channels
  ASSERT_EQ(ChannelLevels(d), (std::vector<double>{0.5, 1.5}));
}

// A split gate at bulk filling 2 swept from -0.5 V past pinch-off: the summed transmission never
// rises, shows the plateaus 2, 1 and 0, and the outermost channel is half open where the local
// filling at the saddle is its level 1/2 (E_2 / 2 hbar w_c of it, E_2 ~ hbar w_c at this field),
// before the density at the saddle vanishes (the pinch-off of `hallway map`).
TEST(SaddleModel, SplitGateAtFillingTwoGivesTheStaircaseAndClosesBeforeThePinchOff) {
  Design d = base_design();
  const ConstrictionSaddleModel model(d, 0, SaddlePotential::kSelfConsistentWindow);
  ASSERT_TRUE(model.has_gap());
  std::optional<DensityMap> state;
  double last = 3.0;
  bool two = false, one = false, zero = false;
  for (double v = -0.5; v >= -2.0; v -= 0.1) {
    bool converged = false;
    const SaddleModel m = model.At(model.WithSides(v), &state, &converged);
    ASSERT_TRUE(converged) << v;
    const double sum = m.transmission[0] + m.transmission[1];
    EXPECT_LE(sum, last + 1e-9) << "at " << v << " V";
    last = sum;
    two = two || std::abs(sum - 2.0) < 0.02;
    one = one || std::abs(sum - 1.0) < 0.02;
    zero = zero || sum < 0.02;
  }
  EXPECT_TRUE(two && one && zero) << two << one << zero;

  const auto half = VoltageForTransmission(model, 0, 0.5, 0.0, -2.5);
  ASSERT_TRUE(half);
  bool converged = false;
  const SaddleModel at_half = model.At(model.WithSides(*half), nullptr, &converged);
  EXPECT_NEAR(at_half.local_filling, 0.5, 0.1);

  MapOptions mo;
  mo.constrictions_only = true;
  const MapResult map = ComputeMap(d, mo);
  ASSERT_EQ(map.constrictions.size(), 1u);
  ASSERT_TRUE(map.constrictions[0].pinch_off_V);
  const double pinch = *map.constrictions[0].pinch_off_V;
  EXPECT_GT(*half, pinch);                              // the channel closes first
  EXPECT_LT(std::abs(*half - pinch), 0.15 * std::abs(pinch));  // and not far before
}

// The bare model's energy is phi_g / V_dep: at the bare pinch-off (the independent fixed point of
// saddle.hpp, where the gates' potential at the bare saddle reaches V_dep) the local filling at the
// saddle is zero and every channel is closed.
TEST(SaddleModel, BareModelEmptiesTheSaddleAtTheBarePinchOff) {
  const Design d = base_design();
  const auto gap = FindGap(d, d.constrictions[0], nullptr);
  ASSERT_TRUE(gap);
  const auto bare = FindBarePinchOff(d, d.constrictions[0], *gap);
  ASSERT_TRUE(bare);
  const ConstrictionSaddleModel model(d, 0, SaddlePotential::kBare);
  const SaddleModel m = model.At(model.WithSides(bare->voltage_V));
  EXPECT_NEAR(m.energy_over_fermi, 1.0, 0.01);
  EXPECT_LT(m.local_filling, 0.02);
  for (double t : m.transmission) EXPECT_LT(t, 0.01);
  const SaddleModel open = model.At(model.WithSides(0.5 * bare->voltage_V));
  EXPECT_GT(open.local_filling, 0.3);
}

// A declared transmission the gates contradict is a warning naming the constriction, the channel and
// the model's value; at the voltage the gate settings give for it, there is none.
TEST(SaddleModel, DeclaredTransmissionThatContradictsTheGatesIsAWarning) {
  Design d = base_design(replace(kBase, "voltage: -0.9 V", "voltage: -0.6 V"));  // both channels open
  std::vector<Finding> found;
  const auto ts = ResolveGateTransmissions(&d, {}, &found);
  ASSERT_EQ(ts.size(), 1u);
  ASSERT_TRUE(ts[0].model);
  EXPECT_NEAR(ts[0].model->transmission[1], 1.0, 0.01);
  EXPECT_EQ(ts[0].source, TransmissionSource::kDesign);
  EXPECT_EQ(ts[0].transmission_used, (std::vector<double>{1.0, 0.4}));
  EXPECT_TRUE(has_finding(found, "transmission-contradicts-gates", "transmission 0.4 for channel 2")) << found.size();

  const auto settings = GateSettings(d, SaddlePotential::kSelfConsistentWindow, {});
  ASSERT_EQ(settings.size(), 2u);
  ASSERT_TRUE(settings[1].voltage_V);
  for (Gate& g : d.gates) g.voltage_V = *settings[1].voltage_V;
  found.clear();
  ResolveGateTransmissions(&d, {}, &found);
  EXPECT_FALSE(has_finding(found, "transmission-contradicts-gates", "channel 2")) << found.front().message;

  // Declared open, gates far beyond the pinch-off.
  Design closed = base_design(replace(replace(kBase, "voltage: -0.9 V", "voltage: -3 V"), "[1, 0.4]", "[1, 1]"));
  found.clear();
  ResolveGateTransmissions(&closed, {}, &found);
  EXPECT_TRUE(has_finding(found, "transmission-contradicts-gates", "the gates close it"));
}

// `transmission: from-gates`: the loader leaves the values to the model, the device writes them in,
// and transport carries them: the current through the constriction is sum(t) e^2/h V (Landauer).
TEST(SaddleModel, FromGatesTransmissionsDriveTheTransport) {
  const std::string text = replace(kBase, "transmission: [1, 0.4]", "transmission: from-gates");
  const Design loaded = base_design(text);
  ASSERT_TRUE(loaded.constrictions[0].transmission_from_gates);
  ASSERT_TRUE(std::isnan(loaded.constrictions[0].transmission[0]));
  double previous = 3.0;
  for (const char* volts : {"-0.3 V", "-1.2 V", "-1.9 V", "-3 V"}) {
    DeviceOptions o;
    o.bare_estimate = true;
    const Device dev(base_design(replace(text, "-0.9 V", volts)), o);
    ASSERT_TRUE(dev.usable()) << volts;
    const ConstrictionTransmission& ct = dev.summary().transmissions.at(0);
    EXPECT_EQ(ct.source, TransmissionSource::kGates);
    const std::vector<double>& t = dev.design().constrictions[0].transmission;
    EXPECT_EQ(t, ct.transmission_used);
    const double sum = t[0] + t[1];
    EXPECT_LE(sum, previous + 1e-12) << volts;
    previous = sum;
    const double expected = sum * constants::kConductanceQuantum_S * 10e-6;
    EXPECT_NEAR(dev.transport().current_A[0], expected, 1e-9 * constants::kConductanceQuantum_S * 10e-6) << volts;
  }
  EXPECT_LT(previous, 0.01);  // closed at -3 V
}

TEST(SaddleModel, AMisspelledFromGatesIsAnErrorThatNamesTheChoice) {
  const std::string text = replace(kBase, "transmission: [1, 0.4]", "transmission: from-gate");
  try {
    base_design(text);
    FAIL() << "accepted";
  } catch (const DesignError& e) {
    EXPECT_NE(std::string(e.what()).find("from-gates"), std::string::npos) << e.what();
    EXPECT_NE(std::string(e.what()).find("base.yaml:22"), std::string::npos) << e.what();
  }
}

}  // namespace
}  // namespace hallway
