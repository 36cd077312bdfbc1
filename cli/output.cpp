// Atomic output files; see output.hpp.
#include "output.hpp"

#include <unistd.h>

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

namespace hallway::cli {

namespace fs = std::filesystem;
using units::FormatSI;

const char* const kSafetyCaution =
    "\nAll figures are model estimates. A gate voltage past the leakage or breakdown onset can destroy a\n"
    "sample; follow your lab's own safety rules for cryostats, magnets and electronics.\n";

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

bool BuildGeometry(const Design& design, bool fast, ChannelGeometry* geometry, std::string* note, int* exit_code,
                   DensityMap* map_out, std::size_t max_memory_bytes) {
  if (fast) {
    *geometry = BuildChannelGeometry(design);
    *note += "  (--fast: bare-potential boundaries, no electrostatic solve)\n";
    return true;
  }
  try {
    const Progress progress("hallway", 1, false);
    progress.Step(0, "self-consistent electrostatics");
    ElectrostaticsOptions eo;
    eo.max_memory_bytes = max_memory_bytes;
    const ElectrostaticProblem problem(design, eo);
    std::vector<double> volts;
    for (const Gate& g : design.gates) volts.push_back(g.voltage_V);
    const DensityMap map = problem.Solve(volts);
    char buf[256];
    std::snprintf(buf, sizeof buf,
                  "  electrostatics: %d x %d cells of %.3g nm, %d operator applications, residual %.1e, %s, %.2g s\n",
                  map.nx, map.ny, map.cell_m * 1e9, map.stats.operator_applications, map.stats.residual,
                  map.stats.converged ? "converged" : "NOT converged", map.stats.seconds);
    *note += buf;
    if (!map.stats.converged) {
      std::cerr << "hallway: resource limit: the electrostatic solve did not converge within "
                << map.stats.operator_applications << " operator applications (residual " << map.stats.residual
                << " of the ungated density); use --fast for the bare estimate\n";
      *exit_code = kExitResourceLimit;
      return false;
    }
    NetworkOptions options;
    options.density = &map;
    *geometry = BuildChannelGeometry(design, options);
    if (map_out) *map_out = map;
    return true;
  } catch (const GridTooLarge& e) {
    *exit_code = ReportGridTooLarge(e, false);
    return false;
  }
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

int ReportGridTooLarge(const GridTooLarge& e, bool grid_option) {
  std::cerr << "hallway: resource limit: " << e.what() << "; nothing was solved.\n";
  if (grid_option)
    std::cerr << "  Coarsen the grid (--grid " << FormatSI(e.fitting_cell_m, "m") << " or coarser fits), or";
  else
    std::cerr << "  Use --fast for the bare estimate without a grid, or";
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

void WriteFileAtomically(const std::string& path, const std::string& text, const std::vector<std::string>& inputs) {
  if (path.empty()) throw OutputError("no output file name given");
  std::error_code ec;
  const fs::path target = fs::weakly_canonical(fs::absolute(path), ec);
  for (const std::string& in : inputs) {
    std::error_code ec2;
    if (fs::exists(in, ec2) && fs::exists(path, ec2) && fs::equivalent(in, path, ec2))
      throw OutputError("refusing to write over the input file " + in);
    if (!ec && fs::weakly_canonical(fs::absolute(in), ec2) == target)
      throw OutputError("refusing to write over the input file " + in);
  }
  if (fs::is_directory(path, ec)) throw OutputError(path + " is a folder, not a file");
  const fs::path dir = fs::absolute(path).parent_path();
  if (!fs::is_directory(dir, ec)) throw OutputError("the folder " + dir.string() + " does not exist");
  std::random_device rd;
  std::string tmp_name(".");
  tmp_name.append(fs::path(path).filename().string()).append(".tmp").append(std::to_string(rd() % 1000000));
  const fs::path tmp = dir / tmp_name;
  FILE* f = std::fopen(tmp.c_str(), "wb");
  if (!f) throw OutputError("cannot create " + tmp.string() + ": " + std::strerror(errno));
  const bool wrote = std::fwrite(text.data(), 1, text.size(), f) == text.size();
  const bool flushed = std::fflush(f) == 0 && ::fsync(fileno(f)) == 0;
  const bool closed = std::fclose(f) == 0;
  if (!wrote || !flushed || !closed) {
    fs::remove(tmp, ec);
    throw OutputError("cannot write " + path + ": " + std::strerror(errno));
  }
  fs::rename(tmp, path, ec);
  if (ec) {
    std::error_code ec3;
    fs::remove(tmp, ec3);
    throw OutputError("cannot move the finished file into place at " + path + ": " + ec.message());
  }
}

}  // namespace hallway::cli
