// Outputs named to hurt: an output that is an input (by name, symbolic or hard link, the design's GDSII
// layout), device nodes and FIFOs, "-" and "", a resumed file from another sweep or with damaged rows,
// two writers of one sweep output, an interrupted report, refusals under mpirun. Each runs the built
// executable, as tests/cli_test.cpp does.
#include <fcntl.h>
#include <gtest/gtest.h>
#include <signal.h>
#include <sys/file.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <unistd.h>

#include <algorithm>
#include <chrono>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <sstream>
#include <string>
#include <thread>
#include <vector>

#include "test_support.hpp"

namespace hallway {
namespace {

namespace fs = std::filesystem;

using Outcome = test::CommandRun;
inline Outcome hallway(const std::string& args) {
  return test::RunHallway(args);
}

std::string read(const fs::path& p) {
  std::ifstream in(p, std::ios::binary);
  std::stringstream s;
  s << in.rdbuf();
  return s.str();
}

std::string q(const fs::path& p) {
  return "'" + p.string() + "'";
}

// A fresh folder per test.
fs::path scratch(const std::string& test) {
  const fs::path dir = fs::temp_directory_path() / ("hallway_hostile_" + std::to_string(::getpid())) / test;
  fs::remove_all(dir);
  fs::create_directories(dir);
  return dir;
}

// A copy of the Hall bar demo and of the layout-file variant with its GDSII file.
fs::path copy_design(const fs::path& dir) {
  const fs::path d = dir / "bar.yaml";
  fs::copy_file(test::SourcePath("designs/01_hallbar_qpc.yaml"), d);
  return d;
}
fs::path copy_layout_design(const fs::path& dir) {
  fs::copy_file(test::SourcePath("tests/data/gds/hallbar_layout.yaml"), dir / "layout.yaml");
  fs::copy_file(test::SourcePath("tests/data/gds/hallbar.gds"), dir / "hallbar.gds");
  return dir / "layout.yaml";
}

// A cheap sweep (--fast: no electrostatic solves) of 6 points over the temperature.
std::string fast_sweep(const fs::path& design, const fs::path& out, const std::string& range = "10mK:60mK:6") {
  return "sweep " + q(design) + " --vary conditions.temperature=" + range +
         " --quantities currents,voltages --fast --threads 1 --quiet --output " + q(out);
}

TEST(HostileOutput, SweepRefusesItsDesignAsOutputByNameAndByLinkWithoutTouchingIt) {
  const fs::path dir = scratch("design_as_output");
  const fs::path design = copy_design(dir);
  const std::string before = read(design);
  fs::create_symlink(design, dir / "soft.csv");
  fs::create_hard_link(design, dir / "hard.csv");
  for (const fs::path& out : {design, dir / "soft.csv", dir / "hard.csv", dir / "." / "bar.yaml"}) {
    const Outcome r = hallway(fast_sweep(design, out));
    EXPECT_EQ(r.exit_code, 3) << out << "\n" << r.output;
    EXPECT_NE(r.output.find("refusing to write over the input file"), std::string::npos) << r.output;
    EXPECT_EQ(read(design), before) << out;
  }
  EXPECT_TRUE(fs::is_symlink(dir / "soft.csv"));
  EXPECT_EQ(fs::hard_link_count(design), 2u);
}

TEST(HostileOutput, TheDesignsLayoutFileIsAnInputOfEveryCommand) {
  const fs::path dir = scratch("layout_as_output");
  const fs::path design = copy_layout_design(dir), gds = dir / "hallbar.gds";
  const std::string before = read(gds);
  fs::create_hard_link(gds, dir / "linked.gds");
  for (const std::string& args :
       {"check " + q(design) + " --json " + q(gds), "check " + q(design) + " --json " + q(dir / "linked.gds"),
        "solve " + q(design) + " --fast --json " + q(gds), fast_sweep(design, gds)}) {
    const Outcome r = hallway(args);
    EXPECT_EQ(r.exit_code, 3) << args << "\n" << r.output;
    EXPECT_NE(r.output.find("hallbar.gds"), std::string::npos) << r.output;
    EXPECT_EQ(read(gds), before) << args;
  }
  // The design still loads from its untouched layout.
  EXPECT_EQ(hallway("check " + q(design)).exit_code, 0);
}

TEST(HostileOutput, DeviceNodesAndPipesAreWrittenInPlaceAndNeverReplaced) {
  const fs::path dir = scratch("devices");
  const fs::path design = copy_design(dir);
  // /dev/null takes the JSON and stays a character device (the run is as root in CI).
  Outcome r = hallway("check " + q(design) + " --json /dev/null");
  EXPECT_EQ(r.exit_code, 0) << r.output;
  struct stat st {};
  ASSERT_EQ(::stat("/dev/null", &st), 0);
  EXPECT_TRUE(S_ISCHR(st.st_mode));
  // /dev/full: the write fails with "no space", an output error (Linux, full(4)).
  if (fs::exists("/dev/full")) {
    r = hallway("check " + q(design) + " --json /dev/full");
    EXPECT_EQ(r.exit_code, 3) << r.output;
    ASSERT_EQ(::stat("/dev/full", &st), 0);
    EXPECT_TRUE(S_ISCHR(st.st_mode));
  }
  // A FIFO nobody reads is refused at once instead of blocking; one with a reader gets the JSON.
  const fs::path fifo = dir / "pipe";
  ASSERT_EQ(::mkfifo(fifo.c_str(), 0600), 0);
  r = hallway("check " + q(design) + " --json " + q(fifo));
  EXPECT_EQ(r.exit_code, 3) << r.output;
  EXPECT_NE(r.output.find("nobody reads"), std::string::npos) << r.output;
  std::string received;
  std::thread reader([&] {
    // Opening for reading blocks until hallway opens the other end; it then reads to the end.
    std::ifstream in(fifo, std::ios::binary);
    std::stringstream ss;
    ss << in.rdbuf();
    received = ss.str();
  });
  // hallway must find the reader waiting: retry while the reader thread has not opened yet.
  for (int attempt = 0; attempt < 50; ++attempt) {
    r = hallway("check " + q(design) + " --json " + q(fifo));
    if (r.exit_code != 3) break;
    std::this_thread::sleep_for(std::chrono::milliseconds(100));
  }
  if (r.exit_code == 3) {  // never found the reader: release it so that the test cannot hang
    const int fd = ::open(fifo.c_str(), O_WRONLY);
    if (fd >= 0) ::close(fd);
  }
  reader.join();
  EXPECT_EQ(r.exit_code, 0) << r.output;
  EXPECT_NE(received.find("\"derived\""), std::string::npos);
  ASSERT_EQ(::lstat(fifo.c_str(), &st), 0);
  EXPECT_TRUE(S_ISFIFO(st.st_mode));
  // A sweep needs a regular file (it renames its sorted file into place).
  r = hallway(fast_sweep(design, "/dev/null"));
  EXPECT_EQ(r.exit_code, 3) << r.output;
  ASSERT_EQ(::stat("/dev/null", &st), 0);
  EXPECT_TRUE(S_ISCHR(st.st_mode));
}

TEST(HostileOutput, DashAndEmptyOutputNamesAreUsageErrors) {
  const fs::path dir = scratch("dash");
  const fs::path design = copy_design(dir);
  const fs::path cwd = fs::current_path();
  fs::current_path(dir);
  for (const std::string& args :
       {"check " + q(design) + " --json -", "check " + q(design) + " --json ''", "solve " + q(design) + " --json -",
        "map " + q(design) + " --csv ''", "report " + q(design) + " -o -", fast_sweep(design, "-")}) {
    const Outcome r = hallway(args);
    EXPECT_EQ(r.exit_code, 2) << args << "\n" << r.output;
    EXPECT_NE(r.output.find("needs a file name"), std::string::npos) << r.output;
  }
  EXPECT_FALSE(fs::exists(dir / "-"));
  fs::current_path(cwd);
  EXPECT_NE(hallway("check --help").output.find("'-' or an empty name is refused"), std::string::npos);
}

TEST(HostileOutput, ResumeRefusesTheFileOfAnotherSweep) {
  const fs::path dir = scratch("resume_other");
  const fs::path design = copy_design(dir), out = dir / "t.csv";
  ASSERT_EQ(hallway(fast_sweep(design, out)).exit_code, 0);
  const std::string first = read(out);
  const std::string record = read(dir / "t.csv.hallway-sweep");
  EXPECT_EQ(record.rfind("hallway-sweep-record 1\ndesign ", 0), 0u) << record;
  EXPECT_EQ(record.find("pid "), std::string::npos) << "a finished sweep holds no pid: " << record;
  // Another N, another range, another design: each is refused (usage error) and the file is kept.
  for (const char* range : {"10mK:60mK:7", "10mK:70mK:6"}) {
    const Outcome r = hallway(fast_sweep(design, out, range) + " --resume");
    EXPECT_EQ(r.exit_code, 2) << range << "\n" << r.output;
    EXPECT_NE(r.output.find("different sweep"), std::string::npos) << r.output;
    EXPECT_NE(r.output.find("vary conditions.temperature"), std::string::npos) << r.output;
  }
  { std::ofstream(design, std::ios::app) << "# an edit\n"; }
  Outcome r = hallway(fast_sweep(design, out) + " --resume");
  EXPECT_EQ(r.exit_code, 2) << r.output;
  EXPECT_NE(r.output.find("was 'design "), std::string::npos) << r.output;
  EXPECT_EQ(read(out), first);
  // Without --resume the new sweep starts afresh.
  r = hallway(fast_sweep(design, out, "10mK:60mK:7"));
  EXPECT_EQ(r.exit_code, 0) << r.output;
  const std::string fresh = read(out);
  EXPECT_EQ(std::count(fresh.begin(), fresh.end(), '\n'), 8);
}

TEST(HostileOutput, ResumeKeepsOnlyCompleteWellFormedRowsOfItsOwnPoints) {
  const fs::path dir = scratch("resume_rows");
  const fs::path design = copy_design(dir), out = dir / "t.csv";
  ASSERT_EQ(hallway(fast_sweep(design, out)).exit_code, 0);
  const std::string full = read(out);
  std::vector<std::string> lines;
  {
    std::stringstream ss(full);
    for (std::string l; std::getline(ss, l);) lines.push_back(l);
  }
  ASSERT_EQ(lines.size(), 7u);  // header and 6 points
  // Points 0-3 (the first chunk) are damaged one way each; 4 and 5 are whole and kept.
  std::string row2 = lines[3];
  row2.replace(row2.find(',') + 1, row2.find(',', row2.find(',') + 1) - row2.find(',') - 1, "0.5");  // wrong T
  std::string damaged = lines[0] + "\n" + "0,hello\n" + lines[2].substr(0, lines[2].rfind(',')) + ",abc\n" + row2 +
                        "\n" + lines[5] + "\n" + lines[6] + "\n" + "3,hello\n" + lines[4].substr(0, 5);
  std::ofstream(out, std::ios::binary | std::ios::trunc) << damaged;
  const Outcome r = hallway(fast_sweep(design, out) + " --resume");
  ASSERT_EQ(r.exit_code, 0) << r.output;
  EXPECT_NE(r.output.find("2 kept from before"), std::string::npos) << r.output;
  EXPECT_NE(r.output.find("5 incomplete or malformed row(s)"), std::string::npos) << r.output;
  EXPECT_EQ(read(out), full);
}

TEST(HostileOutput, SecondWriterOfASweepOutputIsRefusedNamingTheHolder) {
  const fs::path dir = scratch("lock");
  const fs::path design = copy_design(dir), out = dir / "t.csv";
  // This process plays the first sweep: it holds the record's lock with its pid in it.
  const fs::path record = dir / "t.csv.hallway-sweep";
  const int fd = ::open(record.c_str(), O_RDWR | O_CREAT, 0644);
  ASSERT_GE(fd, 0);
  ASSERT_EQ(::flock(fd, LOCK_EX | LOCK_NB), 0);
  const std::string text = "hallway-sweep-record 1\npid " + std::to_string(::getpid()) + "\n";
  ASSERT_EQ(::write(fd, text.data(), text.size()), static_cast<ssize_t>(text.size()));
  Outcome r = hallway(fast_sweep(design, out));
  EXPECT_EQ(r.exit_code, 3) << r.output;
  EXPECT_NE(r.output.find("process " + std::to_string(::getpid())), std::string::npos) << r.output;
  EXPECT_FALSE(fs::exists(out));
  ::close(fd);  // released: the next sweep runs
  r = hallway(fast_sweep(design, out));
  EXPECT_EQ(r.exit_code, 0) << r.output;
}

TEST(HostileOutput, ReportFolderIsWholeOrAbsent) {
  const fs::path dir = scratch("report");
  const fs::path design = copy_design(dir);
  // A folder that holds other files is never replaced.
  fs::create_directories(dir / "mine");
  std::ofstream(dir / "mine" / "notes.txt") << "keep me\n";
  Outcome r = hallway("report " + q(design) + " --fast --quiet -o " + q(dir / "mine"));
  EXPECT_EQ(r.exit_code, 3) << r.output;
  EXPECT_EQ(read(dir / "mine" / "notes.txt"), "keep me\n");
  EXPECT_FALSE(fs::exists(dir / "mine" / "report.html"));
  // A new folder, then the same folder again: a previous report is replaced.
  r = hallway("report " + q(design) + " --fast --quiet -o " + q(dir / "rep"));
  ASSERT_EQ(r.exit_code, 0) << r.output;
  EXPECT_TRUE(fs::exists(dir / "rep" / "report.html"));
  r = hallway("report " + q(design) + " --fast --quiet -o " + q(dir / "rep"));
  ASSERT_EQ(r.exit_code, 0) << r.output;
  int hidden = 0;
  for (const auto& e : fs::directory_iterator(dir)) hidden += e.path().filename().string()[0] == '.';
  EXPECT_EQ(hidden, 0) << "no temporary folder is left";
}

TEST(HostileOutput, InterruptedReportLeavesNeitherTheFolderNorATemporary) {
  const fs::path dir = scratch("report_signal");
  const fs::path design = copy_design(dir), folder = dir / "rep";
  for (const int sig : {SIGINT, SIGTERM}) {
    const pid_t child = ::fork();
    ASSERT_GE(child, 0);
    if (child == 0) {
      const int devnull = ::open("/dev/null", O_WRONLY);
      ::dup2(devnull, 1);
      ::dup2(devnull, 2);
      // The self-consistent report takes seconds: long enough to be interrupted while it works.
      ::execl(HALLWAY_EXE, HALLWAY_EXE, "report", design.c_str(), "--quiet", "-o", folder.c_str(),
              static_cast<char*>(nullptr));
      ::_exit(127);
    }
    // Wait for its hidden working folder, then interrupt it.
    const fs::path tmp = dir / (".rep.hallway-tmp-" + std::to_string(child));
    bool seen = false;
    for (int i = 0; i < 3000 && !seen; ++i) {
      seen = fs::exists(tmp);
      if (!seen) std::this_thread::sleep_for(std::chrono::milliseconds(5));
    }
    ASSERT_TRUE(seen) << "the report never created " << tmp;
    ::kill(child, sig);
    int status = 0;
    ASSERT_EQ(::waitpid(child, &status, 0), child);
    if (WIFEXITED(status)) {
      // It finished before the signal arrived: then the folder must be complete.
      EXPECT_TRUE(fs::exists(folder / "report.html"));
      fs::remove_all(folder);
    } else {
      ASSERT_TRUE(WIFSIGNALED(status));
      EXPECT_EQ(WTERMSIG(status), sig) << "the handler re-raises the signal";
      EXPECT_FALSE(fs::exists(folder));
    }
    EXPECT_FALSE(fs::exists(tmp)) << "signal " << sig;
  }
}

TEST(HostileOutput, RefusalsUnderMpirunEndEveryRank) {
  if (std::system("command -v mpirun > /dev/null 2>&1") != 0)
    GTEST_SKIP() << "mpirun is not installed (Debian package openmpi-bin)";
  const fs::path dir = scratch("mpi");
  const fs::path design = copy_design(dir), out = dir / "t.csv";
  ASSERT_EQ(hallway(fast_sweep(design, out)).exit_code, 0);
  // As in Sweep.SerialThreadsAndMpiWriteTheSameFile; `timeout` ends a hung run (exit 124) so that a
  // rank left waiting fails this test instead of stopping CI.
  const std::string env =
      "OMPI_ALLOW_RUN_AS_ROOT=1 OMPI_ALLOW_RUN_AS_ROOT_CONFIRM=1 OMPI_MCA_rmaps_base_oversubscribe=1 "
      "ASAN_OPTIONS=\"${ASAN_OPTIONS:+$ASAN_OPTIONS:}detect_leaks=0\" ";
  auto mpi = [&](const std::string& args) {
    const fs::path log = dir / "mpi.log";
    const int rc = std::system(
        (env + "timeout -k 10 120 mpirun -np 2 '" + HALLWAY_EXE + "' " + args + " > '" + log.string() + "' 2>&1")
            .c_str());
    return Outcome{WIFEXITED(rc) ? WEXITSTATUS(rc) : -1, read(log)};
  };
  Outcome r = mpi(fast_sweep(design, out, "10mK:60mK:7") + " --resume");
  EXPECT_EQ(r.exit_code, 2) << r.output;
  r = mpi(fast_sweep(design, dir / "no_such_folder" / "t.csv"));
  EXPECT_EQ(r.exit_code, 3) << r.output;
  r = mpi(fast_sweep(design, design));
  EXPECT_EQ(r.exit_code, 3) << r.output;
}

// A point count must be a whole number and a key may be varied once: "3.7" used to be read as 3 and a
// repeated key made two axes of the same value.
TEST(HostileOutput, SweepRefusesAFractionalPointCountAndARepeatedKey) {
  const fs::path dir = scratch("vary_checks");
  const fs::path design = copy_design(dir);
  const Outcome frac = hallway(fast_sweep(design, dir / "a.csv", "10mK:60mK:3.7"));
  EXPECT_EQ(frac.exit_code, 2) << frac.output;
  EXPECT_NE(frac.output.find("N must be a whole number"), std::string::npos) << frac.output;
  const Outcome twice = hallway(fast_sweep(design, dir / "b.csv") + " --vary conditions.temperature=20mK:30mK:2");
  EXPECT_EQ(twice.exit_code, 2) << twice.output;
  EXPECT_NE(twice.output.find("given twice"), std::string::npos) << twice.output;
  EXPECT_FALSE(fs::exists(dir / "a.csv"));
  EXPECT_FALSE(fs::exists(dir / "b.csv"));
}

}  // namespace
}  // namespace hallway
