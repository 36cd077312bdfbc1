// The rounding-residue rule of cli/residue.hpp: numbers that are residue are printed as 0, "never",
// "not defined" or "n/a" with the reason, times in their most readable unit, sweep grids without the
// rounding error of their arithmetic.
#include "residue.hpp"

#include <gtest/gtest.h>

#include <nlohmann/json.hpp>

namespace hallway::cli {
namespace {

TEST(Residue, ExcessNoiseAtRoundingLevelIsZeroAndItsSnrZeroAndItsTimeNever) {
  // An amplifier that sees no partitioned current: its excess noise is the difference of two equal
  // thermal noises of about 1e-28 A^2/Hz (4 k_B T G at 15 mK and 2 e^2/h, Johnson-Nyquist, from memory).
  const double scale = 1e-28;
  EXPECT_TRUE(IsResidue(3e-44, scale));
  EXPECT_EQ(WithoutResidue(-3e-44, scale), 0.0);
  EXPECT_EQ(FormatSnr(1.9e-61, 3e-44, scale), "0");
  EXPECT_EQ(FormatSignalTime(8.97e122 * 3600.0, 3e-44, scale), "never (no excess noise beyond rounding residue)");
  EXPECT_EQ(WithoutResidueOf(3e-36, 3e-44, scale), 0.0);  // its signal R^2 S_exc (R = 10 kOhm) is no signal either
  EXPECT_EQ(WithoutResidueOf(7.4e-23, 7.4e-31, scale), 7.4e-23);
  // A real signal one part in a million of the thermal noise is a result (common practice: the
  // radiometer formula resolves it given time).
  EXPECT_FALSE(IsResidue(1e-34, scale));
  EXPECT_EQ(WithoutResidue(1e-34, scale), 1e-34);
  EXPECT_EQ(FormatSnr(4.2234, 7.4e-31, scale), "4.22");
  // A zero scale (no noise at all) leaves only an exact zero as residue.
  EXPECT_TRUE(IsResidue(0.0, 0.0));
  EXPECT_FALSE(IsResidue(1e-300, 0.0));
}

TEST(Residue, MatrixScaleIsTheLargestMagnitude) {
  EXPECT_EQ(MatrixScale({{1.0, -3.0}, {2.0, 0.5}}), 3.0);
  EXPECT_EQ(MatrixScale({}), 0.0);
}

TEST(Residue, DurationsInTheirMostReadableUnit) {
  EXPECT_EQ(FormatDuration(261.4), "4.36 min");  // 261.4 s / 60 = 4.357 min
  EXPECT_EQ(FormatDuration(0.041), "41 ms");
  EXPECT_EQ(FormatDuration(12.3), "12.3 s");
  EXPECT_EQ(FormatDuration(2.81 * 3600.0), "2.81 h");
  EXPECT_EQ(FormatDuration(100 * 3600.0), "4.17 days");  // 100 h / 24 = 4.167 days
  EXPECT_EQ(FormatDuration(std::nullopt), "no signal");
  EXPECT_EQ(FormatDuration(std::nullopt, "not computed"), "not computed");
  // Beyond ten years (common practice: no averaging runs that long) and the residue case of issue 19.
  EXPECT_EQ(FormatDuration(8.97e122 * 3600.0), "never (over 10 years)");
  EXPECT_EQ(FormatDuration(11 * 365.25 * 86400.0), "never (over 10 years)");
  EXPECT_EQ(FormatDuration(9 * 365.25 * 86400.0), "9 years");
}

TEST(Residue, RatioOfAResidueDenominatorIsNotDefined) {
  // Two opposite streams of 1 pA: I+ = I1 + I2 is residue, so I-/I+ (which would print as a huge number
  // or, for equal magnitudes, |I-/I+| = 1) is no result.
  const double i1 = 1e-12, i2 = -1e-12 + 1e-28;
  EXPECT_EQ(FormatRatio(i1 - i2, i1 + i2, std::abs(i1) + std::abs(i2), "I+ = 0"), "not defined (I+ = 0)");
  EXPECT_EQ(FormatRatio(0.0, 0.0, 0.0, "no stream"), "not defined (no stream)");
  EXPECT_EQ(FormatRatio(0.5e-12, 2e-12, 2e-12, "x"), "0.25");
}

TEST(Residue, LateralDepletionZeroIsNotPrintedAsALength) {
  EXPECT_EQ(FormatLateralDepletion(0.0, false), "n/a (the gate does not deplete the 2DEG at its design voltage)");
  EXPECT_EQ(FormatLateralDepletion(0.0, true), "none beyond the gate's edge (V_g between V_dep and 2 V_dep)");
  EXPECT_EQ(FormatLateralDepletion(1e-7, true), "100 nm");
}

TEST(Residue, SweepGridValuesLoseTheRoundingOfTheirArithmetic) {
  // 20 x 1e-6 and 0 + 4 x (2e-5 / 4) in doubles: one unit off in the 17th digit.
  const double built = 20 * 1e-6;
  ASSERT_NE(built, 2e-05);
  EXPECT_EQ(RoundGridValue(built), 2e-05);
  EXPECT_EQ(nlohmann::json(RoundGridValue(built)).dump(), "2e-05");
  EXPECT_EQ(RoundGridValue(0.2 * 3), 0.6);
  EXPECT_EQ(RoundGridValue(-0.95 + 0.05 * 3), -0.8);
  EXPECT_EQ(RoundGridValue(0.0), 0.0);
  // A value a user typed with 12 digits keeps them.
  EXPECT_EQ(RoundGridValue(1.23456789012e-5), 1.23456789012e-5);
}

}  // namespace
}  // namespace hallway::cli
