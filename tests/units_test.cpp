// Unit parsing: every unit a lab writes in a design file, and the errors for what is not a unit.
#include "hallway/units.hpp"

#include <gtest/gtest.h>

#include "test_support.hpp"

namespace hallway::units {
namespace {

using test::NearRel;

TEST(Units, PrefixedLengthsAreConvertedToMetres) {
  EXPECT_TRUE(NearRel(Parse("95 nm", Kind::kLength), 95e-9, 1e-15));
  EXPECT_TRUE(NearRel(Parse("1.5 um", Kind::kLength), 1.5e-6, 1e-15));
  EXPECT_TRUE(NearRel(Parse("1.5 \xC2\xB5m", Kind::kLength), 1.5e-6, 1e-15));  // micro sign
  EXPECT_TRUE(NearRel(Parse("1.5 \xCE\xBCm", Kind::kLength), 1.5e-6, 1e-15));  // Greek mu
  EXPECT_TRUE(NearRel(Parse("2 mm", Kind::kLength), 2e-3, 1e-15));
  EXPECT_TRUE(NearRel(Parse("3 cm", Kind::kLength), 3e-2, 1e-15));
}

// A prefixed value is the double nearest to the decimal the user wrote (IEEE 754 division by an exact
// power of ten is correctly rounded), so JSON and CSV print 2e-05, not 1.9999999999999998e-05.
TEST(Units, PrefixedValuesAreTheDoubleNearestTheDecimal) {
  EXPECT_EQ(Parse("20 uV", Kind::kVoltage), 2e-05);
  EXPECT_EQ(Parse("30 uV", Kind::kVoltage), 3e-05);
  EXPECT_EQ(Parse("95 nm", Kind::kLength), 95e-9);
  EXPECT_EQ(Parse("15 mK", Kind::kTemperature), 15e-3);
}

TEST(Units, SheetDensityInInverseSquareCentimetres) {
  // 1 cm^-2 = 1e4 m^-2 (definition of the centimetre).
  EXPECT_TRUE(NearRel(Parse("2.3e11 cm^-2", Kind::kSheetDensity), 2.3e15, 1e-14));
  EXPECT_TRUE(NearRel(Parse("2.5e15 m^-2", Kind::kSheetDensity), 2.5e15, 1e-14));
}

TEST(Units, MobilityInLabUnits) {
  // 1 cm^2/Vs = 1e-4 m^2/(V s).
  EXPECT_TRUE(NearRel(Parse("2.5e6 cm^2/Vs", Kind::kMobility), 250.0, 1e-14));
  EXPECT_TRUE(NearRel(Parse("2.5e6 cm^2/V s", Kind::kMobility), 250.0, 1e-14));
  EXPECT_TRUE(NearRel(Parse("250 m^2/Vs", Kind::kMobility), 250.0, 1e-14));
}

TEST(Units, ElectricalQuantities) {
  EXPECT_TRUE(NearRel(Parse("-0.8 V", Kind::kVoltage), -0.8, 1e-15));
  EXPECT_TRUE(NearRel(Parse("10 uV", Kind::kVoltage), 1e-5, 1e-15));
  EXPECT_TRUE(NearRel(Parse("2 nA", Kind::kCurrent), 2e-9, 1e-15));
  EXPECT_TRUE(NearRel(Parse("10 kOhm", Kind::kResistance), 1e4, 1e-15));
  EXPECT_TRUE(NearRel(Parse("1.2 MOhm", Kind::kResistance), 1.2e6, 1e-15));
  EXPECT_TRUE(NearRel(Parse("10 k\xCE\xA9", Kind::kResistance), 1e4, 1e-15));
  EXPECT_TRUE(NearRel(Parse("4.75 T", Kind::kField), 4.75, 1e-15));
  EXPECT_TRUE(NearRel(Parse("-250 mT", Kind::kField), -0.25, 1e-15));
  EXPECT_TRUE(NearRel(Parse("2 fF", Kind::kCapacitance), 2e-15, 1e-15));
}

TEST(Units, NoiseDensitiesWithRootHertz) {
  EXPECT_TRUE(NearRel(Parse("0.25 nV/rtHz", Kind::kVoltageNoise), 0.25e-9, 1e-15));
  EXPECT_TRUE(NearRel(Parse("0.25 nV/sqrt(Hz)", Kind::kVoltageNoise), 0.25e-9, 1e-15));
  EXPECT_TRUE(NearRel(Parse("5 fA/rtHz", Kind::kCurrentNoise), 5e-15, 1e-15));
}

TEST(Units, TemperatureTimeFrequencyEnergy) {
  EXPECT_TRUE(NearRel(Parse("15 mK", Kind::kTemperature), 0.015, 1e-15));
  EXPECT_TRUE(NearRel(Parse("20 min", Kind::kTime), 1200.0, 1e-15));
  EXPECT_TRUE(NearRel(Parse("2 h", Kind::kTime), 7200.0, 1e-15));
  EXPECT_TRUE(NearRel(Parse("3 ms", Kind::kTime), 3e-3, 1e-15));
  EXPECT_TRUE(NearRel(Parse("200 kHz", Kind::kFrequency), 2e5, 1e-15));
  // 1 eV = 1.602176634e-19 J exactly (2019 SI).
  EXPECT_TRUE(NearRel(Parse("1 meV", Kind::kEnergy), 1.602176634e-22, 1e-15));
}

TEST(Units, BareNumberWhereAUnitIsRequiredIsAnError) {
  try {
    Parse("95", Kind::kLength);
    FAIL() << "no error";
  } catch (const UnitError& e) {
    EXPECT_NE(std::string(e.what()).find("needs a unit"), std::string::npos) << e.what();
    EXPECT_NE(std::string(e.what()).find("95 nm"), std::string::npos) << e.what();
  }
}

TEST(Units, WrongDimensionNamesWhatWasExpected) {
  try {
    Parse("-0.8 mA", Kind::kVoltage);
    FAIL() << "no error";
  } catch (const UnitError& e) {
    EXPECT_NE(std::string(e.what()).find("expected a voltage"), std::string::npos) << e.what();
  }
}

TEST(Units, MalformedUnitsAreRejected) {
  EXPECT_THROW(Parse("95 nmm", Kind::kLength), UnitError);
  EXPECT_THROW(Parse("95 parsec", Kind::kLength), UnitError);
  EXPECT_THROW(Parse("2.3e11 cm-2", Kind::kSheetDensity), UnitError);
  EXPECT_THROW(Parse("2.3e11 cm^", Kind::kSheetDensity), UnitError);
  EXPECT_THROW(Parse("1 m/s/s", Kind::kLength), UnitError);
  EXPECT_THROW(Parse("nm", Kind::kLength), UnitError);
  EXPECT_THROW(Parse("", Kind::kLength), UnitError);
  EXPECT_THROW(Parse("1e400 nm", Kind::kLength), UnitError);
  EXPECT_THROW(Parse("3 cV", Kind::kVoltage), UnitError);  // centi- only for the metre
}

// The message for `text` read as `kind`, or "" when it parses.
std::string message(std::string_view text, Kind kind) {
  try {
    Parse(text, kind);
  } catch (const UnitError& e) {
    return e.what();
  }
  return "";
}

// The expected symbols are the SI spellings (BIPM, The International System of Units, 9th edition,
// 2019, tables 2 and 7): mK, mV, nm, mT, ms; rtHz and cm are this project's own accepted units.
TEST(Units, ATypoOfTheCaseGetsTheUnitOfTheExpectedKind) {
  EXPECT_NE(message("15 mk", Kind::kTemperature).find("did you mean 'mK'?"), std::string::npos)
      << message("15 mk", Kind::kTemperature);
  EXPECT_NE(message("-0.3 mv", Kind::kVoltage).find("did you mean 'mV'?"), std::string::npos)
      << message("-0.3 mv", Kind::kVoltage);
  EXPECT_NE(message("110 NM", Kind::kLength).find("did you mean 'nm'?"), std::string::npos)
      << message("110 NM", Kind::kLength);
  // The message still quotes the unit and lists the known units.
  EXPECT_NE(message("15 mk", Kind::kTemperature).find("unknown unit 'mk'"), std::string::npos);
  EXPECT_NE(message("15 mk", Kind::kTemperature).find("known:"), std::string::npos);
}

TEST(Units, ATypoOneEditAwayGetsTheUnitThatFitsTheKind) {
  EXPECT_NE(message("95 nn", Kind::kLength).find("did you mean 'nm'?"), std::string::npos)
      << message("95 nn", Kind::kLength);
  // "mt" is one case change from mT (a field) and one letter from ms (a time): the key decides.
  EXPECT_NE(message("3 mt", Kind::kField).find("did you mean 'mT'?"), std::string::npos)
      << message("3 mt", Kind::kField);
  EXPECT_NE(message("3 mt", Kind::kTime).find("did you mean 'ms'?"), std::string::npos) << message("3 mt", Kind::kTime);
  EXPECT_EQ(message("3 mt", Kind::kTime).find("mT"), std::string::npos) << message("3 mt", Kind::kTime);
}

TEST(Units, ATypoInsideACompoundUnitIsFoundInPlace) {
  EXPECT_NE(message("2.3e11 CM^-2", Kind::kSheetDensity).find("did you mean 'cm'?"), std::string::npos)
      << message("2.3e11 CM^-2", Kind::kSheetDensity);
  EXPECT_NE(message("0.25 nV/rthz", Kind::kVoltageNoise).find("did you mean 'rtHz'?"), std::string::npos)
      << message("0.25 nV/rthz", Kind::kVoltageNoise);
}

TEST(Units, NoSuggestionWhenNothingIsNear) {
  const std::string m = message("95 parsec", Kind::kLength);
  EXPECT_NE(m.find("unknown unit 'parsec'"), std::string::npos) << m;
  EXPECT_EQ(m.find("did you mean"), std::string::npos) << m;
  // Several unknown factors: one pass over the candidates, and still an error.
  EXPECT_NE(message("1 qq rr ss tt uu vv ww", Kind::kTime).find("unknown unit 'qq'"), std::string::npos);
  // Micro written u, µ (micro sign) or μ (Greek mu) is a unit, not a typo.
  EXPECT_EQ(message("1.5 um", Kind::kLength), "");
  EXPECT_EQ(message("1.5 \xC2\xB5m", Kind::kLength), "");
  EXPECT_EQ(message("1.5 \xCE\xBCm", Kind::kLength), "");
}

TEST(Units, PlainNumbersForDimensionlessKeys) {
  EXPECT_DOUBLE_EQ(Parse("12.9", Kind::kDimensionless), 12.9);
  EXPECT_THROW(Parse("12.9 V", Kind::kDimensionless), UnitError);
}

TEST(Units, FormatSIPicksAPrefix) {
  EXPECT_EQ(FormatSI(95e-9, "m"), "95 nm");
  EXPECT_EQ(FormatSI(-0.3245, "V"), "-324.5 mV");
  EXPECT_EQ(FormatSI(1e4, "Ohm"), "10 kOhm");
  EXPECT_EQ(FormatSI(0.0, "A"), "0 A");
}

// Beyond the prefixes (atto to giga) a prefix would make a wrong number ("1e-282 aV" for 1e-300 V):
// plain scientific notation with the bare unit instead.
TEST(Units, FormatSIOutsideThePrefixesIsScientificWithTheUnit) {
  EXPECT_EQ(FormatSI(1e-300, "V"), "1e-300 V");
  EXPECT_EQ(FormatSI(-2.5e-21, "A"), "-2.5e-21 A");
  EXPECT_EQ(FormatSI(9.9e12, "Ohm"), "9.9e+12 Ohm");
  EXPECT_EQ(FormatSI(1e-18, "A"), "1 aA");
  EXPECT_EQ(FormatSI(999e9, "Hz"), "999 GHz");
  EXPECT_EQ(FormatSI(95e-3, "m", 6), "95 mm");
}

}  // namespace
}  // namespace hallway::units
