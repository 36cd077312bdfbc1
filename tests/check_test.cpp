// Geometry and wiring checks on whole designs: each failure names the objects involved.
#include "hallway/check.hpp"
#include "hallway/electrostatics.hpp"

#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>

#include "hallway/design_loader.hpp"
#include "test_support.hpp"

namespace hallway {
namespace {

using test::kBase;
using test::replace;

CheckResult check(const std::string& text) {
  return CheckDesign(LoadDesignFromString(text, "t.yaml"));
}

const Finding* find(const CheckResult& r, const std::string& code) {
  auto it = std::find_if(r.findings.begin(), r.findings.end(), [&](const Finding& f) { return f.code == code; });
  return it == r.findings.end() ? nullptr : &*it;
}

TEST(Check, DefaultOptionsAreValid) {
  std::string why;
  EXPECT_TRUE(CheckOptions{}.IsValid(&why)) << why;
  CheckOptions bad;
  bad.wide_gap_in_depths = -1;
  EXPECT_FALSE(bad.IsValid(&why));
  EXPECT_NE(why.find("wide_gap_in_depths"), std::string::npos);
}

TEST(Check, BaseDesignPassesAndMeasuresTheGap) {
  const CheckResult r = check(kBase);
  EXPECT_TRUE(r.ok());
  EXPECT_EQ(r.error_count(), 0);
  ASSERT_EQ(r.constrictions.size(), 1u);
  // QL tip (10.5, -0.15) um and QR tip (10.5, 0.15) um: 300 nm apart.
  EXPECT_NEAR(r.constrictions[0].gap_m, 300e-9, 1e-15);
  ASSERT_TRUE(r.constrictions[0].bare_pinch_off_V);
  EXPECT_LT(*r.constrictions[0].bare_pinch_off_V, r.wafer.depletion_voltage_V);
}

TEST(Check, OverlappingGatesAreAShort) {
  const CheckResult r = check(replace(kBase, "[[10,14],[10,0.4],[10.5,0.15],[11,0.4],[11,14]]",
                                      "[[10,14],[10,-1],[10.5,-1.2],[11,-1],[11,14]]"));
  const Finding* f = find(r, "gate-short");
  ASSERT_NE(f, nullptr);
  EXPECT_EQ(f->severity, Severity::kError);
  EXPECT_NE(f->message.find("QL and QR"), std::string::npos) << f->message;
  EXPECT_EQ(f->where.line, 17);
  EXPECT_FALSE(r.ok());
}

TEST(Check, TouchingGatesAreAShort) {
  // QR's tip moved down onto QL's tip vertex (10.5, -0.15): boundaries touch at one point.
  const CheckResult r = check(replace(kBase, "[10.5,0.15]", "[10.5,-0.15]"));
  EXPECT_NE(find(r, "gate-short"), nullptr);
}

TEST(Check, ContactOffTheMesa) {
  const CheckResult r = check(replace(kBase, "[[58,-6],[70,-6],[70,6],[58,6]]", "[[62,-6],[70,-6],[70,6],[62,6]]"));
  const Finding* f = find(r, "contact-off-mesa");
  ASSERT_NE(f, nullptr);
  EXPECT_NE(f->message.find("contact E"), std::string::npos);
}

TEST(Check, ContactWhollyInsideTheMesa) {
  const CheckResult r = check(replace(kBase, "[[58,-6],[70,-6],[70,6],[58,6]]", "[[50,-6],[55,-6],[55,6],[50,6]]"));
  EXPECT_NE(find(r, "contact-inside-mesa"), nullptr);
}

TEST(Check, GateOnAnOhmicContact) {
  const CheckResult r =
      check(replace(kBase, "[[-70,-6],[-58,-6],[-58,6],[-70,6]]", "[[-70,-6],[10.2,-6],[10.2,-5],[-70,-5]]"));
  const Finding* f = find(r, "gate-on-contact");
  ASSERT_NE(f, nullptr);
  EXPECT_NE(f->message.find("QL"), std::string::npos);
  EXPECT_NE(f->message.find("W"), std::string::npos);
}

TEST(Check, GatesThatDoNotFaceEachOtherOverTheMesa) {
  // Both gates moved beyond the mesa's right end: their gap lies off the 2DEG.
  std::string t = replace(kBase, "[[10,-14],[11,-14],[11,-0.4],[10.5,-0.15],[10,-0.4]]",
                          "[[80,-14],[81,-14],[81,-0.4],[80.5,-0.15],[80,-0.4]]");
  t = replace(t, "[[10,14],[10,0.4],[10.5,0.15],[11,0.4],[11,14]]", "[[80,14],[80,0.4],[80.5,0.15],[81,0.4],[81,14]]");
  const CheckResult r = check(t);
  EXPECT_NE(find(r, "constriction-off-mesa"), nullptr);
  EXPECT_NE(find(r, "gate-off-mesa"), nullptr);
}

TEST(Check, ConstrictionBetweenAGateAndTheMesaEdge) {
  // QL removed from the constriction; QR alone against the mesa's bottom edge at y = -10 um, its
  // tip at y = 0.15 um: the gap is 10.15 um (and is wide).
  const CheckResult r = check(replace(kBase, "gates: [QL, QR]", "gates: [mesa, QR]"));
  ASSERT_EQ(r.constrictions.size(), 1u);
  EXPECT_NEAR(r.constrictions[0].gap_m, 10.15e-6, 1e-12);
  // The bare (no screening) estimate: QL, still at -0.9 V, covers the stretch between QR's tip and the
  // mesa edge, so the best path crosses between the two tips, and the saddle lies there. The estimate
  // is V where V phi_QR / V + (-0.9 V) phi_QL / V = V_dep at that point (the potential of each gate in
  // closed form, Davies, Larkin & Sukhorukov, J. Appl. Phys. 77, 4504 (1995)).
  ASSERT_TRUE(r.constrictions[0].bare_pinch_off_V);
  const Design d = LoadDesignFromString(replace(kBase, "gates: [QL, QR]", "gates: [mesa, QR]"), "base.yaml");
  const geometry::Point s = r.constrictions[0].bare_saddle;
  EXPECT_NEAR(s.x, 10.5e-6, 0.05e-6);
  EXPECT_NEAR(s.y, 0.0, 0.15e-6);
  const double qr = GatePotentialPerVolt(d.gates[1].outline, s, 95e-9);
  const double ql = GatePotentialPerVolt(d.gates[0].outline, s, 95e-9);
  EXPECT_TRUE(
      test::NearRel(*r.constrictions[0].bare_pinch_off_V, (r.wafer.depletion_voltage_V + 0.9 * ql) / qr, 1e-9));
  EXPECT_NE(find(r, "constriction-wide"), nullptr);
}

// Above the default forward-bias limit, +0.5 V (design.hpp; common practice for Schottky gates on GaAs).
TEST(Check, ForwardBiasedGateWarns) {
  const CheckResult r =
      check(replace(kBase, "voltage: -0.9 V, outline: [[10,14]", "voltage: 0.7 V, outline: [[10,14]"));
  const Finding* f = find(r, "gate-voltage-limit");
  ASSERT_NE(f, nullptr);
  EXPECT_EQ(f->severity, Severity::kWarning);
  EXPECT_NE(f->message.find("gate QR at 700 mV"), std::string::npos) << f->message;
  EXPECT_NE(f->message.find("forward-bias limit 500 mV"), std::string::npos) << f->message;
  EXPECT_EQ(f->where.key_path, "gates[1].voltage");
  EXPECT_NE(find(r, "constriction-gates-weak"), nullptr);
}

// A gate at -8 V passed the checks silently; the default limit is -2 V (design.hpp; common practice for
// surface Schottky gates on GaAs). The warning names the gate, its voltage, the limit and where the voltage
// was written (line 17, column 25 of the base design: the value after `voltage: `).
TEST(Check, GateBeyondTheNegativeLimitWarnsAtItsVoltage) {
  const CheckResult r =
      check(replace(kBase, "voltage: -0.9 V, outline: [[10,-14]", "voltage: -8 V, outline: [[10,-14]"));
  EXPECT_TRUE(r.ok());  // a warning, not an error
  const Finding* f = find(r, "gate-voltage-limit");
  ASSERT_NE(f, nullptr);
  EXPECT_EQ(f->severity, Severity::kWarning);
  for (const char* w : {"gate QL at -8 V", "gate-voltage limit -2 V", "conditions.gate_voltage_min",
                        "common practice for surface Schottky gates on GaAs", "destroy the sample", "line 17"})
    EXPECT_NE(f->message.find(w), std::string::npos) << w << " missing from " << f->message;
  EXPECT_EQ(f->where.file, "t.yaml");
  EXPECT_EQ(f->where.line, 17);
  EXPECT_EQ(f->where.column, 25);
  EXPECT_EQ(f->where.key_path, "gates[0].voltage");
  EXPECT_EQ(std::count_if(r.findings.begin(), r.findings.end(),
                          [](const Finding& x) { return x.code == "gate-voltage-limit"; }),
            1);  // QR at -0.9 V is inside the window
}

// The lab's own limit replaces the default, both ways: -1.5 V warns under a -1 V limit, -1.9 V passes the
// default and -3 V passes a -5 V limit; the limit is the inequality, so the limit itself passes.
TEST(Check, TheDesignsOwnGateLimitIsTheOneApplied) {
  auto with = [](const std::string& voltage, const std::string& limits) {
    return check(
        replace(replace(kBase, "voltage: -0.9 V, outline: [[10,-14]", "voltage: " + voltage + ", outline: [[10,-14]"),
                "filling: 2", "filling: 2" + limits));
  };
  const CheckResult own = with("-1.5 V", "\n  gate_voltage_min: -1 V");
  ASSERT_NE(find(own, "gate-voltage-limit"), nullptr);
  EXPECT_NE(find(own, "gate-voltage-limit")->message.find("limit -1 V"), std::string::npos);
  EXPECT_EQ(find(with("-1.9 V", ""), "gate-voltage-limit"), nullptr);
  EXPECT_EQ(find(with("-2 V", ""), "gate-voltage-limit"), nullptr);
  EXPECT_EQ(find(with("-3 V", "\n  gate_voltage_min: -5 V"), "gate-voltage-limit"), nullptr);
  const CheckResult forward = with("0.4 V", "\n  gate_voltage_max: 0.3 V");
  ASSERT_NE(find(forward, "gate-voltage-limit"), nullptr);
  EXPECT_NE(find(forward, "gate-voltage-limit")->message.find("forward-bias limit 300 mV"), std::string::npos);
  const Design d = LoadDesignFromString(kBase, "t.yaml");
  EXPECT_FALSE(GateLimitProblem(d, kDefaultGateVoltageMin_V));
  EXPECT_TRUE(GateLimitProblem(d, std::nextafter(kDefaultGateVoltageMin_V, -10.0)));
  EXPECT_FALSE(GateLimitProblem(d, kDefaultGateVoltageMax_V));
  EXPECT_TRUE(GateLimitProblem(d, std::nextafter(kDefaultGateVoltageMax_V, 10.0)));
}

TEST(Check, HighBiasWarnsOfBreakdown) {
  // hbar w_c at nu = 2, n = 2.3e15 m^-2 is 8.22 meV; a tenth of it is 0.82 mV.
  const CheckResult r = check(replace(kBase, "W: source 10 uV", "W: source 2 mV"));
  EXPECT_NE(find(r, "bias-high"), nullptr);
  EXPECT_EQ(find(check(kBase), "bias-high"), nullptr);
}

TEST(Check, CurrentSourceWithoutReturnPath) {
  std::string t = replace(kBase, "W: source 10 uV", "W: source 1 nA");
  t = replace(t, "E: amplifier", "E: float");
  const CheckResult r = check(t);
  EXPECT_NE(find(r, "no-return"), nullptr);
  EXPECT_FALSE(r.ok());
}

TEST(Check, ErrorsAreListedBeforeWarnings) {
  std::string t = replace(kBase, "W: source 10 uV", "W: source 2 mV");                   // warning
  t = replace(t, "[[58,-6],[70,-6],[70,6],[58,6]]", "[[62,-6],[70,-6],[70,6],[62,6]]");  // error
  const CheckResult r = check(t);
  ASSERT_GE(r.findings.size(), 2u);
  EXPECT_EQ(r.findings.front().severity, Severity::kError);
  EXPECT_EQ(r.findings.back().severity, Severity::kWarning);
}

// A femtometre gap passed check and then made `solve --fast` grow past 24 GB. Gaps narrower than
// 1 nm are errors (common practice: no lithography draws them), between any two outlines.
TEST(Check, GapBelowOneNanometreIsRefused) {
  // QR's tip 1 fm above QL's tip (10.5, -0.15) um.
  const CheckResult r = check(replace(kBase, "[10.5,0.15]", "[10.5,-0.149999999]"));
  const Finding* f = find(r, "gap-below-lithography");
  ASSERT_NE(f, nullptr);
  EXPECT_EQ(f->severity, Severity::kError);
  EXPECT_NE(f->message.find("QL and QR"), std::string::npos) << f->message;
  EXPECT_NE(f->message.find("less than 1 nm"), std::string::npos) << f->message;
  EXPECT_EQ(std::count_if(r.findings.begin(), r.findings.end(),
                          [](const Finding& x) { return x.code == "gap-below-lithography"; }),
            2);  // the gate pair and the constriction Q on it
  EXPECT_TRUE(r.constrictions.empty());
  EXPECT_EQ(find(check(kBase), "gap-below-lithography"), nullptr);
}

// An etch depletion above half the mesa's width leaves no 2DEG: the network refuses that, so check must.
TEST(Check, EtchDepletionThatErodesTheWholeMesa) {
  const std::string narrow = replace(kBase, "  outline: [[-60,-10],[60,-10],[60,10],[-60,10]]",
                                     "  outline: [[-60,-5],[60,-5],[60,5],[-60,5]]\n  etch_depletion: ETCH");
  const CheckResult r = check(replace(narrow, "ETCH", "6 um"));
  const Finding* f = find(r, "mesa-etched-away");
  ASSERT_NE(f, nullptr);
  EXPECT_EQ(f->severity, Severity::kError);
  EXPECT_NE(f->message.find("6 um"), std::string::npos) << f->message;
  EXPECT_EQ(find(check(replace(narrow, "ETCH", "4 um")), "mesa-etched-away"), nullptr);
}

// Two constrictions on one gap: an error (one gap is one beam splitter; two slits across it would be
// meaningless), whether or not the transmissions agree.
TEST(Check, TwoConstrictionsOnTheSameGapAreAnError) {
  const CheckResult r =
      check(replace(kBase, "wiring:\n", "  - {name: Q2, gates: [QR, QL], transmission: [1, 0.5]}\nwiring:\n"));
  const Finding* f = find(r, "constriction-duplicate");
  ASSERT_NE(f, nullptr);
  EXPECT_EQ(f->severity, Severity::kError);
  EXPECT_NE(f->message.find("Q and Q2"), std::string::npos) << f->message;
  EXPECT_NE(f->message.find("different transmissions"), std::string::npos) << f->message;
  EXPECT_EQ(find(check(kBase), "constriction-duplicate"), nullptr);
}

// A current source whose piece of 2DEG the depleting gates cut off from every return contact.
TEST(Check, CurrentSourceIntoAnIslandIsAWarning) {
  const std::string current = replace(kBase, "W: source 10 uV", "W: source 2 nA");
  EXPECT_EQ(find(check(current), "source-on-island"), nullptr);
  const CheckResult r =
      check(replace(current, "constrictions:\n",
                    "  - {name: CUT, voltage: -0.9 V, outline: [[-30,-14],[-29,-14],[-29,14],[-30,14]]}\n"
                    "constrictions:\n"));
  const Finding* f = find(r, "source-on-island");
  ASSERT_NE(f, nullptr);
  EXPECT_EQ(f->severity, Severity::kWarning);
  EXPECT_NE(f->message.find("current source W"), std::string::npos) << f->message;
}

}  // namespace
}  // namespace hallway
