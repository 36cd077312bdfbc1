// The page of `hallway report`: the wiring verdict first, then signals and times (currents, noise, the
// drains' cross-correlations, signal-to-noise, the collider's P and the time to know it), then the physics
// behind them (electrostatics, pinch-off, channels, constriction models, edges, loops), each with the
// model that produced it (docs/models.md sections). Formats are those of the text command that prints
// the same number; residue is shown by the one rule of residue.hpp.
#include <fmt/core.h>

#include <algorithm>
#include <cmath>

#include "hallway/check.hpp"
#include "hallway/constants.hpp"
#include "hallway/gap.hpp"
#include "hallway/heterostructure.hpp"
#include "hallway/units.hpp"
#include "json_parts.hpp"
#include "output.hpp"
#include "report.hpp"
#include "residue.hpp"
#include "transmissions.hpp"

namespace hallway::cli::report {

using units::FormatSI;

std::string HtmlEscape(const std::string& s) {
  std::string o;
  for (char c : s) {
    switch (c) {
      case '<': o += "&lt;"; break;
      case '>': o += "&gt;"; break;
      case '&': o += "&amp;"; break;
      case '"': o += "&quot;"; break;
      default: o += c;
    }
  }
  return o;
}

namespace {

// A CSV field, quoted when it holds a comma, a quote or a line break (RFC 4180).
std::string csv_field(const std::string& x) {
  if (x.find_first_of(",\"\n") == std::string::npos) return x;
  std::string o = "\"";
  for (char c : x) o += c == '"' ? std::string("\"\"") : std::string(1, c);
  return o + "\"";
}

std::string sci(double x) {
  return fmt::format("{:.4e}", x);
}
std::string esc(const std::string& s) {
  return HtmlEscape(s);
}
std::string p(const std::string& text) {
  return "<p>" + esc(text) + "</p>\n";
}
std::string contact(const Design& d, int i) {
  return d.contacts[static_cast<std::size_t>(i)].name;
}
std::string constriction(const Design& d, int i) {
  return d.constrictions[static_cast<std::size_t>(i)].name;
}
std::string volts(const std::optional<double>& v, const char* none) {
  return v ? FormatSI(*v, "V") : std::string(none);
}
std::string ev(double joule) {
  return FormatSI(joule / constants::kElementaryCharge_C, "eV");
}
std::string field_text(double b) {
  return fmt::format("{:+.4g} T", b);
}

// "Model: what (docs/models.md "A", "B")."
std::string model(const std::string& what, std::initializer_list<const char*> sections) {
  std::string s;
  for (const char* x : sections) s += (s.empty() ? "" : ", ") + std::string("\"") + x + "\"";
  return "<p class=\"model\">Model: " + esc(what) + " (docs/models.md " + esc(s) + ").</p>\n";
}

std::string list(const std::vector<std::string>& items) {
  std::string o = "<ul>\n";
  for (const auto& x : items) o += "<li>" + esc(x) + "</li>\n";
  return o + "</ul>\n";
}

// `solve`'s matrix cells: value times scale, 0 below 1e-12 of the scale.
Table matrix_table(const Design& d, const Matrix& m, double scale, const char* spec, const std::string& corner) {
  Table t{{corner}, {}};
  for (const Contact& c : d.contacts) t.head.push_back(c.name);
  for (std::size_t i = 0; i < m.size(); ++i) {
    std::vector<std::string> row{d.contacts[i].name};
    for (double x : m[i]) {
      const double y = x * scale;
      row.push_back(fmt::format(fmt::runtime(spec), std::abs(y) < 1e-12 * std::abs(scale) ? 0.0 : y));
    }
    t.rows.push_back(row);
  }
  return t;
}

// `noise`'s matrix cells: residue against the largest total noise is 0.
Table noise_matrix_table(const Design& d, const Matrix& m, double noise_scale, const std::string& corner) {
  Table t{{corner}, {}};
  for (const Contact& c : d.contacts) t.head.push_back(c.name);
  for (std::size_t i = 0; i < m.size(); ++i) {
    std::vector<std::string> row{d.contacts[i].name};
    for (double x : m[i]) row.push_back(fmt::format("{:.3e}", WithoutResidue(x, noise_scale)));
    t.rows.push_back(row);
  }
  return t;
}

double noise_scale(const NoiseResult& n) {
  return MatrixScale(n.total_A2_per_Hz);
}

}  // namespace

std::string Table::html() const {
  std::string o = "<table><thead><tr>";
  for (const auto& h : head) o += "<th>" + esc(h) + "</th>";
  o += "</tr></thead><tbody>\n";
  for (const auto& r : rows) {
    o += "<tr>";
    for (const auto& c : r) o += "<td>" + esc(c) + "</td>";
    o += "</tr>\n";
  }
  return o + "</tbody></table>\n";
}

std::string Table::csv() const {
  std::string o;
  auto line = [&](const std::vector<std::string>& v) {
    for (std::size_t i = 0; i < v.size(); ++i) o += (i ? "," : "") + csv_field(v[i]);
    o += "\n";
  };
  line(head);
  for (const auto& r : rows) line(r);
  return o;
}

std::vector<std::optional<double>> BiasScan::Column(const std::string& column) const {
  const auto it = std::find(columns.begin(), columns.end(), column);
  if (it == columns.end()) return {};
  const auto k = static_cast<std::size_t>(it - columns.begin());
  std::vector<std::optional<double>> out;
  for (const auto& row : rows) out.push_back(row[k]);
  return out;
}

Table CardTable(const Design& d, const WiringVerdict& v) {
  Table t{
      {"contact", "role", "connect", "bias", "expected DC current into the device", "expected DC potential", "purpose"},
      {}};
  for (const CardRow& r : v.card)
    t.rows.push_back({contact(d, r.contact), ToString(r.role), r.connect,
                      r.bias_V ? FormatSI(*r.bias_V, "V") : r.bias_A ? FormatSI(*r.bias_A, "A") : std::string("-"),
                      FormatSI(r.current_A, "A"), r.voltage_V ? FormatSI(*r.voltage_V, "V") : "undetermined",
                      r.purpose});
  for (const VoltagePair& vp : v.voltage_pairs)
    t.rows.push_back({"V(" + contact(d, vp.first) + ") - V(" + contact(d, vp.second) + ")", "voltage pair",
                      "voltmeter between the two", "-", "-", FormatSI(vp.voltage_V, "V"),
                      std::string(vp.hall ? "Hall" : "longitudinal") + " voltage; " +
                          FormatSI(vp.reversed_voltage_V, "V") + " with the field reversed"});
  return t;
}

Table ConductanceTable(const ReportData& r) {
  return matrix_table(r.d, r.tp.conductance_S, 1.0 / constants::kConductanceQuantum_S, "{:.4f}", "G (e^2/h)");
}

Table ContactsTable(const ReportData& r) {
  auto v = [](const std::optional<double>& x) { return x ? FormatSI(*x, "V") : std::string("undetermined"); };
  Table t{{"contact", "role", "V at +B", "I at +B", "V at -B", "I at -B"}, {}};
  for (std::size_t i = 0; i < r.d.contacts.size(); ++i)
    t.rows.push_back({r.d.contacts[i].name, ToString(r.d.wiring[i].role), v(r.tp.voltage_V[i]),
                      FormatSI(r.tp.current_A[i], "A"), v(r.tm.voltage_V[i]), FormatSI(r.tm.current_A[i], "A")});
  return t;
}

Table NoiseTable(const ReportData& r) {
  return noise_matrix_table(r.d, r.noise.excess_A2_per_Hz, noise_scale(r.noise), "S_exc (A^2/Hz)");
}

Table AmplifierTable(const ReportData& r) {
  const double scale = noise_scale(r.noise);
  Table t{{"contact", "R sample", "R eff", "S_exc (A^2/Hz)", "signal (V^2/Hz)", "floor (V^2/Hz)", "SNR",
           fmt::format("time for {:.3g} sigma", NoiseOptions{}.target_sigmas)},
          {}};
  for (const AmplifierNoise& a : r.noise.amplifiers)
    t.rows.push_back({contact(r.d, a.contact),
                      std::isfinite(a.sample_resistance_Ohm) ? FormatSI(a.sample_resistance_Ohm, "Ohm") : "open",
                      FormatSI(a.effective_resistance_Ohm, "Ohm"),
                      sci(WithoutResidue(a.excess_current_A2_per_Hz, scale)),
                      sci(WithoutResidueOf(a.signal_V2_per_Hz, a.excess_current_A2_per_Hz, scale)),
                      sci(a.floor_V2_per_Hz), FormatSnr(a.snr, a.excess_current_A2_per_Hz, scale),
                      FormatSignalTime(a.time_for_target_s, a.excess_current_A2_per_Hz, scale)});
  return t;
}

Table DistanceTable(const ReportData& r) {
  const double scale = noise_scale(r.noise);
  Table t{{"collider", "distance_m", "design_distance", "P", "cross_excess_A2_per_Hz", "cross_snr", "delay_s",
           "delay_bias_ratio", "beyond_relaxation_rule_of_thumb", "P_not_predicted"},
          {}};
  auto num = [](const std::optional<double>& x) { return x ? fmt::format("{:.6g}", *x) : std::string(); };
  for (const ColliderPrediction& c : r.noise.colliders)
    for (const ColliderPrediction::DistancePoint& pt : c.distance_curve) {
      const double sxy = pt.cross_excess_A2_per_Hz.value_or(c.s34_A2_per_Hz.value_or(0.0));
      t.rows.push_back({constriction(r.d, c.constriction), num(pt.distance_m), pt.design ? "yes" : "no",
                        pt.fano ? num(WithoutResidueOf(*pt.fano, sxy, scale)) : "",
                        pt.cross_excess_A2_per_Hz ? num(WithoutResidue(*pt.cross_excess_A2_per_Hz, scale)) : "",
                        pt.cross_snr ? num(IsResidue(sxy, scale) ? 0.0 : *pt.cross_snr) : "", num(pt.delay_s),
                        num(pt.bias_ratio), pt.beyond_relaxation_rule ? "yes" : "no", pt.why_not});
    }
  return t;
}

namespace {

// ---- The wiring verdict ----------------------------------------------------------------------------

std::string verdict_html(const ReportData& r) {
  const Design& d = r.d;
  const WiringVerdict& v = r.verdict;
  std::string h = "<h2 id=\"wiring\">Wiring verdict and wiring card</h2>\n";
  h += model("the contact plan assessed on the edges and currents of both field signs (" +
                 EdgesLabel(r.device.geometry()) +
                 "); the verdict itself is described in docs/design-format.md \"Wiring verdict\"",
             {"Edge network and Landauer–Büttiker transport", "Anyon collider"});
  if (!v.assessed) return h + p("Not assessed: " + v.not_assessed);
  h += "<p><b>" + esc(v.summary) + "</b></p>\n";
  auto problems = [&](const std::vector<WiringProblem>& ps) {
    std::vector<std::string> items;
    for (const WiringProblem& x : ps) items.push_back(x.message + " [" + x.code + "]. What to change: " + x.fix);
    return list(items);
  };
  if (!v.problems.empty()) h += p("Problems in the design field:") + problems(v.problems);
  if (!v.reversed.problems.empty())
    h += p(ReversedFieldLabel(d, v, -d.conditions.field_T) + " (B = " + field_text(-d.conditions.field_T) + "):") +
         problems(v.reversed.problems);
  return h + p("Wiring card at the design field (the currents are those of the table below):") + CardTable(d, v).html();
}

// ---- Signals and times -----------------------------------------------------------------------------

// What `solve` prints for one field: contacts, two-terminal resistances, routes with their legs.
std::string field_html(const ReportData& r, const EdgeNetwork& net, const TransportResult& t) {
  const Design& d = r.d;
  std::string h = "<p><b>At B = " + field_text(t.field_T) + "</b>:</p>\n";
  std::vector<std::string> res;
  for (const auto& src : t.sources)
    res.push_back("source " + contact(d, src.contact) + " sees a two-terminal resistance of " +
                  (src.resistance_Ohm
                       ? FormatSI(*src.resistance_Ohm, "Ohm") +
                             fmt::format(" ({:.4f} h/e^2)", *src.resistance_Ohm / constants::kVonKlitzing_Ohm)
                       : std::string("(no current flows)")) +
                  (t.sources.size() > 1 ? " (the other sources set to zero)" : ""));
  h += list(res);
  Table rt{{"source", "channel", "reaches (fraction, via)", "legs (from -> to, length, carries)"}, {}};
  for (const Route& route : t.routes) {
    std::string reach, legs;
    for (std::size_t i = 0; i < route.reaching.size(); ++i) {
      if (route.reaching[i] <= 1e-12) continue;
      std::string via;
      for (int q : route.via[i]) via += (via.empty() ? "" : ", ") + constriction(d, q);
      reach += fmt::format("{}{} {:.1f}%{}", reach.empty() ? "" : "; ", d.contacts[i].name, 100.0 * route.reaching[i],
                           via.empty() ? "" : " (via " + via + ")");
    }
    for (const RouteLeg& leg : route.legs) {
      const EdgePiece& piece = net.pieces[static_cast<std::size_t>(leg.piece)];
      legs += fmt::format("{}{} -> {} {} carries {:.3f}", legs.empty() ? "" : "; ", DescribeEnd(d, piece.from),
                          DescribeEnd(d, piece.to), FormatSI(piece.length_m, "m"), leg.fraction);
    }
    rt.rows.push_back({contact(d, route.source), std::to_string(route.channel + 1), reach, legs});
  }
  h += "<p>Routes at B = " + field_text(t.field_T) + " (fraction of each source's current per channel):</p>\n" +
       rt.html();
  h += "<p>Conductance matrix at B = " + field_text(t.field_T) + " in siemens:</p>\n" +
       matrix_table(d, t.conductance_S, 1.0, "{:.3e}", "G (S)").html();
  return h;
}

// What changes under B -> -B (`solve`).
std::string changes_html(const ReportData& r) {
  const Design& d = r.d;
  auto v = [](const std::optional<double>& x) { return x ? FormatSI(*x, "V") : std::string("undetermined"); };
  std::vector<std::string> items;
  for (std::size_t i = 0; i < d.contacts.size(); ++i) {
    const auto &a = r.tp, &b = r.tm;
    const bool dv =
        a.voltage_V[i].has_value() != b.voltage_V[i].has_value() ||
        (a.voltage_V[i] && std::abs(*a.voltage_V[i] - *b.voltage_V[i]) > 1e-12 * (1e-6 + std::abs(*a.voltage_V[i])));
    const bool di = std::abs(a.current_A[i] - b.current_A[i]) > 1e-6 * (1e-15 + std::abs(a.current_A[i]));
    if (dv || di)
      items.push_back(d.contacts[i].name + ": voltage " + v(a.voltage_V[i]) + " -> " + v(b.voltage_V[i]) +
                      ", current " + FormatSI(a.current_A[i], "A") + " -> " + FormatSI(b.current_A[i], "A"));
  }
  if (items.empty()) items.push_back("no contact voltage or current changes");
  return "<p>What changes under B -> -B:</p>\n" + list(items);
}

std::string transport_html(const ReportData& r) {
  std::string h = "<h3 id=\"currents\">Currents and voltages</h3>\n";
  h += model(
      "Landauer–Büttiker conductances of the traced edge network, the wiring plan's contacts held at their "
      "bias, ground or zero net current",
      {"Edge network and Landauer–Büttiker transport", "Conventions"});
  h += ContactsTable(r).html();
  h += "<h3 id=\"conductance\">Conductance matrix at the design field</h3>\n" + ConductanceTable(r).html();
  h += "<h3 id=\"routes\">Routes, resistances and the reversed field</h3>\n";
  h += field_html(r, r.plus, r.tp) + field_html(r, r.minus, r.tm) + changes_html(r);
  return h;
}

std::string amplifiers_html(const ReportData& r) {
  const Design& d = r.d;
  const NoiseResult& n = r.noise;
  const double scale = noise_scale(n);
  std::string h = "<h3 id=\"amplifiers\">Amplifiers: signal-to-noise and averaging time</h3>\n";
  h += model(
      "sample impedance in parallel with the load, each resistor's Johnson noise at its own temperature, the "
      "radiometer formula for the averaging time",
      {"Amplifier chain"});
  if (n.amplifiers.empty()) return h + p("The design has no amplifier contact.");
  h += AmplifierTable(r).html();
  std::vector<std::string> notes;
  for (const AmplifierNoise& a : n.amplifiers) {
    notes.push_back(contact(d, a.contact) + ": load at " + FormatSI(a.load_temperature_K, "K") +
                    (a.load_temperature_from_design ? " (the design temperature: no amplifier.load_temperature given)"
                                                    : " (amplifier.load_temperature)") +
                    (a.reference_subtraction ? "; on/off reference subtraction: twice the variance" : ""));
    if (IsResidue(a.excess_current_A2_per_Hz, scale))
      notes.push_back(contact(d, a.contact) + ": SNR 0 and never resolved: " + std::string(kNoSignalReason) +
                      " (|S_exc| at most 1e-10 of the largest noise)");
  }
  h += list(notes);
  h += "<h3 id=\"cross\">Cross-correlations of the drains</h3>\n";
  h += model(
      "the off-diagonal excess noise of the contact matrix read through both amplifiers; with a collider it is "
      "the collider's S_34",
      {"Amplifier chain", "Anyon collider"});
  if (n.cross.empty()) return h + p("Fewer than two amplifiers: no cross-correlation is measured.");
  Table ct{{"drains", "S_exc (A^2/Hz)", "signal (V^2/Hz)", "SNR",
            fmt::format("time for {:.3g} sigma", NoiseOptions{}.target_sigmas)},
           {}};
  for (const CrossNoise& c : n.cross)
    ct.rows.push_back({contact(d, c.first) + "-" + contact(d, c.second),
                       sci(WithoutResidue(c.excess_current_A2_per_Hz, scale)),
                       sci(WithoutResidueOf(c.signal_V2_per_Hz, c.excess_current_A2_per_Hz, scale)),
                       FormatSnr(c.snr, c.excess_current_A2_per_Hz, scale),
                       FormatSignalTime(c.time_for_target_s, c.excess_current_A2_per_Hz, scale)});
  return h + ct.html();
}

std::string feed_name(const Design& d, int source, int contact_index) {
  if (source >= 0) return constriction(d, source);
  if (contact_index >= 0) return "contact " + contact(d, contact_index);
  return "?";
}

// One collider as `noise` prints it, plus I-/I+.
// An integer channel's collider: P read from the exact scattering in the contact matrix, with the
// fractionalized pulses' part at filling 2 (docs/models.md "Charge and neutral modes at filling 2").
std::vector<std::string> integer_collider_items(const ColliderPrediction& c, double scale) {
  std::vector<std::string> items;
  if (!c.not_computed.empty()) {
    items.push_back("P not computed: " + c.not_computed);
  } else {
    items.push_back(fmt::format(
        "P = {:.4g}: the drains' S_34 = {} A^2/Hz in the contact matrix over 2 e |I+| T(1 - T){}",
        WithoutResidueOf(*c.fano, *c.s34_A2_per_Hz, scale), sci(WithoutResidue(*c.s34_A2_per_Hz, scale)),
        c.fano_pulses ? fmt::format("; non-interacting exact scattering {:.4g}, fractionalized pulses {:.4g} (T = 0, "
                                    "first order in the dilution)",
                                    WithoutResidueOf(*c.fano - *c.fano_pulses,
                                                     (*c.fano - *c.fano_pulses) * *c.s34_A2_per_Hz / *c.fano, scale),
                                    *c.fano_pulses)
                      : std::string("; non-interacting electrons, exact scattering at the design temperature")));
    items.push_back(fmt::format("time to know P to +-{:.3g}: {}", NoiseOptions{}.collider_fano_uncertainty,
                                FormatDuration(c.time_for_fano_s)));
  }
  for (std::size_t i = 0; i < 2; ++i)
    if (c.pulses[i] && c.modes[i])
      items.push_back(fmt::format("input {}: {}; the two e/2 pulses arrive {} apart, e V dt/hbar = {:.3g}, k_B T "
                                  "dt/hbar = {:.3g}, (I/e) dt = {:.3g}: {}",
                                  i + 1, DescribeModes(*c.modes[i]), FormatSI(c.pulses[i]->delay_s, "s", 3),
                                  c.pulses[i]->bias_ratio, c.pulses[i]->thermal_ratio, c.pulses[i]->injection_ratio,
                                  DescribePulses(*c.pulses[i])));
  return items;
}

std::string collider_html(const Design& d, const ColliderPrediction& c, double scale) {
  std::string h = "<h4>Collider " + esc(constriction(d, c.constriction)) + "</h4>\n";
  if (c.integer) {
    std::vector<std::string> items{fmt::format(
        "integer channel {}, fed by {} and {}{}; I1 = {}, I2 = {} ({:.3g} and {:.3g} of their sources' bias), I+ = "
        "{}; collider transmission {:.3g}",
        c.channel + 1, feed_name(d, c.source_first, c.contact_first), feed_name(d, c.source_second, c.contact_second),
        c.one_beam ? "; one beam" : "", FormatSI(c.stream_first_A, "A"), FormatSI(c.stream_second_A, "A"),
        c.dilution_first, c.dilution_second, FormatSI(c.i_plus_A, "A"), c.tunnelling)};
    for (std::string& x : integer_collider_items(c, scale)) items.push_back(std::move(x));
    for (const auto& cv : c.caveats) items.push_back("caveat: " + cv);
    return h + list(items);
  }
  std::vector<std::string> items;
  items.push_back(fmt::format("channel {}, fed by {} and {}{}", c.channel + 1,
                              feed_name(d, c.source_first, c.contact_first),
                              feed_name(d, c.source_second, c.contact_second), c.one_beam ? "; one beam" : ""));
  items.push_back(fmt::format(
      "I1 = {}, I2 = {} (arriving, from the transport solution; {:.3g} and {:.3g} of their sources' bias), I+ = {}, "
      "I- = {}, I-/I+ = {}; collider tunnelling {:.3g}; e* = {:.4g} e, theta = {:.4g} pi, delta = {:.4g}",
      FormatSI(c.stream_first_A, "A"), FormatSI(c.stream_second_A, "A"), c.dilution_first, c.dilution_second,
      FormatSI(c.i_plus_A, "A"), FormatSI(c.i_minus_A, "A"),
      FormatRatio(c.i_minus_A, c.i_plus_A, std::abs(c.stream_first_A) + std::abs(c.stream_second_A),
                  "I+ = 0: no stream arrives beyond rounding"),
      c.tunnelling, c.charge_e, c.exchange_pi, c.scaling));
  if (!c.not_computed.empty()) {
    items.push_back("P not computed: " + c.not_computed);
  } else {
    items.push_back(fmt::format("P = {:.5g} at T = 0, P = {:.5g} at the design temperature (zeta = {:.3g})", *c.fano,
                                *c.fano_finite_temperature, c.rate_over_temperature));
    items.push_back(fmt::format("S_34 = {} A^2/Hz ({} form; {}); {}", sci(*c.s34_A2_per_Hz),
                                ToString(c.model_in_matrix),
                                c.in_contact_matrix ? "the value in the contact matrix" : "not in the contact matrix",
                                c.in_contact_matrix ? "S_33, S_44 and the correlations with every other contact "
                                                      "follow from current conservation"
                                                    : "the matrix uses the independent partition model"));
    items.push_back(fmt::format("time to know P to +-{:.3g}: {}", NoiseOptions{}.collider_fano_uncertainty,
                                FormatDuration(c.time_for_fano_s)));
  }
  items.push_back(fmt::format(
      "validity: dilute inputs {} (limit 0.1 of the bias, common practice), weak tunnelling {}, theta < pi/2 {}",
      c.dilute ? "yes" : "NO", c.weak_tunnelling ? "yes" : "NO", c.exchange_below_half_pi ? "yes" : "NO"));
  if (c.not_computed.empty() && c.one_beam)
    items.push_back("one beam: excess noise of the tunnelling current S_TT - S_TT(0) = " + sci(c.shape.stt_A2_per_Hz) +
                    " A^2/Hz (below equilibrium: braiding with thermally excited pairs, Lee, Han & Sim, Phys. Rev. "
                    "Lett. 123, 016803 (2019))");
  for (const auto& cv : c.caveats) items.push_back("caveat: " + cv);
  return h + list(items);
}

std::string noise_html(const ReportData& r) {
  const Design& d = r.d;
  const NoiseResult& n = r.noise;
  std::string h = "<h3 id=\"noise\">Noise at every contact</h3>\n";
  h += model("current noise of the edge network at B = " + field_text(n.field_T) +
                 ", excess = total minus zero bias at "
                 "the same temperature",
             {"Coherent noise of integer channels", "Fractional constriction", "Floating contacts", "Anyon collider"});
  h += p("Models used:") + list(ModelTexts(n));
  h += p(fmt::format("Checks: |s^+ s - 1| = {:.1e}; equilibrium noise against 2kT(G + G^T): {:.1e} relative.",
                     n.unitarity_error, n.equilibrium_identity_error));
  h += p("Excess current noise S_exc (A^2/Hz; residue below 1e-10 of the largest total noise shown as 0):") +
       NoiseTable(r).html();
  h += p("Total current noise (A^2/Hz):") +
       noise_matrix_table(d, n.total_A2_per_Hz, noise_scale(n), "S (A^2/Hz)").html();
  h += amplifiers_html(r);
  h += "<h3 id=\"colliders\">Colliders: P and the time to know it</h3>\n";
  h += model("generalised Fano factor P of Rosenow, Levkivskyi & Halperin at T = 0 and with thermal edge correlators "
             "for fractional channels; for integer channels P read from the exact scattering, with the fractionalized "
             "pulses' part at filling 2",
             {"Anyon collider", "Charge and neutral modes at filling 2", "Collider at filling 2: fractionalized pulses"});
  if (n.colliders.empty()) h += p("No constriction of this design acts as a collider.");
  for (const ColliderPrediction& c : n.colliders) h += collider_html(d, c, noise_scale(n));
  const Table distances = DistanceTable(r);
  if (!distances.rows.empty()) {
    h += "<h3 id=\"distance\">Colliders against the distance from the sources</h3>\n";
    h += model("the same layout with both source-to-collider paths scaled; P where a model puts a length into "
               "it (the fractionalized pulses at filling 2), else the same P with points beyond the relaxation rule "
               "of thumb marked; the SNR of the drains' cross-correlation with that P (distance_curve.csv)",
               {"Distance from the sources", "Charge and neutral modes at filling 2"});
    h += distances.html();
  }
  return h;
}

// ---- The physics behind them -------------------------------------------------------------------------

// `check`'s wafer and field rows.
std::string heterostructure_html(const ReportData& r) {
  const Design& d = r.d;
  const auto& f = r.device.check().wafer;
  const auto& hs = d.heterostructure;
  const double mev = 1e-3 * constants::kElementaryCharge_C;
  auto opt = [](const std::optional<double>& x, const char* unit) {
    return x ? FormatSI(*x, unit) : std::string("(needs heterostructure.mobility)");
  };
  Table t{{"quantity", "value"}, {}};
  t.rows = {
      {"2DEG depth", FormatSI(hs.depth_m, "m")},
      {"sheet density", fmt::format("{:.4g} m^-2 ({:.4g} cm^-2)", hs.density_per_m2, hs.density_per_m2 * 1e-4)},
      {"density of states (spin-degenerate)",
       fmt::format("{:.4g} cm^-2 meV^-1", f.density_of_states_per_J_m2 * 1e-4 * mev)},
      {"Fermi energy", ev(f.fermi_energy_J)},
      {"Fermi wavelength", FormatSI(f.fermi_wavelength_m, "m")},
      {"Fermi velocity", fmt::format("{:.4g} m/s", f.fermi_velocity_m_per_s)},
      {"mean free path", opt(f.mean_free_path_m, "m")},
      {"transport lifetime", opt(f.transport_lifetime_s, "s")},
      d.conditions.field_given
          ? std::vector<std::string>{"field (given)",
                                     fmt::format("{:.4g} T -> bulk filling {:.4g}, plateau nu = {}", f.field_T,
                                                 d.conditions.filling_from_field, d.conditions.filling.ToString())}
          : std::vector<std::string>{"field for the filling", fmt::format("{:.4g} T at nu = {} (n h / e nu)", f.field_T,
                                                                          d.conditions.filling.ToString())},
      {"magnetic length", FormatSI(f.magnetic_length_m, "m")},
      {"cyclotron energy", ev(f.cyclotron_energy_J)},
      {"thermal energy k_B T", ev(f.thermal_energy_J) + " at " + FormatSI(d.conditions.temperature_K, "K")},
      {"wide-gate capacitance", fmt::format("{:.4g} mF/m^2", f.gate_capacitance_F_per_m2 * 1e3)},
      {"density change per gate volt", fmt::format("{:.4g} m^-2/V", f.density_per_gate_volt_per_m2)},
      {"wide-gate depletion (plate)", FormatSI(f.depletion_voltage_plate_V, "V")},
      {"wide-gate depletion (+ quantum C)", FormatSI(f.depletion_voltage_V, "V")}};
  std::string h = "<h3 id=\"heterostructure\">Wafer and field</h3>\n";
  h += model(
      "figures of a two-dimensional electron gas in a quantizing field; the gate as a plate capacitor in series "
      "with the quantum capacitance",
      {"Wafer and field quantities", "Depletion under a wide gate"});
  return h + t.html();
}

// `check`'s wiring rows: each contact's role, a source's bias, an amplifier's chain.
Table wiring_table(const Design& d) {
  auto duration = [](double s) {  // `check`'s own: seconds, minutes, hours to 4 digits
    if (s < 60.0) return FormatSI(s, "s");
    if (s < 3600.0) return fmt::format("{:.4g} min", s / 60.0);
    return fmt::format("{:.4g} h", s / 3600.0);
  };
  Table t{{"contact", "role and settings"}, {}};
  for (const Wiring& w : d.wiring) {
    std::string x = "?";
    switch (w.role) {
      case Role::kSource:
        x = "source, " + (w.current_source ? FormatSI(w.bias_A, "A") : FormatSI(w.bias_V, "V"));
        break;
      case Role::kGround: x = "cold ground"; break;
      case Role::kFloat: x = "floating ohmic (no net current)"; break;
      case Role::kAmplifier: {
        const Amplifier& a = *w.amplifier;
        x = fmt::format("amplifier: load {}, e_n {}/rtHz, i_n {}/rtHz, {} band, {} averaging",
                        FormatSI(a.load_Ohm, "Ohm"), FormatSI(a.voltage_noise_V_per_rtHz, "V"),
                        FormatSI(a.current_noise_A_per_rtHz, "A"), FormatSI(a.bandwidth_Hz, "Hz"),
                        duration(a.integration_s));
      }
    }
    t.rows.push_back({w.contact, x});
  }
  return t;
}

// `check`'s layout, channels and constrictions, and the checks' own count.
std::string checks_html(const ReportData& r) {
  const Design& d = r.d;
  const CheckResult& check = r.device.check();
  std::string h = "<h3 id=\"checks\">Layout and geometry checks</h3>\n";
  h +=
      p(fmt::format("The checks found {} error(s) and {} warning(s); they are listed with every other warning of this "
                    "report under Warnings.",
                    check.error_count(), check.warning_count()));
  Table ch{{"channel", "conductance, charge, statistics"}, {}};
  for (std::size_t k = 0; k < d.channels.size(); ++k) {
    const Channel& c = d.channels[k];
    std::string s = fmt::format("{} e^2/h, e* = {:.4g} e", c.conductance.ToString(), c.charge_e);
    if (c.exchange_pi) s += fmt::format(", theta = {:.4g} pi", *c.exchange_pi);
    if (c.scaling) s += fmt::format(", delta = {:.4g}", *c.scaling);
    if (!c.note.empty()) s += " [" + c.note + "]";
    ch.rows.push_back({std::to_string(k + 1), s});
  }
  h += model(std::string("edge channels at nu = ") + d.conditions.filling.ToString() +
                 (d.channels_given ? " from the design's channels" : ", hallway defaults"),
             {"Default edge channels per filling"});
  h += ch.html();
  Table gt{{"gate", "voltage", "area"}, {}};
  for (const Gate& g : d.gates)
    gt.rows.push_back(
        {g.name, FormatSI(g.voltage_V, "V"), fmt::format("{:.4g} um^2", geometry::area(g.outline) * 1e12)});
  const auto bb = geometry::bounding_box(d.mesa.outline);
  h += p(fmt::format("Mesa {} x {}, area {:.4g} um^2, etch depletion {}.", FormatSI(bb.width(), "m"),
                     FormatSI(bb.height(), "m"), geometry::area(d.mesa.outline) * 1e12,
                     FormatSI(d.mesa.etch_depletion_m, "m"))) +
       gt.html();
  h += p("Wiring (as `hallway check` lists it):") + wiring_table(d).html();
  Table kt{{"constriction", "sides", "gap", "pinch-off, bare (no screening)", "transmission"}, {}};
  for (const ConstrictionGap& g : check.constrictions) {
    std::string t;
    for (const Constriction& k : d.constrictions)
      if (k.name == g.name)
        for (double x : k.transmission) t += fmt::format("{}{:.3g}", t.empty() ? "" : ", ", x);
    kt.rows.push_back({g.name, g.first + " | " + g.second, FormatSI(g.gap_m, "m"),
                       g.bare_pinch_off_V ? FormatSI(*g.bare_pinch_off_V, "V")
                                          : "n/a (the gate potential at the saddle does not grow)",
                       "[" + t + "]"});
  }
  if (!kt.rows.empty())
    h += model(
             "gap: the shortest distance between the two sides; bare pinch-off: the gates' own potential at the "
             "bare saddle reaches V_dep",
             {"Saddle of a constriction", "Pinch-off: three figures with three meanings"}) +
         kt.html();
  return h;
}

// The electrostatic solve of the device and `map`'s search statistics.
std::string electrostatics_html(const ReportData& r) {
  std::string h = "<h3 id=\"electrostatics\">Electrostatics</h3>\n";
  h += model(
      "self-consistent Thomas-Fermi density under a pinned surface with the image kernel and the quantum "
      "capacitance, or under --fast the bare-potential estimate",
      {"Thomas-Fermi electrostatics", "Bare gate potential", "Windows embedded in the outer 2DEG"});
  const auto a = r.es_note.find_first_not_of(" \n"), b = r.es_note.find_last_not_of(" \n");
  h += p("Edges, transport, noise and paths: " +
         (a == std::string::npos ? std::string() : r.es_note.substr(a, b - a + 1)));
  if (!r.map)
    return h + p("Pinch-off search (`hallway map`): not run under --fast; run the report without --fast or "
                 "`hallway map` for the self-consistent pinch-off voltages.");
  const MapResult& m = *r.map;
  const auto& s = m.map.stats;
  h +=
      p(fmt::format("Pinch-off search (`hallway map`): whole mesa on {} x {} cells of {}, {} operator applications, "
                    "residual {:.2e} (n/n_s), {}; {} solves in all, {} operator applications, {:.3g} s.",
                    m.map.nx, m.map.ny, FormatSI(m.map.cell_m, "m"), s.operator_applications, s.residual,
                    s.converged ? "converged" : "NOT converged", m.solves, m.operator_applications, m.seconds));
  return h + p("At the mesa's sharp corners this model's density grows without bound as the cells shrink; the "
               "filling there is a property of the model, not a prediction.");
}

// `map`'s gates and constrictions.
std::string map_html(const ReportData& r) {
  std::string h = "<h3 id=\"pinch-off\">Depletion and pinch-off voltages</h3>\n";
  if (!r.map) return h + p("Not computed under --fast (the search needs the self-consistent density).");
  const MapResult& m = *r.map;
  h += model(
      "each gate alone swept to empty the 2DEG under it; each constriction's two sides swept together, the "
      "other gates at their design voltages, bisection to 1 mV on the density at the saddle",
      {"Depletion under a wide gate", "Pinch-off: three figures with three meanings", "Saddle of a constriction",
       "Edge velocity and lengths"});
  Table gt{{"gate", "wide V_dep", "V_dep (its size)", "lateral depletion", "edge drift"}, {}};
  for (const GateMap& g : m.gates)
    gt.rows.push_back(
        {g.name, FormatSI(g.wide_depletion_V, "V"), volts(g.depletion_V, "below limit"),
         g.lateral_depletion_m ? FormatSI(*g.lateral_depletion_m, "m") : std::string("n/a"),
         g.drift_velocity_m_per_s ? fmt::format("{:.3g} m/s", *g.drift_velocity_m_per_s) : std::string("n/a")});
  h += gt.html();
  if (m.constrictions.empty()) return h;
  Table kt{{"constriction", "gap", "saddle density", "pinch-off (n = 0)", "bare (no screening)"}, {}};
  for (const ConstrictionMap& c : m.constrictions)
    kt.rows.push_back({c.name, FormatSI(c.gap_m, "m"), fmt::format("{:.4g} m^-2", c.saddle_density_per_m2),
                       volts(c.pinch_off_V, "below limit"), volts(c.bare_pinch_off_V, "n/a")});
  h += kt.html();
  return h + p("pinch-off (n = 0): the self-consistent density at the saddle falls below 1e-3 n_s. bare (no "
               "screening): the gates' own potential at the saddle reaches the wide-gate depletion voltage. The "
               "constriction models below add a third figure, the voltage at which the saddle-point model gives the "
               "design transmission. These voltages are estimates: approach them slowly; a gate driven past its "
               "leakage or breakdown onset can destroy the sample.");
}

// `solve`'s "Where the channels run".
std::string channels_html(const ReportData& r) {
  const Design& d = r.d;
  const ChannelGeometry& g = r.device.geometry();
  std::string h = "<h3 id=\"channels\">Where the channels run</h3>\n";
  h += model(
           "the region of each channel bounded where the local filling crosses the middle of its step, or by the "
           "bare lateral depletion under --fast",
           {"Channel boundaries and slits"}) +
       p("Edge boundaries: " + g.model);
  Table ct{{"channel", "conductance (e^2/h)", "reflected by", "passes under", "area"}, {}};
  for (const ChannelRegion& cr : g.channels) {
    std::string refl, pass;
    for (const auto& n : cr.reflecting) refl += (refl.empty() ? "" : ", ") + n;
    for (const auto& n : cr.passing) pass += (pass.empty() ? "" : ", ") + n;
    ct.rows.push_back({std::to_string(cr.channel + 1),
                       d.channels[static_cast<std::size_t>(cr.channel)].conductance.ToString(), refl, pass,
                       fmt::format("{:.4g} um^2", cr.region.Area() * 1e12)});
  }
  const double vdep =
      DeriveWaferQuantities(d.heterostructure, d.conditions.field_T, d.conditions.temperature_K).depletion_voltage_V;
  Table gt{{"gate", "bare lateral depletion estimate", "local filling under it"}, {}};
  for (std::size_t i = 0; i < d.gates.size(); ++i)
    gt.rows.push_back({d.gates[i].name, FormatLateralDepletion(g.lateral_depletion_m[i], d.gates[i].voltage_V <= vdep),
                       fmt::format("{:.3g}", g.local_filling[i])});
  return h + ct.html() + gt.html();
}

// `paths`' constriction models.
std::string constriction_models_html(const ReportData& r) {
  const Design& d = r.d;
  std::string h = "<h3 id=\"constrictions\">Constriction models</h3>\n";
  const std::string used = TransmissionsText(d, r.device.summary().transmissions);  // as `solve` prints it
  if (!used.empty()) h += "<pre>" + esc(used.substr(1)) + "</pre>\n";
  h += model(
      "saddle point of the self-consistent potential in a window around each gap (solved also under --fast), "
      "Büttiker's saddle-point transmission",
      {"Saddle-point transmission", "Saddle of a constriction"});
  Table kt{{"constriction", "barrier vs E_F", "hbar w_x", "hbar w_y", "subband spacing / hbar w_y", "model t at design",
            "design t reached at"},
           {}};
  std::vector<std::string> warnings;
  for (const ConstrictionModel& c : r.paths.constrictions) {
    const Constriction& k = d.constrictions[static_cast<std::size_t>(c.constriction)];
    std::string t, v;
    for (std::size_t ch = 0; ch < c.voltage_for_target_V.size(); ++ch) {
      const bool has_t = ch < c.transmission.size() && !std::isnan(c.transmission[ch]);
      // As paths searches it: a from-gates constriction at half transmission (saddle_model.hpp).
      const double target =
          r.path_options.target_transmission.value_or(k.transmission_from_gates ? 0.5 : k.transmission[ch]);
      t += (t.empty() ? "" : ", ") + (has_t ? fmt::format("{:.3f}", c.transmission[ch]) : "n/a (fractional)");
      v += (v.empty() ? "" : ", ") +
           fmt::format("{:.3g}{} at {}", target,
                       target > 0.99   ? " (searched as 0.99)"
                       : target < 0.01 ? " (searched as 0.01)"
                                       : "",
                       c.voltage_for_target_V[ch] ? FormatSI(*c.voltage_for_target_V[ch], "V") : std::string("-"));
    }
    kt.rows.push_back({k.name, ev(c.barrier_J), ev(c.hbar_omega_x_J), ev(c.hbar_omega_y_J),
                       c.harmonic_ratio ? fmt::format("{:.3f}", *c.harmonic_ratio) : std::string("n/a"), t, v});
    for (const auto& w : c.warnings) warnings.push_back(k.name + ": " + w);
  }
  if (kt.rows.empty()) return h + p("The design has no constriction.");
  return h + kt.html() + (warnings.empty() ? "" : list(warnings));
}

// `paths`' edge pieces, source paths and floating contacts.
std::string edges_html(const ReportData& r) {
  const Design& d = r.d;
  std::string h = "<h3 id=\"pieces\">Edge pieces</h3>\n";
  h += model("E x B drift along each traced edge", {"Edge velocity and lengths"}) +
       p("Velocity: " + r.paths.velocity_model);
  Table pt{{"channel", "from", "to", "length", "velocity", "time of flight", "hbar v / k_B T", "hbar v / 2pi k_B T"},
           {}};
  for (const PieceMetrics& pm : r.paths.pieces) {
    const EdgePiece& e = r.plus.pieces[static_cast<std::size_t>(pm.piece)];
    pt.rows.push_back({std::to_string(e.channel + 1), DescribeEnd(d, e.from), DescribeEnd(d, e.to),
                       FormatSI(pm.length_m, "m"), fmt::format("{:.3g} m/s", pm.velocity_m_per_s),
                       FormatSI(pm.time_of_flight_s, "s"), FormatSI(pm.thermal_length_m, "m"),
                       FormatSI(pm.thermal_length_2pi_m, "m")});
  }
  h += pt.html();
  std::vector<std::string> items;
  for (const SourcePath& s : r.paths.source_paths) {
    std::string verdict =
        s.loop ? fmt::format("interferometer arm: no relaxation check; path difference {} against the thermal "
                             "length {}, visibility factor X/sinh X = {:.3g}",
                             FormatSI(s.path_difference_m, "m"), FormatSI(s.path_thermal_length_m, "m"), s.visibility)
               : fmt::format("against the rule of thumb {}{}", FormatSI(s.relaxation_length_m, "m"),
                             s.beyond_relaxation ? " (beyond it)" : "");
    items.push_back(fmt::format("channel {}: {} -> {}: {}, flight {}, hbar v/kT {}; {}", s.channel + 1,
                                constriction(d, s.source), constriction(d, s.target), FormatSI(s.distance_m, "m"),
                                FormatSI(s.time_of_flight_s, "s"), FormatSI(s.thermal_length_m, "m"), verdict));
  }
  if (!items.empty())
    h += p("Source constriction to splitter or collider (" + r.paths.relaxation_rule + "):") + list(items);
  items.clear();
  for (const FloatHeating& f : r.paths.floats)
    items.push_back(contact(d, f.contact) + ": " + FormatSI(f.power_W, "W") + " dissipated, electron temperature " +
                    FormatSI(f.temperature_K, "K"));
  if (!items.empty())
    h += model(
             "Joule heating at the design bias against the heat flow of the outgoing channels, phonon cooling "
             "neglected",
             {"Floating contacts"}) +
         list(items);
  return h;
}

// `paths`' loops, `noise`'s interferometer loops and `solve`'s closed edges.
std::string loops_html(const ReportData& r) {
  const Design& d = r.d;
  const double kt = constants::kBoltzmann_J_per_K * d.conditions.temperature_K;
  std::string h = "<h3 id=\"loops\">Loops</h3>\n";
  h += model(
      "Aharonov-Bohm periods h/eA and h/e*A of the enclosed area, charging energy of the enclosed island, "
      "thermal visibility",
      {"Aharonov-Bohm period and charging", "Edge velocity and lengths"});
  std::vector<std::string> items;
  for (const LoopMetrics& l : r.paths.loops) {
    std::string qs;
    for (int q : l.constrictions) qs += (qs.empty() ? "" : ", ") + constriction(d, q);
    items.push_back(fmt::format(
        "channel {} {}: length {}, area {:.4g} um^2, AB period h/eA = {}, h/e*A = {}; E_C = {} ({:.3g} k_BT, {} "
        "island); thermal visibility {:.3f}",
        l.channel + 1, l.closed_edge ? "closed edge" : "through " + qs, FormatSI(l.length_m, "m"), l.area_m2 * 1e12,
        FormatSI(l.ab_period_T, "T"), FormatSI(l.ab_period_quasiparticle_T, "T"), ev(l.charging_energy_J),
        l.charging_energy_J / kt, l.gated_island ? "gated, plate capacitor" : "ungated, disk", l.visibility));
  }
  for (const CoherentLoop& l : r.noise.loops) {
    std::string qs;
    for (int q : l.constrictions) qs += (qs.empty() ? "" : ", ") + constriction(d, q);
    items.push_back(
        fmt::format("interferometer loop of the noise model on channel {} through {}: edge length {}, "
                    "enclosed area {:.4g} um^2 ({})",
                    l.channel + 1, qs, FormatSI(l.length_m, "m"), l.enclosed_area_m2 * 1e12,
                    r.noise.phase_averaged ? "noise averaged over the loop phases" : "fixed phase"));
  }
  for (const EdgeNetwork* net : {&r.plus, &r.minus})
    for (const ClosedEdge& c : net->closed)
      items.push_back(
          fmt::format("closed edge of channel {} touching no contact at B = {}: length {}, enclosing {:.4g} "
                      "um^2",
                      c.channel + 1, field_text(net->field_T), FormatSI(c.length_m, "m"), c.enclosed_area_m2 * 1e12));
  if (items.empty()) return h + p("No loop: no edge encloses an area between constrictions.");
  return h + list(items) +
         p("The AB periods assume the interfering edge encloses the area shown; which period is seen depends on the "
           "regime.");
}

std::string head_html(const ReportData& r) {
  const Design& d = r.d;
  std::string h =
      "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n<title>hallway report: " + esc(d.name) +
      "</title>\n<style>\nbody{font-family:sans-serif;max-width:1100px;margin:2em auto;color:#222;line-height:1.4}"
      "table{border-collapse:collapse;margin:0.5em 0 1.5em}td,th{border:1px solid #bbb;padding:3px 8px;font-size:0.9em}"
      "th{background:#f1ece1}figure{margin:1em 0}img{max-width:100%;border:1px solid #ddd}"
      ".model{color:#4a5a3a;font-size:0.9em}"
      ".caution{border-left:5px solid #8a2a1b;padding:0.6em 1em;background:#f9efe8}\n</style>\n</head>\n<body>\n";
  h += "<h1>hallway report</h1>\n<p>Design <b>" + esc(d.name.empty() ? d.path : d.name) + "</b> (" + esc(d.path) +
       "), bulk filling " + d.conditions.filling.ToString() + ", field " + field_text(d.conditions.field_T) +
       ", temperature " + FormatSI(d.conditions.temperature_K, "K") + ".</p>\n";
  std::string caution = kSafetyCaution;  // the caution of every command, on one line
  std::replace(caution.begin(), caution.end(), '\n', ' ');
  const auto from = caution.find_first_not_of(' '), to = caution.find_last_not_of(' ');
  h += "<p class=\"caution\">" + esc(caution.substr(from, to - from + 1)) + "</p>\n";
  h += "<p>Contents: <a href=\"#wiring\">wiring verdict</a>, <a href=\"#signals\">signals and times</a>, <a "
       "href=\"#physics\">the physics behind them</a>, <a href=\"#figures\">figures</a>, <a "
       "href=\"#warnings\">warnings</a>. Every section names the model that produced its numbers and the section of "
       "docs/models.md that describes it.</p>\n";
  return h;
}

}  // namespace

std::vector<std::string> ReportWarnings(const ReportData& r) {
  const Design& d = r.d;
  std::vector<std::string> w;
  auto add = [&](const std::string& s) {
    if (std::find(w.begin(), w.end(), s) == w.end()) w.push_back(s);
  };
  // The device's findings: checks, electrostatics and channel geometry (device.hpp, DeviceSummary).
  for (const auto* list : std::initializer_list<const std::vector<Finding>*>{
           &r.device.summary().findings, &r.plus.findings, &r.tp.findings, &r.noise.findings, &r.paths.findings})
    for (const Finding& x : *list) add("[+B] " + x.message);
  for (const auto* list : std::initializer_list<const std::vector<Finding>*>{&r.minus.findings, &r.tm.findings})
    for (const Finding& x : *list)
      add("[-B, " + ReversedFieldLabel(d, r.verdict, -d.conditions.field_T) + "] " + x.message);
  for (const ConstrictionModel& c : r.paths.constrictions)
    for (const auto& x : c.warnings) add(constriction(d, c.constriction) + ": " + x);
  if (r.map)
    for (const Finding& x : r.map->findings) add("[map] " + x.message);
  return w;
}

// The interferometers, as `hallway fringes` prints them (the same digits).
std::string fringes_html(const ReportData& r) {
  if (!r.fringes) return "";
  std::string h = "<h3 id=\"interferometers\">Interferometers</h3>\n";
  h += model("kinds, flux, field and gate periods, thermal visibility, coupling energies and regime, and the map of "
             "G(flux, gate) from the energy-averaged coherent scattering",
             {"Interferometer kinds and periods", "Coupling energies of a cavity", "Thermal average at a fixed loop phase"});
  return h + "<pre>" + esc(FringesText(r.d, r.plus, *r.fringes)) + "</pre>\n";
}

std::string PageHtml(const ReportData& r, const std::vector<std::pair<std::filesystem::path, std::string>>& pictures,
                     const std::vector<std::string>& warnings) {
  std::string h = head_html(r) + verdict_html(r);
  h += "<h2 id=\"signals\">Signals and times</h2>\n" + transport_html(r) + noise_html(r);
  h += "<h2 id=\"physics\">The physics behind them</h2>\n" + heterostructure_html(r) + checks_html(r) +
       electrostatics_html(r) + map_html(r) + channels_html(r) + constriction_models_html(r) + edges_html(r) +
       loops_html(r) + fringes_html(r);
  h += "<h2 id=\"figures\">Figures</h2>\n";
  for (const auto& [png, caption] : pictures) h += FigureHtml(png, caption);
  h += "<h2 id=\"warnings\">Warnings (" + std::to_string(warnings.size()) + ")</h2>\n<ul>\n";
  for (const auto& w : warnings) h += "<li>" + esc(w) + "</li>\n";
  if (warnings.empty()) h += "<li>none</li>\n";
  h += "</ul>\n<p class=\"caution\">Predictions are estimates. Approach pinch-off and depletion voltages slowly; a "
       "gate driven past its leakage or breakdown onset can destroy the sample. Follow your lab's own safety rules "
       "and local regulations for cryogens, magnets and high voltage.</p>\n</body>\n</html>\n";
  return h;
}

}  // namespace hallway::cli::report
