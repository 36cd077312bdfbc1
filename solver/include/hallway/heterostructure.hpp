// hallway/heterostructure.hpp: quantities a designer derives from the wafer and the field.
//
//   D     = m* / (pi hbar^2)                 spin-degenerate 2-D density of states
//   E_F   = n_s / D,  k_F = sqrt(2 pi n_s),  lambda_F = 2 pi / k_F
//   l_mfp = hbar k_F mu / e                  transport mean free path (Drude)
//   l_B   = sqrt(hbar / (e |B|)),  hbar w_c = hbar e |B| / m*
//   B_nu  = n_s h / (e nu)                   field at which the bulk filling is nu
//   C_g   = eps_r eps_0 / d                  plate capacitance per area of a wide gate
//   V_dep = -e n_s (d / (eps_r eps_0) + 1 / (e^2 D))   wide-gate depletion voltage with the quantum
//                                            capacitance (series-capacitor form; docs/models.md,
//                                            Depletion under a wide gate)
// References for the tests: Ando, Fowler & Stern, Rev. Mod. Phys. 54, 437 (1982) (2-D density of
// states and Drude mobility; from memory) and Davies, The Physics of Low-Dimensional Semiconductors
// (Cambridge University Press, 1998) (magnetic length, cyclotron energy; from memory).
#pragma once

#include <optional>

#include "hallway/design.hpp"

namespace hallway {

struct WaferQuantities {
  double density_of_states_per_J_m2 = 0.0;
  double fermi_energy_J = 0.0;
  double fermi_wavevector_per_m = 0.0;
  double fermi_wavelength_m = 0.0;
  double fermi_velocity_m_per_s = 0.0;
  std::optional<double> mean_free_path_m;      // needs mobility
  std::optional<double> transport_lifetime_s;  // needs mobility
  double field_T = 0.0;                        // signed, as used
  double filling = 0.0;                        // n h / (e |B|) at that field
  double magnetic_length_m = 0.0;
  double cyclotron_energy_J = 0.0;
  double thermal_energy_J = 0.0;  // k_B T
  double gate_capacitance_F_per_m2 = 0.0;
  double density_per_gate_volt_per_m2 = 0.0;  // dn/dV_g = C / (e (1 + C / (e^2 D)))
  double depletion_voltage_plate_V = 0.0;     // -e n_s d / (eps_r eps_0)
  double depletion_voltage_V = 0.0;           // with the quantum capacitance
};

WaferQuantities DeriveWaferQuantities(const Heterostructure& h, double field_T, double temperature_K);

// Bare-potential split-gate pinch-off for infinitely long fingers with gap w (docs/models.md, Pinch-off:
// three figures with three meanings, "bare"):
// V_pinch = V_dep / (1 - (2/pi) atan(w / 2d)).
double BareSplitGatePinchOff_V(double depletion_voltage_V, double gap_m, double depth_m);

}  // namespace hallway
