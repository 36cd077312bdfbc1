// The CLI's guards on its own: --max-memory parsing, the non-finite result check and atomic writes
// (cli/output.cpp, compiled into this test).
#include <gtest/gtest.h>
#include <sys/wait.h>
#include <unistd.h>

#include <csignal>

#include <cmath>
#include <filesystem>
#include <fstream>
#include <limits>
#include <sstream>

#include "output.hpp"

namespace hallway::cli {
namespace {

namespace fs = std::filesystem;

TEST(MaxMemory, SizesWithBinaryAndDecimalUnits) {
  std::size_t bytes = 0;
  int code = 0;
  ASSERT_TRUE(ParseMaxMemory("", &bytes, &code));
  EXPECT_EQ(bytes, kDefaultMaxMemoryBytes);
  ASSERT_TRUE(ParseMaxMemory("4GiB", &bytes, &code));
  EXPECT_EQ(bytes, std::size_t{4} << 30);
  ASSERT_TRUE(ParseMaxMemory("512 MiB", &bytes, &code));
  EXPECT_EQ(bytes, std::size_t{512} << 20);
  ASSERT_TRUE(ParseMaxMemory("2GB", &bytes, &code));
  EXPECT_EQ(bytes, std::size_t{2000000000});
  ASSERT_TRUE(ParseMaxMemory("1.5MiB", &bytes, &code));
  EXPECT_EQ(bytes, std::size_t{1572864});
  ASSERT_TRUE(ParseMaxMemory("3000000B", &bytes, &code));
  EXPECT_EQ(bytes, std::size_t{3000000});
  for (const char* bad : {"4", "4 G", "4gib", "-1GiB", "0.5MiB", "2PiB", "many"}) {
    code = 0;
    EXPECT_FALSE(ParseMaxMemory(bad, &bytes, &code)) << bad;
    EXPECT_EQ(code, kExitUsage) << bad;
  }
}

TEST(FiniteResults, FirstNonFiniteNumberIsFoundAnywhereInTheDocument) {
  nlohmann::json j = {{"a", 1.0}, {"b", {{"c", {1.0, 2.0, 3.0}}}}, {"d", nullptr}, {"e", "nan"}};
  EXPECT_TRUE(RequireFiniteJson(j, "a test document"));
  j["b"]["c"][1] = std::numeric_limits<double>::quiet_NaN();
  testing::internal::CaptureStderr();
  EXPECT_FALSE(RequireFiniteJson(j, "a test document"));
  const std::string said = testing::internal::GetCapturedStderr();
  EXPECT_NE(said.find("/b/c/1"), std::string::npos) << said;
  EXPECT_NE(said.find("a test document"), std::string::npos) << said;
  j["b"]["c"][1] = 2.0;
  j["f"] = -std::numeric_limits<double>::infinity();
  testing::internal::CaptureStderr();
  EXPECT_FALSE(RequireFiniteJson(j, "a test document"));
  EXPECT_NE(testing::internal::GetCapturedStderr().find("/f"), std::string::npos);
  testing::internal::CaptureStderr();
  EXPECT_FALSE(RequireFinite({{1.0, std::nan("")}}, "a matrix"));
  EXPECT_NE(testing::internal::GetCapturedStderr().find("a matrix"), std::string::npos);
}

TEST(AtomicOutput, WritesWholeFilesAndNeverOverAnInput) {
  const fs::path dir = fs::temp_directory_path() / ("hallway_output_test_" + std::to_string(::getpid()));
  fs::create_directories(dir);
  const fs::path input = dir / "design.yaml", out = dir / "result.json";
  std::ofstream(input) << "hallway: 1\n";
  WriteFileAtomically(out.string(), "first\n", {input.string()});
  WriteFileAtomically(out.string(), "second\n", {input.string()});
  std::stringstream ss;
  ss << std::ifstream(out).rdbuf();
  EXPECT_EQ(ss.str(), "second\n");
  EXPECT_THROW(WriteFileAtomically(input.string(), "x", {input.string()}), OutputError);
  EXPECT_THROW(WriteFileAtomically((dir / "." / "design.yaml").string(), "x", {input.string()}), OutputError);
  EXPECT_THROW(WriteFileAtomically((dir / "no_such_folder" / "x.json").string(), "x", {}), OutputError);
  std::stringstream kept;
  kept << std::ifstream(input).rdbuf();
  EXPECT_EQ(kept.str(), "hallway: 1\n");
  // No temporary file is left behind.
  int files = 0;
  for ([[maybe_unused]] const auto& e : fs::directory_iterator(dir)) ++files;
  EXPECT_EQ(files, 2);
  fs::remove_all(dir);
}

TEST(AtomicOutput, LinksToAnInputAndTheDesignsLayoutAreInputsToo) {
  const fs::path dir = fs::temp_directory_path() / ("hallway_output_links_" + std::to_string(::getpid()));
  fs::remove_all(dir);
  fs::create_directories(dir / "sub");
  const fs::path block = dir / "block.yaml", flow = dir / "flow.yaml", gds = dir / "sub" / "chip.gds";
  std::ofstream(block) << "hallway: 1\nlayout:\n  # the chip\n  file: \"sub/chip.gds\"  # drawn elsewhere\n"
                          "  cell: TOP\nheterostructure:\n  file: not-this\n";
  std::ofstream(flow) << "hallway: 1\nlayout: {cell: TOP, file: sub/chip.gds, layers: {mesa: 1/0}}\n";
  std::ofstream(gds) << "GDS";
  for (const fs::path& design : {block, flow}) {
    const std::vector<std::string> inputs = DesignInputs(design.string());
    ASSERT_EQ(inputs.size(), 2u) << design;
    EXPECT_TRUE(fs::equivalent(inputs[1], gds)) << inputs[1];
    EXPECT_THROW(WriteFileAtomically(gds.string(), "x", {design.string()}), OutputError);
  }
  fs::create_symlink(block, dir / "soft.json");
  fs::create_hard_link(gds, dir / "hard.json");
  EXPECT_THROW(WriteFileAtomically((dir / "soft.json").string(), "x", {block.string()}), OutputError);
  EXPECT_THROW(WriteFileAtomically((dir / "hard.json").string(), "x", {block.string()}), OutputError);
  std::stringstream kept;
  kept << std::ifstream(gds).rdbuf();
  EXPECT_EQ(kept.str(), "GDS");
  EXPECT_EQ(DesignInputs((dir / "sub" / "chip.gds").string()).size(), 1u) << "no layout key, no extra input";
  fs::remove_all(dir);
}

TEST(AtomicOutput, CharacterDevicesAreWrittenInPlaceAndAFullOneIsAnError) {
  WriteFileAtomically("/dev/null", "ignored\n", {});
  EXPECT_TRUE(fs::is_character_file("/dev/null"));
  if (fs::exists("/dev/full")) {
    EXPECT_THROW(WriteFileAtomically("/dev/full", "x", {}), OutputError);
    EXPECT_TRUE(fs::is_character_file("/dev/full"));
  }
}

TEST(SignalCleanup, RegisteredTemporariesAreRemovedAndTheSignalIsRaisedAgain) {
  const fs::path dir = fs::temp_directory_path() / ("hallway_output_signal_" + std::to_string(::getpid()));
  fs::remove_all(dir);
  fs::create_directories(dir / "folder");
  const fs::path file = dir / ".x.tmp", kept = dir / "kept.txt";
  for (const fs::path& p : {file, dir / "folder" / "a.png", dir / "folder" / "b.csv", kept}) std::ofstream(p) << "x";
  const pid_t child = ::fork();
  ASSERT_GE(child, 0);
  if (child == 0) {
    InstallCleanupHandlers();
    RegisterTemporary(file.string());
    RegisterTemporary((dir / "folder").string(), true);
    RegisterTemporary(kept.string());
    UnregisterTemporary(kept.string());  // finished files are no longer temporaries
    ::raise(SIGTERM);
    ::_exit(0);  // not reached: the handler raises SIGTERM again with its default action
  }
  int status = 0;
  ASSERT_EQ(::waitpid(child, &status, 0), child);
  ASSERT_TRUE(WIFSIGNALED(status));
  EXPECT_EQ(WTERMSIG(status), SIGTERM);
  EXPECT_FALSE(fs::exists(file));
  EXPECT_FALSE(fs::exists(dir / "folder"));
  EXPECT_TRUE(fs::exists(kept));
  fs::remove_all(dir);
}

}  // namespace
}  // namespace hallway::cli
