// hallway/constants.hpp: fundamental constants (CODATA 2018) and GaAs defaults.
//
// e, h and k_B are exact in the 2019 SI. Source: Tiesinga, Mohr, Newell & Taylor, "CODATA recommended
// values of the fundamental physical constants: 2018", Rev. Mod. Phys. 93, 025010 (2021) (from memory;
// the values were checked against the CODATA 2018 table).
#pragma once

#include <numbers>

namespace hallway::constants {

inline constexpr double kElementaryCharge_C = 1.602176634e-19;  // exact
inline constexpr double kPlanck_Js = 6.62607015e-34;            // exact
inline constexpr double kHbar_Js = kPlanck_Js / (2.0 * std::numbers::pi);
inline constexpr double kBoltzmann_J_per_K = 1.380649e-23;  // exact
inline constexpr double kVacuumPermittivity_F_per_m = 8.8541878128e-12;
inline constexpr double kElectronMass_kg = 9.1093837015e-31;
inline constexpr double kBohrMagneton_J_per_T = 9.2740100783e-24;
// e^2/h, the conductance of one spin-resolved channel.
inline constexpr double kConductanceQuantum_S = kElementaryCharge_C * kElementaryCharge_C / kPlanck_Js;
// h/e^2 = 25812.807... Ohm.
inline constexpr double kVonKlitzing_Ohm = kPlanck_Js / (kElementaryCharge_C * kElementaryCharge_C);

}  // namespace hallway::constants
