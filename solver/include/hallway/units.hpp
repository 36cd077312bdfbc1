// hallway/units.hpp: physical quantities written with their units, as in design files.
//
// A quantity is "<number> <unit>", e.g. "95 nm", "2.3e11 cm^-2", "-0.8 V", "0.25 nV/rtHz",
// "2.5e6 cm^2/Vs". A unit is a product of factors, each an optional SI prefix (f p n u µ m c k M G;
// c only for the metre) on a symbol, with an optional integer power "^-2"; one "/" puts every
// factor after it into the denominator. "rtHz" and "sqrt(Hz)" are Hz^(1/2). Values are returned
// in SI; nothing else in hallway converts units except this file and the report formatting below.
#pragma once

#include <stdexcept>
#include <string>
#include <string_view>

namespace hallway::units {

// Exponents of metre, kilogram, second, ampere and kelvin, stored doubled so that half powers
// (Hz^(1/2)) are exact integers.
struct Dimension {
  int m2 = 0, kg2 = 0, s2 = 0, A2 = 0, K2 = 0;
  friend bool operator==(const Dimension&, const Dimension&) = default;
};

struct Quantity {
  double value_si = 0.0;
  Dimension dimension;
};

// What a design key expects.
enum class Kind {
  kDimensionless,
  kLength,
  kArea,
  kSheetDensity,  // m^-2
  kMobility,      // m^2 / (V s)
  kVoltage,
  kCurrent,
  kTemperature,
  kField,
  kResistance,
  kVoltageNoise,  // V / Hz^(1/2)
  kCurrentNoise,  // A / Hz^(1/2)
  kFrequency,
  kTime,
  kEnergy,
  kCapacitance,
  kVelocity,  // m / s
};
std::string ToString(Kind k);    // "length", "sheet density", ...
std::string ExampleFor(Kind k);  // "95 nm", "2.3e11 cm^-2", ...
Dimension DimensionOf(Kind k);
std::string ToString(const Dimension& d);  // "m^-2", "kg m^2 s^-3 A^-1", ...

class UnitError : public std::runtime_error {
 public:
  using std::runtime_error::runtime_error;
};

// Parses "<number> <unit>". Throws UnitError with a message that quotes the text.
Quantity ParseQuantity(std::string_view text);
// Parses and checks the dimension. A bare number is an error for every kind but kDimensionless.
double Parse(std::string_view text, Kind kind);
// Parses only a unit, e.g. "um", returning its scale to SI and dimension.
Quantity ParseUnit(std::string_view unit);

// "95 nm", "8.22 meV", "-324.5 mV": value in SI scaled by an SI prefix so that the mantissa lies
// in [1, 1000), with `digits` significant digits. `unit` is the SI symbol ("m", "eV" after the
// caller divides by e, "Ohm", ...).
std::string FormatSI(double value_si, std::string_view unit, int digits = 4);

}  // namespace hallway::units
