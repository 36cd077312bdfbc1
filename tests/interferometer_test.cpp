// Interferometers (interferometer.hpp; docs/models.md "Interferometer kinds and periods", "Coupling
// energies of a cavity", "Thermal average at a fixed loop phase").
#include <gsl/gsl_integration.h>
#include <gtest/gtest.h>

#include <cmath>
#include <fstream>
#include <nlohmann/json.hpp>
#include <numbers>
#include <sstream>

#include "hallway/constants.hpp"
#include "hallway/design_loader.hpp"
#include "hallway/geometry/exact.hpp"
#include "hallway/interferometer.hpp"
#include "test_support.hpp"

namespace hallway {
namespace {

using constants::kBoltzmann_J_per_K;
using constants::kConductanceQuantum_S;
using constants::kElementaryCharge_C;
using constants::kHbar_Js;
using constants::kPlanck_Js;
using test::NearRel;

std::string read(const std::string& rel) {
  std::ifstream in(test::SourcePath(rel));
  std::stringstream s;
  s << in.rdbuf();
  return s.str();
}

int contact(const Design& d, const std::string& name) {
  for (std::size_t i = 0; i < d.contacts.size(); ++i)
    if (d.contacts[i].name == name) return static_cast<int>(i);
  ADD_FAILURE() << name;
  return 0;
}

// The demo cavity with transmissions t1 (Q1) and t2 (Q2), its edges from the bare estimate.
struct Cavity {
  Design d;
  EdgeNetwork net;
  TransportResult tr;
};

Cavity cavity(double t1, double t2) {
  std::string text = read("designs/03_fabry_perot.yaml");
  text = test::replace(text, "{name: Q1, gates: [Q1N, Q1S], transmission: 0.5}",
                       "{name: Q1, gates: [Q1N, Q1S], transmission: " + std::to_string(t1) + "}");
  text = test::replace(text, "{name: Q2, gates: [Q2N, Q2S], transmission: 0.5}",
                       "{name: Q2, gates: [Q2N, Q2S], transmission: " + std::to_string(t2) + "}");
  Cavity c{LoadDesignFromString(text, "cavity.yaml"), {}, {}};
  c.net = TraceEdges(c.d, BuildChannelGeometry(c.d), c.d.conditions.field_T);
  c.tr = SolveTransport(c.d, c.net);
  return c;
}

// The probability that an electron from NW crosses the cavity into NE: -G(NE, NW) / (e^2/h).
double cavity_transmission(const Cavity& c, const NoiseOptions& opt) {
  const NoiseResult n = SolveNoise(c.d, c.net, c.tr, opt);
  EXPECT_LT(n.unitarity_error, 1e-12);
  EXPECT_LT(n.equilibrium_identity_error, 1e-9);
  return -n.coherent_conductance_S[static_cast<std::size_t>(contact(c.d, "NE"))]
                                  [static_cast<std::size_t>(contact(c.d, "NW"))] /
         kConductanceQuantum_S;
}

TEST(Interferometer, CavityTransmissionOfTwoConstrictionsIsTheAiryForm) {
  // T = t1 t2 / (1 + r1 r2 - 2 sqrt(r1 r2) cos theta) (Datta, Electronic Transport in Mesoscopic
  // Systems, Cambridge 1995, ch. 3), here with instantaneous edges so that no energy averaging acts.
  for (const auto& [t1, t2] : std::vector<std::pair<double, double>>{{0.5, 0.5}, {0.3, 0.8}, {0.9, 0.2}}) {
    const Cavity c = cavity(t1, t2);
    for (double theta : {0.0, 0.7, 2.0, std::numbers::pi, 4.4}) {
      NoiseOptions opt;
      opt.loop_phase_rad = theta;
      opt.piece_time_of_flight_s.assign(c.net.pieces.size(), 0.0);
      const double r = std::sqrt((1 - t1) * (1 - t2));
      const double airy = t1 * t2 / (1 + r * r - 2 * r * std::cos(theta));
      EXPECT_NEAR(cavity_transmission(c, opt), airy, 1e-12) << t1 << " " << t2 << " " << theta;
      EXPECT_NEAR(FabryPerotTransmission(t1, t2, theta), airy, 1e-15);
    }
  }
}

struct AiryAverage {
  double t1, t2, theta, tau, kt;
};

double airy_integrand(double e, void* p) {
  const auto* a = static_cast<const AiryAverage*>(p);
  const double f = 1.0 / (1.0 + std::exp(e / a->kt));
  return f * (1.0 - f) / a->kt * FabryPerotTransmission(a->t1, a->t2, a->theta + e * a->tau / kHbar_Js);
}

TEST(Interferometer, ThermalAverageOfTheCavityAgreesWithGslQuadrature) {
  // <T> = int dE (-df/dE) T_Airy(theta + E tau / hbar), the round-trip phase growing with energy at the
  // round-trip time tau (docs/models.md "Thermal average at a fixed loop phase"); GSL's adaptive
  // Gauss-Kronrod rule over +-40 k_B T is the reference.
  const Cavity c = cavity(0.4, 0.7);
  NoiseOptions probe;
  probe.loop_phase_rad = 0.0;
  probe.piece_time_of_flight_s.assign(c.net.pieces.size(), 0.0);
  const NoiseResult first = SolveNoise(c.d, c.net, c.tr, probe);
  ASSERT_EQ(first.loops.size(), 1u);
  const double kt = kBoltzmann_J_per_K * c.d.conditions.temperature_K;
  gsl_integration_workspace* w = gsl_integration_workspace_alloc(2000);
  for (double x : {0.3, 1.5, 4.0}) {  // X = pi k_B T tau / hbar
    const double tau = x * kHbar_Js / (std::numbers::pi * kt);
    NoiseOptions opt = probe;
    for (int p : first.loops[0].pieces)
      opt.piece_time_of_flight_s[static_cast<std::size_t>(p)] = tau / static_cast<double>(first.loops[0].pieces.size());
    for (double theta : {0.0, 1.1, std::numbers::pi}) {
      opt.loop_phase_rad = theta;
      AiryAverage a{0.4, 0.7, theta, tau, kt};
      gsl_function fn{&airy_integrand, &a};
      double ref = 0.0, err = 0.0;
      gsl_integration_qag(&fn, -40 * kt, 40 * kt, 0.0, 1e-11, 2000, GSL_INTEG_GAUSS61, w, &ref, &err);
      EXPECT_TRUE(NearRel(cavity_transmission(c, opt), ref, 1e-7)) << "X " << x << " theta " << theta;
    }
  }
  gsl_integration_workspace_free(w);
}

struct Harmonic {
  double tau, kt;
};

double harmonic_integrand(double e, void* p) {
  const auto* h = static_cast<const Harmonic*>(p);
  const double f = 1.0 / (1.0 + std::exp(e / h->kt));
  return f * (1.0 - f) / h->kt * std::cos(e * h->tau / kHbar_Js);
}

TEST(Interferometer, MachZehnderVisibilityIsXOverSinhX) {
  // Chung, Samuelsson & Büttiker, Phys. Rev. B 72, 125320 (2005): the first harmonic of a Mach-Zehnder
  // interferometer with arm difference dL at velocity v is damped by x / sinh x, x = 2 pi^2 k_B T dL / (h v).
  // Reference: the energy average of cos(E dL / (hbar v)) with -df/dE by GSL quadrature, and the closed form.
  gsl_integration_workspace* w = gsl_integration_workspace_alloc(2000);
  const double temperature = 0.02, v = 3e4, kt = kBoltzmann_J_per_K * temperature;
  for (double dl : {0.1e-6, 1e-6, 4e-6, 12e-6}) {
    const double x = 2 * std::numbers::pi * std::numbers::pi * kt * dl / (kPlanck_Js * v);
    Harmonic h{dl / v, kt};
    gsl_function fn{&harmonic_integrand, &h};
    double ref = 0.0, err = 0.0;
    gsl_integration_qag(&fn, -60 * kt, 60 * kt, 1e-14, 1e-11, 2000, GSL_INTEG_GAUSS61, w, &ref, &err);
    EXPECT_TRUE(NearRel(ThermalDamping(dl / v, temperature), x / std::sinh(x), 1e-12)) << dl;
    EXPECT_NEAR(ThermalDamping(dl / v, temperature), ref, 1e-9) << dl;
  }
  gsl_integration_workspace_free(w);
  EXPECT_EQ(ThermalDamping(0.0, 0.02), 1.0);
}

// A Mach-Zehnder network drawn by hand: contact S feeds splitter A; its two outputs run as arms of
// lengths l1 (over the top) and l2 (under the bottom) to merger B, around drain D; B feeds X and D.
struct HandDrawn {
  Design d;
  EdgeNetwork net;
  PathResult paths;
};

HandDrawn mach_zehnder(double v_m_per_s) {
  HandDrawn h;
  const double um = 1e-6;
  auto box = [&](double x0, double y0, double x1, double y1) {
    return geometry::Polygon{{{x0 * um, y0 * um}, {x1 * um, y0 * um}, {x1 * um, y1 * um}, {x0 * um, y1 * um}}};
  };
  h.d.conditions.temperature_K = 0.02;
  h.d.conditions.field_T = 5.0;
  h.d.conditions.filling = MakeFraction(1, 1);
  h.d.channels = {Channel{MakeFraction(1, 1), 1.0, std::nullopt, std::nullopt, ""}};
  h.d.contacts = {{"S", box(-9, -1, -7, 1), {}}, {"D", box(-0.5, -1, 0.5, 0), {}}, {"X", box(7, -1, 9, 1), {}}};
  Constriction a, b;
  a.name = "A";
  b.name = "B";
  a.transmission = b.transmission = {0.5};
  h.d.constrictions = {a, b};
  auto end = [](EdgeEnd::Kind k, int index, int face) { return EdgeEnd{k, index, face}; };
  using K = EdgeEnd::Kind;
  auto piece = [&](EdgeEnd from, EdgeEnd to, std::vector<geometry::Point> path) {
    EdgePiece p{0, from, to, 0.0, {}};
    for (auto& q : path) p.path.push_back({q.x * um, q.y * um});
    for (std::size_t i = 1; i < p.path.size(); ++i) p.length_m += geometry::distance(p.path[i - 1], p.path[i]);
    h.net.pieces.push_back(p);
  };
  piece(end(K::kContact, 0, 0), end(K::kConstriction, 0, 0), {{-7, 0}, {-2, 0}});
  piece(end(K::kConstriction, 0, 0), end(K::kConstriction, 1, 0), {{-2, 0}, {-2, 1}, {2, 1}, {2, 0}});    // 6 um
  piece(end(K::kConstriction, 0, 1), end(K::kConstriction, 1, 1), {{-2, 0}, {-2, -2}, {2, -2}, {2, 0}});  // 8 um
  piece(end(K::kConstriction, 1, 0), end(K::kContact, 2, 0), {{2, 0}, {7, 0}});
  piece(end(K::kConstriction, 1, 1), end(K::kContact, 1, 0), {{2, 0}, {0, -0.5}});
  h.net.field_T = 5.0;
  for (std::size_t p = 0; p < h.net.pieces.size(); ++p) {
    PieceMetrics m;
    m.piece = static_cast<int>(p);
    m.length_m = h.net.pieces[p].length_m;
    m.velocity_m_per_s = v_m_per_s;
    m.time_of_flight_s = m.length_m / v_m_per_s;
    h.paths.pieces.push_back(m);
  }
  return h;
}

TEST(Interferometer, MachZehnderIsFoundAroundItsDrainWithTheVisibilityOfChungSamuelssonButtiker) {
  // Two arms from the faces of splitter A to merger B around drain D: a Mach-Zehnder interferometer;
  // its first harmonic is damped by x / sinh x, x = 2 pi^2 k_B T dL / (h v) (Chung, Samuelsson &
  // Büttiker, Phys. Rev. B 72, 125320 (2005)), dL = 8 - 6 um; its flux period is h / (e A), A the
  // 4 um x 3 um rectangle the arms enclose (docs/models.md "Interferometer kinds and periods").
  const double v = 2.5e4;
  const HandDrawn h = mach_zehnder(v);
  const std::vector<Interferometer> found = FindInterferometers(h.d, h.net, h.paths);
  ASSERT_EQ(found.size(), 1u);
  const Interferometer& f = found[0];
  EXPECT_EQ(f.kind, InterferometerKind::kMachZehnder);
  EXPECT_EQ(f.constrictions, (std::vector<int>{0, 1}));
  EXPECT_EQ(f.contacts_inside, (std::vector<int>{1}));
  EXPECT_NEAR(f.length_m, 2e-6, 1e-15);
  const double x = 2 * std::numbers::pi * std::numbers::pi * kBoltzmann_J_per_K * 0.02 * 2e-6 / (kPlanck_Js * v);
  EXPECT_TRUE(NearRel(f.thermal_argument, x, 1e-12));
  EXPECT_TRUE(NearRel(f.visibility, x / std::sinh(x), 1e-12));
  EXPECT_TRUE(NearRel(f.flux_period_T, kPlanck_Js / (kElementaryCharge_C * 12e-12), 1e-9));
  EXPECT_FALSE(f.coupling.has_value());
}

geometry::Polygon disc(double radius_m, int sides) {
  geometry::Polygon p;
  for (int k = 0; k < sides; ++k) {
    const double a = 2 * std::numbers::pi * k / sides;
    p.vertices.push_back({radius_m * std::cos(a), radius_m * std::sin(a)});
  }
  return p;
}

TEST(Interferometer, CouplingRatioGivesTheRegimesOfHalperinSternNederRosenow) {
  // Halperin, Stern, Neder & Rosenow, Phys. Rev. B 83, 155440 (2011): K_IL -> 0 is the Aharonov-Bohm
  // limit, K_IL -> K_I the Coulomb-dominated one. A screening plane close to the 2DEG (small d)
  // decouples interior and edge; without screening (d much larger than the cavity) the two regions act
  // as one island.
  const geometry::Polygon cav = disc(1e-6, 64);
  const CavityCoupling screened = CavityCouplingOf(cav, 100e-9, 10e-9, 12.9, 24, 0.2, 0.8);
  const CavityCoupling bare = CavityCouplingOf(cav, 100e-9, 1e-3, 12.9, 24, 0.2, 0.8);
  EXPECT_LT(screened.ratio, 0.2);
  EXPECT_EQ(screened.regime, InterferenceRegime::kAharonovBohm);
  EXPECT_GT(bare.ratio, 0.8);
  EXPECT_EQ(bare.regime, InterferenceRegime::kCoulombDominated);
  // Positive-definite energy: K_IL^2 < K_I K_L.
  for (const CavityCoupling* c : {&screened, &bare}) EXPECT_LT(c->coupling_J * c->coupling_J, c->interior_J * c->edge_J);
  // The printed sensitivities point the same way: a closer screening plane lowers the ratio.
  const CavityCoupling mid = CavityCouplingOf(cav, 100e-9, 200e-9, 12.9, 24, 0.2, 0.8);
  EXPECT_LT(mid.ratio_half_depth, mid.ratio);
  EXPECT_GT(mid.ratio, screened.ratio);
  EXPECT_LT(mid.ratio, bare.ratio);
}

TEST(Interferometer, LargerCavityHasSmallerInteriorChargingEnergy) {
  // Halperin et al. (2011): K_I is the interior's charging energy, e^2 / C_I, and C_I grows with size;
  // an isolated disc has C = 8 eps r (Jackson, Classical Electrodynamics, 3rd ed. 1999), so K_I falls
  // as 1 / r when the screening plane is far.
  const CavityCoupling small = CavityCouplingOf(disc(0.4e-6, 64), 100e-9, 1e-3, 12.9, 24, 0.2, 0.8);
  const CavityCoupling large = CavityCouplingOf(disc(0.8e-6, 64), 100e-9, 1e-3, 12.9, 24, 0.2, 0.8);
  EXPECT_LT(large.interior_J, small.interior_J);
  EXPECT_LT(small.interior_double_size_J, small.interior_J);
  // Same island far from any screen: K_I + 2 K_IL + K_L over 4 is e^2 / C_total; the thin-disc value
  // 8 eps r of the whole island within 15 % (discretised uniform cells; common practice for such grids).
  const double eps = 12.9 * constants::kVacuumPermittivity_F_per_m;
  const double whole = (large.interior_J * large.edge_J - large.coupling_J * large.coupling_J) /
                       (large.interior_J + large.edge_J - 2 * large.coupling_J);
  EXPECT_TRUE(NearRel(whole, kElementaryCharge_C * kElementaryCharge_C / (8 * eps * 0.8e-6), 0.15));
}

TEST(Interferometer, FluxPeriodIsHOverEAOfTheLoopsExactArea) {
  // Aharonov-Bohm period h / (e A) (docs/models.md "Interferometer kinds and periods"); A is CGAL's
  // exact area of the traced loop (geometry::intersection_area of the loop with itself).
  DeviceOptions dopt;
  dopt.bare_estimate = true;
  dopt.check_declared_transmissions = false;
  const Device device(LoadDesignFromString(read("designs/03_fabry_perot.yaml"), "03.yaml"), dopt);
  ASSERT_TRUE(device.usable());
  InterferometerOptions opt;
  opt.map = false;
  opt.max_gates = 0;
  const InterferometerResult r = AnalyseInterferometers(device, dopt, opt);
  ASSERT_EQ(r.interferometers.size(), 1u);
  const Interferometer& f = r.interferometers[0];
  EXPECT_EQ(f.kind, InterferometerKind::kFabryPerot);
  EXPECT_EQ(f.constrictions.size(), 2u);
  geometry::Polygon ring;
  for (int p : f.arms) {
    const auto& path = device.edges().pieces[static_cast<std::size_t>(p)].path;
    ring.vertices.insert(ring.vertices.end(), path.begin(), path.end());
  }
  geometry::normalise(ring);
  ASSERT_TRUE(geometry::is_simple(ring));
  const double exact = geometry::intersection_area(ring, ring);
  EXPECT_TRUE(NearRel(f.flux_period_T, kPlanck_Js / (kElementaryCharge_C * exact), 1e-9));
  EXPECT_TRUE(NearRel(f.visibility, ThermalDamping(f.time_s, device.design().conditions.temperature_K), 1e-15));
}

TEST(Interferometer, ConstantPhaseLinesTiltOppositeWaysInTheTwoRegimes) {
  // Halperin, Stern, Neder & Rosenow, Phys. Rev. B 83, 155440 (2011): Aharonov-Bohm lines keep B A(V)
  // fixed, dV/dB = -A / (B dA/dV); Coulomb-dominated lines keep the interior's charge n A - nu_in B A / Phi_0
  // fixed, dV/dB = nu_in A / (Phi_0 n dA/dV); "slopes of opposite signs". The demo cavity at filling 2,
  // interfering on channel 2 with channel 1 passing both constrictions (nu_in = 1).
  std::string text = read("designs/03_fabry_perot.yaml");
  text = test::replace(text, "field: 8.3 T", "field: 4.15 T");
  text = test::replace(text, "{name: Q1, gates: [Q1N, Q1S], transmission: 0.5}", "{name: Q1, gates: [Q1N, Q1S], transmission: [1, 0.5]}");
  text = test::replace(text, "{name: Q2, gates: [Q2N, Q2S], transmission: 0.5}", "{name: Q2, gates: [Q2N, Q2S], transmission: [1, 0.5]}");
  DeviceOptions dopt;
  dopt.bare_estimate = true;
  dopt.check_declared_transmissions = false;
  const Device device(LoadDesignFromString(text, "nu2.yaml"), dopt);
  ASSERT_TRUE(device.usable());
  InterferometerOptions opt;
  opt.map = false;
  opt.max_gates = 1;  // Q1N: it moves the bare edge
  const InterferometerResult r = AnalyseInterferometers(device, dopt, opt);
  ASSERT_EQ(r.interferometers.size(), 1u);
  const Interferometer& f = r.interferometers[0];
  EXPECT_EQ(f.channel, 1);
  EXPECT_EQ(f.passing_channels, (std::vector<int>{0}));
  ASSERT_TRUE(f.gates[0].resolved);
  ASSERT_TRUE(f.ab_slope_V_per_T && f.cd_slope_V_per_T && f.cd_field_period_T);
  const double b = device.design().conditions.field_T, a = f.area_m2, da = f.gates[0].area_per_volt_m2_per_V;
  const double phi0 = kPlanck_Js / kElementaryCharge_C, n = device.design().heterostructure.density_per_m2;
  EXPECT_TRUE(NearRel(*f.ab_slope_V_per_T, -a / (b * da), 1e-12));
  EXPECT_TRUE(NearRel(*f.cd_slope_V_per_T, a / (phi0 * n * da), 1e-12));
  EXPECT_LT(*f.ab_slope_V_per_T * *f.cd_slope_V_per_T, 0.0);
  EXPECT_TRUE(NearRel(*f.cd_field_period_T, f.flux_period_T, 1e-12));  // h / (nu_in e A), nu_in = 1
  EXPECT_TRUE(NearRel(f.gates[0].period_V, phi0 / (b * std::abs(da)), 1e-12));
}

TEST(Interferometer, OptionDefaultsAreValidAndBadOnesNamed) {
  std::string why;
  EXPECT_TRUE(InterferometerOptions{}.IsValid(&why)) << why;
  InterferometerOptions bad;
  bad.gate_step_V = 0.0;
  EXPECT_FALSE(bad.IsValid(&why));
  EXPECT_NE(why.find("gate_step_V"), std::string::npos);
  for (InterferenceRegime g : {InterferenceRegime::kAharonovBohm, InterferenceRegime::kIntermediate,
                               InterferenceRegime::kCoulombDominated})
    EXPECT_EQ(InterferenceRegimeFromString(ToString(g)), g);
  for (InterferometerKind k : {InterferometerKind::kFabryPerot, InterferometerKind::kMachZehnder})
    EXPECT_EQ(InterferometerKindFromString(ToString(k)), k);
}

TEST(Interferometer, FringesCommandOnTheFabryPerotDemoAgreesWithNoisePhase) {
  const std::string dir = ::testing::TempDir();
  const std::string json_path = dir + "/fringes.json", csv_path = dir + "/fringes.csv", noise_path = dir + "/n.json";
  const test::CommandRun run = test::RunHallway("fringes '" + test::SourcePath("designs/03_fabry_perot.yaml") +
                                                "' --fast --flux-points 5 --plunger-points 3 --json '" + json_path +
                                                "' --csv '" + csv_path + "'");
  ASSERT_EQ(run.exit_code, 0) << run.output;
  EXPECT_NE(run.output.find("fabry-perot"), std::string::npos);
  std::ifstream in(json_path);
  const nlohmann::json j = nlohmann::json::parse(in);
  ASSERT_EQ(j["interferometers"].size(), 1u);
  const nlohmann::json& f = j["interferometers"][0];
  EXPECT_EQ(f["kind"], "fabry-perot");
  EXPECT_TRUE(NearRel(f["flux_period_T"].get<double>(),
                      kPlanck_Js / (kElementaryCharge_C * f["area_m2"].get<double>()), 1e-12));
  // A plunger that enlarges the loop when made more positive tilts Aharonov-Bohm lines negatively
  // (Halperin et al. 2011); nu_in = 0 here, so the Coulomb-dominated lines do not move with B.
  ASSERT_FALSE(j["map"].is_null()) << j.dump(1);
  EXPECT_LT(f["slope_ab_V_per_T"].get<double>(), 0.0);
  EXPECT_EQ(f["slope_cd_V_per_T"].get<double>(), 0.0);
  std::ifstream csv(csv_path);
  std::string line;
  int rows = -1;
  while (std::getline(csv, line)) ++rows;
  EXPECT_EQ(rows, 15);
  // The map's centre point has loop phase 0 at the design voltages: `noise --phase 0` must give the
  // same excess noise at the amplifier (one energy-averaged scattering for both).
  const test::CommandRun noise = test::RunHallway("noise '" + test::SourcePath("designs/03_fabry_perot.yaml") +
                                                  "' --fast --phase 0 --json '" + noise_path + "'");
  ASSERT_EQ(noise.exit_code, 0) << noise.output;
  std::ifstream nin(noise_path);
  const nlohmann::json n = nlohmann::json::parse(nin);
  const std::size_t e = 1;  // contact E (file order W, E, ...)
  EXPECT_GT(n["energy_points"].get<int>(), 0);
  const double centre = j["map"]["excess_noise_A2_per_Hz"][7].get<double>();
  EXPECT_TRUE(NearRel(centre, n["noise_excess_A2_per_Hz"][e][e].get<double>(), 1e-6));
}

}  // namespace
}  // namespace hallway
