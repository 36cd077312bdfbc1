// Derived wafer and field quantities; formulas in heterostructure.hpp.
#include "hallway/heterostructure.hpp"

#include <cmath>
#include <numbers>

#include "hallway/constants.hpp"

namespace hallway {

using namespace constants;

WaferQuantities DeriveWaferQuantities(const Heterostructure& h, double field_T, double temperature_K) {
  WaferQuantities f;
  const double m = h.effective_mass * kElectronMass_kg;
  const double n = h.density_per_m2;
  f.density_of_states_per_J_m2 = m / (std::numbers::pi * kHbar_Js * kHbar_Js);
  f.fermi_energy_J = n / f.density_of_states_per_J_m2;
  f.fermi_wavevector_per_m = std::sqrt(2.0 * std::numbers::pi * n);
  f.fermi_wavelength_m = 2.0 * std::numbers::pi / f.fermi_wavevector_per_m;
  f.fermi_velocity_m_per_s = kHbar_Js * f.fermi_wavevector_per_m / m;
  if (h.mobility_m2_per_Vs) {
    f.transport_lifetime_s = *h.mobility_m2_per_Vs * m / kElementaryCharge_C;
    f.mean_free_path_m = f.fermi_velocity_m_per_s * *f.transport_lifetime_s;
  }
  f.field_T = field_T;
  const double b = std::abs(field_T);
  f.filling = n * kPlanck_Js / (kElementaryCharge_C * b);
  f.magnetic_length_m = std::sqrt(kHbar_Js / (kElementaryCharge_C * b));
  f.cyclotron_energy_J = kHbar_Js * kElementaryCharge_C * b / m;
  f.thermal_energy_J = kBoltzmann_J_per_K * temperature_K;
  const double eps = h.permittivity * kVacuumPermittivity_F_per_m;
  f.gate_capacitance_F_per_m2 = eps / h.depth_m;
  const double e2d = kElementaryCharge_C * kElementaryCharge_C * f.density_of_states_per_J_m2;  // quantum capacitance
  f.density_per_gate_volt_per_m2 =
      f.gate_capacitance_F_per_m2 / kElementaryCharge_C / (1.0 + f.gate_capacitance_F_per_m2 / e2d);
  f.depletion_voltage_plate_V = -kElementaryCharge_C * n * h.depth_m / eps;
  f.depletion_voltage_V = -kElementaryCharge_C * n * (h.depth_m / eps + 1.0 / e2d);
  return f;
}

double BareSplitGatePinchOff_V(double depletion_voltage_V, double gap_m, double depth_m) {
  return depletion_voltage_V / (1.0 - 2.0 / std::numbers::pi * std::atan(gap_m / (2.0 * depth_m)));
}

}  // namespace hallway
