// Figures and the HTML report: files decode as PNG, SVG and PDF of the expected size; the layout map's
// arrows follow the chirality of docs/models.md, Conventions (checked on the drawing's own geometry, not
// on pixels); the report holds every section, passes an HTML checker and renders in a headless browser.
#include <cairo.h>
#include <gtest/gtest.h>
#include <sys/wait.h>
#include <unistd.h>

#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <sstream>

#include "figures.hpp"
#include "hallway/design_loader.hpp"
#include "hallway/network.hpp"
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

}  // namespace
}  // namespace hallway
