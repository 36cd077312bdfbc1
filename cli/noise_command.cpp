// `hallway noise`: current noise at every contact, amplifier signal-to-noise, colliders, bias sweeps.
#include <fmt/core.h>

#include <algorithm>
#include <cmath>
#include <iostream>
#include <nlohmann/json.hpp>
#include <sstream>

#include "commands.hpp"
#include "hallway/check.hpp"
#include "hallway/constants.hpp"
#include "hallway/design_loader.hpp"
#include "hallway/network.hpp"
#include "hallway/noise.hpp"
#include "hallway/quantities.hpp"
#include "hallway/transport.hpp"
#include "hallway/units.hpp"
#include "hallway/wiring.hpp"
#include "json_parts.hpp"
#include "output.hpp"
#include "transmissions.hpp"
#include "progress.hpp"
#include "residue.hpp"

namespace hallway::cli {
namespace {

using nlohmann::json;
using units::FormatSI;

struct Sweep {
  std::vector<int> contacts;
  std::vector<double> ratio;
  double from = 0.0, to = 0.0;
  int points = 0;
};

std::vector<std::string> split(const std::string& s, char sep) {
  std::vector<std::string> out;
  std::stringstream ss(s);
  std::string item;
  while (std::getline(ss, item, sep)) out.push_back(item);
  return out;
}

// "SA,SB=0:50uV:11" -> contacts, range, points. Returns an empty message on success.
std::string parse_sweep(const Design& d, const std::string& spec, const std::string& ratio, Sweep* sw) {
  const auto eq = spec.find('=');
  if (eq == std::string::npos) return "--sweep takes CONTACTS=FROM:TO:N, e.g. SA,SB=0:50uV:11";
  bool is_current = false;
  for (const std::string& name : split(spec.substr(0, eq), ',')) {
    const Wiring* w = d.FindWiring(name);
    if (!w) return "--sweep: no contact named '" + name + "'";
    if (w->role != Role::kSource) return "--sweep: contact " + name + " is not a source";
    if (!sw->contacts.empty() && w->current_source != is_current) return "--sweep: mix of voltage and current sources";
    is_current = w->current_source;
    sw->contacts.push_back(static_cast<int>(w - d.wiring.data()));
  }
  const auto parts = split(spec.substr(eq + 1), ':');
  if (parts.size() != 3) return "--sweep takes CONTACTS=FROM:TO:N";
  const units::Kind kind = is_current ? units::Kind::kCurrent : units::Kind::kVoltage;
  try {
    for (int i = 0; i < 2; ++i) {
      const units::Quantity q = units::ParseQuantity(parts[static_cast<std::size_t>(i)]);
      if (q.dimension == units::Dimension{} && q.value_si == 0.0) continue;  // a bare 0 is zero of any unit
      (i == 0 ? sw->from : sw->to) = units::Parse(parts[static_cast<std::size_t>(i)], kind);
    }
  } catch (const units::UnitError& e) {
    return std::string("--sweep: ") + e.what();
  }
  try {
    sw->points = std::stoi(parts[2]);
  } catch (...) {
    return "--sweep: N must be a whole number";
  }
  if (sw->points < 1 || sw->points > 10000) return "--sweep: N must lie in [1, 10000]";
  sw->ratio.assign(sw->contacts.size(), 1.0);
  if (!ratio.empty()) {
    const auto r = split(ratio, ',');
    if (r.size() != sw->contacts.size()) return "--ratio needs one factor per swept contact";
    for (std::size_t i = 0; i < r.size(); ++i) {
      try {
        sw->ratio[i] = std::stod(r[i]);
      } catch (...) {
        return "--ratio: '" + r[i] + "' is not a number";
      }
      if (!std::isfinite(sw->ratio[i])) return "--ratio: factors must be finite";
    }
  }
  return "";
}

std::string sci(double x) {
  return fmt::format("{:.4e}", x);
}
std::string opt_time(const std::optional<double>& t) {
  return FormatDuration(t);
}

void print_matrix(std::string& out, const Design& d, const Matrix& m, double scale) {
  out += fmt::format("    {:>8}", "");
  for (const Contact& c : d.contacts) out += fmt::format(" {:>11}", c.name);
  out += "\n";
  for (std::size_t i = 0; i < m.size(); ++i) {
    out += fmt::format("    {:>8}", d.contacts[i].name);
    for (double x : m[i]) out += fmt::format(" {:>11.3e}", WithoutResidue(x, scale));
    out += "\n";
  }
}

// What feeds a collider input: a constriction, or a contact (one-beam partitioning).
std::string FeedName(const Design& d, int source, int contact) {
  if (source >= 0) return d.constrictions[static_cast<std::size_t>(source)].name;
  if (contact >= 0) return "contact " + d.contacts[static_cast<std::size_t>(contact)].name;
  return "?";
}

// Filling 2: each input's charge and neutral modes and where its two half pulses stand (docs/models.md
// "Charge and neutral modes at filling 2").
std::string PulseLines(const ColliderPrediction& c) {
  std::string out;
  for (std::size_t i = 0; i < 2; ++i) {
    if (!c.pulses[i] || !c.modes[i]) continue;
    const PulseRegime& r = *c.pulses[i];
    out += fmt::format(
        "    input {}: {}; the two e/2 pulses of an injected electron arrive {} apart: e V dt/hbar = {:.3g} ({}), "
        "k_B T dt/hbar = {:.3g}, (I/e) dt = {:.3g}\n",
        i + 1, DescribeModes(*c.modes[i]), FormatSI(r.delay_s, "s", 3), r.bias_ratio,
        DescribePulses(r), r.thermal_ratio, r.injection_ratio);
  }
  return out;
}

// P and the drains' cross-correlation SNR against the source-to-collider distance (docs/models.md
// "Distance from the sources").
std::string DistanceCurveText(const ColliderPrediction& c, double scale) {
  if (c.distance_curve.empty()) return {};
  std::string out =
      "    against the distance from the sources (both paths scaled; docs/models.md \"Distance from the sources\"):\n" +
      fmt::format("      {:>10} {:>9} {:>10} {:>11} {:>10}  {}\n", "distance", "P", "cross SNR", "pulse delay",
                  "eV dt/hbar", "note");
  for (const ColliderPrediction::DistancePoint& p : c.distance_curve) {
    std::string note = p.design ? "the design's distance" : "";
    if (!p.why_not.empty()) note += (note.empty() ? "" : "; ") + std::string("P not predicted: ") + p.why_not;
    if (p.beyond_relaxation_rule)
      note += (note.empty() ? "" : "; ") +
              std::string("beyond the relaxation rule of thumb (relaxation not modelled: P may differ)");
    out += fmt::format("      {:>10} {:>9} {:>10} {:>11} {:>10}  {}\n", FormatSI(p.distance_m, "m", 3),
                       p.fano ? fmt::format("{:.4g}", WithoutResidueOf(*p.fano, p.cross_excess_A2_per_Hz.value_or(
                                                                               c.s34_A2_per_Hz.value_or(0.0)), scale))
                              : "-",
                       p.cross_snr ? FormatSnr(*p.cross_snr, p.cross_excess_A2_per_Hz.value_or(0.0), scale) : "-",
                       p.delay_s ? FormatSI(*p.delay_s, "s", 3) : "-",
                       p.bias_ratio ? fmt::format("{:.3g}", *p.bias_ratio) : "-", note);
  }
  return out;
}

// An integer channel's collider: P read from the exact scattering in the contact matrix.
std::string IntegerColliderText(const Design& d, const ColliderPrediction& c, double scale) {
  std::string out = fmt::format(
      "  collider {} (integer channel {}, fed by {} and {}{})\n    I1 = {}, I2 = {} (arriving; {:.3g} and {:.3g} of "
      "their sources' bias), I+ = {}, I- = {}; collider transmission {:.3g}\n",
      d.constrictions[static_cast<std::size_t>(c.constriction)].name, c.channel + 1,
      FeedName(d, c.source_first, c.contact_first), FeedName(d, c.source_second, c.contact_second),
      c.one_beam ? "; one beam" : "", FormatSI(c.stream_first_A, "A"), FormatSI(c.stream_second_A, "A"),
      c.dilution_first, c.dilution_second, FormatSI(c.i_plus_A, "A"), FormatSI(c.i_minus_A, "A"), c.tunnelling);
  if (!c.not_computed.empty())
    out += "    not computed: " + c.not_computed + "\n";
  else
    out += fmt::format(
        "    P = {:.4g}: the drains' S_34 = {} A^2/Hz in the contact matrix over 2 e |I+| T(1 - T); {}; time for P "
        "to +-0.1: {}\n",
        WithoutResidueOf(*c.fano, *c.s34_A2_per_Hz, scale), sci(WithoutResidue(*c.s34_A2_per_Hz, scale)),
        c.fano_pulses ? fmt::format("non-interacting exact scattering at the design temperature {:.4g}, fractionalized "
                                    "pulses {:.4g} (T = 0, first order in the dilution; docs/models.md \"Collider at "
                                    "filling 2: fractionalized pulses\")",
                                    WithoutResidueOf(*c.fano - *c.fano_pulses,
                                                     (*c.fano - *c.fano_pulses) * *c.s34_A2_per_Hz / *c.fano, scale),
                                    *c.fano_pulses)
                      : std::string("non-interacting electrons, exact scattering at the design temperature"),
        opt_time(c.time_for_fano_s));
  out += PulseLines(c) + DistanceCurveText(c, scale);
  for (const auto& cv : c.caveats) out += "    caveat: " + cv + "\n";
  return out;
}

std::string ColliderText(const Design& d, const ColliderPrediction& c, double scale) {
  if (c.integer) return IntegerColliderText(d, c, scale);
  std::string out = fmt::format("  collider {} (channel {}, fed by {} and {}{})\n",
                                d.constrictions[static_cast<std::size_t>(c.constriction)].name, c.channel + 1,
                                FeedName(d, c.source_first, c.contact_first),
                                FeedName(d, c.source_second, c.contact_second), c.one_beam ? "; one beam" : "");
  out += fmt::format(
      "    I1 = {}, I2 = {} (arriving, from the transport solution; {:.3g} and {:.3g} of their sources' bias), I+ = "
      "{}, I- = {}; collider tunnelling {:.3g}; e* = {:.4g} e, theta = {:.4g} pi, delta = {:.4g}\n",
      FormatSI(c.stream_first_A, "A"), FormatSI(c.stream_second_A, "A"), c.dilution_first, c.dilution_second,
      FormatSI(c.i_plus_A, "A"), FormatSI(c.i_minus_A, "A"), c.tunnelling, c.charge_e, c.exchange_pi, c.scaling);
  if (!c.not_computed.empty()) {
    out += "    not computed: " + c.not_computed + "\n";
  } else {
    out += fmt::format("    P = {:.5g} at T = 0, P = {:.5g} at the design temperature (zeta = {:.3g})\n", *c.fano,
                       *c.fano_finite_temperature, c.rate_over_temperature);
    out += fmt::format("    S_34 = {} A^2/Hz ({} form; {}); {}; time for P to +-0.1: {}\n", sci(*c.s34_A2_per_Hz),
                       ToString(c.model_in_matrix),
                       c.in_contact_matrix ? "the value in the contact matrix" : "not in the contact matrix",
                       c.in_contact_matrix ? "S_33, S_44 and the correlations with every other contact follow from "
                                             "current conservation"
                                           : "the matrix uses the independent partition model",
                       opt_time(c.time_for_fano_s));
  }
  out += fmt::format(
      "    validity: dilute inputs {} (limit 0.1 of the bias, common practice), weak tunnelling {}, theta < pi/2 {}\n",
      c.dilute ? "yes" : "NO", c.weak_tunnelling ? "yes" : "NO", c.exchange_below_half_pi ? "yes" : "NO");
  if (c.not_computed.empty() && c.one_beam)
    out += fmt::format(
        "    one beam: excess noise of the tunnelling current S_TT - S_TT(0) = {} A^2/Hz (below equilibrium: braiding "
        "with thermally excited pairs, Lee, Han & Sim, Phys. Rev. Lett. 123, 016803 (2019)); the drain that collects "
        "it also sees its input edge's thermal correlation with the tunnelling (docs/models.md \"Anyon collider\")\n",
        sci(c.shape.stt_A2_per_Hz));
  out += DistanceCurveText(c, scale);
  for (const auto& cv : c.caveats) out += "    caveat: " + cv + "\n";
  return out;
}

std::string print_noise(const Design& d, const NoiseResult& n) {
  std::string out = fmt::format("\nAt B = {:+.4g} T\n", n.field_T);
  const double scale = MatrixScale(n.total_A2_per_Hz);  // residue.hpp: below 1e-10 of it is 0
  out += "  excess current noise S_exc (A^2/Hz; total minus zero bias at the same temperature)\n";
  print_matrix(out, d, n.excess_A2_per_Hz, scale);
  out += "  total current noise (A^2/Hz)\n";
  print_matrix(out, d, n.total_A2_per_Hz, scale);
  for (const CoherentLoop& l : n.loops) {
    std::string qs;
    for (int q : l.constrictions) qs += (qs.empty() ? "" : ", ") + d.constrictions[static_cast<std::size_t>(q)].name;
    out += fmt::format("  interferometer loop on channel {} through {}: edge length {}, enclosed area {:.4g} um^2\n",
                       l.channel + 1, qs, FormatSI(l.length_m, "m"), l.enclosed_area_m2 * 1e12);
  }
  if (!n.amplifiers.empty()) {
    out += "  amplifiers\n";
    out += fmt::format("    {:<8} {:>11} {:>11} {:>12} {:>12} {:>12} {:>9} {:>14}\n", "contact", "R sample", "R eff",
                       "S_exc A2/Hz", "signal V2/Hz", "floor V2/Hz", "SNR", "time for target");
    for (const AmplifierNoise& a : n.amplifiers)
      out += fmt::format("    {:<8} {:>11} {:>11} {:>12} {:>12} {:>12} {:>9} {:>14}\n",
                         d.contacts[static_cast<std::size_t>(a.contact)].name,
                         std::isfinite(a.sample_resistance_Ohm) ? FormatSI(a.sample_resistance_Ohm, "Ohm") : "open",
                         FormatSI(a.effective_resistance_Ohm, "Ohm"),
                         sci(WithoutResidue(a.excess_current_A2_per_Hz, scale)),
                         sci(WithoutResidueOf(a.signal_V2_per_Hz, a.excess_current_A2_per_Hz, scale)),
                         sci(a.floor_V2_per_Hz), FormatSnr(a.snr, a.excess_current_A2_per_Hz, scale),
                         FormatSignalTime(a.time_for_target_s, a.excess_current_A2_per_Hz, scale));
    for (const AmplifierNoise& a : n.amplifiers)
      out +=
          fmt::format("    {}: load at {}{}{}\n", d.contacts[static_cast<std::size_t>(a.contact)].name,
                      FormatSI(a.load_temperature_K, "K"),
                      a.load_temperature_from_design ? " (the design temperature: no amplifier.load_temperature given)"
                                                     : " (amplifier.load_temperature)",
                      a.reference_subtraction ? "; on/off reference subtraction: twice the variance" : "");
    for (const CrossNoise& c : n.cross)
      out += fmt::format("    cross {}-{}: S_exc {} A^2/Hz, signal {} V^2/Hz, SNR {}, time for target {}\n",
                         d.contacts[static_cast<std::size_t>(c.first)].name,
                         d.contacts[static_cast<std::size_t>(c.second)].name,
                         sci(WithoutResidue(c.excess_current_A2_per_Hz, scale)),
                         sci(WithoutResidueOf(c.signal_V2_per_Hz, c.excess_current_A2_per_Hz, scale)),
                         FormatSnr(c.snr, c.excess_current_A2_per_Hz, scale),
                         FormatSignalTime(c.time_for_target_s, c.excess_current_A2_per_Hz, scale));
  }
  for (const ColliderPrediction& c : n.colliders) out += ColliderText(d, c, scale);
  return out;
}

// One collider of the noise document (docs/models.md "Anyon collider", "Distance from the sources").
json ColliderJson(const Design& d, const ColliderPrediction& c) {
  json x = {{"constriction", d.constrictions[static_cast<std::size_t>(c.constriction)].name},
            {"channel", c.channel + 1},
            {"I1_A", c.stream_first_A},
            {"I2_A", c.stream_second_A},
            {"I_plus_A", c.i_plus_A},
            {"I_minus_A", c.i_minus_A},
            {"tunnelling", c.tunnelling},
            {"dilute", c.dilute},
            {"weak_tunnelling", c.weak_tunnelling},
            {"exchange_below_half_pi", c.exchange_below_half_pi},
            {"rate_over_temperature", c.rate_over_temperature},
            {"caveats", c.caveats}};
  x["sources"] = {FeedName(d, c.source_first, c.contact_first), FeedName(d, c.source_second, c.contact_second)};
  x["dilution"] = {c.dilution_first, c.dilution_second};
  x["one_beam"] = c.one_beam;
  x["in_contact_matrix"] = c.in_contact_matrix;
  x["not_computed"] = c.not_computed.empty() ? json(nullptr) : json(c.not_computed);
  x["P"] = c.fano ? json(*c.fano) : json(nullptr);
  x["P_finite_temperature"] = c.fano_finite_temperature ? json(*c.fano_finite_temperature) : json(nullptr);
  x["S34_A2_per_Hz"] = c.s34_A2_per_Hz ? json(*c.s34_A2_per_Hz) : json(nullptr);
  x["model_in_contact_matrix"] = ToString(c.model_in_matrix);
  x["S_TT_excess_A2_per_Hz"] = c.s34_A2_per_Hz ? json(c.shape.stt_A2_per_Hz) : json(nullptr);
  x["time_for_P_s"] = c.time_for_fano_s ? json(*c.time_for_fano_s) : json(nullptr);
  x["integer"] = c.integer;
  x["P_fractionalized_pulses"] = c.fano_pulses ? json(*c.fano_pulses) : json(nullptr);
  // Filling 2: per input, the delay between the charge and neutral pulses (null where not applicable).
  json delays = json::array(), ratios = json::array(), modes = json::array();
  for (std::size_t i = 0; i < 2; ++i) {
    delays.push_back(c.pulses[i] ? json(c.pulses[i]->delay_s) : json(nullptr));
    ratios.push_back(c.pulses[i] ? json(c.pulses[i]->bias_ratio) : json(nullptr));
    modes.push_back(c.modes[i] ? json{{"charge_velocity_m_per_s", c.modes[i]->charge_velocity_m_per_s},
                                      {"neutral_velocity_m_per_s", c.modes[i]->neutral_velocity_m_per_s},
                                      {"from_design", c.modes[i]->from_design}}
                               : json(nullptr));
  }
  x["delay_s"] = delays;
  x["delay_bias_ratio"] = ratios;
  x["edge_modes"] = modes;
  json curve = json::array();
  for (const ColliderPrediction::DistancePoint& p : c.distance_curve)
    curve.push_back({{"distance_m", p.distance_m},
                     {"design_distance", p.design},
                     {"P", p.fano ? json(*p.fano) : json(nullptr)},
                     {"cross_excess_A2_per_Hz", p.cross_excess_A2_per_Hz ? json(*p.cross_excess_A2_per_Hz) : json(nullptr)},
                     {"cross_snr", p.cross_snr ? json(*p.cross_snr) : json(nullptr)},
                     {"delay_s", p.delay_s ? json(*p.delay_s) : json(nullptr)},
                     {"delay_bias_ratio", p.bias_ratio ? json(*p.bias_ratio) : json(nullptr)},
                     {"beyond_relaxation_rule_of_thumb", p.beyond_relaxation_rule},
                     {"P_not_predicted", p.why_not.empty() ? json(nullptr) : json(p.why_not)}});
  x["distance_curve"] = curve;
  return x;
}

json noise_json(const Design& d, const NoiseResult& n) {
  json j;
  j["field_T"] = n.field_T;
  j["noise_excess_A2_per_Hz"] = n.excess_A2_per_Hz;
  j["noise_total_A2_per_Hz"] = n.total_A2_per_Hz;
  j["phase_averaged"] = n.phase_averaged;
  j["phase_samples"] = n.phase_samples;
  j["energy_points"] = n.energy_points;  // a fixed loop phase: nodes of its energy average (0: closed form)
  j["unitarity_error"] = n.unitarity_error;
  j["equilibrium_identity_error"] = n.equilibrium_identity_error;
  json amps = json::object();
  for (const AmplifierNoise& a : n.amplifiers) {
    json x = {{"sample_resistance_Ohm",
               std::isfinite(a.sample_resistance_Ohm) ? json(a.sample_resistance_Ohm) : json(nullptr)},
              {"effective_resistance_Ohm", a.effective_resistance_Ohm},
              {"excess_A2_per_Hz", a.excess_current_A2_per_Hz},
              {"signal_V2_per_Hz", a.signal_V2_per_Hz},
              {"floor_V2_per_Hz", a.floor_V2_per_Hz},
              {"floor_A2_per_Hz", a.floor_current_A2_per_Hz},
              {"snr", a.snr},
              {"load_temperature_K", a.load_temperature_K},
              {"load_temperature_from_design", a.load_temperature_from_design},
              {"reference_subtraction", a.reference_subtraction}};
    x["time_for_target_s"] = a.time_for_target_s ? json(*a.time_for_target_s) : json(nullptr);
    amps[d.contacts[static_cast<std::size_t>(a.contact)].name] = x;
  }
  j["amplifiers"] = amps;
  json cross = json::array();
  for (const CrossNoise& c : n.cross) {
    json x = {
        {"contacts",
         {d.contacts[static_cast<std::size_t>(c.first)].name, d.contacts[static_cast<std::size_t>(c.second)].name}},
        {"excess_A2_per_Hz", c.excess_current_A2_per_Hz},
        {"signal_V2_per_Hz", c.signal_V2_per_Hz},
        {"snr", c.snr}};
    x["time_for_target_s"] = c.time_for_target_s ? json(*c.time_for_target_s) : json(nullptr);
    cross.push_back(x);
  }
  j["cross_correlations"] = cross;
  json colliders = json::array();
  for (const ColliderPrediction& c : n.colliders) colliders.push_back(ColliderJson(d, c));
  j["colliders"] = colliders;
  j["models"] = ModelTexts(n);
  json tags = json::array();
  for (const NoiseModelUse& m : n.models) tags.push_back(ToString(m.model));
  j["model_tags"] = tags;
  return j;
}

// The groups of the quantity table (quantities.hpp) that the bias sweep writes: the default ones that a
// bias point gives (all but the pinch-off search, which the bias does not move).
std::vector<const QuantityGroup*> sweep_groups() {
  std::vector<const QuantityGroup*> out;
  for (const QuantityGroup& g : QuantityGroups())
    if (g.default_on && g.needs != QuantityNeeds::kPinchOffSearch) out.push_back(&g);
  return out;
}

// The bias sweep as CSV on the device: one row per point with the biases, then the columns of
// sweep_groups() (an empty field where a value does not exist at that point).
std::string sweep_csv(const Device& device, FieldSign sign, const NoiseOptions& opt, const Sweep& sweep, bool quiet) {
  const Design& d = device.design();
  const std::vector<const QuantityGroup*> groups = sweep_groups();
  std::string csv = "point";
  for (int c : sweep.contacts)
    csv += fmt::format(",bias_{}_{}", d.contacts[static_cast<std::size_t>(c)].name,
                       d.wiring[static_cast<std::size_t>(c)].current_source ? "A" : "V");
  for (const QuantityGroup* g : groups)
    for (const std::string& c : g->columns(d)) csv += "," + c;
  csv += "\n";
  const bool noise = std::any_of(groups.begin(), groups.end(),
                                 [](const QuantityGroup* g) { return g->needs == QuantityNeeds::kNoise; });
  const Progress progress("noise sweep", sweep.points, quiet);
  for (int k = 0; k < sweep.points; ++k) {
    progress.Step(k, "bias point");
    const double x = RoundGridValue(sweep.points == 1 ? sweep.from
                                                      : sweep.from + (sweep.to - sweep.from) * k / (sweep.points - 1));
    std::vector<double> biases;
    for (double r : sweep.ratio) biases.push_back(x * r);
    const BiasPoint point = SolveAtBias(device, sign, sweep.contacts, biases, noise ? &opt : nullptr);
    std::string row = std::to_string(k);
    for (double b : biases) row += fmt::format(",{:.12g}", b);
    for (const QuantityGroup* g : groups)
      for (const std::optional<double>& v : g->values(point.Results(device))) {
        if (v && !std::isfinite(*v))
          throw std::runtime_error(std::string("noise --sweep: a value that is not finite appeared in the group '") +
                                   g->name + "' at point " + std::to_string(k) + "; nothing is written");
        row += v ? fmt::format(",{:.10g}", *v) : std::string(",");
      }
    csv += row + "\n";
  }
  return csv;
}

}  // namespace

int RunNoise(const NoiseArgs& args) {
  std::size_t max_memory = 0;
  if (int code = 0; !ParseMaxMemory(args.max_memory, &max_memory, &code)) return code;
  Design design;
  if (int code = 0; !LoadOrReport(args.design_path, &design, &code)) return code;
  Sweep sweep;
  if (!args.sweep.empty()) {
    const std::string why = parse_sweep(design, args.sweep, args.ratio, &sweep);
    if (!why.empty()) {
      std::cerr << "hallway: usage error: " << why << "\n";
      return kExitUsage;
    }
  } else if (!args.ratio.empty() || !args.csv_path.empty()) {
    std::cerr << "hallway: usage error: --ratio and --csv go with --sweep\n";
    return kExitUsage;
  }
  // A loop phase is a finite angle; beyond 1e6 rad the double no longer resolves a radian's fraction.
  if (args.phase_given && !(std::isfinite(args.phase_rad) && std::abs(args.phase_rad) <= 1e6)) {
    std::cerr << "hallway: usage error: --phase must be a finite angle in radians of at most 1e6 in magnitude\n";
    return kExitUsage;
  }
  if (!(args.target_sigmas > 0.0)) {
    std::cerr << "hallway: usage error: --target must be positive\n";
    return kExitUsage;
  }
  NoiseOptions opt;
  opt.target_sigmas = args.target_sigmas;
  if (args.phase_given) opt.loop_phase_rad = args.phase_rad;
  opt.collider_model = ColliderModelFromString(args.collider_model).value_or(ColliderModel::kZeroTemperature);
  std::optional<Device> device;
  std::string es_note;
  if (int code = 0; !BuildDevice(std::move(design), args.fast, max_memory, &device, &es_note, &code)) return code;
  const Design& d = device->design();
  const ChannelGeometry& geometry = device->geometry();
  const FieldSign sign = args.reversed_only ? FieldSign::kReversed : FieldSign::kDesign;
  const EdgeNetwork& net = device->edges(sign);
  if (ReportErrors(net.findings) > 0) return kExitDesignError;
  const TransportResult& tr = device->transport(sign);
  const NoiseResult n = device->noise(opt, sign);
  if (!RequireFinite(tr.conductance_S, "the conductance matrix") ||
      !RequireFinite(n.total_A2_per_Hz, "the noise matrix"))
    return kExitInternal;
  for (const Finding& f : n.findings)
    if (f.severity == Severity::kError) {
      std::cerr << "hallway: error: " << f.message << "\n";
      return kExitInternal;
    }

  std::string out = fmt::format("hallway noise  {}\n", d.path);
  if (!d.name.empty()) out += fmt::format("  design: {}\n", d.name);
  out += fmt::format("  bulk filling nu = {}, field {:+.4g} T{}, temperature {}\n", d.conditions.filling.ToString(),
                     device->field_T(sign), args.reversed_only ? " (reversed)" : "", FormatSI(d.conditions.temperature_K, "K"));
  out += fmt::format("  edge boundaries: {}\n", geometry.model);
  out += es_note;
  out += "  models:\n";
  for (const auto& m : n.models) out += "    - " + m.text + "\n";
  out += fmt::format("  checks: |s^+ s - 1| = {:.1e}; equilibrium noise against 2kT(G + G^T): {:.1e} relative\n",
                     n.unitarity_error, n.equilibrium_identity_error);
  out += print_noise(d, n);
  const WiringVerdict verdict = AssessWiring(d, geometry);
  out += WiringVerdictText(d, verdict, EdgesLabel(geometry));
  std::vector<std::string> warnings;
  for (const Finding& f : device->summary().findings) warnings.push_back(f.message);
  const std::string label = ReversedFieldLabel(d, verdict, device->field_T(sign));
  for (const std::vector<Finding>* list :
       std::initializer_list<const std::vector<Finding>*>{&net.findings, &tr.findings, &n.findings})
    for (const Finding& f : *list) warnings.push_back((label.empty() ? "" : "[" + label + "] ") + f.message);
  if (!warnings.empty()) {
    out += "\nWarnings\n";
    for (const auto& w : warnings) out += "  - " + w + "\n";
  }

  // Bias sweep.
  std::string csv;
  if (!sweep.contacts.empty()) {
    csv = sweep_csv(*device, sign, opt, sweep, args.quiet);
    out += fmt::format("\nSweep of {} point(s)\n", sweep.points);
    out += args.csv_path.empty() ? csv : "  written to " + args.csv_path + "\n";
  }
  out += kSafetyCaution;
  json j = noise_json(d, n);
  j["hallway_noise"] = 1;
  j["design"] = d.path;
  json contacts = json::array();
  for (const Contact& c : d.contacts) contacts.push_back(c.name);
  j["contacts"] = contacts;
  j["filling"] = d.conditions.filling.ToString();
  j["temperature_K"] = d.conditions.temperature_K;
  json w = json::array();
  for (const auto& s : warnings) w.push_back(s);
  j["warnings"] = w;
  j["wiring_verdict"] = WiringVerdictJson(d, verdict);
  j["constrictions"] = TransmissionsJson(d, device->summary().transmissions);
  if (!RequireFiniteJson(j, "the noise results")) return kExitInternal;
  std::cout << out;

  try {
    if (!args.csv_path.empty()) WriteFileAtomically(args.csv_path, csv, {args.design_path});
    if (!args.json_path.empty()) WriteFileAtomically(args.json_path, j.dump(2) + "\n", {args.design_path});
  } catch (const OutputError& e) {
    std::cerr << "hallway: output error: " << e.what() << "\n";
    return kExitOutputError;
  }
  return kExitOk;
}

nlohmann::json NoiseJson(const Design& d, const NoiseResult& n) {
  return noise_json(d, n);
}

}  // namespace hallway::cli
