// Edge network and Landauer–Büttiker transport, driven through design files (tests/data/network,
// designs/). Four-terminal resistances are compared with the closed forms of Büttiker, Phys. Rev.
// Lett. 57, 1761 (1986); Beenakker & van Houten, Solid State Physics 44, 1 (1991), Sec. IV.B; and
// Beenakker, Phys. Rev. Lett. 64, 216 (1990) (from memory), evaluated in the tests (docs/models.md,
// Edge network and Landauer–Büttiker transport).
#include <gtest/gtest.h>

#include <algorithm>
#include <fstream>
#include <map>
#include <sstream>

#include "hallway/constants.hpp"
#include "hallway/design_loader.hpp"
#include "hallway/electrostatics.hpp"
#include "hallway/network.hpp"
#include "hallway/transport.hpp"
#include "test_support.hpp"

namespace hallway {
namespace {

constexpr double kRK = constants::kVonKlitzing_Ohm;  // h/e^2
// Transmissions are exact (0, 1 or a design decimal) and the linear algebra is small: the resistances
// agree with the closed forms to rounding.
constexpr double kExact = 1e-9;

struct Solved {
  Design design;
  TransportResult plus, minus;  // at +|B| and -|B|
};

Solved solve_text(const std::string& text, const std::string& name) {
  Solved s{LoadDesignFromString(text, name), {}, {}};
  const ChannelGeometry g = BuildChannelGeometry(s.design);
  const double b = std::abs(s.design.conditions.field_T);
  s.plus = SolveTransport(s.design, TraceEdges(s.design, g, b));
  s.minus = SolveTransport(s.design, TraceEdges(s.design, g, -b));
  return s;
}

std::string read(const std::string& rel) {
  std::ifstream in(test::SourcePath(rel));
  std::stringstream ss;
  ss << in.rdbuf();
  return ss.str();
}

Solved solve_file(const std::string& rel) {
  return solve_text(read(rel), rel);
}

int index_of(const Design& d, const std::string& name) {
  for (std::size_t i = 0; i < d.contacts.size(); ++i)
    if (d.contacts[i].name == name) return static_cast<int>(i);
  ADD_FAILURE() << "no contact " << name;
  return 0;
}

// R_{mn,kl} in units of h/e^2.
double R(const Solved& s, const TransportResult& t, const char* m, const char* n, const char* k, const char* l) {
  const Design& d = s.design;
  return FourTerminalResistance(t.conductance_S, index_of(d, m), index_of(d, n), index_of(d, k), index_of(d, l)) / kRK;
}

// Hall bar with a constriction between the probe pairs: W (source end), NW, NE, E (drain), SE, SW.
// The resistances below are for electrons running W -> SW -> constriction, i.e. our B < 0
// (docs/models.md, Conventions: for B > 0 electrons circle the mesa clockwise seen from above,
// W -> NW). R_L = R(NW, NE), R_H = R(SW, NW), R_D+ = R(SW, NE), R_D- = R(SE, NW).
// The closed forms for ideal contacts, bulk filling nu, constriction passing nu_c, in h/e^2 (Beenakker &
// van Houten, Solid State Physics 44, 1 (1991), Sec. IV.B; Beenakker, Phys. Rev. Lett. 64, 216 (1990),
// from memory, for fractional channels): R_H = 1/nu, R_L = 1/nu_c - 1/nu, R_D+ = 1/nu_c,
// R_D- = 2/nu - 1/nu_c.
struct HallBarResistances {
  double longitudinal, hall, diagonal_plus, diagonal_minus;
};
HallBarResistances hall_bar(const Solved& s, const TransportResult& t) {
  return {R(s, t, "W", "E", "NW", "NE"), R(s, t, "W", "E", "SW", "NW"), R(s, t, "W", "E", "SW", "NE"),
          R(s, t, "W", "E", "SE", "NW")};
}
HallBarResistances closed_form(double nu, double nu_c) {
  return {1 / nu_c - 1 / nu, 1 / nu, 1 / nu_c, 2 / nu - 1 / nu_c};
}
void expect_closed_form(const HallBarResistances& r, double nu, double nu_c) {
  const HallBarResistances c = closed_form(nu, nu_c);
  EXPECT_NEAR(r.longitudinal, c.longitudinal, kExact);
  EXPECT_NEAR(r.hall, c.hall, kExact);
  EXPECT_NEAR(r.diagonal_plus, c.diagonal_plus, kExact);
  EXPECT_NEAR(r.diagonal_minus, c.diagonal_minus, kExact);
}

TEST(Landauer, HallBarHasQuantisedHallResistanceAndNoLongitudinalResistance) {
  // Büttiker, Phys. Rev. Lett. 57, 1761 (1986): ideal contacts, nu = 2 -> R_xy = h/(2e^2), R_xx = 0.
  const Solved s = solve_file("tests/data/network/hallbar_nu2.yaml");
  const auto r = hall_bar(s, s.minus);
  EXPECT_NEAR(r.longitudinal, 0.0, kExact);
  EXPECT_NEAR(r.hall, 0.5, kExact);
  EXPECT_NEAR(R(s, s.minus, "W", "E", "SW", "SE"), 0.0, kExact);  // bottom side
  EXPECT_NEAR(R(s, s.minus, "W", "E", "SE", "NE"), 0.5, kExact);  // Hall voltage at the right end
  // The Hall voltage changes sign with the field.
  EXPECT_NEAR(hall_bar(s, s.plus).hall, -0.5, kExact);
  // Two-terminal resistance h/(nu e^2).
  ASSERT_EQ(s.plus.sources.size(), 1u);
  EXPECT_TRUE(test::NearRel(*s.plus.sources[0].resistance_Ohm / kRK, 0.5, kExact));
}

TEST(Landauer, QpcTransmittingOneOfTwoChannels) {
  // Beenakker & van Houten 1991, Sec. IV.B: N = 2, K = 1 gives R_L = 1/K - 1/N = 0.5, R_H = 1/N = 0.5,
  // R_D+ = 1/K = 1, R_D- = 2/N - 1/K = 0 (h/e^2).
  const Solved s = solve_file("tests/data/network/qpc_nu2_k1.yaml");
  expect_closed_form(hall_bar(s, s.minus), 2, 1);
  // h/2e^2 = 12906.4 Ohm (h/e^2 = 25812.80745 Ohm, exact in the 2019 SI; Tiesinga et al., Rev. Mod.
  // Phys. 93, 025010 (2021)).
  EXPECT_NEAR(hall_bar(s, s.minus).longitudinal * kRK, 25812.80745 / 2, 0.05);
}

TEST(Landauer, QpcTransmittingTwoOfFourChannels) {
  // Beenakker & van Houten 1991, Sec. IV.B: nu = 4, K = 2 -> R_L = R_H = 0.25, R_D+ = 0.5, R_D- = 0.
  const Solved s = solve_file("tests/data/network/qpc_nu4_k2.yaml");
  expect_closed_form(hall_bar(s, s.minus), 4, 2);
}

TEST(Landauer, GateAcrossTheBarWithLowerFillingUnderIt) {
  // Haug, MacDonald, Streda & von Klitzing, Phys. Rev. Lett. 61, 2797 (1988): a gate that lowers the
  // filling under it to nu_g transmits nu_g channels, R_L = h/e^2 (1/nu_g - 1/nu). Here nu = 2 and the
  // plate-capacitor estimate gives nu_g = 2 (1 - V_g / V_dep) = 1.24 at -0.12 V: one channel passes.
  const Solved s = solve_file("tests/data/network/gated_bar_nu2.yaml");
  const auto r = hall_bar(s, s.minus);
  EXPECT_NEAR(r.longitudinal, 0.5, kExact);
  EXPECT_NEAR(r.hall, 0.5, kExact);
  EXPECT_NEAR(r.diagonal_plus, 1.0, kExact);
  const ChannelGeometry g = BuildChannelGeometry(s.design);
  ASSERT_EQ(g.channels.size(), 2u);
  EXPECT_EQ(g.channels[0].passing, std::vector<std::string>{"G"});
  EXPECT_EQ(g.channels[1].reflecting, std::vector<std::string>{"G"});
  EXPECT_NEAR(g.local_filling[0], 1.237, 2e-3);
}

TEST(Landauer, FractionalChannelsNuOneWithQpcAtOneThird) {
  // Beenakker, Phys. Rev. Lett. 64, 216 (1990) (from memory): bulk 1 (1/3 + 2/3), QPC at nu_c = 1/3 ->
  // R_L = 1/nu_c - 1/nu = 2, R_H = 1, R_D+ = 3, R_D- = -1 (h/e^2); 2 h/e^2 = 51625.6 Ohm.
  const Solved s = solve_file("tests/data/network/qpc_nu1_third.yaml");
  const auto r = hall_bar(s, s.minus);
  expect_closed_form(r, 1, 1.0 / 3);
  EXPECT_NEAR(r.longitudinal * kRK, 2 * 25812.80745, 0.1);  // h/e^2 exact in the 2019 SI (CODATA 2018)
}

TEST(Landauer, FractionalChannelsTwoFifthsWithQpcAtOneThird) {
  // Beenakker, Phys. Rev. Lett. 64, 216 (1990) (from memory): bulk 2/5 (1/3 + 1/15), QPC at 1/3 ->
  // R_L = 0.5, R_H = 2.5, R_D+ = 3, R_D- = 2 (h/e^2).
  const Solved s = solve_file("tests/data/network/qpc_nu2fifths_third.yaml");
  expect_closed_form(hall_bar(s, s.minus), 0.4, 1.0 / 3);
}

const char* kAllDesigns[] = {"designs/01_hallbar_qpc.yaml",
                             "designs/02_two_source_collider.yaml",
                             "designs/03_fabry_perot.yaml",
                             "tests/data/network/hallbar_nu2.yaml",
                             "tests/data/network/qpc_nu2_k1.yaml",
                             "tests/data/network/qpc_nu4_k2.yaml",
                             "tests/data/network/gated_bar_nu2.yaml",
                             "tests/data/network/qpc_nu1_third.yaml",
                             "tests/data/network/qpc_nu2fifths_third.yaml"};

TEST(Landauer, RowsAndColumnsOfTheConductanceMatrixSumToZero) {
  // Current conservation and gauge invariance (Büttiker, Phys. Rev. Lett. 57, 1761 (1986): rows and
  // columns of G sum to zero).
  for (const char* f : kAllDesigns) {
    const Solved s = solve_file(f);
    for (const TransportResult* t : {&s.plus, &s.minus}) {
      const Matrix& g = t->conductance_S;
      for (std::size_t i = 0; i < g.size(); ++i) {
        double row = 0.0, col = 0.0;
        for (std::size_t j = 0; j < g.size(); ++j) {
          row += g[i][j];
          col += g[j][i];
        }
        EXPECT_NEAR(row / constants::kConductanceQuantum_S, 0.0, kExact) << f << " row " << i;
        EXPECT_NEAR(col / constants::kConductanceQuantum_S, 0.0, kExact) << f << " column " << i;
      }
      double in = 0.0;
      for (double i : t->current_A) in += i;
      EXPECT_NEAR(in, 0.0, 1e-20) << f;  // Kirchhoff: the wiring plan conserves current
    }
  }
}

TEST(Onsager, FourTerminalResistancesAreReciprocalUnderFieldReversal) {
  // R_mn,kl(B) = R_kl,mn(-B): Büttiker, Phys. Rev. Lett. 57, 1761 (1986).
  for (const char* f :
       {"designs/01_hallbar_qpc.yaml", "designs/02_two_source_collider.yaml", "designs/03_fabry_perot.yaml"}) {
    const Solved s = solve_file(f);
    const int n = static_cast<int>(s.design.contacts.size());
    int checked = 0;
    for (int m = 0; m < n; ++m)
      for (int q = 0; q < n; ++q)
        for (int k = 0; k < n; ++k)
          for (int l = 0; l < n; ++l) {
            if (m == q || k == l) continue;
            const double a = FourTerminalResistance(s.plus.conductance_S, m, q, k, l);
            const double b = FourTerminalResistance(s.minus.conductance_S, k, l, m, q);
            EXPECT_NEAR(a / kRK, b / kRK, kExact) << f << " " << m << q << k << l;
            ++checked;
          }
    EXPECT_EQ(checked, n * (n - 1) * n * (n - 1));
  }
}

TEST(Landauer, ConductanceMatrixDoesNotDependOnContactNamesOrOrder) {
  // Relabelling is a permutation: G' = P G P^T.
  const std::string original = read("designs/01_hallbar_qpc.yaml");
  std::string text = original;
  const std::map<std::string, std::string> rename{{"NW", "P7"}, {"NE", "P3"}, {"SW", "Z1"}, {"SE", "A9"}};
  for (const auto& [from, to] : rename) {
    text = test::replace(text, "{name: " + from + ",", "{name: " + to + ",");
    text = test::replace(text, "  " + from + ": ", "  " + to + ": ");
  }
  // Move the contact W to the end of the contact list.
  const std::string w_line = "  - {name: W,  outline: [[-70,-6],[-58,-6],[-58,6],[-70,6]]}\n";
  text = test::replace(text, w_line, "");
  text = test::replace(text, "gates:\n", w_line + "gates:\n");
  const Solved a = solve_text(original, "original.yaml");
  const Solved b = solve_text(text, "relabelled.yaml");
  auto name_in_b = [&](const std::string& n) { return rename.count(n) ? rename.at(n) : n; };
  for (const auto& ci : a.design.contacts)
    for (const auto& cj : a.design.contacts) {
      const int i = index_of(a.design, ci.name), j = index_of(a.design, cj.name);
      const int bi = index_of(b.design, name_in_b(ci.name)), bj = index_of(b.design, name_in_b(cj.name));
      EXPECT_DOUBLE_EQ(a.plus.conductance_S[static_cast<std::size_t>(i)][static_cast<std::size_t>(j)],
                       b.plus.conductance_S[static_cast<std::size_t>(bi)][static_cast<std::size_t>(bj)])
          << ci.name << "," << cj.name;
    }
}

TEST(Landauer, SelfConsistentBoundariesGiveTheSameQuantisedResistances) {
  // The same QPC (K = 1 of N = 2) with the channel regions taken from the Thomas-Fermi density:
  // the topology, and so R_L = 0.5 h/e^2 (Beenakker & van Houten 1991), must not change.
  Solved s{LoadDesignFromString(read("tests/data/network/qpc_nu2_k1.yaml"), "qpc.yaml"), {}, {}};
  const ElectrostaticProblem p(s.design);
  const DensityMap map = p.Solve({-0.8, -0.8});
  ASSERT_TRUE(map.stats.converged);
  NetworkOptions o;
  o.density = &map;
  const ChannelGeometry g = BuildChannelGeometry(s.design, o);
  EXPECT_EQ(g.model, std::string(kSelfConsistentBoundaryModel));
  const double b = std::abs(s.design.conditions.field_T);
  s.minus = SolveTransport(s.design, TraceEdges(s.design, g, -b));
  const auto r = hall_bar(s, s.minus);
  EXPECT_NEAR(r.longitudinal, 0.5, kExact);
  EXPECT_NEAR(r.hall, 0.5, kExact);
  EXPECT_NEAR(r.diagonal_plus, 1.0, kExact);
}

TEST(Network, HallBarEdgesRunClockwiseForPositiveField) {
  // docs/models.md, Conventions: for B > 0 the electrons keep the 2DEG on their right, clockwise seen
  // from above:
  // from the left end W the edge runs up to the top-left probe NW.
  const Solved s = solve_file("tests/data/network/hallbar_nu2.yaml");
  const int w = index_of(s.design, "W"), nw = index_of(s.design, "NW"), sw = index_of(s.design, "SW");
  EXPECT_NEAR(s.plus.transmission[0][static_cast<std::size_t>(nw)][static_cast<std::size_t>(w)], 1.0, kExact);
  EXPECT_NEAR(s.minus.transmission[0][static_cast<std::size_t>(sw)][static_cast<std::size_t>(w)], 1.0, kExact);
}

TEST(Network, EdgeLengthsFollowTheMesaBoundary) {
  // Plain bar 120 x 20 um with etch depletion 120 nm: the edge leaves W (|y| <= 6 um) at y = 6 um on the
  // eroded left side x = -59.88 um, runs up 3.88 um to y = 9.88 um and along the top to NW's edge at
  // x = -33 um, 26.88 um: 30.76 um in all; the eroded corner is rounded, so allow 0.3 um.
  const Solved s = solve_file("tests/data/network/hallbar_nu2.yaml");
  const ChannelGeometry g = BuildChannelGeometry(s.design);
  const EdgeNetwork net = TraceEdges(s.design, g, 1.0);
  const int w = index_of(s.design, "W"), nw = index_of(s.design, "NW");
  bool found = false;
  for (const EdgePiece& p : net.pieces)
    if (p.channel == 0 && p.from == EdgeEnd{EdgeEnd::Kind::kContact, w, 0} &&
        p.to == EdgeEnd{EdgeEnd::Kind::kContact, nw, 0}) {
      found = true;
      EXPECT_NEAR(p.length_m, 30.76e-6, 0.3e-6);
    }
  EXPECT_TRUE(found);
}

TEST(Network, CollidersSourceBeamsReachTheCentralConstriction) {
  // In the collider demo the beam reflected at QA (1 - t = 0.05) runs to C; C's outputs reach D1 and D2.
  const Solved s = solve_file("designs/02_two_source_collider.yaml");
  const int sa = index_of(s.design, "SA"), d1 = index_of(s.design, "D1"), d2 = index_of(s.design, "D2"),
            ga = index_of(s.design, "GA");
  const auto& t = s.plus.transmission[0];
  // The 0.05 reflected at QA runs down CN's west flank to C. What C transmits (0.9) passes the gap and
  // continues on CN's side, up its east flank to D2; what C reflects (0.1) turns back on the west side,
  // down CS's west flank to D1 (docs/models.md, Conventions: a constriction's transmission).
  EXPECT_NEAR(t[static_cast<std::size_t>(d1)][static_cast<std::size_t>(sa)], 0.05 * 0.1, kExact);
  EXPECT_NEAR(t[static_cast<std::size_t>(d2)][static_cast<std::size_t>(sa)], 0.05 * 0.9, kExact);
  EXPECT_NEAR(t[static_cast<std::size_t>(ga)][static_cast<std::size_t>(sa)], 0.95, kExact);
  bool c_partitions = false;
  for (const auto& p : s.plus.partitioning)
    c_partitions |= s.design.constrictions[static_cast<std::size_t>(p.constriction)].name == "C";
  EXPECT_FALSE(c_partitions) << "equal bias on SA and SB: C's two inputs carry equal potentials";
}

TEST(Network, FabryPerotCavityIsComposedIncoherently) {
  // Two constrictions in series with an incoherent cavity: t = t1 t2 / (1 - r1 r2) (classical
  // series addition, e.g. Datta, Electronic Transport in Mesoscopic Systems, CUP 1995, from memory).
  std::string text = read("designs/03_fabry_perot.yaml");
  text = test::replace(text, "{name: Q1, gates: [Q1N, Q1S], transmission: 0.5}",
                       "{name: Q1, gates: [Q1N, Q1S], transmission: 0.3}");
  text = test::replace(text, "{name: Q2, gates: [Q2N, Q2S], transmission: 0.5}",
                       "{name: Q2, gates: [Q2N, Q2S], transmission: 0.6}");
  const Solved s = solve_text(text, "fp.yaml");
  // At B > 0 the edge from NW reaches Q1; what crosses both reaches NE.
  const int nw = index_of(s.design, "NW"), ne = index_of(s.design, "NE");
  const double t1 = 0.3, t2 = 0.6, expected = t1 * t2 / (1 - (1 - t1) * (1 - t2));
  EXPECT_NEAR(s.plus.transmission[0][static_cast<std::size_t>(ne)][static_cast<std::size_t>(nw)], expected, kExact);
}

TEST(Network, WiringWarningsForAnIdleAmplifier) {
  // With the field reversed, the Hall bar's amplifier NE sees only the cold edge from E.
  const Solved s = solve_file("designs/01_hallbar_qpc.yaml");
  auto has = [](const TransportResult& t, const std::string& code) {
    return std::any_of(t.findings.begin(), t.findings.end(), [&](const Finding& f) { return f.code == code; });
  };
  EXPECT_FALSE(has(s.plus, "amplifier-unpartitioned"));
  EXPECT_TRUE(has(s.minus, "amplifier-unpartitioned"));
}

TEST(Network, ContactThatNoEdgeTouchesIsAnErrorForASource) {
  // A gate across the whole bar, strongly negative, cuts W off from every other contact; W still
  // emits into its own edge, so instead put a depleting gate all around the contact W.
  std::string text = read("tests/data/network/hallbar_nu2.yaml");
  text = test::replace(
      text,
      "wiring:", "gates:\n  - {name: G, voltage: -2 V, outline: [[-57,-12],[-56,-12],[-56,12],[-57,12]]}\nwiring:");
  const Solved s = solve_text(text, "cut.yaml");
  // W's current returns to W: the gate line at x = -56.5 um isolates the left end.
  auto has = [](const TransportResult& t, const std::string& code) {
    return std::any_of(t.findings.begin(), t.findings.end(), [&](const Finding& f) { return f.code == code; });
  };
  EXPECT_TRUE(has(s.plus, "source-returns"));
  EXPECT_TRUE(has(s.plus, "ground-idle") || has(s.plus, "float-unset"));
  EXPECT_FALSE(s.plus.sources[0].resistance_Ohm.has_value());  // no current flows
}

}  // namespace
}  // namespace hallway
