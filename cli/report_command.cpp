// `hallway report`: figures, CSV tables, result.json and one self-contained HTML page.
#include <fmt/core.h>
#include <unistd.h>

#include <cmath>
#include <filesystem>
#include <fstream>
#include <iostream>
#include <nlohmann/json.hpp>
#include <numbers>
#include <sstream>

#include "commands.hpp"
#include "figures.hpp"
#include "hallway/check.hpp"
#include "hallway/collider.hpp"
#include "hallway/constants.hpp"
#include "hallway/noise.hpp"
#include "hallway/paths.hpp"
#include "hallway/transport.hpp"
#include "hallway/units.hpp"
#include "hallway/wiring.hpp"
#include "json_parts.hpp"
#include "output.hpp"
#include "progress.hpp"

namespace hallway::cli {
namespace {

namespace fs = std::filesystem;
using nlohmann::json;
using units::FormatSI;

std::string html_escape(const std::string& s) {
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

std::string base64(const std::string& in) {
  static const char* t = "ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789+/";
  std::string out;
  std::size_t i = 0;
  for (; i + 2 < in.size(); i += 3) {
    const unsigned v = (static_cast<unsigned char>(in[i]) << 16) | (static_cast<unsigned char>(in[i + 1]) << 8) |
                       static_cast<unsigned char>(in[i + 2]);
    out += {t[v >> 18], t[(v >> 12) & 63], t[(v >> 6) & 63], t[v & 63]};
  }
  if (i + 1 == in.size()) {
    const unsigned v = static_cast<unsigned char>(in[i]) << 16;
    out += {t[v >> 18], t[(v >> 12) & 63], '=', '='};
  } else if (i + 2 == in.size()) {
    const unsigned v = (static_cast<unsigned char>(in[i]) << 16) | (static_cast<unsigned char>(in[i + 1]) << 8);
    out += {t[v >> 18], t[(v >> 12) & 63], t[(v >> 6) & 63], '='};
  }
  return out;
}

std::string slurp(const fs::path& p) {
  std::ifstream in(p, std::ios::binary);
  std::stringstream ss;
  ss << in.rdbuf();
  return ss.str();
}

std::string img(const fs::path& png, const std::string& caption) {
  return "<figure><img alt=\"" + html_escape(caption) + "\" src=\"data:image/png;base64," + base64(slurp(png)) +
         "\"><figcaption>" + html_escape(caption) + "</figcaption></figure>\n";
}

// A CSV field, quoted when it holds a comma, a quote or a line break (RFC 4180).
std::string csv_field(const std::string& x) {
  if (x.find_first_of(",\"\n") == std::string::npos) return x;
  std::string o = "\"";
  for (char c : x) o += c == '"' ? std::string("\"\"") : std::string(1, c);
  return o + "\"";
}

struct Table {
  std::vector<std::string> head;
  std::vector<std::vector<std::string>> rows;
  std::string html() const {
    std::string o = "<table><thead><tr>";
    for (const auto& h : head) o += "<th>" + html_escape(h) + "</th>";
    o += "</tr></thead><tbody>\n";
    for (const auto& r : rows) {
      o += "<tr>";
      for (const auto& c : r) o += "<td>" + html_escape(c) + "</td>";
      o += "</tr>\n";
    }
    return o + "</tbody></table>\n";
  }
  std::string csv() const {
    std::string o;
    auto line = [&](const std::vector<std::string>& v) {
      for (std::size_t i = 0; i < v.size(); ++i) o += (i ? "," : "") + csv_field(v[i]);
      o += "\n";
    };
    line(head);
    for (const auto& r : rows) line(r);
    return o;
  }
};

// Why the report may not go to `folder`, or "": it must be absent, empty or a previous hallway
// report (a folder whose result.json carries "hallway_report").
std::string report_folder_refusal(const fs::path& folder) {
  std::error_code ec;
  const auto st = fs::symlink_status(folder, ec);
  if (ec || !fs::exists(st)) return "";
  if (!fs::is_directory(st))
    return folder.string() + " exists and is not a folder" + (fs::is_symlink(st) ? " (a symbolic link)" : "");
  if (fs::is_empty(folder, ec) && !ec) return "";
  // A previous report: a regular result.json (below 256 MiB) whose top level has "hallway_report".
  const fs::path previous = folder / "result.json";
  if (fs::is_regular_file(fs::symlink_status(previous, ec)) &&
      fs::file_size(previous, ec) < (std::uintmax_t{256} << 20)) {
    std::ifstream in(previous, std::ios::binary);
    const json j = json::parse(in, nullptr, false);
    if (j.is_object() && j.contains("hallway_report")) return "";
  }
  return "the folder " + folder.string() +
         " holds files that are not a hallway report; give a new or empty folder (it is never replaced)";
}

// Renames the finished report folder `built` to `folder`, replacing an empty folder or a previous report.
std::string move_report_into_place(const fs::path& built, const fs::path& folder) {
  if (const std::string why = report_folder_refusal(folder); !why.empty()) return why;
  std::error_code ec;
  fs::path old;
  if (fs::exists(fs::symlink_status(folder, ec))) {
    if (fs::is_empty(folder, ec)) {
      fs::remove(folder, ec);
    } else {
      old = folder.parent_path() / ("." + folder.filename().string() + ".hallway-old-" + std::to_string(::getpid()));
      fs::remove_all(old, ec);
      fs::rename(folder, old, ec);
      if (ec) return "cannot move the previous report " + folder.string() + " aside: " + ec.message();
    }
  }
  fs::rename(built, folder, ec);
  if (ec) {
    std::error_code back;
    if (!old.empty()) fs::rename(old, folder, back);
    return "cannot move the finished report into place at " + folder.string() + ": " + ec.message();
  }
  if (!old.empty()) fs::remove_all(old, ec);
  return "";
}

std::string sci(double x) {
  return fmt::format("{:.4e}", x);
}

// The wiring card as a table (report page and wiring_card.csv): the same rows as `hallway check`.
Table card_table(const Design& d, const WiringVerdict& v) {
  Table t{
      {"contact", "role", "connect", "bias", "expected DC current into the device", "expected DC potential", "purpose"},
      {}};
  for (const CardRow& r : v.card)
    t.rows.push_back({d.contacts[static_cast<std::size_t>(r.contact)].name, ToString(r.role), r.connect,
                      r.bias ? FormatSI(*r.bias, r.bias_is_current ? "A" : "V") : std::string("-"),
                      FormatSI(r.current_A, "A"), r.voltage_V ? FormatSI(*r.voltage_V, "V") : "undetermined",
                      r.purpose});
  for (const VoltagePair& p : v.voltage_pairs)
    t.rows.push_back({"V(" + d.contacts[static_cast<std::size_t>(p.first)].name + ") - V(" +
                          d.contacts[static_cast<std::size_t>(p.second)].name + ")",
                      "voltage pair", "voltmeter between the two", "-", "-", FormatSI(p.voltage_V, "V"),
                      std::string(p.hall ? "Hall" : "longitudinal") + " voltage; " +
                          FormatSI(p.reversed_voltage_V, "V") + " with the field reversed"});
  return t;
}

std::string verdict_html(const Design& d, const WiringVerdict& v) {
  std::string h = "<h2 id=\"wiring\">Wiring verdict and wiring card</h2>\n";
  if (!v.assessed) return h + "<p>Not assessed: " + html_escape(v.not_assessed) + "</p>\n";
  h += "<p><b>" + html_escape(v.summary) + "</b></p>\n";
  auto list = [&](const std::vector<WiringProblem>& ps) {
    std::string o = "<ul>\n";
    for (const WiringProblem& p : ps)
      o += "<li>" + html_escape(p.message) + " [" + html_escape(p.code) + "]. What to change: " + html_escape(p.fix) +
           "</li>\n";
    return o + "</ul>\n";
  };
  if (!v.problems.empty()) h += "<p>Problems in the design field:</p>\n" + list(v.problems);
  if (!v.reversed.problems.empty())
    h += "<p>" + html_escape(ReversedFieldLabel(d, v, -d.conditions.field_T)) +
         " (B = " + fmt::format("{:+.4g} T", -d.conditions.field_T) + "):</p>\n" + list(v.reversed.problems);
  return h + "<p>Wiring card at the design field (the currents are those of the table above):</p>\n" +
         card_table(d, v).html();
}

// Everything a report is made of, computed once by RunReport.
struct ReportData {
  const Design& d;
  const CheckResult& check;
  const ChannelGeometry& geometry;
  const DensityMap& map;
  bool fast = false;
  const EdgeNetwork &plus, &minus;
  const TransportResult &tp, &tm;
  const NoiseResult& noise;
  const PathResult& paths;
  const WiringVerdict& verdict;
  std::vector<int> sources, amps;
};

// Currents and excess noise at the amplifiers with every source bias scaled from 0 to 2.
void bias_sweep(const ReportData& r, std::vector<figures::Series>* current, std::vector<figures::Series>* noise_out) {
  const Design& d = r.d;
  const EdgeNetwork& plus = r.plus;
  const std::vector<int>& sources = r.sources;
  const std::vector<int>& amps = r.amps;
  std::vector<double> scale;
  for (int k = 0; k <= 10; ++k) scale.push_back(0.2 * k);
  for (int a : amps) {
    figures::Series si{d.contacts[static_cast<std::size_t>(a)].name + " current", {}, {}};
    figures::Series sn{d.contacts[static_cast<std::size_t>(a)].name + " S_exc", {}, {}};
    for (double s : scale) {
      Design dk = d;
      for (int j : sources) dk.wiring[static_cast<std::size_t>(j)].bias *= s;
      const TransportResult tk = SolveTransport(dk, plus);
      NoiseOptions no;
      no.phase_samples = 32;
      const NoiseResult nk = SolveNoise(dk, plus, tk, no);
      si.x.push_back(s);
      si.y.push_back(tk.current_A[static_cast<std::size_t>(a)] * 1e12);
      sn.x.push_back(s);
      sn.y.push_back(nk.excess_A2_per_Hz[static_cast<std::size_t>(a)][static_cast<std::size_t>(a)] * 1e30);
    }
    current->push_back(si);
    noise_out->push_back(sn);
  }
}

// Draws every figure into `dir`; returns the pictures for the page with their captions. Throws on failure.
std::vector<std::pair<fs::path, std::string>> draw_figures(const ReportData& r, const fs::path& dir,
                                                           const std::vector<figures::Series>& current_series,
                                                           const std::vector<figures::Series>& noise_series) {
  std::vector<std::pair<fs::path, std::string>> pictures;
  const Design& d = r.d;
  const EdgeNetwork& plus = r.plus;
  const EdgeNetwork& minus = r.minus;
  const NoiseResult& noise = r.noise;
  const PathResult& paths = r.paths;
  const DensityMap& map = r.map;
  const std::vector<int>& sources = r.sources;
  const std::vector<int>& amps = r.amps;
  for (auto f : {figures::Format::kPng, figures::Format::kSvg, figures::Format::kPdf}) {
    figures::DrawLayout(d, plus, (dir / ("layout_field_plus." + figures::ToString(f))).string(), f,
                        "edges at the design field");
    figures::DrawLayout(d, minus, (dir / ("layout_field_minus." + figures::ToString(f))).string(), f,
                        "edges with the field reversed");
  }
  pictures.push_back(
      {dir / "layout_field_plus.png", "Layout and edge channels at the design field (arrows: electron travel)"});
  pictures.push_back({dir / "layout_field_minus.png", "Layout and edge channels with the field reversed"});
  if (!r.fast) {
    figures::DrawDensity(d, map, (dir / "density.png").string(), figures::Format::kPng);
    figures::DrawDensity(d, map, (dir / "density.svg").string(), figures::Format::kSvg);
    pictures.push_back({dir / "density.png", "Local filling factor of the self-consistent density"});
  }
  for (const ConstrictionModel& c : paths.constrictions) {
    std::vector<figures::Series> ss;
    for (std::size_t ch = 0; ch < d.channels.size(); ++ch) {
      if (!d.channels[ch].conductance.is_integer()) continue;
      figures::Series s{"channel " + std::to_string(ch + 1), {}, {}};
      for (const auto& pt : c.curve) {
        s.x.push_back(pt.voltage_V);
        s.y.push_back(pt.transmission.empty() ? std::nan("") : pt.transmission[ch]);
      }
      ss.push_back(s);
    }
    if (ss.empty()) continue;
    const std::string name = d.constrictions[static_cast<std::size_t>(c.constriction)].name;
    const fs::path p = dir / ("transmission_" + name + ".png");
    for (auto f : {figures::Format::kPng, figures::Format::kSvg})
      figures::DrawPlot(ss, "gate voltage of both sides (V)", "transmission",
                        "constriction " + name + ": saddle-point model",
                        fs::path(p).replace_extension(figures::ToString(f)).string(), f);
    pictures.push_back({p, "Transmission of each channel of " + name + " against its gate voltage"});
  }
  if (!amps.empty() && !sources.empty()) {
    for (auto f : {figures::Format::kPng, figures::Format::kSvg}) {
      figures::DrawPlot(current_series, "bias / design bias", "current into the device (pA)",
                        "currents at the amplifier contacts",
                        (dir / ("current_vs_bias." + figures::ToString(f))).string(), f);
      figures::DrawPlot(noise_series, "bias / design bias", "excess noise (1e-30 A^2/Hz)",
                        "excess current noise at the amplifiers",
                        (dir / ("noise_vs_bias." + figures::ToString(f))).string(), f);
    }
    pictures.push_back({dir / "current_vs_bias.png", "Currents at the amplifier contacts against the source bias"});
    pictures.push_back({dir / "noise_vs_bias.png", "Excess noise at the amplifier contacts against the source bias"});
  }
  for (const ColliderPrediction& c : noise.colliders) {
    if (!(c.exchange_pi > 0 && c.exchange_pi < 0.5 && c.scaling > 0 && c.scaling < 0.5)) continue;
    figures::Series s{"P(I-/I+)", {}, {}};
    for (int k = 0; k <= 38; ++k) {
      const double x = -0.95 + 0.05 * k;
      s.x.push_back(x);
      s.y.push_back(ColliderFano(x, c.exchange_pi * std::numbers::pi, c.scaling));
    }
    const std::string name = d.constrictions[static_cast<std::size_t>(c.constriction)].name;
    const fs::path p = dir / ("collider_" + name + ".png");
    for (auto f : {figures::Format::kPng, figures::Format::kSvg})
      figures::DrawPlot({s}, "I- / I+", "generalized Fano factor P",
                        "collider " + name + " (Rosenow, Levkivskyi & Halperin 2016)",
                        fs::path(p).replace_extension(figures::ToString(f)).string(), f);
    pictures.push_back({p, "Collider " + name + ": P against the imbalance of the two streams"});
  }
  return pictures;
}

struct Tables {
  Table gt, ct, nt, at, ft, kt, pt, rt;
};

Tables make_tables(const ReportData& r) {
  const Design& d = r.d;
  const EdgeNetwork& plus = r.plus;
  const TransportResult& tp = r.tp;
  const TransportResult& tm = r.tm;
  const NoiseResult& noise = r.noise;
  const PathResult& paths = r.paths;
  const CheckResult& check = r.check;
  // Tables.
  Table gt{{"G (e^2/h)"}, {}};
  for (const Contact& c : d.contacts) gt.head.push_back(c.name);
  for (std::size_t i = 0; i < d.contacts.size(); ++i) {
    std::vector<std::string> r{d.contacts[i].name};
    for (double x : tp.conductance_S[i]) r.push_back(fmt::format("{:.4f}", x / constants::kConductanceQuantum_S + 0.0));
    gt.rows.push_back(r);
  }
  Table ct{{"contact", "role", "V at +B", "I at +B", "V at -B", "I at -B"}, {}};
  for (std::size_t i = 0; i < d.contacts.size(); ++i) {
    auto v = [](const std::optional<double>& x) { return x ? FormatSI(*x, "V") : std::string("undetermined"); };
    ct.rows.push_back({d.contacts[i].name, ToString(d.wiring[i].role), v(tp.voltage_V[i]),
                       FormatSI(tp.current_A[i], "A"), v(tm.voltage_V[i]), FormatSI(tm.current_A[i], "A")});
  }
  Table nt{{"S_exc (A^2/Hz)"}, {}};
  for (const Contact& c : d.contacts) nt.head.push_back(c.name);
  for (std::size_t i = 0; i < d.contacts.size(); ++i) {
    std::vector<std::string> r{d.contacts[i].name};
    for (double x : noise.excess_A2_per_Hz[i]) r.push_back(sci(x));
    nt.rows.push_back(r);
  }
  Table at{{"amplifier", "R sample", "R eff", "S_exc (A^2/Hz)", "signal (V^2/Hz)", "floor (V^2/Hz)", "SNR in plan",
            "time for 10 sigma"},
           {}};
  for (const AmplifierNoise& a : noise.amplifiers)
    at.rows.push_back({d.contacts[static_cast<std::size_t>(a.contact)].name, FormatSI(a.sample_resistance_Ohm, "Ohm"),
                       FormatSI(a.effective_resistance_Ohm, "Ohm"), sci(a.excess_current_A2_per_Hz),
                       sci(a.signal_V2_per_Hz), sci(a.floor_V2_per_Hz), fmt::format("{:.3g}", a.snr),
                       a.time_for_target_s ? FormatSI(*a.time_for_target_s, "s") : std::string("no signal")});
  Table ft{{"quantity", "value"}, {}};
  const auto& f = check.figures;
  ft.rows = {
      {"2DEG depth", FormatSI(d.heterostructure.depth_m, "m")},
      {"sheet density", fmt::format("{:.4g} cm^-2", d.heterostructure.density_per_m2 * 1e-4)},
      {"Fermi energy", FormatSI(f.fermi_energy_J / constants::kElementaryCharge_C, "eV")},
      {"Fermi wavelength", FormatSI(f.fermi_wavelength_m, "m")},
      {"mean free path", f.mean_free_path_m ? FormatSI(*f.mean_free_path_m, "m") : std::string("(no mobility given)")},
      {"field", fmt::format("{:+.4g} T at nu = {}", f.field_T, d.conditions.filling.ToString())},
      {"magnetic length", FormatSI(f.magnetic_length_m, "m")},
      {"cyclotron energy", FormatSI(f.cyclotron_energy_J / constants::kElementaryCharge_C, "eV")},
      {"wide-gate depletion voltage", FormatSI(f.depletion_voltage_V, "V")}};
  Table kt{
      {"constriction", "gap", "barrier vs E_F", "hbar w_x", "hbar w_y", "model t at design", "voltage for design t"},
      {}};
  for (const ConstrictionModel& c : paths.constrictions) {
    const Constriction& k = d.constrictions[static_cast<std::size_t>(c.constriction)];
    std::string t, v;
    for (std::size_t ch = 0; ch < c.transmission.size(); ++ch) {
      t += (t.empty() ? "" : ", ") +
           (std::isnan(c.transmission[ch]) ? std::string("n/a") : fmt::format("{:.3f}", c.transmission[ch]));
      v += (v.empty() ? "" : ", ") +
           (c.voltage_for_target_V[ch] ? FormatSI(*c.voltage_for_target_V[ch], "V") : std::string("-"));
    }
    const auto gap = FindGap(d, k, nullptr);
    kt.rows.push_back({k.name, gap ? FormatSI(gap->distance_m, "m") : "-",
                       FormatSI(c.barrier_J / constants::kElementaryCharge_C, "eV"),
                       FormatSI(c.hbar_omega_x_J / constants::kElementaryCharge_C, "eV"),
                       FormatSI(c.hbar_omega_y_J / constants::kElementaryCharge_C, "eV"), t, v});
  }
  Table pt{{"channel", "from", "to", "length", "velocity", "time of flight", "hbar v / k_B T"}, {}};
  for (const PieceMetrics& p : paths.pieces) {
    const EdgePiece& e = plus.pieces[static_cast<std::size_t>(p.piece)];
    pt.rows.push_back({std::to_string(e.channel + 1), DescribeEnd(d, e.from), DescribeEnd(d, e.to),
                       FormatSI(p.length_m, "m"), fmt::format("{:.3g} m/s", p.velocity_m_per_s),
                       FormatSI(p.time_of_flight_s, "s"), FormatSI(p.thermal_length_m, "m")});
  }
  Table rt{{"source", "channel", "reaches (fraction, via)"}, {}};
  for (const Route& r : tp.routes) {
    std::string reach;
    for (std::size_t i = 0; i < r.reaching.size(); ++i) {
      if (r.reaching[i] <= 1e-12) continue;
      std::string via;
      for (int q : r.via[i]) via += (via.empty() ? "" : " ") + d.constrictions[static_cast<std::size_t>(q)].name;
      reach += fmt::format("{}{} {:.1f}%{}", reach.empty() ? "" : "; ", d.contacts[i].name, 100 * r.reaching[i],
                           via.empty() ? "" : " via " + via);
    }
    rt.rows.push_back({d.contacts[static_cast<std::size_t>(r.source)].name, std::to_string(r.channel + 1), reach});
  }
  return {gt, ct, nt, at, ft, kt, pt, rt};
}

std::vector<std::string> report_warnings(const ReportData& r) {
  const Design& d = r.d;
  const EdgeNetwork& plus = r.plus;
  const TransportResult& tp = r.tp;
  const TransportResult& tm = r.tm;
  const NoiseResult& noise = r.noise;
  const PathResult& paths = r.paths;
  const CheckResult& check = r.check;
  const ChannelGeometry& geometry = r.geometry;
  const double b = r.d.conditions.field_T;
  const WiringVerdict& verdict = r.verdict;
  std::vector<std::string> warnings;
  for (const auto* list : std::initializer_list<const std::vector<Finding>*>{
           &check.findings, &geometry.findings, &plus.findings, &tp.findings, &noise.findings, &paths.findings})
    for (const Finding& x : *list) warnings.push_back("[+B] " + x.message);
  for (const Finding& x : tm.findings)
    warnings.push_back("[-B, " + ReversedFieldLabel(d, verdict, -b) + "] " + x.message);
  for (const ConstrictionModel& c : paths.constrictions)
    for (const auto& w : c.warnings)
      warnings.push_back(d.constrictions[static_cast<std::size_t>(c.constriction)].name + ": " + w);

  return warnings;
}

std::string page_html(const ReportData& r, const Tables& t,
                      const std::vector<std::pair<fs::path, std::string>>& pictures,
                      const std::vector<std::string>& warnings) {
  const Design& d = r.d;
  const NoiseResult& noise = r.noise;
  const CheckResult& check = r.check;
  const ChannelGeometry& geometry = r.geometry;
  const double b = r.d.conditions.field_T;
  const WiringVerdict& verdict = r.verdict;
  const Table &gt = t.gt, &ct = t.ct, &nt = t.nt, &at = t.at, &ft = t.ft, &kt = t.kt, &pt = t.pt, &rt = t.rt;
  std::string h =
      "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n<title>hallway report: " +
      html_escape(d.name) +
      "</title>\n<style>\nbody{font-family:sans-serif;max-width:1100px;margin:2em auto;color:#222;line-height:1.4}"
      "table{border-collapse:collapse;margin:0.5em 0 1.5em}td,th{border:1px solid #bbb;padding:3px 8px;font-size:0.9em}"
      "th{background:#f1ece1}figure{margin:1em 0}img{max-width:100%;border:1px solid #ddd}"
      ".caution{border-left:5px solid #8a2a1b;padding:0.6em 1em;background:#f9efe8}\n</style>\n</head>\n<body>\n";
  h += "<h1>hallway report</h1>\n<p>Design <b>" + html_escape(d.name.empty() ? d.path : d.name) + "</b> (" +
       html_escape(d.path) + "), bulk filling " + d.conditions.filling.ToString() +
       fmt::format(", field {:+.4g} T, temperature ", b) + FormatSI(d.conditions.temperature_K, "K") + ".</p>\n";
  h += "<p class=\"caution\">All figures are model estimates. A gate voltage beyond the leakage or breakdown onset can "
       "destroy a "
       "sample; apply the lab's own safety rules for cryostats, magnets and electronics.</p>\n";
  h += "<h2 id=\"heterostructure\">Heterostructure</h2>\n" + ft.html();
  h += "<h2 id=\"checks\">Geometry and wiring checks</h2>\n<p>" + std::to_string(check.error_count()) + " errors, " +
       std::to_string(check.warning_count()) +
       " warnings from the checks; edge boundaries: " + html_escape(geometry.model) + ".</p>\n";
  h += "<h2 id=\"conductance\">Conductance matrix at the design field</h2>\n" + gt.html();
  h += "<h2 id=\"currents\">Currents and voltages</h2>\n" + ct.html();
  h += "<h2 id=\"routes\">Routes</h2>\n" + rt.html();
  h += verdict_html(d, verdict);
  h += "<h2 id=\"noise\">Noise and signal-to-noise</h2>\n" + nt.html() + at.html();
  for (const ColliderPrediction& c : noise.colliders)
    h += "<p>Collider " + html_escape(d.constrictions[static_cast<std::size_t>(c.constriction)].name) +
         (c.fano ? fmt::format(": P = {:.4g}, I+ = {}, I- = {}, expected S_34 = {} A^2/Hz", *c.fano,
                               FormatSI(c.i_plus_A, "A"), FormatSI(c.i_minus_A, "A"), sci(*c.s34_A2_per_Hz))
                 : std::string(": P not defined")) +
         ".</p>\n";
  h += "<p>Models: ";
  for (const auto& m : noise.models) h += html_escape(m.text) + "; ";
  h += "</p>\n";
  h += "<h2 id=\"constrictions\">Constriction models and path metrics</h2>\n" + kt.html() + pt.html();
  h += "<h2 id=\"figures\">Figures</h2>\n";
  for (const auto& [p, caption] : pictures) h += img(p, caption);
  h += "<h2 id=\"warnings\">Warnings</h2>\n<ul>\n";
  for (const auto& w : warnings) h += "<li>" + html_escape(w) + "</li>\n";
  if (warnings.empty()) h += "<li>none</li>\n";
  h += "</ul>\n<p class=\"caution\">Predictions are estimates. Approach pinch-off and depletion voltages slowly; a "
       "gate driven past "
       "its leakage or breakdown onset can destroy the sample. Follow your lab's safety rules for cryostats and "
       "magnets.</p>\n"
       "</body>\n</html>\n";

  return h;
}

json result_json(const ReportData& r, const std::vector<std::string>& warnings) {
  const Design& d = r.d;
  const EdgeNetwork& plus = r.plus;
  const EdgeNetwork& minus = r.minus;
  const TransportResult& tp = r.tp;
  const TransportResult& tm = r.tm;
  const NoiseResult& noise = r.noise;
  const PathResult& paths = r.paths;
  const CheckResult& check = r.check;
  const WiringVerdict& verdict = r.verdict;
  json result;
  result["hallway_report"] = 1;
  result["design"] = d.path;
  result["check"] = json::parse(CheckJsonText(d, check));
  result["transport_field_plus"] = TransportJson(d, plus, tp);
  result["transport_field_minus"] = TransportJson(d, minus, tm);
  result["noise"] = NoiseJson(d, noise);
  const json pj = PathsJson(d, plus, paths);
  for (const char* key : {"paths", "loops", "constriction_models", "source_paths", "floating_contacts"})
    result[key] = pj[key];
  result["wiring_verdict"] = WiringVerdictJson(d, verdict);
  result["warnings"] = warnings;
  return result;
}

}  // namespace

int RunReport(const ReportArgs& args) {
  std::size_t max_memory = 0;
  if (int code = 0; !ParseMaxMemory(args.max_memory, &max_memory, &code)) return code;
  Design d;
  if (int code = 0; !LoadOrReport(args.design_path, &d, &code)) return code;
  const CheckResult check = CheckDesign(d);
  if (ReportErrors(check.findings) > 0) {
    std::cerr << "hallway: run `hallway check` for the full list; no report was written\n";
    return kExitDesignError;
  }
  // The report is built in a hidden sibling folder and renamed into place when complete, so the
  // folder named by -o is a whole report or is left as it was.
  fs::path final_dir = fs::absolute(args.out_dir).lexically_normal();
  if (final_dir.filename().empty()) final_dir = final_dir.parent_path();
  if (const std::string why = report_folder_refusal(final_dir); !why.empty()) {
    std::cerr << "hallway: output error: " << why << "; nothing was written\n";
    return kExitOutputError;
  }
  std::error_code ec;
  fs::create_directories(final_dir.parent_path(), ec);
  const fs::path dir =
      final_dir.parent_path() / ("." + final_dir.filename().string() + ".hallway-tmp-" + std::to_string(::getpid()));
  fs::remove_all(dir, ec);
  RegisterTemporary(dir.string(), true);
  struct Discard {
    fs::path dir;
    bool keep = false;
    ~Discard() {
      if (keep) return;
      std::error_code e;
      fs::remove_all(dir, e);
      UnregisterTemporary(dir.string());
    }
  } discard{dir};
  if (!fs::create_directory(dir, ec) || ec) {
    std::cerr << "hallway: output error: cannot create the folder " << dir.string()
              << (ec ? ": " + ec.message() : std::string()) << "\n";
    return kExitOutputError;
  }
  const Progress progress("report", 7, args.quiet);

  progress.Step(0, "electrostatics");
  ChannelGeometry geometry;
  std::string es_note;
  DensityMap map;
  if (int code = 0; !BuildGeometry(d, args.fast, &geometry, &es_note, &code, &map, max_memory)) return code;
  progress.Step(1, "edge network, both field directions");
  const double b = d.conditions.field_T;
  const EdgeNetwork plus = TraceEdges(d, geometry, b), minus = TraceEdges(d, geometry, -b);
  if (ReportErrors(plus.findings) + ReportErrors(minus.findings) > 0) return kExitDesignError;
  const TransportResult tp = SolveTransport(d, plus), tm = SolveTransport(d, minus);
  if (ReportErrors(tp.findings) + ReportErrors(tm.findings) > 0) return kExitDesignError;
  const WiringVerdict verdict = AssessWiring(d, plus, tp, minus, tm);
  progress.Step(2, "noise");
  const NoiseResult noise = SolveNoise(d, plus, tp);
  progress.Step(3, "paths and constriction models");
  PathOptions po;
  po.max_memory_bytes = max_memory;
  PathResult paths = ComputePaths(d, plus, tp, args.fast ? nullptr : &map, po);
  ComputeConstrictionModels(d, po, &paths);

  progress.Step(4, "bias sweep");
  ReportData r{d, check, geometry, map, args.fast, plus, minus, tp, tm, noise, paths, verdict, {}, {}};
  for (std::size_t i = 0; i < d.wiring.size(); ++i) {
    if (d.wiring[i].role == Role::kSource) r.sources.push_back(static_cast<int>(i));
    if (d.wiring[i].role == Role::kAmplifier) r.amps.push_back(static_cast<int>(i));
  }
  std::vector<figures::Series> current_series, noise_series;
  bias_sweep(r, &current_series, &noise_series);

  // Nothing is drawn or written from a result that holds NaN or infinity.
  if (!RequireFiniteJson(TransportJson(d, plus, tp), "the transport results for +B") ||
      !RequireFiniteJson(TransportJson(d, minus, tm), "the transport results for -B") ||
      !RequireFiniteJson(NoiseJson(d, noise), "the noise results") ||
      !RequireFiniteJson(PathsJson(d, plus, paths), "the path metrics and constriction models"))
    return kExitInternal;
  progress.Step(5, "figures");
  std::vector<std::pair<fs::path, std::string>> pictures;
  try {
    pictures = draw_figures(r, dir, current_series, noise_series);
  } catch (const std::exception& e) {
    std::cerr << "hallway: output error: " << e.what() << "\n";
    return kExitOutputError;
  }

  progress.Step(6, "tables and page");
  const Tables t = make_tables(r);
  const std::vector<std::string> warnings = report_warnings(r);
  const std::string h = page_html(r, t, pictures, warnings);
  const json result = result_json(r, warnings);
  try {
    WriteFileAtomically((dir / "conductance.csv").string(), t.gt.csv(), {args.design_path});
    WriteFileAtomically((dir / "contacts.csv").string(), t.ct.csv(), {args.design_path});
    WriteFileAtomically((dir / "noise_excess.csv").string(), t.nt.csv(), {args.design_path});
    WriteFileAtomically((dir / "amplifiers.csv").string(), t.at.csv(), {args.design_path});
    WriteFileAtomically((dir / "wiring_card.csv").string(), card_table(d, verdict).csv(), {args.design_path});
    WriteFileAtomically((dir / "result.json").string(), result.dump(2) + "\n", {args.design_path});
    WriteFileAtomically((dir / "report.html").string(), h, {args.design_path});
  } catch (const OutputError& e) {
    std::cerr << "hallway: output error: " << e.what() << "\n";
    return kExitOutputError;
  }
  if (const std::string why = move_report_into_place(dir, final_dir); !why.empty()) {
    std::cerr << "hallway: output error: " << why << "\n";
    return kExitOutputError;
  }
  discard.keep = true;
  UnregisterTemporary(dir.string());
  std::cout << "hallway report: wrote " << (final_dir / "report.html").string() << " with " << pictures.size()
            << " figures, CSV tables and result.json\n";
  return kExitOk;
}

}  // namespace hallway::cli
