// `hallway report`: figures, CSV tables, the bias scan, result.json and one self-contained HTML page
// (report_page.cpp). Every number comes from one Device (device.hpp) and `hallway map`'s search.
#include <fmt/core.h>
#include <unistd.h>

#include <algorithm>
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
#include "hallway/device.hpp"
#include "hallway/map.hpp"
#include "hallway/noise.hpp"
#include "hallway/paths.hpp"
#include "hallway/quantities.hpp"
#include "hallway/transport.hpp"
#include "hallway/units.hpp"
#include "hallway/wiring.hpp"
#include "json_parts.hpp"
#include "output.hpp"
#include "progress.hpp"
#include "report.hpp"
#include "residue.hpp"

namespace hallway::cli::report {
namespace {

namespace fs = std::filesystem;
using nlohmann::json;
using units::FormatSI;

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

// The bias scan: every source bias scaled by 0, 0.2, ..., 2 on the design field's edges (SolveAtBias,
// quantities.hpp); the columns of every quantity group that the transport or the noise gives, read by
// the table's own readers, so a new quantity row is a new column here too. The design point (scale 1)
// is the device's own transport and noise: the scan and the tables print one number.
BiasScan bias_scan(const Device& device, const NoiseResult& design_noise, const NoiseOptions& options) {
  const Design& d = device.design();
  BiasScan scan;
  std::vector<const QuantityGroup*> groups;
  for (const QuantityGroup& g : QuantityGroups()) {
    if (g.needs == QuantityNeeds::kPinchOffSearch) continue;  // bias does not move the electrostatics
    groups.push_back(&g);
    const auto columns = g.columns(d);
    scan.columns.insert(scan.columns.end(), columns.begin(), columns.end());
  }
  std::vector<int> sources;
  for (std::size_t i = 0; i < d.wiring.size(); ++i)
    if (d.wiring[i].role == Role::kSource) sources.push_back(static_cast<int>(i));
  for (int k = 0; k <= 10; ++k) {
    const double scale = RoundGridValue(0.2 * k);
    std::optional<BiasPoint> at;
    PointResults point{&d, &device.transport(), &design_noise, device.density(), nullptr};
    if (scale != 1.0) {
      std::vector<double> biases;
      for (int s : sources) biases.push_back(d.wiring[static_cast<std::size_t>(s)].bias_own_unit() * scale);
      at = SolveAtBias(device, FieldSign::kDesign, sources, biases, &options);
      point = at->Results(device);
    }
    std::vector<std::optional<double>> row;
    for (const QuantityGroup* g : groups) {
      const auto values = g->values(point);
      row.insert(row.end(), values.begin(), values.end());
    }
    scan.scale.push_back(scale);
    scan.rows.push_back(std::move(row));
  }
  return scan;
}

// One figure series from a scan column, times `unit` (pA: 1e12); null values are gaps.
figures::Series scan_series(const BiasScan& scan, const std::string& column, const std::string& label, double unit) {
  figures::Series s{label, {}, {}};
  const auto values = scan.Column(column);
  for (std::size_t k = 0; k < values.size(); ++k) {
    s.x.push_back(scan.scale[k]);
    s.y.push_back(values[k] ? *values[k] * unit : std::nan(""));
  }
  return s;
}

// The bias scan as CSV: the scale, each source's bias (rounded as a grid value) and every column.
std::string scan_csv(const Design& d, const BiasScan& scan) {
  std::string csv = "bias_scale";
  for (const Wiring& w : d.wiring)
    if (w.role == Role::kSource) csv += ",bias_" + w.contact + (w.current_source ? "_A" : "_V");
  for (const auto& c : scan.columns) csv += "," + c;
  csv += "\n";
  for (std::size_t k = 0; k < scan.scale.size(); ++k) {
    csv += fmt::format("{}", scan.scale[k]);
    for (const Wiring& w : d.wiring)
      if (w.role == Role::kSource) csv += fmt::format(",{}", RoundGridValue(w.bias_own_unit() * scan.scale[k]));
    for (const auto& v : scan.rows[k]) csv += v ? fmt::format(",{}", *v) : std::string(",");
    csv += "\n";
  }
  return csv;
}

void draw_bias_plots(const ReportData& r, const fs::path& dir,
                     std::vector<std::pair<fs::path, std::string>>* pictures) {
  const Design& d = r.d;
  std::vector<figures::Series> current, noise;
  bool any_source = false;
  for (const Wiring& w : d.wiring) any_source = any_source || w.role == Role::kSource;
  for (std::size_t a = 0; a < d.wiring.size(); ++a) {
    if (d.wiring[a].role != Role::kAmplifier) continue;
    const std::string& name = d.contacts[a].name;
    current.push_back(scan_series(r.scan, "I_" + name + "_A", name + " current", 1e12));
    noise.push_back(scan_series(r.scan, "S_exc_" + name + "_" + name + "_A2_per_Hz", name + " S_exc", 1e30));
  }
  if (current.empty() || !any_source) return;
  for (auto f : {figures::Format::kPng, figures::Format::kSvg}) {
    figures::DrawPlot(current, "bias / design bias", "current into the device (pA)",
                      "currents at the amplifier contacts",
                      (dir / ("current_vs_bias." + figures::ToString(f))).string(), f);
    figures::DrawPlot(noise, "bias / design bias", "excess noise (1e-30 A^2/Hz)",
                      "excess current noise at the amplifiers",
                      (dir / ("noise_vs_bias." + figures::ToString(f))).string(), f);
  }
  pictures->push_back({dir / "current_vs_bias.png", "Currents at the amplifier contacts against the source bias"});
  pictures->push_back({dir / "noise_vs_bias.png", "Excess noise at the amplifier contacts against the source bias"});
}

void draw_transmission_plots(const ReportData& r, const fs::path& dir,
                             std::vector<std::pair<fs::path, std::string>>* pictures) {
  const Design& d = r.d;
  for (const ConstrictionModel& c : r.paths.constrictions) {
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
    pictures->push_back({p, "Transmission of each channel of " + name + " against its gate voltage"});
  }
}

// The interference map of `hallway fringes`: G(flux, plunger) in units of e^2/h.
void draw_interference_map(const ReportData& r, const fs::path& dir,
                           std::vector<std::pair<fs::path, std::string>>* pictures) {
  if (!r.fringes || !r.fringes->map) return;
  const InterferenceMap& m = *r.fringes->map;
  const std::string gate = r.d.gates[static_cast<std::size_t>(m.plunger)].name;
  figures::GridMap g;
  g.x = m.flux_quanta;
  g.y = m.plunger_V;
  for (double s : m.conductance_S) g.z.push_back(s / constants::kConductanceQuantum_S);
  g.x_label = "flux added to the loop (h/e)";
  g.y_label = "gate " + gate + " (V)";
  g.z_label = "G (e^2/h)";
  g.title = "interference: G = |dI/dV| from " + r.d.contacts[static_cast<std::size_t>(m.source)].name + " to " +
            r.d.contacts[static_cast<std::size_t>(m.amplifier)].name + ", energy-averaged at the design temperature";
  for (auto f : {figures::Format::kPng, figures::Format::kSvg})
    figures::DrawGridMap(g, (dir / ("interference_map." + figures::ToString(f))).string(), f);
  pictures->push_back({dir / "interference_map.png",
                       "Conductance against flux and gate " + gate +
                           " (Aharonov-Bohm phase, arbitrary origin; docs/models.md \"Thermal average at a fixed loop "
                           "phase\")"});
}

// Each collider's P and drains' cross-correlation SNR against the distance from the sources
// (docs/models.md "Distance from the sources"), where they are predicted.
void draw_distance_plots(const ReportData& r, const fs::path& dir,
                         std::vector<std::pair<fs::path, std::string>>* pictures) {
  for (const ColliderPrediction& c : r.noise.colliders) {
    figures::Series fano{"P", {}, {}}, snr{"cross SNR", {}, {}};
    for (const ColliderPrediction::DistancePoint& pt : c.distance_curve) {
      if (!pt.fano) continue;
      fano.x.push_back(pt.distance_m * 1e6);
      fano.y.push_back(*pt.fano);
      if (!pt.cross_snr) continue;
      snr.x.push_back(pt.distance_m * 1e6);
      snr.y.push_back(*pt.cross_snr);
    }
    if (fano.x.size() < 2) continue;
    const std::string name = r.d.constrictions[static_cast<std::size_t>(c.constriction)].name;
    const fs::path p = dir / ("distance_" + name + ".png");
    for (auto f : {figures::Format::kPng, figures::Format::kSvg})
      figures::DrawPlot({fano}, "mean distance from the sources (um)", "generalized Fano factor P",
                        "collider " + name + " against the source distance",
                        fs::path(p).replace_extension(figures::ToString(f)).string(), f);
    pictures->push_back({p, "Collider " + name + ": P against the distance from the sources (distance_curve.csv)"});
    if (snr.x.size() < 2) continue;
    const fs::path q = dir / ("distance_snr_" + name + ".png");
    for (auto f : {figures::Format::kPng, figures::Format::kSvg})
      figures::DrawPlot({snr}, "mean distance from the sources (um)", "SNR of the drains' cross-correlation",
                        "collider " + name + ": signal-to-noise in the planned averaging time",
                        fs::path(q).replace_extension(figures::ToString(f)).string(), f);
    pictures->push_back({q, "Collider " + name + ": the drains' cross-correlation SNR against the source distance"});
  }
}

// Draws every figure into `dir`; returns the pictures for the page with their captions. Throws on failure.
std::vector<std::pair<fs::path, std::string>> draw_figures(const ReportData& r, const fs::path& dir) {
  std::vector<std::pair<fs::path, std::string>> pictures;
  const Design& d = r.d;
  for (auto f : {figures::Format::kPng, figures::Format::kSvg, figures::Format::kPdf}) {
    figures::DrawLayout(d, r.plus, (dir / ("layout_field_plus." + figures::ToString(f))).string(), f,
                        "edges at the design field");
    figures::DrawLayout(d, r.minus, (dir / ("layout_field_minus." + figures::ToString(f))).string(), f,
                        "edges with the field reversed");
  }
  pictures.push_back(
      {dir / "layout_field_plus.png", "Layout and edge channels at the design field (arrows: electron travel)"});
  pictures.push_back({dir / "layout_field_minus.png", "Layout and edge channels with the field reversed"});
  if (const DensityMap* map = r.device.density()) {
    figures::DrawDensity(d, *map, (dir / "density.png").string(), figures::Format::kPng);
    figures::DrawDensity(d, *map, (dir / "density.svg").string(), figures::Format::kSvg);
    pictures.push_back({dir / "density.png", "Local filling factor of the self-consistent density"});
  }
  draw_transmission_plots(r, dir, &pictures);
  draw_bias_plots(r, dir, &pictures);
  draw_interference_map(r, dir, &pictures);
  for (const ColliderPrediction& c : r.noise.colliders) {
    if (!(c.exchange_pi > 0 && c.exchange_pi < 0.5 && c.scaling > 0 && c.scaling < 0.5)) continue;
    figures::Series s{"P(I-/I+)", {}, {}};
    for (int k = 0; k <= 38; ++k) {
      const double x = RoundGridValue(-0.95 + 0.05 * k);
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
  draw_distance_plots(r, dir, &pictures);
  return pictures;
}

// `map`'s numbers under the keys of `hallway map --json` (absent values null).
json map_json(const MapResult& m) {
  auto opt = [](const std::optional<double>& x) { return x ? json(*x) : json(nullptr); };
  json gates = json::array(), ks = json::array();
  for (const GateMap& g : m.gates)
    gates.push_back({{"name", g.name},
                     {"wide_depletion_V", g.wide_depletion_V},
                     {"depletion_V", opt(g.depletion_V)},
                     {"lateral_depletion_m", opt(g.lateral_depletion_m)},
                     {"drift_velocity_m_per_s", opt(g.drift_velocity_m_per_s)}});
  for (const ConstrictionMap& c : m.constrictions)
    ks.push_back({{"name", c.name},
                  {"gap_m", c.gap_m},
                  {"saddle_density_per_m2", c.saddle_density_per_m2},
                  {"pinch_off_density_zero_V", opt(c.pinch_off_V)},
                  {"pinch_off_bare_V", opt(c.bare_pinch_off_V)}});
  return {{"gates", gates}, {"constrictions", ks}};
}

json result_json(const ReportData& r, const std::vector<std::string>& warnings) {
  const Design& d = r.d;
  json result;
  result["hallway_report"] = 1;
  result["design"] = d.path;
  result["check"] = json::parse(CheckJsonText(d, r.device.check()));
  result["transport_field_plus"] = TransportJson(d, r.plus, r.tp);
  result["transport_field_minus"] = TransportJson(d, r.minus, r.tm);
  result["noise"] = NoiseJson(d, r.noise);
  const json pj = PathsJson(d, r.plus, r.paths);
  for (const char* key : {"paths", "loops", "constriction_models", "source_paths", "floating_contacts"})
    result[key] = pj[key];
  result["map"] = r.map ? map_json(*r.map) : json(nullptr);
  result["fringes"] = r.fringes ? FringesJson(d, r.plus, *r.fringes) : json(nullptr);
  json columns = json::array({"bias_scale"}), rows = json::array();
  for (const auto& c : r.scan.columns) columns.push_back(c);
  for (std::size_t k = 0; k < r.scan.scale.size(); ++k) {
    json row = json::array({r.scan.scale[k]});
    for (const auto& v : r.scan.rows[k]) row.push_back(v ? json(*v) : json(nullptr));
    rows.push_back(row);
  }
  result["bias_scan"] = {{"columns", columns}, {"rows", rows}};
  result["wiring_verdict"] = WiringVerdictJson(d, r.verdict);
  result["warnings"] = warnings;
  return result;
}

// The temporary folder the report is built in, removed unless kept.
struct Discard {
  fs::path dir;
  bool keep = false;
  ~Discard() {
    if (keep) return;
    std::error_code e;
    fs::remove_all(dir, e);
    UnregisterTemporary(dir.string());
  }
};

// Writes every file of the report into `dir`. Returns an exit code.
int write_files(const ReportData& r, const fs::path& dir, const std::string& design_path,
                const std::vector<std::pair<fs::path, std::string>>& pictures) {
  const std::vector<std::string> warnings = ReportWarnings(r);
  const std::string h = PageHtml(r, pictures, warnings);
  const json result = result_json(r, warnings);
  if (!RequireFiniteJson(result, "the report results")) return kExitInternal;
  try {
    WriteFileAtomically((dir / "conductance.csv").string(), ConductanceTable(r).csv(), {design_path});
    WriteFileAtomically((dir / "contacts.csv").string(), ContactsTable(r).csv(), {design_path});
    WriteFileAtomically((dir / "noise_excess.csv").string(), NoiseTable(r).csv(), {design_path});
    WriteFileAtomically((dir / "amplifiers.csv").string(), AmplifierTable(r).csv(), {design_path});
    WriteFileAtomically((dir / "wiring_card.csv").string(), CardTable(r.d, r.verdict).csv(), {design_path});
    WriteFileAtomically((dir / "bias_scan.csv").string(), scan_csv(r.d, r.scan), {design_path});
    if (const Table t = DistanceTable(r); !t.rows.empty())
      WriteFileAtomically((dir / "distance_curve.csv").string(), t.csv(), {design_path});
    if (r.fringes && r.fringes->map)
      WriteFileAtomically((dir / "interference_map.csv").string(), FringesCsv(*r.fringes->map), {design_path});
    WriteFileAtomically((dir / "result.json").string(), result.dump(2) + "\n", {design_path});
    WriteFileAtomically((dir / "report.html").string(), h, {design_path});
  } catch (const OutputError& e) {
    std::cerr << "hallway: output error: " << e.what() << "\n";
    return kExitOutputError;
  }
  return kExitOk;
}

// `hallway map`'s search with its default options (the report's pinch-off voltages). False with *code.
bool run_map(const Design& d, std::size_t max_memory, std::optional<MapResult>* out, int* code) {
  MapOptions opt;
  opt.electrostatics.max_memory_bytes = max_memory;
  try {
    *out = ComputeMap(d, opt);
  } catch (const GridTooLarge& e) {
    *code = ReportGridTooLarge(e, GridAdvice::kFastOption);
    return false;
  }
  if (ReportErrors((*out)->findings) > 0) {
    std::cerr << "hallway: resource limit: the pinch-off search did not converge within its iteration bound; no "
                 "report was written\n";
    *code = kExitResourceLimit;
    return false;
  }
  return true;
}

// Creates the hidden sibling folder the report is built in. Returns an exit code.
int make_build_folder(const fs::path& final_dir, fs::path* dir) {
  if (const std::string why = report_folder_refusal(final_dir); !why.empty()) {
    std::cerr << "hallway: output error: " << why << "; nothing was written\n";
    return kExitOutputError;
  }
  std::error_code ec;
  fs::create_directories(final_dir.parent_path(), ec);
  std::string hidden = ".";  // appended piecewise: g++ 12 warns (-Wrestrict) on "." + name + ... here
  hidden += final_dir.filename().string();
  hidden += ".hallway-tmp-" + std::to_string(::getpid());
  *dir = final_dir.parent_path() / hidden;
  fs::remove_all(*dir, ec);
  RegisterTemporary(dir->string(), true);
  if (!fs::create_directory(*dir, ec) || ec) {
    std::cerr << "hallway: output error: cannot create the folder " << dir->string()
              << (ec ? ": " + ec.message() : std::string()) << "\n";
    UnregisterTemporary(dir->string());
    return kExitOutputError;
  }
  return kExitOk;
}

}  // namespace

std::string FigureHtml(const fs::path& png, const std::string& caption) {
  return "<figure><img alt=\"" + HtmlEscape(caption) + "\" src=\"data:image/png;base64," + base64(slurp(png)) +
         "\"><figcaption>" + HtmlEscape(caption) + "</figcaption></figure>\n";
}

}  // namespace hallway::cli::report

namespace hallway::cli {

int RunReport(const ReportArgs& args) {
  using namespace report;
  std::size_t max_memory = 0;
  if (int code = 0; !ParseMaxMemory(args.max_memory, &max_memory, &code)) return code;
  Design design;
  if (int code = 0; !LoadOrReport(args.design_path, &design, &code)) return code;
  // The report is built in a hidden sibling folder and renamed into place when complete, so the
  // folder named by -o is a whole report or is left as it was. A folder that may not be written is
  // refused before any work.
  fs::path final_dir = fs::absolute(args.out_dir).lexically_normal();
  if (final_dir.filename().empty()) final_dir = final_dir.parent_path();
  fs::path dir;
  if (const int code = make_build_folder(final_dir, &dir); code != kExitOk) return code;
  Discard discard{dir};
  std::optional<Device> device;
  std::string es_note;
  if (int code = 0; !BuildDevice(std::move(design), args.fast, max_memory, &device, &es_note, &code)) return code;
  const Progress progress("report", 7, args.quiet);
  const Design& d = device->design();
  progress.Step(0, "edge network, both field directions");
  const EdgeNetwork &plus = device->edges(FieldSign::kDesign), &minus = device->edges(FieldSign::kReversed);
  if (ReportErrors(plus.findings) + ReportErrors(minus.findings) > 0) return kExitDesignError;
  const TransportResult &tp = device->transport(FieldSign::kDesign), &tm = device->transport(FieldSign::kReversed);
  if (ReportErrors(tp.findings) + ReportErrors(tm.findings) > 0) return kExitDesignError;
  const WiringVerdict verdict = AssessWiring(d, plus, tp, minus, tm);
  progress.Step(1, "noise");
  const NoiseOptions noise_options;  // `hallway noise`'s defaults
  const NoiseResult noise = device->noise(noise_options);
  progress.Step(2, "paths and constriction models");
  PathOptions po;
  po.max_memory_bytes = max_memory;
  const PathResult paths = device->paths(po);
  progress.Step(3, "pinch-off voltages");
  std::optional<MapResult> map;
  if (int code = 0; !args.fast && !run_map(d, max_memory, &map, &code)) return code;
  progress.Step(4, "bias scan");
  const BiasScan scan = bias_scan(*device, noise, noise_options);
  progress.Step(5, "interferometers");
  std::optional<InterferometerResult> fringes;
  if (std::any_of(paths.loops.begin(), paths.loops.end(), [](const LoopMetrics& l) { return !l.closed_edge; })) {
    DeviceOptions dopt;  // as BuildDevice made the device
    dopt.bare_estimate = args.fast;
    dopt.electrostatics.max_memory_bytes = max_memory;
    InterferometerOptions io;  // a coarser map than `hallway fringes`' default: the report's figure needs no more
    io.flux_points = 17;
    io.plunger_points = 9;
    fringes = AnalyseInterferometers(*device, dopt, io);
  }
  const ReportData r{*device, d,  args.fast, es_note, plus,  minus,  tp,
                     tm,      noise, paths,   po,      map,     verdict, scan, fringes};

  // Nothing is drawn or written from a result that holds NaN or infinity.
  if ((fringes && !RequireFiniteJson(FringesJson(d, plus, *fringes), "the interferometer results")) ||
      !RequireFiniteJson(TransportJson(d, plus, tp), "the transport results for +B") ||
      !RequireFiniteJson(TransportJson(d, minus, tm), "the transport results for -B") ||
      !RequireFiniteJson(NoiseJson(d, noise), "the noise results") ||
      !RequireFiniteJson(PathsJson(d, plus, paths), "the path metrics and constriction models"))
    return kExitInternal;
  progress.Step(6, "figures, tables and page");
  std::vector<std::pair<fs::path, std::string>> pictures;
  try {
    pictures = draw_figures(r, dir);
  } catch (const std::exception& e) {
    std::cerr << "hallway: output error: " << e.what() << "\n";
    return kExitOutputError;
  }
  if (const int code = write_files(r, dir, args.design_path, pictures); code != kExitOk) return code;
  if (const std::string why = move_report_into_place(dir, final_dir); !why.empty()) {
    std::cerr << "hallway: output error: " << why << "\n";
    return kExitOutputError;
  }
  discard.keep = true;
  UnregisterTemporary(dir.string());
  std::cout << "hallway report: wrote " << (final_dir / "report.html").string() << " with " << pictures.size()
            << " figures, CSV tables, the bias scan and result.json\n";
  return kExitOk;
}

}  // namespace hallway::cli
