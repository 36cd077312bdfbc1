// Charge and neutral modes at filling 2 and the distance from the sources (docs/models.md "Charge and
// neutral modes at filling 2", "Distance from the sources"): the capacitance model against the
// eigenvalues of its velocity matrix, the pulse delay proportional to the path length in two layouts that
// differ only in distance, an integer collider's P read from the exact scattering (zero for balanced beams,
// the closed T = 0 form for imbalanced ones), the distance curve and the design keys.
#include <gtest/gtest.h>

#include <gsl/gsl_eigen.h>
#include <gsl/gsl_matrix.h>
#include <gsl/gsl_vector.h>

#include <algorithm>
#include <cmath>
#include <fstream>
#include <iterator>
#include <numbers>
#include <stdexcept>
#include <string>

#include "hallway/constants.hpp"
#include "hallway/design_loader.hpp"
#include "hallway/device.hpp"
#include "hallway/edge_modes.hpp"
#include "hallway/fractionalized_collider.hpp"
#include "hallway/paths.hpp"
#include "test_support.hpp"

namespace hallway {
namespace {

using namespace constants;
using test::NearRel;

// The velocity matrix V_ij = v_d delta_ij + (e^2/h) U_ij of two line charges with their images in a
// screening plane at depth d (method of images, Jackson, Classical Electrodynamics, 3rd ed. (1999)),
// diagonalised numerically: its eigenvalues are the charge and neutral mode velocities.
TEST(EdgeModes, CapacitanceModelIsTheEigenvaluesOfItsVelocityMatrix) {
  const double v_d = 3e4, a = 80e-9, depth = 95e-9, w = 15e-9, eps = 12.9;
  auto u = [&](double r) {
    const double potential = std::log(std::hypot(r, 2.0 * depth) / r) /
                             (2.0 * std::numbers::pi * eps * kVacuumPermittivity_F_per_m);  // per unit line charge
    return kElementaryCharge_C * kElementaryCharge_C / kPlanck_Js * potential;
  };
  // GSL's symmetric eigensolver (Golub & Van Loan's symmetric QR), independent of the model's closed form.
  gsl_matrix* v = gsl_matrix_alloc(2, 2);
  gsl_matrix_set(v, 0, 0, v_d + u(w));
  gsl_matrix_set(v, 1, 1, v_d + u(w));
  gsl_matrix_set(v, 0, 1, u(a));
  gsl_matrix_set(v, 1, 0, u(a));
  gsl_vector* values = gsl_vector_alloc(2);
  gsl_eigen_symm_workspace* work = gsl_eigen_symm_alloc(2);
  gsl_eigen_symm(v, values, work);
  const double ev[2] = {std::min(gsl_vector_get(values, 0), gsl_vector_get(values, 1)),
                        std::max(gsl_vector_get(values, 0), gsl_vector_get(values, 1))};
  gsl_eigen_symm_free(work);
  gsl_vector_free(values);
  gsl_matrix_free(v);
  const EdgeModes m = CapacitanceModelModes(v_d, a, depth, w, eps);
  EXPECT_TRUE(NearRel(m.charge_velocity_m_per_s, ev[1], 1e-12));
  EXPECT_TRUE(NearRel(m.neutral_velocity_m_per_s, ev[0], 1e-12));
  EXPECT_GT(m.charge_velocity_m_per_s, m.neutral_velocity_m_per_s);
  // Closer channels couple more strongly: a faster charge mode and a slower neutral one.
  const EdgeModes close = CapacitanceModelModes(v_d, a / 2, depth, w, eps);
  EXPECT_GT(close.charge_velocity_m_per_s, m.charge_velocity_m_per_s);
  EXPECT_LT(close.neutral_velocity_m_per_s, m.neutral_velocity_m_per_s);
  EXPECT_THROW(CapacitanceModelModes(v_d, 0.0, depth, w, eps), std::invalid_argument);
}

TEST(EdgeModes, DelayAndRegimeFollowTheirDefinitions) {
  EdgeModes m;
  m.charge_velocity_m_per_s = 1e5;
  m.neutral_velocity_m_per_s = 2.5e4;
  // L (1/v_n - 1/v_c) = 3e-6 (4e-5 - 1e-5) = 90 ps.
  EXPECT_TRUE(NearRel(PulseDelay_s(3e-6, m), 90e-12, 1e-12));
  const PulseRegime r = PulseRegimeOf(90e-12, 30e-6, 12e-3, 58e-12);
  EXPECT_TRUE(NearRel(r.bias_ratio, kElementaryCharge_C * 30e-6 * 90e-12 / kHbar_Js, 1e-12));
  EXPECT_TRUE(NearRel(r.thermal_ratio, kBoltzmann_J_per_K * 12e-3 * 90e-12 / kHbar_Js, 1e-12));
  EXPECT_TRUE(NearRel(r.injection_ratio, 58e-12 / kElementaryCharge_C * 90e-12, 1e-12));
}

const ColliderPrediction& OnlyCollider(const NoiseResult& n) {  // n must outlive the reference
  EXPECT_EQ(n.colliders.size(), 1u);
  return n.colliders.front();
}

NoiseResult NoiseOf(const std::string& rel, bool bare = true) {
  DeviceOptions o;
  o.bare_estimate = bare;
  const Device dev(LoadDesign(test::SourcePath(rel)), o);
  EXPECT_TRUE(dev.usable());
  return dev.noise();
}

// Two layouts that differ only in how far the source gates sit from the collider, with the mode
// velocities given: every source path's delay over its length is (1/v_n - 1/v_c), the far layout's delays are
// longer, and the collider's inputs carry the same delays as `paths` (one number).
TEST(EdgeModes, DelayIsProportionalToThePathLength) {
  double delays[2] = {0.0, 0.0};
  int which = 0;
  for (const char* rel : {"tests/data/noise/collider_nu2_near.yaml", "tests/data/noise/collider_nu2_far.yaml"}) {
    DeviceOptions o;
    o.bare_estimate = true;
    const Device dev(LoadDesign(test::SourcePath(rel)), o);
    ASSERT_TRUE(dev.usable());
    const PathResult paths = ComputePaths(dev.design(), dev.edges(), dev.transport(), nullptr);
    const NoiseResult noise = dev.noise();
    const ColliderPrediction& c = OnlyCollider(noise);
    for (const SourcePath& sp : paths.source_paths) {
      ASSERT_TRUE(sp.pulses && sp.modes) << rel;
      EXPECT_TRUE(sp.modes->from_design);
      EXPECT_TRUE(NearRel(sp.pulses->delay_s / sp.distance_m, 1.0 / 2.5e4 - 1.0 / 1e5, 1e-12));
      delays[which] = sp.pulses->delay_s;
    }
    for (std::size_t i = 0; i < 2; ++i) {  // each collider input carries the delay of a source path
      ASSERT_TRUE(c.pulses[i]) << rel;
      bool found = false;
      for (const SourcePath& sp : paths.source_paths)
        found = found || std::abs(c.pulses[i]->delay_s - sp.pulses->delay_s) <= 1e-9 * sp.pulses->delay_s;
      EXPECT_TRUE(found) << rel << " input " << i + 1;
    }
    ++which;
  }
  EXPECT_GT(delays[1], 1.5 * delays[0]);  // the far layout is about 5 um longer on each side
}

// The non-interacting part: balanced beams give S_34 = 0 exactly (Büttiker, Phys. Rev. B 46, 12485 (1992); the
// exact scattering the contact matrix holds). The fractionalized pulses add P(X) (fractionalized_collider.hpp)
// with X = e V dt / hbar recomputed here from dt = L (1/v_n - 1/v_c) and the design's bias.
TEST(EdgeModes, IntegerColliderIsExactScatteringPlusThePulses) {
  const NoiseResult noise = NoiseOf("tests/data/noise/collider_nu2_near.yaml");
  const ColliderPrediction& c = OnlyCollider(noise);
  ASSERT_TRUE(c.integer && c.fano && c.fano_pulses);
  EXPECT_EQ(c.model_in_matrix, ColliderModel::kExactScattering);
  EXPECT_TRUE(c.in_contact_matrix);
  EXPECT_LT(std::abs(*c.fano - *c.fano_pulses), 1e-9);
  double length = 0.0;
  for (const auto& p : c.distance_curve)
    if (p.design) length = p.distance_m;
  const double x = kElementaryCharge_C * 30e-6 * length * (1.0 / 2.5e4 - 1.0 / 1e5) / kHbar_Js;
  EXPECT_TRUE(NearRel(*c.fano_pulses, Filling2ColliderFano(x), 1e-3)) << x;
  EXPECT_LT(*c.fano, -0.1);  // X of about 8: the pulses arrive apart
}

// dt -> 0 (mode velocities within 0.1 %): the collider's P is the non-interacting exact result, 0 for
// balanced beams.
TEST(EdgeModes, IntegerColliderWithOverlappingPulsesIsTheExactResult) {
  const std::string text = test::replace(
      [] {
        std::ifstream in(test::SourcePath("tests/data/noise/collider_nu2_near.yaml"));
        return std::string(std::istreambuf_iterator<char>(in), {});
      }(),
      "neutral_mode_velocity: 2.5e4 m/s", "neutral_mode_velocity: 9.99e4 m/s");
  DeviceOptions o;
  o.bare_estimate = true;
  const Device dev(LoadDesignFromString(text, "near.yaml"), o);
  const NoiseResult noise = dev.noise();
  const ColliderPrediction& c = OnlyCollider(noise);
  ASSERT_TRUE(c.fano && c.fano_pulses && c.pulses[0]);
  EXPECT_LT(c.pulses[0]->bias_ratio, 0.1);
  EXPECT_LT(std::abs(*c.fano), 1e-6);
}

// Imbalanced beams at 1 mK: S_34 = -(2e^2/h) t_c (1 - t_c) Int (f1 - f2)^2 dE at T = 0 (Blanter & Büttiker,
// Phys. Rep. 336, 1 (2000); docs/models.md "Coherent noise of integer channels") with f_i = R_s = 0.05 in
// the bias windows 30 uV and 15 uV: P = -(2 R_s^2 e 15 uV) / (2 R_s e 45 uV) = -R_s / 3 for the
// non-interacting part. The smearing of the two Fermi edges at k_B T / (e 15 uV) = 0.006 changes it by about 1 %.
TEST(EdgeModes, IntegerColliderWithImbalancedBeamsMatchesTheClosedForm) {
  const NoiseResult noise = NoiseOf("tests/data/noise/collider_nu2_imbalanced.yaml");
  const ColliderPrediction& c = OnlyCollider(noise);
  ASSERT_TRUE(c.fano);
  EXPECT_TRUE(NearRel(*c.fano - c.fano_pulses.value_or(0.0), -0.05 / 3.0, 0.02)) << *c.fano;
}

// The distance curve: at the design's own distance it holds the contact matrix's P and the amplifiers'
// cross-correlation SNR; elsewhere the pulses' part follows P(X) with X scaled by the distance, and P is
// left unpredicted where k_B T dt/hbar exceeds 0.3 (the zero-temperature theory's domain).
TEST(EdgeModes, DistanceCurveFollowsThePulsesAndStopsOutsideTheirTheory) {
  const NoiseResult n = NoiseOf("tests/data/noise/collider_nu2_near.yaml");
  const ColliderPrediction& c = OnlyCollider(n);
  ASSERT_EQ(n.cross.size(), 1u);
  ASSERT_TRUE(c.fano && c.fano_pulses && c.pulses[0]);
  const double per_metre = c.pulses[0]->thermal_ratio / c.pulses[0]->delay_s;  // k_B T / hbar
  bool design = false, unpredicted = false, predicted = false;
  double last = 1.0;
  for (const auto& p : c.distance_curve) {
    ASSERT_TRUE(p.delay_s && p.bias_ratio);
    EXPECT_EQ(p.fano.has_value(), *p.delay_s * per_metre <= 0.3 + 1e-12) << p.distance_m;
    if (!p.fano) {
      unpredicted = true;
      continue;
    }
    predicted = true;
    EXPECT_TRUE(NearRel(*p.fano, Filling2ColliderFano(*p.bias_ratio), 1e-6)) << p.distance_m;
    EXPECT_LE(*p.fano, last);
    last = *p.fano;
    if (p.design) {
      design = true;
      EXPECT_TRUE(NearRel(*p.fano, *c.fano, 1e-12));
      ASSERT_TRUE(p.cross_snr);
      EXPECT_TRUE(NearRel(*p.cross_snr, n.cross.front().snr, 1e-12));
    }
  }
  EXPECT_TRUE(design && predicted && unpredicted);
}

// A fractional collider: its P does not depend on the distance in the braiding model; the points beyond the
// relaxation rule of thumb (3 um at fractional fillings, common practice) say so.
TEST(EdgeModes, FractionalDistanceCurveIsFlatAndMarksTheRuleOfThumb) {
  const NoiseResult n = NoiseOf("designs/02_two_source_collider.yaml");
  const ColliderPrediction& c = OnlyCollider(n);
  ASSERT_TRUE(c.fano);
  ASSERT_FALSE(c.distance_curve.empty());
  for (const auto& p : c.distance_curve) {
    ASSERT_TRUE(p.fano);
    EXPECT_EQ(*p.fano, *c.fano);
    EXPECT_EQ(p.beyond_relaxation_rule, p.distance_m > 3e-6);
    EXPECT_FALSE(p.delay_s);
    if (p.design) EXPECT_TRUE(NearRel(*p.cross_snr, n.cross.front().snr, 1e-12));
  }
}

TEST(EdgeModes, DesignKeysAreCheckedWithTheirLine) {
  const std::string base = test::kBase;
  auto load = [](const std::string& text) { return LoadDesignFromString(text, "modes.yaml"); };
  const std::string both = test::replace(
      base, "  temperature: 15 mK\n", "  temperature: 15 mK\n  charge_mode_velocity: 1e5 m/s\n  neutral_mode_velocity: 3e4 m/s\n");
  const Design d = load(both);
  ASSERT_TRUE(d.conditions.charge_mode_velocity_m_per_s && d.conditions.neutral_mode_velocity_m_per_s);
  EXPECT_EQ(*d.conditions.charge_mode_velocity_m_per_s, 1e5);
  EXPECT_EQ(*d.conditions.neutral_mode_velocity_m_per_s, 3e4);
  auto message = [&](const std::string& text) {
    try {
      load(text);
    } catch (const std::exception& e) {
      return std::string(e.what());
    }
    return std::string("loaded");
  };
  const std::string one =
      test::replace(base, "  temperature: 15 mK\n", "  temperature: 15 mK\n  charge_mode_velocity: 1e5 m/s\n");
  EXPECT_NE(message(one).find("give both `charge_mode_velocity` and `neutral_mode_velocity`"), std::string::npos)
      << message(one);
  EXPECT_NE(message(one).find("modes.yaml:"), std::string::npos);
  const std::string swapped = test::replace(
      base, "  temperature: 15 mK\n", "  temperature: 15 mK\n  charge_mode_velocity: 2e4 m/s\n  neutral_mode_velocity: 3e4 m/s\n");
  EXPECT_NE(message(swapped).find("slower than the charge mode"), std::string::npos) << message(swapped);
  const std::string unit = test::replace(
      base, "  temperature: 15 mK\n", "  temperature: 15 mK\n  charge_mode_velocity: 1e5 m\n  neutral_mode_velocity: 3e4 m/s\n");
  EXPECT_NE(message(unit).find("velocity"), std::string::npos) << message(unit);
}

}  // namespace
}  // namespace hallway
