// GDSII import: the reader's flattening against the independent library that wrote the fixtures
// (Debian's python3-gdspy 1.4.2; tests/data/gds/make_fixtures.py records its own flattening), hand-made
// records for BOX, PATH and malformed or hostile files, and a layout design that must solve exactly
// like the same design written inline.
#include <gtest/gtest.h>

#include <unistd.h>
#include <algorithm>
#include <cmath>
#include <filesystem>
#include <fstream>
#include <nlohmann/json.hpp>
#include <sstream>

#include "hallway/design_loader.hpp"
#include "hallway/geometry/gdsii.hpp"
#include "hallway/network.hpp"
#include "hallway/transport.hpp"
#include "test_support.hpp"

namespace hallway {
namespace {

namespace fs = std::filesystem;
using geometry::GdsError;
using geometry::ReadGds;

std::string read(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  std::stringstream ss;
  ss << in.rdbuf();
  return ss.str();
}

TEST(Gds, FlatteningAgreesWithTheLibraryThatWroteTheFile) {
  // Rotation, reflection, magnification, arrays (plain and rotated), nesting two deep, and a
  // rectangle on datatype 2; database unit 1 nm, user unit 1 um.
  const auto flat = ReadGds(read(test::SourcePath("tests/data/gds/transforms.gds")), "TOP");
  EXPECT_DOUBLE_EQ(flat.database_unit_m, 1e-9);
  const auto expected = nlohmann::json::parse(read(test::SourcePath("tests/data/gds/transforms.json")));
  for (const auto& [key, e] : expected["layers"].items()) {
    const int layer = std::stoi(key.substr(0, key.find('/'))), datatype = std::stoi(key.substr(key.find('/') + 1));
    const auto it = flat.polygons.find({layer, datatype});
    ASSERT_NE(it, flat.polygons.end()) << key;
    EXPECT_EQ(it->second.size(), e["count"].get<std::size_t>()) << key;
    double area = 0.0;
    geometry::BoundingBox bb{1e9, 1e9, -1e9, -1e9};
    for (const auto& p : it->second) {
      area += geometry::area(p);
      const auto b = geometry::bounding_box(p);
      bb = {std::min(bb.xmin, b.xmin), std::min(bb.ymin, b.ymin), std::max(bb.xmax, b.xmax), std::max(bb.ymax, b.ymax)};
    }
    // gdspy rounds vertices to the 1 nm grid when it writes; the reader keeps the same integers.
    EXPECT_TRUE(test::NearRel(area, e["area_m2"].get<double>(), 1e-6)) << key;
    const auto& eb = e["bbox_m"];
    EXPECT_NEAR(bb.xmin, eb[0].get<double>(), 2e-9) << key;
    EXPECT_NEAR(bb.ymin, eb[1].get<double>(), 2e-9) << key;
    EXPECT_NEAR(bb.xmax, eb[2].get<double>(), 2e-9) << key;
    EXPECT_NEAR(bb.ymax, eb[3].get<double>(), 2e-9) << key;
  }
  // Labels: the same positions (as a set).
  std::vector<std::pair<double, double>> got, want;
  for (const auto& l : flat.labels.at({63, 0})) got.push_back({l.at.x, l.at.y});
  for (const auto& l : expected["labels"]) want.push_back({l["at_m"][0].get<double>(), l["at_m"][1].get<double>()});
  std::sort(got.begin(), got.end());
  std::sort(want.begin(), want.end());
  ASSERT_EQ(got.size(), want.size());
  for (std::size_t i = 0; i < got.size(); ++i) {
    EXPECT_NEAR(got[i].first, want[i].first, 2e-9);
    EXPECT_NEAR(got[i].second, want[i].second, 2e-9);
  }
}

// A minimal GDSII writer for hand-made records (the published stream format).
struct Gds {
  std::string bytes;
  void rec(int type, int dtype, const std::string& data = "") {
    const std::size_t n = data.size() + 4;
    bytes += static_cast<char>(n >> 8);
    bytes += static_cast<char>(n & 0xFF);
    bytes += static_cast<char>(type);
    bytes += static_cast<char>(dtype);
    bytes += data;
  }
  static std::string i16(int v) { return {static_cast<char>((v >> 8) & 0xFF), static_cast<char>(v & 0xFF)}; }
  static std::string i32(long v) {
    std::string s;
    for (int k = 3; k >= 0; --k) s += static_cast<char>((static_cast<unsigned long>(v) >> (8 * k)) & 0xFF);
    return s;
  }
  static std::string real8(double v) {
    std::string s(8, '\0');
    if (v == 0) return s;
    unsigned char sign = v < 0 ? 0x80 : 0;
    v = std::abs(v);
    int e = 0;
    while (v >= 1) {
      v /= 16;
      ++e;
    }
    while (v < 1.0 / 16) {
      v *= 16;
      --e;
    }
    const auto m = static_cast<std::uint64_t>(std::llround(v * 72057594037927936.0));
    s[0] = static_cast<char>(sign | (e + 64));
    for (int k = 1; k < 8; ++k) s[static_cast<std::size_t>(k)] = static_cast<char>((m >> (8 * (7 - k))) & 0xFF);
    return s;
  }
  // ASCII data padded with a NUL to an even length.
  static std::string text(std::string t) {
    if (t.size() % 2) t += '\0';
    return t;
  }
  static std::string xy(const std::vector<std::pair<long, long>>& pts) {
    std::string s;
    for (const auto& [x, y] : pts) s += i32(x) + i32(y);
    return s;
  }
  void begin(const std::string& cell) {
    if (bytes.empty()) {
      rec(0x00, 2, i16(600));
      rec(0x01, 2, std::string(24, '\0'));
      rec(0x02, 6, text("LIB"));
      rec(0x03, 5, real8(1e-3) + real8(1e-9));
    }
    rec(0x05, 2, std::string(24, '\0'));
    rec(0x06, 6, text(cell));
  }
  void end_cell() { rec(0x07, 0); }
  void end() { rec(0x04, 0); }
};

TEST(Gds, BoxAndPathsWithTheirEndTypes) {
  Gds g;
  g.begin("TOP");
  g.rec(0x2D, 0);  // BOX
  g.rec(0x0D, 2, Gds::i16(2));
  g.rec(0x2E, 2, Gds::i16(0));
  g.rec(0x10, 3, Gds::xy({{0, 0}, {1000, 0}, {1000, 500}, {0, 500}, {0, 0}}));
  g.rec(0x11, 0);
  for (int type : {0, 2, 4}) {  // PATH, width 100 nm, 2 um long with a corner
    g.rec(0x09, 0);
    g.rec(0x0D, 2, Gds::i16(10 + type));
    g.rec(0x0E, 2, Gds::i16(0));
    g.rec(0x21, 2, Gds::i16(type));
    g.rec(0x0F, 3, Gds::i32(100));
    if (type == 4) {
      g.rec(0x30, 3, Gds::i32(30));
      g.rec(0x31, 3, Gds::i32(70));
    }
    g.rec(0x10, 3, Gds::xy({{0, 0}, {1000, 0}, {1000, 1000}}));
    g.rec(0x11, 0);
  }
  g.end_cell();
  g.end();
  const auto flat = ReadGds(g.bytes, "");
  EXPECT_TRUE(test::NearRel(geometry::area(flat.polygons.at({2, 0}).at(0)), 1e-6 * 0.5e-6, 1e-12));
  // A mitred right-angle path of centre length L and width w has area w L (flush), plus w^2/2 per
  // half-width end extension, plus w (b + e) for explicit extensions.
  const double w = 100e-9, L = 2000e-9;
  EXPECT_TRUE(test::NearRel(geometry::area(flat.polygons.at({10, 0}).at(0)), w * L, 1e-9));
  EXPECT_TRUE(test::NearRel(geometry::area(flat.polygons.at({12, 0}).at(0)), w * (L + w), 1e-9));
  EXPECT_TRUE(test::NearRel(geometry::area(flat.polygons.at({14, 0}).at(0)), w * (L + 100e-9), 1e-9));
}

void ExpectGdsError(const std::string& bytes, const std::string& words) {
  try {
    ReadGds(bytes, "");
    ADD_FAILURE() << "no error";
  } catch (const GdsError& e) {
    EXPECT_NE(std::string(e.what()).find(words), std::string::npos) << e.what();
    EXPECT_NE(std::string(e.what()).find("byte "), std::string::npos) << e.what();
  }
}

TEST(Gds, MalformedAndHostileFilesAreErrorsWithTheByteOffset) {
  Gds g;
  g.begin("TOP");
  g.rec(0x08, 0);
  g.rec(0x0D, 2, Gds::i16(1));
  g.rec(0x0E, 2, Gds::i16(0));
  g.rec(0x10, 3, Gds::xy({{0, 0}, {10, 0}, {10, 10}, {0, 0}}));
  g.rec(0x11, 0);
  g.end_cell();
  g.end();
  EXPECT_NO_THROW(ReadGds(g.bytes, ""));
  ExpectGdsError(g.bytes.substr(0, g.bytes.size() - 3), "truncated");
  std::string bad = g.bytes;
  bad[6] = 0;
  bad[7] = 3;  // the record after HEADER: a length below the record header's size
  ExpectGdsError(bad, "record length");
  ExpectGdsError("", "not a GDSII stream file");
  ExpectGdsError("hallway: 1\nname: a design file given as the layout\n", "not a GDSII stream file");
  // A structure that refers to itself through another.
  Gds c;
  c.begin("A");
  c.rec(0x0A, 0);
  c.rec(0x12, 6, Gds::text("B"));
  c.rec(0x10, 3, Gds::xy({{0, 0}}));
  c.rec(0x11, 0);
  c.end_cell();
  c.begin("B");
  c.rec(0x0A, 0);
  c.rec(0x12, 6, Gds::text("A"));
  c.rec(0x10, 3, Gds::xy({{0, 0}}));
  c.rec(0x11, 0);
  c.end_cell();
  c.end();
  try {
    ReadGds(c.bytes, "A");
    ADD_FAILURE() << "cycle not detected";
  } catch (const GdsError& e) {
    EXPECT_NE(std::string(e.what()).find("refers to itself"), std::string::npos) << e.what();
  }
  // A missing structure and an absurd array.
  Gds m;
  m.begin("TOP");
  m.rec(0x0B, 0);
  m.rec(0x12, 6, Gds::text("NONE"));
  m.rec(0x13, 2, Gds::i16(30000) + Gds::i16(30000));
  m.rec(0x10, 3, Gds::xy({{0, 0}, {10, 0}, {0, 10}}));
  m.rec(0x11, 0);
  m.end_cell();
  m.end();
  ExpectGdsError(m.bytes, "array size");
  // Nested arrays of an empty structure that multiply to 10^9 placements (limit 20 million), and one
  // array of a structure with 30 labels that gives 3 x 10^7 labels (limit 100000): both must stop at
  // their limits. The GDSII fuzz target found the kind as a slow input.
  Gds nested;
  nested.begin("LEAF");
  nested.end_cell();
  for (const std::string level : {"L1", "L2", "TOP"}) {
    nested.begin(level);
    nested.rec(0x0B, 0);  // AREF
    nested.rec(0x12, 6, Gds::text(level == "L1" ? "LEAF" : level == "L2" ? "L1" : "L2"));
    nested.rec(0x13, 2, Gds::i16(1000) + Gds::i16(1000));
    nested.rec(0x10, 3, Gds::xy({{0, 0}, {1000, 0}, {0, 1000}}));
    nested.rec(0x11, 0);
    nested.end_cell();
  }
  nested.end();
  ExpectGdsError(nested.bytes, "places structures more than 20000000 times");
  Gds labels;
  labels.begin("LEAF");
  for (int k = 0; k < 30; ++k) {
    labels.rec(0x0C, 0);                     // TEXT
    labels.rec(0x0D, 2, Gds::i16(63));       // LAYER
    labels.rec(0x16, 2, Gds::i16(0));        // TEXTTYPE
    labels.rec(0x10, 3, Gds::xy({{k, 0}}));  // XY
    labels.rec(0x19, 6, Gds::text("Q"));     // STRING
    labels.rec(0x11, 0);                     // ENDEL
  }
  labels.end_cell();
  labels.begin("TOP");
  labels.rec(0x0B, 0);
  labels.rec(0x12, 6, Gds::text("LEAF"));
  labels.rec(0x13, 2, Gds::i16(1000) + Gds::i16(1000));  // 10^6 placements, within the limit
  labels.rec(0x10, 3, Gds::xy({{0, 0}, {1000, 0}, {0, 1000}}));
  labels.rec(0x11, 0);
  labels.end_cell();
  labels.end();
  ExpectGdsError(labels.bytes, "more than 100000 labels");
  // Labels without a position produce nothing, so neither the label nor the vertex limit sees them:
  // 10^6 placements of 300 of them is 3 x 10^8 element visits, which the work bound (2 x 10^8) stops.
  Gds empty;
  empty.begin("LEAF");
  for (int k = 0; k < 300; ++k) {
    empty.rec(0x0C, 0);                  // TEXT
    empty.rec(0x0D, 2, Gds::i16(63));    // LAYER
    empty.rec(0x16, 2, Gds::i16(0));     // TEXTTYPE
    empty.rec(0x19, 6, Gds::text("Q"));  // STRING, no XY
    empty.rec(0x11, 0);                  // ENDEL
  }
  empty.end_cell();
  empty.begin("TOP");
  empty.rec(0x0B, 0);
  empty.rec(0x12, 6, Gds::text("LEAF"));
  empty.rec(0x13, 2, Gds::i16(1000) + Gds::i16(1000));
  empty.rec(0x10, 3, Gds::xy({{0, 0}, {1000, 0}, {0, 1000}}));
  empty.rec(0x11, 0);
  empty.end_cell();
  empty.end();
  ExpectGdsError(empty.bytes, "visits more than 200000000 elements");
}

TEST(Gds, LayoutDesignSolvesLikeTheSameDesignInline) {
  // hallbar.gds draws designs/01_hallbar_qpc.yaml (gate QS as two touching shapes, merged on import).
  const Design a = LoadDesign(test::SourcePath("tests/data/gds/hallbar_layout.yaml"));
  const Design b = LoadDesign(test::SourcePath("designs/01_hallbar_qpc.yaml"));
  ASSERT_EQ(a.contacts.size(), b.contacts.size());
  ASSERT_EQ(a.gates.size(), 2u);
  EXPECT_TRUE(test::NearRel(geometry::area(a.gates[0].outline), geometry::area(b.gates[0].outline), 1e-9));
  for (double sign : {1.0, -1.0}) {
    const auto ta = SolveTransport(a, TraceEdges(a, BuildChannelGeometry(a), sign * a.conditions.field_T));
    const auto tb = SolveTransport(b, TraceEdges(b, BuildChannelGeometry(b), sign * b.conditions.field_T));
    for (std::size_t i = 0; i < a.contacts.size(); ++i)
      for (std::size_t j = 0; j < a.contacts.size(); ++j)
        EXPECT_NEAR(ta.conductance_S[i][j], tb.conductance_S[i][j], 1e-15);
  }
}

TEST(Gds, LayoutErrorsNameWhatIsWrong) {
  const std::string base = read(test::SourcePath("tests/data/gds/hallbar_layout.yaml"));
  const std::string dir = test::SourcePath("tests/data/gds");
  // An object given both inline and in the layout.
  try {
    LoadDesignFromString(test::replace(base, "- {name: W}", "- {name: W, outline: [[0,0],[1,0],[1,1]]}"),
                         dir + "/x.yaml");
    ADD_FAILURE() << "no error";
  } catch (const DesignError& e) {
    EXPECT_NE(std::string(e.what()).find("give it in one place only"), std::string::npos) << e.what();
  }
  // Gates on a layer that has no labels of its own and no labels layer.
  try {
    LoadDesignFromString(test::replace(base, ", labels: 63/0}", "}"), dir + "/x.yaml");
    ADD_FAILURE() << "no error";
  } catch (const DesignError& e) {
    EXPECT_NE(std::string(e.what()).find("has no label"), std::string::npos) << e.what();
  }
  // A missing layout file.
  try {
    LoadDesignFromString(test::replace(base, "file: hallbar.gds", "file: nowhere.gds"), dir + "/x.yaml");
    ADD_FAILURE() << "no error";
  } catch (const DesignError& e) {
    EXPECT_NE(std::string(e.what()).find("the layout file"), std::string::npos) << e.what();
    EXPECT_EQ(e.where().key_path, "layout.file");
  }
  // A folder and an endless device named as the layout: refused before reading, never read forever.
  for (const std::string& name : {std::string("."), std::string("/dev/zero")}) {
    try {
      LoadDesignFromString(test::replace(base, "file: hallbar.gds", "file: " + name), dir + "/x.yaml");
      ADD_FAILURE() << "no error for " << name;
    } catch (const DesignError& e) {
      EXPECT_NE(std::string(e.what()).find("is not a regular file"), std::string::npos) << e.what();
      EXPECT_EQ(e.where().key_path, "layout.file");
    }
  }
}

// A small layout written to a scratch folder: a 120 x 20 um mesa (1/0), contacts W and E (3/0) and
// one gate (5/0), labels on 63/0, database unit 1 nm. Each hostile variant replaces one piece.
struct SmallLayout {
  std::vector<std::pair<long, long>> mesa{{-60000, -10000}, {60000, -10000}, {60000, 10000}, {-60000, 10000}};
  std::string gate_label = "G";
  double mesa_mag = 1.0;  // the mesa is placed by an SREF with this magnification
  double database_unit_m = 1e-9;

  std::string bytes() const {
    Gds g;
    g.rec(0x00, 2, Gds::i16(600));
    g.rec(0x01, 2, std::string(24, '\0'));
    g.rec(0x02, 6, Gds::text("LIB"));
    g.rec(0x03, 5, Gds::real8(database_unit_m * 1e6) + Gds::real8(database_unit_m));
    auto boundary = [&](int layer, std::vector<std::pair<long, long>> pts) {
      pts.push_back(pts.front());
      g.rec(0x08, 0);
      g.rec(0x0D, 2, Gds::i16(layer));
      g.rec(0x0E, 2, Gds::i16(0));
      g.rec(0x10, 3, Gds::xy(pts));
      g.rec(0x11, 0);
    };
    auto label = [&](const std::string& text, long x, long y) {
      g.rec(0x0C, 0);
      g.rec(0x0D, 2, Gds::i16(63));
      g.rec(0x16, 2, Gds::i16(0));
      g.rec(0x10, 3, Gds::xy({{x, y}}));
      g.rec(0x19, 6, Gds::text(text));
      g.rec(0x11, 0);
    };
    g.rec(0x05, 2, std::string(24, '\0'));
    g.rec(0x06, 6, Gds::text("MESA"));
    boundary(1, mesa);
    g.rec(0x07, 0);
    g.rec(0x05, 2, std::string(24, '\0'));
    g.rec(0x06, 6, Gds::text("TOP"));
    g.rec(0x0A, 0);  // SREF MESA
    g.rec(0x12, 6, Gds::text("MESA"));
    g.rec(0x1A, 1, std::string(2, '\0'));
    g.rec(0x1B, 5, Gds::real8(mesa_mag));
    g.rec(0x10, 3, Gds::xy({{0, 0}}));
    g.rec(0x11, 0);
    boundary(3, {{-70000, -6000}, {-58000, -6000}, {-58000, 6000}, {-70000, 6000}});
    boundary(3, {{58000, -6000}, {70000, -6000}, {70000, 6000}, {58000, 6000}});
    boundary(5, {{0, -14000}, {1000, -14000}, {1000, -5000}, {0, -5000}});
    label("W", -65000, 0);
    label("E", 65000, 0);
    label(gate_label, 500, -10000);
    g.rec(0x07, 0);
    g.rec(0x04, 0);
    return g.bytes;
  }
};

// Writes the layout and loads a design that uses it; returns "" or the loader's message.
std::string LoadSmallLayout(const SmallLayout& layout, const std::string& yaml_extra = "") {
  const fs::path dir = fs::temp_directory_path() / ("hallway_gds_hostile_" + std::to_string(::getpid()));
  fs::create_directories(dir);
  {
    std::ofstream o(dir / "small.gds", std::ios::binary);
    o << layout.bytes();
  }
  const std::string yaml =
      "hallway: 1\n"
      "layout: {file: small.gds, cell: TOP, layers: {mesa: 1/0, contacts: 3/0, gates: 5/0, "
      "labels: 63/0}}\n"
      "heterostructure: {depth: 95 nm, density: 2.3e11 cm^-2}\n"
      "conditions: {temperature: 15 mK, filling: 2}\n"
      "wiring: {W: source 10 uV, E: ground}\n" +
      yaml_extra;
  try {
    LoadDesignFromString(yaml, (dir / "small.yaml").string());
    return "";
  } catch (const DesignError& e) {
    return e.what();
  }
}

TEST(Gds, SmallLayoutLoads) {
  EXPECT_EQ(LoadSmallLayout(SmallLayout{}), "");
}

// Each polygon of a layout goes through the checks of an inline outline before CGAL sees it; the
// message names the layout file, the layer and a place.
TEST(Gds, KeyholeEqualPointsAndZeroMagnificationMesasAreRefused) {
  SmallLayout keyhole;  // the usual GDSII encoding of a hole: a cut in and back out along one line
  keyhole.mesa = {{-60000, -10000}, {60000, -10000}, {60000, 10000}, {0, 10000}, {0, 5000},  {10000, 5000},
                  {10000, -5000},   {-10000, -5000}, {-10000, 5000}, {0, 5000},  {0, 10000}, {-60000, 10000}};
  std::string m = LoadSmallLayout(keyhole);
  EXPECT_NE(m.find("small.gds"), std::string::npos) << m;
  EXPECT_NE(m.find("mesa polygon on layer 1/0"), std::string::npos) << m;
  EXPECT_NE(m.find("is not a simple polygon"), std::string::npos) << m;
  SmallLayout equal;
  equal.mesa = {{5, 5}, {5, 5}, {5, 5}, {5, 5}};
  m = LoadSmallLayout(equal);
  EXPECT_NE(m.find("mesa polygon on layer 1/0"), std::string::npos) << m;
  EXPECT_NE(m.find("is not a simple polygon"), std::string::npos) << m;
  SmallLayout collapsed;
  collapsed.mesa_mag = 0.0;
  m = LoadSmallLayout(collapsed);
  EXPECT_NE(m.find("small.gds"), std::string::npos) << m;
  EXPECT_NE(m.find("magnification 0 lies outside"), std::string::npos) << m;
}

// A database unit of 0.9 m would make the 120 um mesa 108 km long.
TEST(Gds, DatabaseUnitOutsideOnePicometreToOneMicrometreIsRefused) {
  SmallLayout huge;
  huge.database_unit_m = 0.9;
  std::string m = LoadSmallLayout(huge);
  EXPECT_NE(m.find("database unit 0.9 m lies outside"), std::string::npos) << m;
  SmallLayout coarse;  // a unit within the reader's bound, placed twice as large: the mesa reaches 12 cm
  coarse.database_unit_m = 1e-6;
  coarse.mesa_mag = 2.0;
  m = LoadSmallLayout(coarse);
  EXPECT_NE(m.find("more than 10 cm from the origin"), std::string::npos) << m;
}

// Layout labels obey the rules of names in YAML.
TEST(Gds, LabelsFollowTheNameRules) {
  for (const std::string bad : {"mesa", "1abc", "a b", "G\xFF", "G\x1B[31m"}) {
    SmallLayout l;
    l.gate_label = bad;
    const std::string m = LoadSmallLayout(l);
    EXPECT_NE(m.find("small.gds"), std::string::npos) << m;
    EXPECT_TRUE(m.find("is not a valid name") != std::string::npos ||
                m.find("is not UTF-8 text without control characters") != std::string::npos)
        << m;
    EXPECT_EQ(m.find('\x1B'), std::string::npos) << "raw escape in the message";
  }
  // A gate labelled like a contact listed in YAML must not vanish.
  SmallLayout twin;
  twin.gate_label = "W";
  const std::string m = LoadSmallLayout(twin, "contacts:\n  - {name: W}\n  - {name: E}\n");
  EXPECT_NE(m.find("the layout's gate W has the name of a contact"), std::string::npos) << m;
}

}  // namespace
}  // namespace hallway
