// hallway/design.hpp: a device design as the solvers see it, in SI units.
//
// Produced by LoadDesign() (design_loader.hpp) from a design file, format version 1. Every object
// keeps where it was written (file, line, column, key path) so that later stages can point at it.
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "hallway/geometry/polygon.hpp"

namespace hallway {

// Where something was written in a design file. Lines and columns count from 1.
struct SourceLocation {
  std::string file;
  int line = 0;
  int column = 0;
  std::string key_path;          // e.g. "gates[1].voltage"
  std::string ToString() const;  // "file:line:column: key_path"
};

// A positive rational p/q in lowest terms: bulk filling factors and channel conductances (e^2/h).
struct Fraction {
  long num = 0;
  long den = 1;
  double value() const { return static_cast<double>(num) / static_cast<double>(den); }
  bool is_integer() const { return den == 1; }
  std::string ToString() const;  // "2", "1/3"
  friend bool operator==(const Fraction&, const Fraction&) = default;
};
Fraction MakeFraction(long num, long den);  // reduces; den > 0
Fraction operator+(Fraction a, Fraction b);

enum class SurfaceModel { kPinned, kFrozen };
std::string ToString(SurfaceModel m);
std::optional<SurfaceModel> SurfaceModelFromString(const std::string& s);

struct Heterostructure {
  double depth_m = 0.0;         // 2DEG below the surface
  double density_per_m2 = 0.0;  // ungated sheet density n_s
  std::optional<double> mobility_m2_per_Vs;
  double permittivity = 12.9;     // relative, epsilon_r
  double effective_mass = 0.067;  // m*/m_e
  SurfaceModel surface = SurfaceModel::kPinned;
};

// The default gate-voltage window, used when a design does not give its lab's own
// (`conditions.gate_voltage_min` and `gate_voltage_max`). -2 V: a conservative reverse-bias limit,
// common practice for surface Schottky gates on GaAs (leakage through the barrier and breakdown set in
// a few volts further). +0.5 V: a forward-biased Schottky gate on GaAs leaks into the 2DEG above a few
// hundred mV (common practice; the barrier is about 0.7-0.8 V).
inline constexpr double kDefaultGateVoltageMin_V = -2.0;
inline constexpr double kDefaultGateVoltageMax_V = 0.5;

struct Conditions {
  // The lab's own gate-voltage window: CheckDesign warns for every gate beyond it (code
  // "gate-voltage-limit"), `paths` suggests no voltage below the minimum, `sweep` warns for a swept
  // range that leaves it.
  double gate_voltage_min_V = kDefaultGateVoltageMin_V;
  double gate_voltage_max_V = kDefaultGateVoltageMax_V;
  double temperature_K = 0.0;
  double field_T = 0.0;             // signed, +z from the 2DEG towards the surface
  Fraction filling;                 // bulk plateau used by the solvers
  bool field_given = false;         // true: `field:` was given and `filling` is the nearest plateau
  double filling_from_field = 0.0;  // n h / (e |B|) when field_given
  // At filling 2: the velocities of the charge and neutral modes of the two coupled channels, when the
  // user knows them (`conditions.charge_mode_velocity`, `neutral_mode_velocity`, both or neither);
  // absent: hallway's capacitance model (edge_modes.hpp; docs/models.md "Charge and neutral modes at
  // filling 2").
  std::optional<double> charge_mode_velocity_m_per_s, neutral_mode_velocity_m_per_s;
};

// One edge channel at the bulk filling, outermost first.
struct Channel {
  Fraction conductance;               // in e^2/h
  double charge_e = 1.0;              // quasiparticle charge e*/e in weak backscattering
  std::optional<double> scaling;      // scaling dimension delta (collider formulas)
  std::optional<double> exchange_pi;  // exchange phase theta / pi
  std::string note;                   // caveat attached to the default (empty if none)
};

struct Mesa {
  geometry::Polygon outline;
  double etch_depletion_m = 0.0;
  bool etch_depletion_given = false;
  SourceLocation where;
};

struct Contact {
  std::string name;
  geometry::Polygon outline;
  SourceLocation where;
};

struct Gate {
  std::string name;
  double voltage_V = 0.0;
  geometry::Polygon outline;
  SourceLocation where;
  SourceLocation voltage_where;  // its `voltage:` value (a layout gate without one: `where`)
};

enum class Regime { kWeak, kStrong };
std::string ToString(Regime r);
std::optional<Regime> RegimeFromString(const std::string& s);

// The reserved name that lets a constriction be formed between a gate and the etched mesa edge.
inline constexpr const char* kMesaName = "mesa";

struct Constriction {
  std::string name;
  std::string first, second;         // gate names, or kMesaName for one of them
  // Per channel, outermost first, each in [0, 1]. With `transmission: from-gates` the loader leaves
  // NaN here and ResolveGateTransmissions (saddle_model.hpp) writes the saddle-point model's values at
  // the design voltages; Device does this before anything uses them.
  std::vector<double> transmission;
  bool transmission_from_gates = false;
  std::optional<Regime> regime;
  SourceLocation where;
};

enum class Role { kSource, kGround, kAmplifier, kFloat };
std::string ToString(Role r);
std::optional<Role> RoleFromString(const std::string& s);

// The amplifier chain at an amplifier contact (docs/models.md, Amplifier chain).
struct Amplifier {
  double load_Ohm = 0.0;
  double voltage_noise_V_per_rtHz = 0.0;
  double current_noise_A_per_rtHz = 0.0;
  double bandwidth_Hz = 0.0;
  double integration_s = 0.0;
  // Temperature of the load resistor, whose Johnson noise enters at its own temperature (a cold load
  // on a cryogenic amplifier often sits near 4.2 K, common practice); nullopt = the design temperature.
  std::optional<double> load_temperature_K;
  // An on/off measurement: the signal is the difference of two averages, each `integration_s` long,
  // with and without the bias, so the variance of the estimate doubles.
  bool reference_subtraction = false;
};

struct Wiring {
  std::string contact;
  Role role = Role::kGround;
  // Sources only: a voltage source holds its contact at bias_V; a current source (current_source true)
  // drives bias_A into the device. The other of the two stays 0.
  double bias_V = 0.0;
  double bias_A = 0.0;
  bool current_source = false;
  // The bias in its own unit (volts, or amperes for a current source): for code that scales biases.
  double bias_own_unit() const { return current_source ? bias_A : bias_V; }
  double& bias_own_unit() { return current_source ? bias_A : bias_V; }
  std::optional<Amplifier> amplifier;  // amplifier contacts: the shared block with overrides applied
  SourceLocation where;
};

struct Design {
  int format_version = 1;
  std::string path;  // the design file as given
  std::string name;
  double unit_m = 1e-6;   // the file's outline unit in metres
  std::string unit_name;  // "um"
  Heterostructure heterostructure;
  Conditions conditions;
  Mesa mesa;
  std::vector<Contact> contacts;  // file order
  std::vector<Gate> gates;        // file order
  std::vector<Constriction> constrictions;
  std::vector<Wiring> wiring;          // in the order of `contacts`
  std::optional<Amplifier> amplifier;  // the shared block, if given
  std::vector<Channel> channels;       // defaults for the filling, or the file's `channels:`
  bool channels_given = false;
  std::vector<std::string> notes;  // facts the loader decided and the user should know

  const Contact* FindContact(const std::string& n) const;
  const Gate* FindGate(const std::string& n) const;
  const Wiring* FindWiring(const std::string& contact) const;
};

}  // namespace hallway
