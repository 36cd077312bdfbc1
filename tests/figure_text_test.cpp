// Texts of the figures: for every figure the demo designs produce (the layout map at both field signs,
// the density map, the transmission, bias and collider plots), no two texts overlap and no text covers
// the plotted data; ticks fall on 1-2-5 steps with zero written 0; the density scale follows the bulk
// filling; the edges on the two sides of a gate are drawn apart. Checked on the boxes the drawing code
// measured with Cairo (figures.hpp, TextBox), never on pixels.
#include <gtest/gtest.h>
#include <unistd.h>

#include <algorithm>
#include <cmath>
#include <filesystem>
#include <numbers>
#include <string>
#include <vector>

#include "figures.hpp"
#include "hallway/collider.hpp"
#include "hallway/constants.hpp"
#include "hallway/design_loader.hpp"
#include "hallway/network.hpp"
#include "hallway/noise.hpp"
#include "hallway/paths.hpp"
#include "hallway/transport.hpp"
#include "test_support.hpp"

namespace hallway {
namespace {

namespace fs = std::filesystem;
using figures::Drawing;

fs::path scratch() {
  const fs::path dir = fs::temp_directory_path() / ("hallway_figure_text_test_" + std::to_string(::getpid()));
  fs::create_directories(dir);
  return dir;
}

std::vector<fs::path> demo_designs() {
  std::vector<fs::path> out;
  for (const auto& e : fs::directory_iterator(test::SourcePath("designs")))
    if (e.path().extension() == ".yaml" && e.path().filename().string().rfind('0', 0) == 0) out.push_back(e.path());
  std::sort(out.begin(), out.end());
  return out;
}

// Every pair of texts apart, every text clear of every data line and inside the page.
void expect_clear(const Drawing& d, const std::string& what) {
  for (std::size_t a = 0; a < d.texts.size(); ++a) {
    const figures::TextBox& t = d.texts[a];
    EXPECT_GE(t.x0, 0) << what << ": '" << t.text << "' leaves the page";
    EXPECT_GE(t.y0, 0) << what << ": '" << t.text << "' leaves the page";
    EXPECT_LE(t.x1, d.width_px) << what << ": '" << t.text << "' leaves the page";
    EXPECT_LE(t.y1, d.height_px) << what << ": '" << t.text << "' leaves the page";
    for (std::size_t b = a + 1; b < d.texts.size(); ++b)
      EXPECT_FALSE(figures::Overlap(t, d.texts[b]))
          << what << ": '" << t.text << "' overlaps '" << d.texts[b].text << "'";
    bool crossed = false;
    for (const figures::PixelLine& l : d.data)
      for (std::size_t k = 0; k + 1 < l.size() && !crossed; ++k) crossed = figures::Crosses(t, l[k], l[k + 1]);
    EXPECT_FALSE(crossed) << what << ": '" << t.text << "' covers the data";
  }
}

// The density map the report draws, with the bulk density everywhere (its texts depend only on the
// design's filling and the map's extent, not on the values).
DensityMap uniform_map(const Design& d) {
  const auto bb = geometry::bounding_box(d.mesa.outline);
  DensityMap m;
  m.nx = 60;
  m.cell_m = bb.width() / (m.nx - 1);
  m.ny = std::max(2, static_cast<int>(bb.height() / m.cell_m) + 1);
  m.x0_m = bb.xmin;
  m.y0_m = bb.ymin;
  const double n = d.conditions.filling.value() * constants::kElementaryCharge_C * std::abs(d.conditions.field_T) /
                   constants::kPlanck_Js;
  m.density_per_m2.assign(static_cast<std::size_t>(m.nx * m.ny), n);
  return m;
}

// The plots of a design, built from the same library results as `hallway report --fast`.
std::vector<std::pair<std::string, Drawing>> plots(const Design& d, const EdgeNetwork& plus, const fs::path& dir) {
  std::vector<std::pair<std::string, Drawing>> out;
  const TransportResult tp = SolveTransport(d, plus);
  PathOptions po;
  PathResult paths = ComputePaths(d, plus, tp, nullptr, po);
  ComputeConstrictionModels(d, po, &paths);
  for (const ConstrictionModel& c : paths.constrictions) {
    std::vector<figures::Series> ss;
    for (std::size_t ch = 0; ch < d.channels.size(); ++ch) {
      figures::Series s{"channel " + std::to_string(ch + 1), {}, {}};
      for (const auto& pt : c.curve) {
        s.x.push_back(pt.voltage_V);
        s.y.push_back(pt.transmission.size() > ch ? pt.transmission[ch] : std::nan(""));
      }
      ss.push_back(s);
    }
    out.emplace_back("transmission", figures::DrawPlot(ss, "gate voltage of both sides (V)", "transmission",
                                                       "constriction: saddle-point model", (dir / "t.png").string(),
                                                       figures::Format::kPng));
  }
  std::vector<figures::Series> current;
  for (std::size_t a = 0; a < d.wiring.size(); ++a) {
    if (d.wiring[a].role != Role::kAmplifier) continue;
    const auto contact = static_cast<std::size_t>(d.FindContact(d.wiring[a].contact) - d.contacts.data());
    figures::Series s{d.wiring[a].contact + " current", {}, {}};
    for (int k = 0; k <= 10; ++k) {
      Design dk = d;
      for (Wiring& w : dk.wiring)
        if (w.role == Role::kSource) w.bias_own_unit() *= 0.2 * k;
      s.x.push_back(0.2 * k);
      s.y.push_back(SolveTransport(dk, plus).current_A[contact] * 1e12);
    }
    current.push_back(s);
  }
  out.emplace_back("current", figures::DrawPlot(current, "bias / design bias", "current into the device (pA)",
                                                "currents at the amplifier contacts", (dir / "c.png").string(),
                                                figures::Format::kPng));
  NoiseOptions no;
  no.phase_samples = 32;
  for (const ColliderPrediction& c : SolveNoise(d, plus, tp, no).colliders) {
    if (!(c.exchange_pi > 0 && c.exchange_pi < 0.5 && c.scaling > 0 && c.scaling < 0.5)) continue;
    figures::Series s{"P(I-/I+)", {}, {}};
    for (int k = 0; k <= 38; ++k) {
      s.x.push_back(-0.95 + 0.05 * k);
      s.y.push_back(ColliderFano(s.x.back(), c.exchange_pi * std::numbers::pi, c.scaling));
    }
    out.emplace_back("collider", figures::DrawPlot({s}, "I- / I+", "generalized Fano factor P",
                                                   "collider (Rosenow, Levkivskyi & Halperin 2016)",
                                                   (dir / "p.png").string(), figures::Format::kPng));
  }
  return out;
}

TEST(FigureText, NoTextOverlapsTextOrDataInAnyFigureOfTheDemoDesigns) {
  const fs::path dir = scratch();
  const auto designs = demo_designs();
  ASSERT_GE(designs.size(), 3u);
  for (const fs::path& p : designs) {
    const Design d = LoadDesign(p.string());
    const ChannelGeometry g = BuildChannelGeometry(d);
    const double b = d.conditions.field_T;
    const EdgeNetwork plus = TraceEdges(d, g, b), minus = TraceEdges(d, g, -b);
    const std::string name = p.filename().string();
    expect_clear(
        figures::DrawLayout(d, plus, (dir / "l.png").string(), figures::Format::kPng, "edges at the design field"),
        name + " layout +B");
    expect_clear(
        figures::DrawLayout(d, minus, (dir / "l.png").string(), figures::Format::kPng, "edges with the field reversed"),
        name + " layout -B");
    expect_clear(figures::DrawDensity(d, uniform_map(d), (dir / "d.png").string(), figures::Format::kPng),
                 name + " density");
    for (const auto& [what, drawing] : plots(d, plus, dir)) expect_clear(drawing, name + " " + what);
  }
  fs::remove_all(dir);
}

// The labels of a drawing that read as numbers.
std::vector<double> numbers_in(const Drawing& d) {
  std::vector<double> out;
  for (const figures::TextBox& t : d.texts) {
    char* end = nullptr;
    const double v = std::strtod(t.text.c_str(), &end);
    if (!t.text.empty() && end && *end == '\0') out.push_back(v);
  }
  return out;
}

// 1, 2 or 5 times a power of ten (common practice for axis ticks).
bool one_two_five(double step) {
  const double p = std::pow(10.0, std::floor(std::log10(step) + 1e-9));
  for (double m : {1.0, 2.0, 5.0, 10.0})
    if (std::abs(step / p - m) < 1e-6) return true;
  return false;
}

// The same for the layout maps of the test designs (the wiring cases: colliders with swapped or
// floating contacts, a Hall bar, an island), in both field directions.
TEST(FigureText, NoTextOverlapsTextOrDataInTheLayoutsOfTheTestDesigns) {
  const fs::path dir = scratch();
  int drawn = 0;
  for (const auto& e : fs::directory_iterator(test::SourcePath("tests/data/wiring"))) {
    if (e.path().extension() != ".yaml") continue;
    const Design d = LoadDesign(e.path().string());
    const ChannelGeometry g = BuildChannelGeometry(d);
    const std::string name = e.path().filename().string();
    for (double sign : {1.0, -1.0}) {
      const EdgeNetwork net = TraceEdges(d, g, sign * d.conditions.field_T);
      expect_clear(figures::DrawLayout(d, net, (dir / "t.png").string(), figures::Format::kPng, "edges"),
                   name + (sign > 0 ? " layout +B" : " layout -B"));
    }
    ++drawn;
  }
  EXPECT_GE(drawn, 5);
}

TEST(FigureText, TicksFallOnOneTwoFiveStepsAndZeroIsWrittenZero) {
  const fs::path dir = scratch();
  // The collider curve's x range is symmetric about 0, where floating-point sums leave 1.11e-16.
  figures::Series s{"P", {}, {}};
  for (int k = 0; k <= 38; ++k) {
    s.x.push_back(-0.95 + 0.05 * k);
    s.y.push_back(-4.73 + 2.86 * (1 - s.x.back() * s.x.back()));
  }
  const Drawing d = figures::DrawPlot({s}, "x", "y", "ticks", (dir / "p.png").string(), figures::Format::kPng);
  bool zero = false;
  for (const figures::TextBox& t : d.texts) {
    EXPECT_EQ(t.text.find("e-1"), std::string::npos) << t.text;
    zero = zero || t.text == "0";
  }
  EXPECT_TRUE(zero);
  std::vector<double> ticks = numbers_in(d);
  ASSERT_GE(ticks.size(), 6u);
  std::sort(ticks.begin(), ticks.end());
  // Within each axis, neighbouring ticks are a 1-2-5 step apart: every difference between sorted labels
  // that is not a jump between the two axes is such a step.
  int steps = 0;
  for (std::size_t k = 0; k + 1 < ticks.size(); ++k) {
    const double diff = ticks[k + 1] - ticks[k];
    if (diff > 0 && one_two_five(diff)) ++steps;
  }
  EXPECT_GE(steps, static_cast<int>(ticks.size()) - 3);
  // Picoampere-scale values: a common power of ten on the axis title, short labels.
  figures::Series tiny{"I", {0, 1, 2}, {0, 1.5e-12, 3.1e-12}};
  const Drawing e =
      figures::DrawPlot({tiny}, "x", "current (A)", "exponent", (dir / "e.png").string(), figures::Format::kPng);
  bool exponent = false;
  for (const figures::TextBox& t : e.texts) {
    exponent = exponent || t.text.find("1e-12") != std::string::npos;
    if (t.text.find("current") == std::string::npos && t.text != "exponent") {
      EXPECT_LE(t.text.size(), 6u) << t.text;
    }
  }
  EXPECT_TRUE(exponent);
  expect_clear(d, "ticks");
  expect_clear(e, "exponent");
  fs::remove_all(dir);
}

TEST(FigureText, DensityScaleFollowsTheBulkFilling) {
  // The collider demo runs at bulk filling 1/3: its colour bar ends at 1.25 x 1/3 (figures.hpp), not near 1.
  const Design d = LoadDesign(test::SourcePath("designs/02_two_source_collider.yaml"));
  ASSERT_NEAR(d.conditions.filling.value(), 1.0 / 3.0, 1e-12);
  const fs::path dir = scratch();
  const Drawing dr = figures::DrawDensity(d, uniform_map(d), (dir / "d.png").string(), figures::Format::kPng);
  const std::vector<double> labels = numbers_in(dr);
  ASSERT_GE(labels.size(), 2u);
  for (double v : labels) EXPECT_LE(v, 1.25 / 3.0 + 1e-12);  // the scale bar reads "10 um", not a number
  bool bulk = false;
  for (const figures::TextBox& t : dr.texts) bulk = bulk || t.text == "bulk 1/3";
  EXPECT_TRUE(bulk);
  fs::remove_all(dir);
}

TEST(FigureText, EdgesOnTheTwoSidesOfAGateAreDrawnApart) {
  // The Hall bar's split gate Q is crossed by edges running down one side and up the other. Every pair of
  // drawn edge pieces of channel 1 stays at least 8 px apart (centre to centre: 6 px of page between two
  // 2 px lines, three line widths, common practice for lines to read as two), except within 15 px of
  // their ends (where they meet at contacts and constrictions). Traced, the two sides of Q are 5.3 px apart.
  const Design d = LoadDesign(test::SourcePath("designs/01_hallbar_qpc.yaml"));
  const EdgeNetwork net = TraceEdges(d, BuildChannelGeometry(d), d.conditions.field_T);
  const fs::path dir = scratch();
  const auto drawing = figures::DrawLayout(d, net, (dir / "l.png").string(), figures::Format::kPng, "apart");
  ASSERT_GE(drawing.data.size(), net.pieces.size());  // the pieces, then the arrow heads
  // Each drawn piece as points 1 px apart along it, leaving out 15 px at either end.
  auto interior_points = [](const figures::PixelLine& l) {
    std::vector<geometry::Point> out;
    double total = 0;
    for (std::size_t k = 0; k + 1 < l.size(); ++k) total += geometry::distance(l[k], l[k + 1]);
    double walked = 0;
    for (std::size_t k = 0; k + 1 < l.size(); ++k) {
      const double seg = geometry::distance(l[k], l[k + 1]);
      for (double s = 0; s < seg; s += 1.0)
        if (walked + s > 15 && walked + s < total - 15)
          out.push_back({l[k].x + s / seg * (l[k + 1].x - l[k].x), l[k].y + s / seg * (l[k + 1].y - l[k].y)});
      walked += seg;
    }
    return out;
  };
  double closest = HUGE_VAL;
  for (std::size_t a = 0; a < net.pieces.size(); ++a)
    for (std::size_t b = a + 1; b < net.pieces.size(); ++b) {
      if (net.pieces[a].channel != 0 || net.pieces[b].channel != 0) continue;
      for (const auto& pa : interior_points(drawing.data[a]))
        for (const auto& pb : interior_points(drawing.data[b])) closest = std::min(closest, geometry::distance(pa, pb));
    }
  EXPECT_GE(closest, 8.0);
  fs::remove_all(dir);
}

TEST(FigureText, ReportWritesEveryFigureAsPngAndSvg) {
  const fs::path dir = scratch() / "report";
  const test::CommandRun r = test::RunHallway("report '" + test::SourcePath("designs/01_hallbar_qpc.yaml") + "' -o '" +
                                              dir.string() + "' --fast --quiet");
  ASSERT_EQ(r.exit_code, 0) << r.output;
  int pngs = 0;
  for (const auto& e : fs::directory_iterator(dir)) {
    if (e.path().extension() != ".png") continue;
    ++pngs;
    fs::path svg = e.path();
    svg.replace_extension(".svg");
    EXPECT_TRUE(fs::exists(svg)) << svg;
    if (fs::exists(svg)) {
      EXPECT_GT(fs::file_size(svg), 100u) << svg;
    }
  }
  EXPECT_GE(pngs, 4);  // two layouts, a transmission plot, the bias plots
  fs::remove_all(dir.parent_path());
}

}  // namespace
}  // namespace hallway
