// Figures and the HTML report: files decode as PNG, SVG and PDF of the expected size; the layout map's
// arrows follow the chirality of docs/models.md, Conventions (checked on the drawing's own geometry, not
// on pixels); the report holds every section, passes an HTML checker and renders in a headless browser;
// the report of each demo design holds the numbers the text commands print, equal to the library's own
// (one number, one definition), with rounding residue shown by the rule of cli/residue.hpp.
#include <cairo.h>
#include <gtest/gtest.h>
#include <sys/wait.h>
#include <unistd.h>

#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <sstream>

#include <fmt/core.h>

#include <nlohmann/json.hpp>
#include <regex>

#include "figures.hpp"
#include "hallway/design_loader.hpp"
#include "hallway/device.hpp"
#include "hallway/map.hpp"
#include "hallway/network.hpp"
#include "hallway/units.hpp"
#include "hallway/wiring.hpp"
#include "residue.hpp"
#include "test_support.hpp"

namespace hallway {
namespace {

namespace fs = std::filesystem;

std::string read(const fs::path& p) {
  std::ifstream in(p, std::ios::binary);
  std::stringstream ss;
  ss << in.rdbuf();
  return ss.str();
}

fs::path scratch() {
  const fs::path dir = fs::temp_directory_path() / ("hallway_report_test_" + std::to_string(::getpid()));
  fs::create_directories(dir);
  return dir;
}

int run(const std::string& cmd) {
  const int status = std::system(cmd.c_str());
  return WIFEXITED(status) ? WEXITSTATUS(status) : -1;
}

TEST(Drawing, LayoutArrowsFollowTheChirality) {
  // docs/models.md, Conventions: for B > 0 electrons circle the mesa clockwise seen from above, so on the
  // top edge of the bar (y near +10 um) they move towards +x and on the bottom edge towards -x; B -> -B reverses.
  const Design d = LoadDesign(test::SourcePath("tests/data/network/hallbar_nu2.yaml"));
  const ChannelGeometry g = BuildChannelGeometry(d);
  const fs::path dir = scratch();
  for (double sign : {1.0, -1.0}) {
    const EdgeNetwork net = TraceEdges(d, g, sign * std::abs(d.conditions.field_T));
    const auto drawing = figures::DrawLayout(d, net, (dir / "layout.png").string(), figures::Format::kPng, "test");
    int top = 0, bottom = 0;
    for (const auto& a : drawing.arrows) {
      if (a.at.y > 9e-6) {
        ++top;
        EXPECT_NEAR(a.direction.x, sign, 1e-6);
      }
      if (a.at.y < -9e-6) {
        ++bottom;
        EXPECT_NEAR(a.direction.x, -sign, 1e-6);
      }
    }
    EXPECT_GT(top, 0);
    EXPECT_GT(bottom, 0);
    // The PNG decodes and has the size the drawing reports.
    cairo_surface_t* s = cairo_image_surface_create_from_png((dir / "layout.png").c_str());
    ASSERT_EQ(cairo_surface_status(s), CAIRO_STATUS_SUCCESS);
    EXPECT_EQ(cairo_image_surface_get_width(s), drawing.width_px);
    EXPECT_EQ(cairo_image_surface_get_height(s), drawing.height_px);
    cairo_surface_destroy(s);
  }
}

TEST(Drawing, VectorFormatsAreWellFormed) {
  const Design d = LoadDesign(test::SourcePath("designs/01_hallbar_qpc.yaml"));
  const EdgeNetwork net = TraceEdges(d, BuildChannelGeometry(d), d.conditions.field_T);
  const fs::path dir = scratch();
  figures::DrawLayout(d, net, (dir / "l.svg").string(), figures::Format::kSvg, "svg");
  figures::DrawLayout(d, net, (dir / "l.pdf").string(), figures::Format::kPdf, "pdf");
  const std::string svg = read(dir / "l.svg"), pdf = read(dir / "l.pdf");
  EXPECT_EQ(svg.rfind("<?xml", 0), 0u);
  EXPECT_NE(svg.find("<svg"), std::string::npos);
  EXPECT_NE(svg.find("</svg>"), std::string::npos);
  EXPECT_EQ(pdf.rfind("%PDF-", 0), 0u);
  EXPECT_NE(pdf.find("%%EOF"), std::string::npos);
  figures::DrawPlot({{"a", {0, 1, 2}, {0, 1, 4}}}, "x (V)", "y", "plot", (dir / "p.png").string(),
                    figures::Format::kPng);
  cairo_surface_t* s = cairo_image_surface_create_from_png((dir / "p.png").c_str());
  ASSERT_EQ(cairo_surface_status(s), CAIRO_STATUS_SUCCESS);
  EXPECT_EQ(cairo_image_surface_get_width(s), 720);
  EXPECT_EQ(cairo_image_surface_get_height(s), 440);
  cairo_surface_destroy(s);
}

class Report : public ::testing::Test {
 protected:
  static void SetUpTestSuite() {
    dir_ = new fs::path(scratch() / "report");
    fs::remove_all(*dir_);
    code_ =
        run(std::string("'") + HALLWAY_EXE + "' report '" + test::SourcePath("designs/02_two_source_collider.yaml") +
            "' -o '" + dir_->string() + "' --quiet > /dev/null");
  }
  static void TearDownTestSuite() { delete dir_; }
  static fs::path* dir_;
  static int code_;
};
fs::path* Report::dir_ = nullptr;
int Report::code_ = -1;

TEST_F(Report, WritesEverySectionFiguresTablesAndJson) {
  ASSERT_EQ(code_, 0);
  const std::string html = read(*dir_ / "report.html");
  for (const char* id : {"heterostructure", "checks", "conductance", "currents", "routes", "noise", "constrictions",
                         "figures", "warnings"})
    EXPECT_NE(html.find(std::string("id=\"") + id + "\""), std::string::npos) << id;
  EXPECT_NE(html.find("data:image/png;base64,"), std::string::npos);
  EXPECT_EQ(html.find("<script"), std::string::npos) << "the report needs no scripts";
  EXPECT_EQ(html.find("http://"), std::string::npos) << "the report loads nothing from the network";
  EXPECT_NE(html.find("can destroy a sample"), std::string::npos);
  for (const char* f :
       {"layout_field_plus.png", "layout_field_plus.svg", "layout_field_plus.pdf", "layout_field_minus.png",
        "density.png", "collider_C.png", "conductance.csv", "contacts.csv", "noise_excess.csv", "result.json"})
    EXPECT_TRUE(fs::exists(*dir_ / f)) << f;
}

TEST_F(Report, IsValidHtmlForAnHtmlChecker) {
  ASSERT_EQ(code_, 0);
  if (run("command -v tidy > /dev/null 2>&1") != 0)
    GTEST_SKIP() << "tidy is not installed (Debian package tidy); .ci/run installs it";
  // tidy exits 0 without warnings, 1 with warnings, 2 with errors.
  const int rc =
      run("tidy -q -e '" + (*dir_ / "report.html").string() + "' 2> '" + (*dir_ / "tidy.txt").string() + "'");
  EXPECT_EQ(rc, 0) << read(*dir_ / "tidy.txt");
}

TEST_F(Report, RendersInAHeadlessBrowser) {
  ASSERT_EQ(code_, 0);
  if (run("command -v chromium > /dev/null 2>&1") != 0)
    GTEST_SKIP() << "chromium is not installed (Debian package chromium); .ci/run installs it";
  const fs::path shot = *dir_ / "screenshot.png", profile = *dir_ / "profile";
  const int rc =
      run("timeout 120 chromium --headless --no-sandbox --disable-gpu --disable-quic --no-first-run "
          "--disable-background-networking --disable-component-update --disable-sync --user-data-dir='" +
          profile.string() + "' --window-size=1200,2000 --screenshot='" + shot.string() + "' 'file://" +
          (*dir_ / "report.html").string() + "' > /dev/null 2>&1");
  EXPECT_EQ(rc, 0);
  cairo_surface_t* s = cairo_image_surface_create_from_png(shot.c_str());
  ASSERT_EQ(cairo_surface_status(s), CAIRO_STATUS_SUCCESS);
  EXPECT_EQ(cairo_image_surface_get_width(s), 1200);
  cairo_surface_destroy(s);
}

// The text as the page writes it (HTML-escaped).
std::string escaped(const std::string& s) {
  std::string o;
  for (char c : s)
    o += c == '<' ? "&lt;" : c == '>' ? "&gt;" : c == '&' ? "&amp;" : c == '"' ? "&quot;" : std::string(1, c);
  return o;
}

std::string sci(double x) {
  return fmt::format("{:.4e}", x);
}

// The warning count matches the listed warnings and result.json; the bias scan's design point is the
// device's own transport and its grid carries no rounding residue.
void ExpectWarningCountAndScan(const std::string& html, const fs::path& dir, const Device& device) {
  const Design& d = device.design();
  // The warning count matches the listed warnings and result.json.
  std::smatch count;
  ASSERT_TRUE(std::regex_search(html, count, std::regex(R"(Warnings \(([0-9]+)\)</h2>\n<ul>\n)")));
  const std::size_t listed_at = static_cast<std::size_t>(count.position(0) + count.length(0));
  const std::string list = html.substr(listed_at, html.find("</ul>", listed_at) - listed_at);
  std::size_t items = 0;
  for (auto at = list.find("<li>"); at != std::string::npos; at = list.find("<li>", at + 1)) ++items;
  const std::size_t said = std::stoul(count[1]);
  EXPECT_EQ(said == 0 ? 1u : said, items);
  std::ifstream json_in(dir / "result.json");
  const nlohmann::json j = nlohmann::json::parse(json_in);
  EXPECT_EQ(j["warnings"].size(), said);

  // The bias scan reads the quantity table; at the design bias it is the device's own transport and noise.
  const auto& columns = j["bias_scan"]["columns"];
  bool found_design_point = false;
  for (const auto& row : j["bias_scan"]["rows"]) {
    if (row[0].get<double>() != 1.0) continue;
    found_design_point = true;
    for (std::size_t c = 0; c < d.contacts.size(); ++c) {
      const auto at = std::find(columns.begin(), columns.end(), "I_" + d.contacts[c].name + "_A");
      ASSERT_NE(at, columns.end());
      EXPECT_EQ(row[static_cast<std::size_t>(at - columns.begin())].get<double>(), device.transport().current_A[c]);
    }
  }
  EXPECT_TRUE(found_design_point);
  for (const auto& row : j["bias_scan"]["rows"])  // grid values without the arithmetic's rounding
    EXPECT_EQ(row[0].get<double>(), cli::RoundGridValue(row[0].get<double>()));
}

// The report of one demo design against a Device built here with the commands' default options, the
// map search of `hallway map` and the wiring verdict: each item of issue 19's list appears with the
// library's value, the wiring verdict comes first, the warning count matches the list.
class ReportOfDemo : public ::testing::TestWithParam<const char*> {};

TEST_P(ReportOfDemo, HoldsTheCommandsNumbersEqualToTheLibrarysOwn) {
  using units::FormatSI;
  const std::string design = test::SourcePath(std::string("designs/") + GetParam());
  const fs::path dir = scratch() / (std::string("demo_") + GetParam());
  fs::remove_all(dir);
  ASSERT_EQ(
      run(std::string("'") + HALLWAY_EXE + "' report '" + design + "' -o '" + dir.string() + "' --quiet > /dev/null"),
      0);
  const std::string html = read(dir / "report.html");
  auto has = [&](const std::string& text) { return html.find(escaped(text)) != std::string::npos; };
  auto has_cell = [&](const std::string& text) {
    return html.find("<td>" + escaped(text) + "</td>") != std::string::npos;
  };
  // Grouped as a designer reads them: the verdict, then signals and times, then the physics.
  const auto wiring = html.find("id=\"wiring\""), signals = html.find("id=\"signals\""),
             physics = html.find("id=\"physics\"");
  ASSERT_NE(physics, std::string::npos);
  EXPECT_LT(wiring, signals);
  EXPECT_LT(signals, physics);

  const Device device(LoadDesign(design));
  ASSERT_TRUE(device.usable());
  const Design& d = device.design();
  const WiringVerdict verdict =
      AssessWiring(d, device.edges(FieldSign::kDesign), device.transport(FieldSign::kDesign),
                   device.edges(FieldSign::kReversed), device.transport(FieldSign::kReversed));
  EXPECT_TRUE(has(verdict.summary)) << verdict.summary;
  EXPECT_LT(html.find(escaped(verdict.summary)), signals);

  // Signals and times: SNR and times of every amplifier and of the drains' cross-correlations.
  const NoiseResult n = device.noise();
  const double scale = cli::MatrixScale(n.total_A2_per_Hz);
  for (const AmplifierNoise& a : n.amplifiers) {
    EXPECT_TRUE(has_cell(cli::FormatSnr(a.snr, a.excess_current_A2_per_Hz, scale))) << a.snr;
    EXPECT_TRUE(has_cell(cli::FormatSignalTime(a.time_for_target_s, a.excess_current_A2_per_Hz, scale)));
  }
  for (const CrossNoise& c : n.cross) {
    EXPECT_TRUE(has_cell(d.contacts[static_cast<std::size_t>(c.first)].name + "-" +
                         d.contacts[static_cast<std::size_t>(c.second)].name));
    EXPECT_TRUE(has_cell(sci(cli::WithoutResidue(c.excess_current_A2_per_Hz, scale)))) << c.excess_current_A2_per_Hz;
    EXPECT_TRUE(has_cell(cli::FormatSignalTime(c.time_for_target_s, c.excess_current_A2_per_Hz, scale)));
  }
  // The collider's P, the time to know it, its validity lines and caveats.
  for (const ColliderPrediction& c : n.colliders) {
    if (c.fano) {
      EXPECT_TRUE(has(fmt::format("P = {:.5g} at T = 0, P = {:.5g} at the design temperature", *c.fano,
                                  *c.fano_finite_temperature)));
      EXPECT_TRUE(has("time to know P to +-0.1: " + cli::FormatDuration(c.time_for_fano_s)));
    } else {
      EXPECT_TRUE(has("P not computed: " + c.not_computed));
    }
    EXPECT_TRUE(has(fmt::format(
        "validity: dilute inputs {} (limit 0.1 of the bias, common practice), weak tunnelling {}, theta < pi/2 {}",
        c.dilute ? "yes" : "NO", c.weak_tunnelling ? "yes" : "NO", c.exchange_below_half_pi ? "yes" : "NO")));
    for (const std::string& cv : c.caveats) EXPECT_TRUE(has("caveat: " + cv)) << cv;
  }

  // The physics behind them: loops, constriction models, the map's pinch-off voltages, electrostatics.
  const PathResult paths = device.paths();
  for (const LoopMetrics& l : paths.loops)
    EXPECT_TRUE(has("AB period h/eA = " + FormatSI(l.ab_period_T, "T"))) << l.ab_period_T;
  for (const ConstrictionModel& c : paths.constrictions)
    EXPECT_TRUE(has_cell(FormatSI(c.hbar_omega_y_J / 1.602176634e-19, "eV")));  // e exact (SI 2019)
  const MapResult m = ComputeMap(d);
  ASSERT_EQ(m.constrictions.size(), d.constrictions.size());
  for (const ConstrictionMap& c : m.constrictions) {
    ASSERT_TRUE(c.pinch_off_V.has_value()) << c.name;
    EXPECT_TRUE(has_cell(FormatSI(*c.pinch_off_V, "V"))) << c.name << " " << *c.pinch_off_V;
  }
  for (const GateMap& g : m.gates) EXPECT_TRUE(has_cell(FormatSI(g.wide_depletion_V, "V")));
  EXPECT_TRUE(has(fmt::format("whole mesa on {} x {} cells of {}", m.map.nx, m.map.ny, FormatSI(m.map.cell_m, "m"))));
  const auto& stats = *device.summary().electrostatics;
  EXPECT_TRUE(
      has(fmt::format("{} operator applications, residual {:.1e}", stats.operator_applications, stats.residual)));

  // Every model section the page's model lines cite exists in docs/models.md.
  const std::string models = read(test::SourcePath("docs/models.md"));
  const std::regex line(R"(<p class="model">[^\n]*</p>)"), cited(R"(docs/models.md ((&quot;[^&]+&quot;(, )?)+))"),
      title(R"(&quot;([^&]+)&quot;)");
  std::string model_lines;
  for (auto it = std::sregex_iterator(html.begin(), html.end(), line); it != std::sregex_iterator(); ++it)
    model_lines += it->str() + "\n";
  int citations = 0;
  for (auto it = std::sregex_iterator(model_lines.begin(), model_lines.end(), cited); it != std::sregex_iterator();
       ++it) {
    const std::string titles = (*it)[1];
    for (auto t = std::sregex_iterator(titles.begin(), titles.end(), title); t != std::sregex_iterator(); ++t) {
      ++citations;
      EXPECT_NE(models.find("\n## " + (*t)[1].str() + "\n"), std::string::npos) << (*t)[1].str();
    }
  }
  EXPECT_GE(citations, 15);

  // No time printed as a bare number of hours with an exponent (issue 19: 8.97e+122 h).
  EXPECT_FALSE(std::regex_search(html, std::regex(R"([0-9]e\+[0-9]+ (h|min|s)\b)")));

  ExpectWarningCountAndScan(html, dir, device);
  fs::remove_all(dir);
}

INSTANTIATE_TEST_SUITE_P(Demos, ReportOfDemo,
                         ::testing::Values("01_hallbar_qpc.yaml", "02_two_source_collider.yaml",
                                           "03_fabry_perot.yaml"));

// Issue 19's check: the collider demo's report holds the collider time, validity and the drains'
// cross-correlation numbers of `hallway noise --json`.
TEST_F(Report, CollidersTimeValidityAndCrossCorrelationEqualNoiseJson) {
  ASSERT_EQ(code_, 0);
  const fs::path noise_json = dir_->parent_path() / "noise.json";
  ASSERT_EQ(run(std::string("'") + HALLWAY_EXE + "' noise '" + test::SourcePath("designs/02_two_source_collider.yaml") +
                "' --json '" + noise_json.string() + "' > /dev/null"),
            0);
  std::ifstream in(noise_json);
  const nlohmann::json j = nlohmann::json::parse(in);
  const std::string html = read(*dir_ / "report.html");
  ASSERT_FALSE(j["colliders"].empty());
  for (const auto& c : j["colliders"]) {
    ASSERT_FALSE(c["time_for_P_s"].is_null());
    EXPECT_NE(html.find("time to know P to +-0.1: " + cli::FormatDuration(c["time_for_P_s"].get<double>())),
              std::string::npos);
    EXPECT_NE(html.find(fmt::format("P = {:.5g} at T = 0", c["P"].get<double>())), std::string::npos);
    EXPECT_NE(html.find(fmt::format("validity: dilute inputs {}", c["dilute"].get<bool>() ? "yes" : "NO")),
              std::string::npos);
  }
  ASSERT_FALSE(j["cross_correlations"].empty());
  for (const auto& c : j["cross_correlations"])
    EXPECT_NE(html.find("<td>" + sci(c["excess_A2_per_Hz"].get<double>()) + "</td>"), std::string::npos);
}

}  // namespace
}  // namespace hallway
