// Atomic output files; see output.hpp.
#include "output.hpp"

#include <unistd.h>

#include <cerrno>
#include <cmath>
#include <cstdio>
#include <cstring>
#include <filesystem>
#include <iostream>
#include <random>

#include "hallway/design_loader.hpp"
#include "hallway/electrostatics.hpp"
#include "progress.hpp"

namespace hallway::cli {

namespace fs = std::filesystem;

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
                   DensityMap* map_out) {
  if (fast) {
    *geometry = BuildChannelGeometry(design);
    *note += "  (--fast: bare-potential boundaries, no electrostatic solve)\n";
    return true;
  }
  try {
    const Progress progress("hallway", 1, false);
    progress.Step(0, "self-consistent electrostatics");
    const ElectrostaticProblem problem(design);
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
      std::cerr << "hallway: the electrostatic solve did not converge (residual " << map.stats.residual
                << "); use --fast for the bare estimate\n";
      *exit_code = kExitDesignError;
      return false;
    }
    NetworkOptions options;
    options.density = &map;
    *geometry = BuildChannelGeometry(design, options);
    if (map_out) *map_out = map;
    return true;
  } catch (const std::length_error& e) {
    std::cerr << "hallway: design error: " << e.what() << "\n";
    *exit_code = kExitDesignError;
    return false;
  }
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
