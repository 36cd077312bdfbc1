// Derived wafer figures against handbook formulas evaluated here with the CODATA constants, each with
// its source (docs/models.md: Thomas-Fermi electrostatics, Depletion under a wide gate, Pinch-off).
#include <gsl/gsl_const_mksa.h>
#include <gtest/gtest.h>

#include <cmath>
#include <numbers>

#include "hallway/channels.hpp"
#include "hallway/constants.hpp"
#include "hallway/heterostructure.hpp"
#include "test_support.hpp"

namespace hallway {
namespace {

using test::NearRel;
constexpr double kMeV = 1e-3 * constants::kElementaryCharge_C;

Heterostructure gaas(double n, double d) {
  Heterostructure h;
  h.density_per_m2 = n;
  h.depth_m = d;
  h.permittivity = 12.9;
  h.effective_mass = 0.067;
  return h;
}

TEST(Constants, AgreeWithGslToThePrecisionOfItsOlderCodataTable) {
  // GSL 2.7's gsl_const_mksa.h carries CODATA 2006 values (Mohr, Taylor & Newell, Rev. Mod. Phys. 80,
  // 633 (2008), from memory); CODATA 2018 moved them by less than 2e-6 relative.
  EXPECT_TRUE(NearRel(constants::kElementaryCharge_C, GSL_CONST_MKSA_ELECTRON_CHARGE, 1e-7));
  EXPECT_TRUE(NearRel(constants::kPlanck_Js, GSL_CONST_MKSA_PLANCKS_CONSTANT_H, 5e-7));
  EXPECT_TRUE(NearRel(constants::kBoltzmann_J_per_K, GSL_CONST_MKSA_BOLTZMANN, 2e-6));
  EXPECT_TRUE(NearRel(constants::kVacuumPermittivity_F_per_m, GSL_CONST_MKSA_VACUUM_PERMITTIVITY, 1e-9));
  EXPECT_TRUE(NearRel(constants::kElectronMass_kg, GSL_CONST_MKSA_MASS_ELECTRON, 5e-7));
}

TEST(Constants, VonKlitzingConstantIsExactInThe2019SI) {
  // R_K = h/e^2 = 25812.80745... Ohm (CODATA 2018, Tiesinga et al., Rev. Mod. Phys. 93, 025010 (2021)).
  EXPECT_TRUE(NearRel(constants::kVonKlitzing_Ohm, 25812.80745, 1e-9));
  EXPECT_TRUE(NearRel(constants::kConductanceQuantum_S, 3.874045865e-5, 1e-9));
}

TEST(Wafer, MagneticLengthIs25point66NanometresAtOneTesla) {
  // l_B = sqrt(hbar / eB) = 25.656 nm / sqrt(B[T]) (Davies, The Physics of Low-Dimensional
  // Semiconductors, CUP 1998, from memory), evaluated here with the exact SI hbar and e.
  const double l1 = std::sqrt(1.054571817e-34 / 1.602176634e-19);
  const auto f = DeriveWaferQuantities(gaas(2.5e15, 90e-9), 1.0, 0.02);
  EXPECT_TRUE(NearRel(f.magnetic_length_m, l1, 1e-4));
  const auto f4 = DeriveWaferQuantities(gaas(2.5e15, 90e-9), -4.0, 0.02);  // sign of B does not matter
  EXPECT_TRUE(NearRel(f4.magnetic_length_m, l1 / 2.0, 1e-4));
}

TEST(Wafer, GaAsCyclotronEnergyIs1point728MilliElectronVoltPerTesla) {
  // hbar w_c = hbar e B / m* (Davies 1998, from memory) with the GaAs band-edge mass m* = 0.067 m_e
  // (Vurgaftman, Meyer & Ram-Mohan, J. Appl. Phys. 89, 5815 (2001), from memory): 1.7279 meV/T.
  const double hbar_wc = 1.054571817e-34 * 1.602176634e-19 / (0.067 * 9.1093837015e-31);
  const auto f = DeriveWaferQuantities(gaas(2.5e15, 90e-9), 1.0, 0.02);
  EXPECT_TRUE(NearRel(f.cyclotron_energy_J / kMeV, hbar_wc / kMeV, 1e-4));
}

TEST(Wafer, FermiEnergyFromTwoDimensionalDensityOfStates) {
  // D = m*/(pi hbar^2) (spin-degenerate; Ando, Fowler & Stern, Rev. Mod. Phys. 54, 437 (1982), from
  // memory), E_F = n_s / D, k_F = sqrt(2 pi n_s), lambda_F = 2 pi / k_F, evaluated here with
  // m* = 0.067 m_e: D = 1.746874e36 J^-1 m^-2 = 2.7988e10 cm^-2 meV^-1, E_F = 8.9324 meV,
  // k_F = 1.2533e8 m^-1, lambda_F = 50.13 nm at n_s = 2.5e15 m^-2.
  const double hbar = 1.054571817e-34, mass = 0.067 * 9.1093837015e-31, n = 2.5e15;
  const double dos = mass / (std::numbers::pi * hbar * hbar), kf = std::sqrt(2 * std::numbers::pi * n);
  const auto f = DeriveWaferQuantities(gaas(2.5e15, 90e-9), 1.0, 0.02);
  EXPECT_TRUE(NearRel(f.density_of_states_per_J_m2, dos, 1e-6));
  EXPECT_TRUE(NearRel(f.density_of_states_per_J_m2 * 1e-4 * kMeV, dos * 1e-4 * kMeV, 1e-4));
  EXPECT_TRUE(NearRel(f.fermi_energy_J / kMeV, n / dos / kMeV, 1e-4));
  EXPECT_TRUE(NearRel(f.fermi_wavevector_per_m, kf, 1e-4));
  EXPECT_TRUE(NearRel(f.fermi_wavelength_m, 2 * std::numbers::pi / kf, 1e-4));
  // Independent route: E_F = hbar^2 k_F^2 / 2 m* with k_F = sqrt(2 pi n) for two spin species.
  const double m = 0.067 * constants::kElectronMass_kg;
  EXPECT_TRUE(
      NearRel(f.fermi_energy_J,
              constants::kHbar_Js * constants::kHbar_Js * f.fermi_wavevector_per_m * f.fermi_wavevector_per_m / (2 * m),
              1e-12));
}

TEST(Wafer, MeanFreePathFromDrudeMobility) {
  // l = hbar k_F mu / e (Drude; Ando, Fowler & Stern 1982, from memory). For n = 3e11 cm^-2 and
  // mu = 1e6 cm^2/Vs: k_F = sqrt(2 pi 3e15) = 1.37294e8 m^-1, l = 9.0368 um (computed independently in Python).
  Heterostructure h = gaas(3e15, 90e-9);
  h.mobility_m2_per_Vs = 100.0;
  const auto f = DeriveWaferQuantities(h, 1.0, 0.02);
  ASSERT_TRUE(f.mean_free_path_m);
  EXPECT_TRUE(NearRel(
      *f.mean_free_path_m,
      constants::kHbar_Js * std::sqrt(2 * std::numbers::pi * 3e15) * 100.0 / constants::kElementaryCharge_C, 1e-12));
  EXPECT_TRUE(NearRel(*f.mean_free_path_m, 9.0368e-6, 1e-4));
  EXPECT_FALSE(DeriveWaferQuantities(gaas(3e15, 90e-9), 1.0, 0.02).mean_free_path_m);
}

TEST(Wafer, WideGateDepletionVoltagePlateAndQuantumCapacitance) {
  // Plate capacitor C = eps_r eps_0 / d and V_dep = -e n_s / C; in series with the quantum capacitance
  // e^2 D, V_dep = -e n_s (d / eps_r eps_0 + 1 / e^2 D) (Luryi, Appl. Phys. Lett. 52, 501 (1988);
  // docs/models.md, Depletion under a wide gate), evaluated here at n_s = 2.5e15 m^-2, d = 90 nm,
  // eps_r = 12.9, m* = 0.067 m_e: -0.315613 V (plate), -0.324545 V, C = 1.2691 mF/m^2.
  const double e = 1.602176634e-19, n = 2.5e15, d = 90e-9, eps = 12.9 * 8.8541878128e-12;
  const double hbar = 1.054571817e-34, dos = 0.067 * 9.1093837015e-31 / (std::numbers::pi * hbar * hbar);
  const double v_plate = -e * n * d / eps, v_dep = -e * n * (d / eps + 1 / (e * e * dos));
  const auto f = DeriveWaferQuantities(gaas(2.5e15, 90e-9), 1.0, 0.02);
  EXPECT_TRUE(NearRel(f.depletion_voltage_plate_V, v_plate, 2e-6));
  EXPECT_TRUE(NearRel(f.depletion_voltage_V, v_dep, 2e-6));
  EXPECT_TRUE(NearRel(f.gate_capacitance_F_per_m2, eps / d, 1e-4));
  // n(V_g) = n_s (1 - V_g / V_dep) is linear, so dn/dV = n_s / |V_dep| (same section).
  EXPECT_TRUE(NearRel(f.density_per_gate_volt_per_m2, n / std::abs(v_dep), 1e-5));
}

TEST(Wafer, FieldsForFillingTwoAndOneThird) {
  // nu = n_s h / (e B) (common practice): at n_s = 2.5e15 m^-2, nu = 2 at B = 5.170 T and nu = 1/3 at
  // 31.02 T (hand arithmetic, from memory).
  const double b2 = 2.5e15 * constants::kPlanck_Js / (constants::kElementaryCharge_C * 2.0);
  EXPECT_TRUE(NearRel(b2, 5.170, 1e-3));
  const auto f = DeriveWaferQuantities(gaas(2.5e15, 90e-9), b2, 0.02);
  EXPECT_TRUE(NearRel(f.filling, 2.0, 1e-12));
  EXPECT_TRUE(NearRel(2.5e15 * constants::kPlanck_Js / (constants::kElementaryCharge_C / 3.0), 31.02, 1e-3));
}

TEST(Wafer, BareSplitGatePinchOffOfLongFingers) {
  // The bare potential at the centre of a gap w between two half-plane gates at V is
  // V [1 - (2/pi) arctan(w / 2d)] (Davies, Larkin & Sukhorukov, J. Appl. Phys. 77, 4504 (1995)), so the
  // 2DEG there empties at V_dep / [1 - (2/pi) arctan(w / 2d)] (docs/models.md, Pinch-off: three figures
  // with three meanings). d = 90 nm, V_dep = -0.3156 V: w = 200 / 300 / 400 nm give about -0.6765 /
  // -0.9173 / -1.1724 V. For w -> 0 the pinch-off voltage tends to V_dep.
  for (double w : {200e-9, 300e-9, 400e-9})
    EXPECT_TRUE(NearRel(BareSplitGatePinchOff_V(-0.3156, w, 90e-9),
                        -0.3156 / (1 - 2 / std::numbers::pi * std::atan(w / (2 * 90e-9))), 2e-4))
        << w;
  EXPECT_TRUE(NearRel(BareSplitGatePinchOff_V(-0.3156, 1e-15, 90e-9), -0.3156, 1e-6));
}

TEST(Channels, DefaultTableOfTheModels) {
  // docs/models.md, Default edge channels per filling.
  const auto two = DefaultChannels(MakeFraction(2, 1));
  ASSERT_TRUE(two);
  EXPECT_EQ(two->size(), 2u);
  const auto third = DefaultChannels(MakeFraction(1, 3));
  ASSERT_TRUE(third);
  ASSERT_EQ(third->size(), 1u);
  // Laughlin 1/3: e* = e/3, theta = pi/3 (Kane & Fisher, Phys. Rev. Lett. 72, 724 (1994)).
  EXPECT_DOUBLE_EQ(third->front().charge_e, 1.0 / 3.0);
  EXPECT_DOUBLE_EQ(*third->front().exchange_pi, 1.0 / 3.0);
  const auto twofifths = DefaultChannels(MakeFraction(2, 5));
  ASSERT_TRUE(twofifths);
  ASSERT_EQ(twofifths->size(), 2u);
  EXPECT_EQ((*twofifths)[0].conductance + (*twofifths)[1].conductance, MakeFraction(2, 5));
  EXPECT_DOUBLE_EQ((*twofifths)[1].charge_e, 0.2);  // e/5 (Reznikov et al., Nature 399, 238 (1999), from memory)
  const auto fivethirds = DefaultChannels(MakeFraction(5, 3));
  ASSERT_TRUE(fivethirds);
  EXPECT_EQ((*fivethirds)[1].conductance, MakeFraction(2, 3));
  EXPECT_FALSE(DefaultChannels(MakeFraction(3, 7)));
  EXPECT_FALSE(DefaultChannels(MakeFraction(5, 2)));
}

TEST(Channels, NearestPlateauWithinTolerance) {
  const auto m = NearestPlateau(2.04, kPlateauTolerance);
  ASSERT_TRUE(m);
  EXPECT_EQ(m->filling, MakeFraction(2, 1));
  const auto t = NearestPlateau(0.34, kPlateauTolerance);
  ASSERT_TRUE(t);
  EXPECT_EQ(t->filling, MakeFraction(1, 3));
  EXPECT_FALSE(NearestPlateau(1.5, kPlateauTolerance));
  EXPECT_FALSE(NearestPlateau(-1.0, kPlateauTolerance));
}

}  // namespace
}  // namespace hallway
