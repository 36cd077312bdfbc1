// Atomic output files; see output.hpp.
#include "output.hpp"

#include <fcntl.h>
#include <sys/stat.h>
#include <sys/syscall.h>
#include <unistd.h>

#include <atomic>
#include <csignal>
#include <fstream>
#include <sstream>

#include <cerrno>
#include <cmath>
#include <cstdio>
#include <cstring>
#include <filesystem>
#include <iostream>
#include <optional>
#include <random>
#include <regex>

#include <fmt/core.h>

#include "hallway/design_loader.hpp"
#include "hallway/electrostatics.hpp"
#include "hallway/units.hpp"
#include "progress.hpp"
#include "transmissions.hpp"

namespace hallway::cli {

namespace fs = std::filesystem;
using units::FormatSI;

const char* const kSafetyCaution =
    "\nCaution: these predictions are model estimates, not measurements. A gate voltage past the leakage or\n"
    "breakdown onset can destroy a sample. Your lab's own safety rules and local regulations for cryogens,\n"
    "magnets and high voltage come first; nothing printed here replaces them.\n";

bool LoadOrReport(const std::string& path, Design* design, int* exit_code) {
  try {
    *design = LoadDesign(path);
    return true;
  } catch (const DesignError& e) {
    std::cerr << "hallway: design error: " << e.what() << "\n";
    *exit_code = kExitDesignError;
    return false;
  }
}

bool BuildDevice(Design design, bool fast, std::size_t max_memory_bytes, std::optional<Device>* device,
                 std::string* note, int* exit_code) {
  DeviceOptions options;
  options.bare_estimate = fast;
  options.electrostatics.max_memory_bytes = max_memory_bytes;
  try {
    const Progress progress("hallway", 1, false);
    if (!fast) progress.Step(0, "self-consistent electrostatics");
    device->emplace(std::move(design), options);
  } catch (const GridTooLarge& e) {
    *exit_code = ReportGridTooLarge(e, GridAdvice::kFastOption);
    return false;
  }
  const Device& dev = **device;
  if (ReportErrors(dev.check().findings) > 0) {
    std::cerr << "hallway: run `hallway check` for the full list; nothing was solved\n";
    *exit_code = kExitDesignError;
    return false;
  }
  if (const auto& s = dev.summary().electrostatics) {
    *note += fmt::format(
        "  electrostatics: {} x {} cells of {:.3g} nm, {} operator applications, residual {:.1e}, {}, {:.2g} s\n",
        dev.density()->nx, dev.density()->ny, dev.density()->cell_m * 1e9, s->operator_applications, s->residual,
        s->converged ? "converged" : "NOT converged", s->seconds);
    if (!s->converged) {
      std::cerr << "hallway: resource limit: the electrostatic solve did not converge within "
                << s->operator_applications << " operator applications (residual " << s->residual
                << " of the ungated density); use --fast for the bare estimate\n";
      *exit_code = kExitResourceLimit;
      return false;
    }
  } else {
    *note += "  (--fast: bare-potential channel boundaries, no whole-mesa electrostatic solve)\n";
  }
  if (!dev.usable()) {  // an error of the transmissions from the gates or of the channel geometry
    ReportErrors(dev.summary().findings);
    *exit_code = kExitDesignError;
    return false;
  }
  *note += TransmissionsText(dev.design(), dev.summary().transmissions);
  return true;
}

namespace {
double physical_memory_bytes() {
  const long pages = sysconf(_SC_PHYS_PAGES), page = sysconf(_SC_PAGE_SIZE);
  return pages > 0 && page > 0 ? static_cast<double>(pages) * static_cast<double>(page) : 0.0;
}
std::string human_size(double bytes) {
  return bytes < 1073741824.0 ? fmt::format("{:.0f} MiB", bytes / 1048576.0)
                              : fmt::format("{:.1f} GiB", bytes / 1073741824.0);
}
}  // namespace

bool ParseMaxMemory(const std::string& text, std::size_t* bytes, int* exit_code) {
  *bytes = kDefaultMaxMemoryBytes;
  if (text.empty()) return true;
  static const std::regex form(R"(^\s*([0-9]+(?:\.[0-9]+)?)\s*([kKMGT]i?B|B)\s*$)");
  std::smatch mt;
  auto fail = [&](const std::string& why) {
    std::cerr << "hallway: usage error: --max-memory '" << text << "': " << why << "\n";
    *exit_code = kExitUsage;
    return false;
  };
  if (!std::regex_match(text, mt, form)) return fail("expected a size with its unit, such as 4GiB, 512MiB or 2GB");
  const std::string unit = mt[2];
  double scale = 1.0;
  if (unit != "B") {
    const double base = unit.size() == 3 ? 1024.0 : 1000.0;
    const char prefix = unit[0];
    const int power = (prefix == 'k' || prefix == 'K') ? 1 : prefix == 'M' ? 2 : prefix == 'G' ? 3 : 4;
    scale = std::pow(base, power);
  }
  const double value = std::stod(mt[1]) * scale;
  if (value < 1048576.0) return fail("below 1 MiB, too small for any electrostatic grid");
  if (value > 1125899906842624.0) return fail("above 1 PiB");
  *bytes = static_cast<std::size_t>(value);
  if (const double have = physical_memory_bytes(); have > 0.0 && value > have)
    std::cerr << "hallway: warning: --max-memory " << text << " is more than this machine's " << human_size(have)
              << " of memory; a grid that large would swap or be stopped by the system\n";
  return true;
}

int ReportGridTooLarge(const GridTooLarge& e, GridAdvice advice) {
  std::cerr << "hallway: resource limit: " << e.what() << "; nothing was solved.\n";
  if (advice == GridAdvice::kCoarserGrid)
    std::cerr << "  Coarsen the grid (--grid " << FormatSI(e.fitting_cell_m, "m") << " or coarser fits), or";
  else if (advice == GridAdvice::kFastOption)
    std::cerr << "  Use --fast for the bare estimate without a grid, or";
  else
    std::cerr << "  A stage that needs a grid even with --fast (the constriction windows) exceeds the limit:";
  std::cerr << " raise the limit with --max-memory (now " << human_size(static_cast<double>(e.limit_bytes));
  if (const double have = physical_memory_bytes(); have > 0.0) std::cerr << "; this machine has " << human_size(have);
  std::cerr << ").\n";
  return kExitResourceLimit;
}

bool RequireFinite(const std::vector<std::vector<double>>& values, const std::string& stage) {
  for (const auto& row : values)
    for (double x : row)
      if (!std::isfinite(x)) {
        std::cerr << "hallway: internal error: a value that is not finite appeared in " << stage
                  << "; nothing was written\n";
        return false;
      }
  return true;
}

namespace {
// JSON pointer of the first number that is not finite, or nullopt.
std::optional<std::string> first_non_finite(const nlohmann::json& j, const std::string& at) {
  if (j.is_number_float()) return std::isfinite(j.get<double>()) ? std::nullopt : std::optional<std::string>(at);
  if (j.is_array()) {
    for (std::size_t i = 0; i < j.size(); ++i)
      if (auto bad = first_non_finite(j[i], at + "/" + std::to_string(i))) return bad;
  } else if (j.is_object()) {
    for (const auto& [key, value] : j.items())
      if (auto bad = first_non_finite(value, at + "/" + key)) return bad;
  }
  return std::nullopt;
}
}  // namespace

bool RequireFiniteJson(const nlohmann::json& result, const std::string& stage) {
  if (const auto bad = first_non_finite(result, "")) {
    std::cerr << "hallway: internal error: a value that is not finite appeared in " << stage << " (at " << *bad
              << "); nothing was written\n";
    return false;
  }
  return true;
}

int ReportErrors(const std::vector<Finding>& findings) {
  int n = 0;
  for (const Finding& f : findings)
    if (f.severity == Severity::kError) {
      std::cerr << "hallway: design error: " << f.where.ToString() << ": " << f.message << "\n";
      ++n;
    }
  return n;
}

namespace {

// The text of a small regular file, or "" when it is not one (a design is at most kMaxDesignBytes).
std::string read_small_regular(const std::string& path) {
  struct stat st {};
  if (::stat(path.c_str(), &st) != 0 || !S_ISREG(st.st_mode) || st.st_size > static_cast<off_t>(kMaxDesignBytes))
    return "";
  std::ifstream in(path, std::ios::binary);
  std::stringstream ss;
  ss << in.rdbuf();
  return ss.str();
}

std::string trim_value(std::string v) {
  // A trailing comment, then spaces, then one pair of quotes.
  if (const auto hash = v.find(" #"); hash != std::string::npos) v.erase(hash);
  auto blank = [](char c) { return c == ' ' || c == '\t' || c == '\r'; };
  while (!v.empty() && blank(v.back())) v.pop_back();
  while (!v.empty() && blank(v.front())) v.erase(0, 1);
  if (v.size() >= 2 && (v.front() == '"' || v.front() == '\'') && v.back() == v.front()) v = v.substr(1, v.size() - 2);
  return v;
}

// The `file:` value of the top-level `layout:` block of a design text, block or flow style.
std::string layout_file_of(const std::string& text) {
  std::istringstream in(text);
  std::string line;
  bool inside = false;
  while (std::getline(in, line)) {
    if (!line.empty() && line.back() == '\r') line.pop_back();
    if (!inside) {
      if (line.rfind("layout:", 0) != 0) continue;
      const std::string rest = line.substr(7);
      if (const auto brace = rest.find('{'); brace != std::string::npos) {
        const auto key = rest.find("file:", brace);
        if (key == std::string::npos) return "";
        const std::string after = rest.substr(key + 5);
        return trim_value(after.substr(0, after.find_first_of(",}")));
      }
      inside = true;
      continue;
    }
    // The block ends at the next line that starts in the first column (not a comment).
    if (!line.empty() && line[0] != ' ' && line[0] != '\t' && line[0] != '#') return "";
    const auto first = line.find_first_not_of(" \t");
    if (first != std::string::npos && line.compare(first, 5, "file:") == 0) return trim_value(line.substr(first + 5));
  }
  return "";
}

}  // namespace

std::vector<std::string> DesignInputs(const std::string& design_path) {
  std::vector<std::string> files{design_path};
  const std::string layout = layout_file_of(read_small_regular(design_path));
  if (!layout.empty()) {
    fs::path file(layout);
    if (file.is_relative()) file = fs::path(design_path).parent_path() / file;
    files.push_back(file.string());
  }
  return files;
}

void RefuseInputAsOutput(const std::string& path, const std::vector<std::string>& inputs) {
  if (path.empty()) throw OutputError("no output file name given");
  std::vector<std::string> all;
  for (const std::string& in : inputs)
    for (const std::string& f : DesignInputs(in)) all.push_back(f);
  struct stat out {};
  const bool exists = ::stat(path.c_str(), &out) == 0;
  std::error_code ec;
  const fs::path target = fs::weakly_canonical(fs::absolute(path), ec);
  for (const std::string& in : all) {
    struct stat st {};
    if (exists && ::stat(in.c_str(), &st) == 0 && st.st_dev == out.st_dev && st.st_ino == out.st_ino)
      throw OutputError("refusing to write over the input file " + in + " (" + path + " is the same file)");
    std::error_code ec2;
    if (!ec && fs::weakly_canonical(fs::absolute(in), ec2) == target && !ec2)
      throw OutputError("refusing to write over the input file " + in);
  }
}

namespace {

// Writes to a character device or a named pipe in place: never created, truncated or replaced.
void write_in_place(const std::string& path, const std::string& text, bool fifo) {
  // O_NONBLOCK: a FIFO nobody reads fails at once (ENXIO) instead of blocking forever.
  const int fd = ::open(path.c_str(), O_WRONLY | O_CLOEXEC | O_NOCTTY | O_NONBLOCK);
  if (fd < 0) {
    if (fifo && errno == ENXIO) throw OutputError(path + " is a named pipe that nobody reads; nothing was written");
    throw OutputError("cannot open " + path + ": " + std::strerror(errno));
  }
  const int flags = ::fcntl(fd, F_GETFL);
  if (flags >= 0) ::fcntl(fd, F_SETFL, flags & ~O_NONBLOCK);
  std::size_t done = 0;
  while (done < text.size()) {
    const ssize_t n = ::write(fd, text.data() + done, text.size() - done);
    if (n < 0 && errno == EINTR) continue;
    if (n <= 0) {
      const int err = n < 0 ? errno : EIO;
      ::close(fd);
      throw OutputError("cannot write " + path + ": " + std::strerror(err));
    }
    done += static_cast<std::size_t>(n);
  }
  if (::close(fd) != 0 && errno != EINTR) throw OutputError("cannot write " + path + ": " + std::strerror(errno));
}

}  // namespace

void WriteFileAtomically(const std::string& path, const std::string& text, const std::vector<std::string>& inputs) {
  if (path.empty()) throw OutputError("no output file name given");
  RefuseInputAsOutput(path, inputs);
  std::error_code ec;
  struct stat st {};
  if (::stat(path.c_str(), &st) == 0) {
    if (S_ISDIR(st.st_mode)) throw OutputError(path + " is a folder, not a file");
    if (S_ISCHR(st.st_mode) || S_ISFIFO(st.st_mode)) return write_in_place(path, text, S_ISFIFO(st.st_mode));
    if (!S_ISREG(st.st_mode))
      throw OutputError(path + " is a " + (S_ISBLK(st.st_mode) ? "block device" : "socket or other special file") +
                        ", not a file; nothing was written");
  }
  const fs::path dir = fs::absolute(path).parent_path();
  if (!fs::is_directory(dir, ec)) throw OutputError("the folder " + dir.string() + " does not exist");
  std::random_device rd;
  std::string tmp_name(".");
  tmp_name.append(fs::path(path).filename().string()).append(".tmp").append(std::to_string(rd() % 1000000));
  const fs::path tmp = dir / tmp_name;
  RegisterTemporary(tmp.string());
  FILE* f = std::fopen(tmp.c_str(), "wbx");
  if (!f) {
    const int err = errno;
    UnregisterTemporary(tmp.string());
    throw OutputError("cannot create " + tmp.string() + ": " + std::strerror(err));
  }
  const bool wrote = std::fwrite(text.data(), 1, text.size(), f) == text.size();
  const bool flushed = std::fflush(f) == 0 && ::fsync(fileno(f)) == 0;
  const bool closed = std::fclose(f) == 0;
  if (!wrote || !flushed || !closed) {
    const int err = errno;
    fs::remove(tmp, ec);
    UnregisterTemporary(tmp.string());
    throw OutputError("cannot write " + path + ": " + std::strerror(err));
  }
  fs::rename(tmp, path, ec);
  if (ec) {
    std::error_code ec3;
    fs::remove(tmp, ec3);
    UnregisterTemporary(tmp.string());
    throw OutputError("cannot move the finished file into place at " + path + ": " + ec.message());
  }
  UnregisterTemporary(tmp.string());
}

// The registry of temporaries. A slot is free (0), being filled (1), a file (2) or a folder (3); the
// handler reads only slots in state 2 or 3, whose path is complete.
namespace {
constexpr int kSlots = 32;
constexpr std::size_t kPathMax = 4096;
struct TempSlot {
  std::atomic<int> state{0};
  char path[kPathMax] = {};
};
TempSlot g_slots[kSlots];

// Removes the entries of a folder (one level) and the folder itself, with system calls only.
void remove_folder_in_handler(const char* path) {
  const int fd = ::open(path, O_RDONLY | O_DIRECTORY | O_CLOEXEC);
  if (fd >= 0) {
    alignas(8) char buf[8192];
    while (true) {
      const long n = ::syscall(SYS_getdents64, fd, buf, sizeof buf);
      if (n <= 0) break;
      for (long off = 0; off < n;) {
        // struct linux_dirent64: d_ino (8), d_off (8), d_reclen (2), d_type (1), d_name.
        unsigned short reclen = 0;
        std::memcpy(&reclen, buf + off + 16, sizeof reclen);
        const char* name = buf + off + 19;
        if (!(name[0] == '.' && (name[1] == '\0' || (name[1] == '.' && name[2] == '\0'))))
          if (::unlinkat(fd, name, 0) != 0) ::unlinkat(fd, name, AT_REMOVEDIR);
        off += reclen;
      }
    }
    ::close(fd);
  }
  ::rmdir(path);
}

extern "C" void cleanup_and_reraise(int sig) {
  const int saved = errno;
  for (TempSlot& s : g_slots) {
    const int state = s.state.load();
    if (state == 2) ::unlink(s.path);
    if (state == 3) remove_folder_in_handler(s.path);
  }
  errno = saved;
  struct sigaction dfl {};
  dfl.sa_handler = SIG_DFL;
  sigemptyset(&dfl.sa_mask);
  ::sigaction(sig, &dfl, nullptr);
  ::raise(sig);
}
}  // namespace

void RegisterTemporary(const std::string& path, bool folder) {
  if (path.size() >= kPathMax) return;
  for (TempSlot& s : g_slots) {
    int expected = 0;
    if (s.state.compare_exchange_strong(expected, 1)) {
      std::memcpy(s.path, path.c_str(), path.size() + 1);
      s.state.store(folder ? 3 : 2);
      return;
    }
  }
}

void UnregisterTemporary(const std::string& path) {
  for (TempSlot& s : g_slots) {
    const int state = s.state.load();
    if ((state == 2 || state == 3) && path == s.path) {
      s.state.store(0);
      return;
    }
  }
}

void InstallCleanupHandlers() {
  for (int sig : {SIGINT, SIGTERM, SIGHUP}) {
    struct sigaction old {};
    if (::sigaction(sig, nullptr, &old) == 0 && old.sa_handler == SIG_IGN) continue;  // nohup and the like
    struct sigaction sa {};
    sa.sa_handler = cleanup_and_reraise;
    sigemptyset(&sa.sa_mask);
    ::sigaction(sig, &sa, nullptr);
  }
}

}  // namespace hallway::cli
