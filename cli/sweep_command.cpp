// `hallway sweep`: a grid (or lock-step list) of design variants, solved in parallel with threads
// and, under mpirun, across MPI ranks; one CSV row per point, written as points finish.
//
// Work: chunks are handed out one at a time from rank 0's queue as threads and ranks become free.
// Determinism: the points are cut into consecutive chunks of kChunk; within a chunk each electrostatic
// solve starts from the previous points' solutions (extrapolated linearly from the last two when the
// points are equally spaced), the first from scratch, and FFTW runs on one thread
// per solve. A chunk therefore gives the same numbers whichever thread or rank computes it, so serial,
// threaded and MPI runs write the same rows; the file is rewritten sorted by point when the sweep ends. --resume
// keeps the chunks whose every point is already in the file and recomputes the others.
#include <fcntl.h>
#include <fmt/core.h>
#include <mpi.h>
#include <sys/file.h>
#include <sys/stat.h>
#include <unistd.h>

#include <algorithm>
#include <atomic>
#include <chrono>
#include <cmath>
#include <cstdint>
#include <cstdlib>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <iostream>
#include <map>
#include <mutex>
#include <set>
#include <sstream>
#include <thread>

#include "commands.hpp"
#include "hallway/check.hpp"
#include "hallway/design_loader.hpp"
#include "hallway/electrostatics.hpp"
#include "hallway/map.hpp"
#include "hallway/network.hpp"
#include "hallway/noise.hpp"
#include "hallway/saddle.hpp"
#include "hallway/transport.hpp"
#include "hallway/units.hpp"
#include "output.hpp"
#include "progress.hpp"

namespace hallway::cli {
namespace {

constexpr int kChunk = 4;
constexpr int kTagRow = 1, kTagDone = 2, kTagRequest = 3, kTagChunk = 4;

struct Axis {
  std::string key;
  std::vector<std::string> values;  // value texts with units
  std::vector<double> si;           // the same in SI, for the CSV
};

// "KEY=FROM:TO:N" with units in FROM/TO; the value texts keep FROM's unit.
Axis parse_axis(const std::string& spec) {
  const auto eq = spec.find('=');
  if (eq == std::string::npos) throw std::invalid_argument("--vary takes KEY=FROM:TO:N, got '" + spec + "'");
  Axis a;
  a.key = spec.substr(0, eq);
  std::vector<std::string> parts;
  std::stringstream ss(spec.substr(eq + 1));
  std::string p;
  while (std::getline(ss, p, ':')) parts.push_back(p);
  if (parts.size() != 3) throw std::invalid_argument("--vary " + a.key + ": give FROM:TO:N");
  int n = 0;
  std::size_t used = 0;
  try {
    n = std::stoi(parts[2], &used);
  } catch (...) {
    used = 0;
  }
  if (used == 0 || used != parts[2].size())  // "3.7" or "3x" is not a count of points
    throw std::invalid_argument("--vary " + a.key + ": N must be a whole number, got '" + parts[2] + "'");
  if (n < 1 || n > 100000) throw std::invalid_argument("--vary " + a.key + ": N must lie in [1, 100000]");
  const units::Quantity from = units::ParseQuantity(parts[0]), to = units::ParseQuantity(parts[1]);
  if (!(from.dimension == to.dimension))
    throw std::invalid_argument("--vary " + a.key + ": FROM and TO have different units");
  // The unit text of FROM (what follows the number), to write every value in it.
  std::string unit = parts[0];
  std::size_t k = 0;
  while (k < unit.size() && (std::isdigit(static_cast<unsigned char>(unit[k])) || std::strchr("+-.eE", unit[k]))) ++k;
  unit = unit.substr(k);
  while (!unit.empty() && unit.front() == ' ') unit.erase(0, 1);
  const double scale = unit.empty() ? 1.0 : units::ParseUnit(unit).value_si;
  for (int i = 0; i < n; ++i) {
    const double si = n == 1 ? from.value_si : from.value_si + (to.value_si - from.value_si) * i / (n - 1);
    a.si.push_back(si);
    a.values.push_back(fmt::format("{:.12g}", si / scale) + (unit.empty() ? "" : " " + unit));
  }
  return a;
}

struct Point {
  std::vector<std::size_t> index;  // per axis
};

std::string quantities_header(const Design& d, const std::set<std::string>& q) {
  std::string h;
  auto add = [&](const std::string& c) { h += "," + c; };
  if (q.count("currents"))
    for (const Contact& c : d.contacts) add("I_" + c.name + "_A");
  if (q.count("voltages"))
    for (const Contact& c : d.contacts) add("V_" + c.name + "_V");
  if (q.count("conductance"))
    for (const Contact& a : d.contacts)
      for (const Contact& b : d.contacts) add("G_" + a.name + "_" + b.name + "_S");
  std::vector<std::string> amps;
  for (const Wiring& w : d.wiring)
    if (w.role == Role::kAmplifier) amps.push_back(w.contact);
  if (q.count("noise"))
    for (std::size_t a = 0; a < amps.size(); ++a)
      for (std::size_t b = a; b < amps.size(); ++b) add("S_exc_" + amps[a] + "_" + amps[b] + "_A2_per_Hz");
  if (q.count("snr"))
    for (const auto& a : amps) add("SNR_" + a);
  if (q.count("fano"))
    for (const Constriction& k : d.constrictions) {
      add("P_" + k.name);
      add("P_finite_temperature_" + k.name);
    }
  if (q.count("saddle"))
    for (const Constriction& k : d.constrictions) add("saddle_density_" + k.name + "_per_m2");
  if (q.count("pinchoff"))
    for (const Constriction& k : d.constrictions) add("pinch_off_density_zero_" + k.name + "_V");
  return h;
}

// A memory or iteration bound was reached (exit code 5, not a design error).
class LimitReached : public std::runtime_error {
 public:
  using std::runtime_error::runtime_error;
};
constexpr const char* kLimitPrefix = "resource limit: ";

// The electrostatic solutions of the last two points of a chunk and where they were taken.
struct WarmChain {
  std::optional<DensityMap> last, before;
  std::vector<double> last_at, before_at;
  void reset() { *this = {}; }
};

struct SolveCounts {
  std::atomic<long> applications{0}, cold_applications{0}, cold_solves{0}, warm_solves{0};
  std::atomic<long> pinch_applications{0}, pinch_solves{0};  // the pinch-off searches, apart
};

// True when x - last equals last - before on every axis (to rounding) and the step is not zero.
bool equal_step(const std::vector<double>& x, const std::vector<double>& last, const std::vector<double>& before) {
  bool moved = false;
  for (std::size_t a = 0; a < x.size(); ++a) {
    const double scale = std::max({std::abs(x[a]), std::abs(last[a]), std::abs(before[a]), 1e-300});
    if (std::abs((x[a] - last[a]) - (last[a] - before[a])) > 1e-9 * scale) return false;
    moved = moved || x[a] != last[a];
  }
  return moved;
}

// Solves one point at parameters `at`; *chain carries the electrostatic solutions of the previous
// points of the chunk. The solve starts from the linear extrapolation of the last two when the points
// are equally spaced, else from the last one, else from scratch.
std::string solve_point(const std::string& text, const std::string& path, const std::set<std::string>& q, bool fast,
                        const std::vector<double>& at, std::size_t max_memory, WarmChain* chain, SolveCounts* counts) {
  const Design d = LoadDesignFromString(text, path);
  const CheckResult check = CheckDesign(d);
  if (!check.ok())
    throw DesignError({path, 0, 0, ""}, "a sweep point fails the design checks: " + check.findings.front().message);
  ChannelGeometry geometry;
  std::optional<DensityMap> map;
  if (!fast) {
    ElectrostaticsOptions eo;
    eo.threads = 1;
    eo.max_memory_bytes = max_memory;
    const ElectrostaticProblem problem(d, eo);
    std::vector<double> volts;
    for (const Gate& g : d.gates) volts.push_back(g.voltage_V);
    auto fits = [&](const std::optional<DensityMap>& s) { return s && s->nx == problem.nx() && s->ny == problem.ny(); };
    std::optional<DensityMap> predicted;
    if (fits(chain->last) && fits(chain->before) && equal_step(at, chain->last_at, chain->before_at))
      predicted = ExtrapolatedStart(*chain->before, *chain->last);
    const DensityMap* start = predicted ? &*predicted : fits(chain->last) ? &*chain->last : nullptr;
    map = problem.Solve(volts, start);
    counts->applications += map->stats.operator_applications;
    if (start) {
      ++counts->warm_solves;
    } else {
      ++counts->cold_solves;
      counts->cold_applications += map->stats.operator_applications;
    }
    if (!map->stats.converged)
      throw LimitReached("the electrostatic solve did not converge within " +
                         std::to_string(map->stats.operator_applications) + " operator applications (residual " +
                         fmt::format("{:.2g}", map->stats.residual) + " of the ungated density)");
    NetworkOptions no;
    no.density = &*map;
    geometry = BuildChannelGeometry(d, no);
    chain->before = std::move(chain->last);
    chain->before_at = chain->last_at;
    chain->last = map;
    chain->last_at = at;
  } else {
    geometry = BuildChannelGeometry(d);
  }
  const EdgeNetwork net = TraceEdges(d, geometry, d.conditions.field_T);
  for (const Finding& f : net.findings)
    if (f.severity == Severity::kError) throw std::runtime_error(f.message);
  const TransportResult tr = SolveTransport(d, net);
  // A value that does not exist (the voltage of an isolated floating contact, P of a constriction
  // that is no collider) is an empty field; a value that should exist and is not finite stops the sweep.
  std::string row;
  const char* stage = "";
  auto add = [&](double x) {
    if (!std::isfinite(x))
      throw std::runtime_error(std::string("a value that is not finite appeared in the ") + stage +
                               "; nothing is written for this point");
    row += fmt::format(",{:.10g}", x);
  };
  auto add_optional = [&](const std::optional<double>& x) {
    if (x) {
      add(*x);
    } else {
      row += ",";
    }
  };
  stage = "contact currents";
  if (q.count("currents"))
    for (double i : tr.current_A) add(i);
  stage = "contact voltages";
  if (q.count("voltages"))
    for (const auto& v : tr.voltage_V) add_optional(v);
  stage = "conductance matrix";
  if (q.count("conductance"))
    for (const auto& r : tr.conductance_S)
      for (double g : r) add(g);
  if (q.count("noise") || q.count("snr") || q.count("fano")) {
    NoiseOptions no;
    no.phase_samples = 64;
    const NoiseResult n = SolveNoise(d, net, tr, no);
    std::vector<int> amps;
    for (std::size_t i = 0; i < d.wiring.size(); ++i)
      if (d.wiring[i].role == Role::kAmplifier) amps.push_back(static_cast<int>(i));
    stage = "noise matrix";
    if (q.count("noise"))
      for (std::size_t a = 0; a < amps.size(); ++a)
        for (std::size_t b = a; b < amps.size(); ++b)
          add(n.excess_A2_per_Hz[static_cast<std::size_t>(amps[a])][static_cast<std::size_t>(amps[b])]);
    stage = "amplifier signal-to-noise ratios";
    if (q.count("snr"))
      for (const AmplifierNoise& a : n.amplifiers) add(a.snr);
    stage = "collider Fano factors";
    if (q.count("fano"))
      for (std::size_t k = 0; k < d.constrictions.size(); ++k) {
        std::optional<double> p, pt;
        for (const ColliderPrediction& c : n.colliders)
          if (c.constriction == static_cast<int>(k) && c.fano) {
            p = *c.fano;
            pt = c.fano_finite_temperature;
          }
        add_optional(p);
        add_optional(pt);
      }
  }
  stage = "saddle densities";
  if (q.count("saddle"))
    for (const Constriction& k : d.constrictions) {
      // The saddle of saddle.hpp on the point's whole-mesa map (the same definition as `hallway map`,
      // whose figure comes from its finer window around the gap).
      const auto gap = FindGap(d, k, nullptr);
      std::optional<double> n;
      if (map && gap) {
        const Saddle s = DensitySaddle(*map, SaddleStrip::For(d, k, *gap, 0.5 * map->cell_m));
        n = d.heterostructure.density_per_m2 * std::max(0.0, 1.0 - s.energy);
      }
      add_optional(n);
    }
  // Pinch-off of each constriction (both sides swept together) by the local-window search of
  // `hallway map`; empty when the channel is still open at the search limit.
  stage = "pinch-off voltages";
  if (q.count("pinchoff")) {
    MapOptions mo;
    mo.constrictions_only = true;
    mo.electrostatics.threads = 1;
    mo.electrostatics.max_memory_bytes = max_memory;
    const MapResult mr = ComputeMap(d, mo);
    counts->pinch_applications += mr.operator_applications;
    counts->pinch_solves += mr.solves;
    if (!mr.all_converged)
      throw LimitReached("a solve of the pinch-off search did not converge within its iteration bound");
    for (const Constriction& k : d.constrictions) {
      std::optional<double> v;
      for (const ConstrictionMap& c : mr.constrictions)
        if (c.name == k.name) v = c.pinch_off_V;
      add_optional(v);
    }
  }
  return row;
}

// The sweep record beside the output, "<output>.hallway-sweep": the lock the writing sweep holds
// (flock) for its whole run and the identity of the sweep that wrote the rows, checked by --resume.
// Its text, one "key value" pair a line:
//   hallway-sweep-record 1
//   design <FNV-1a 64-bit hash of the design text and of the layout file it names, hex>
//   vary <key>=<first SI value>:<last SI value>:<N>      (one line per --vary, in order)
//   quantities <groups, sorted, comma-separated>
//   options zip=<0|1> fast=<0|1> cold=<0|1>
//   pid <process id>                                     (while the sweep runs)
class SweepLock {
 public:
  SweepLock() = default;
  SweepLock(const SweepLock&) = delete;
  SweepLock& operator=(const SweepLock&) = delete;
  ~SweepLock() {
    if (fd_ >= 0) ::close(fd_);  // closing releases the lock
  }
  // Opens and locks `path`; on failure returns why (naming the holder's pid when there is one).
  std::string Take(const std::string& path) {
    path_ = path;
    fd_ = ::open(path.c_str(), O_RDWR | O_CREAT | O_CLOEXEC | O_NOFOLLOW, 0644);
    if (fd_ < 0) return "cannot open the sweep record " + path + ": " + std::strerror(errno);
    struct stat st {};
    if (::fstat(fd_, &st) != 0 || !S_ISREG(st.st_mode)) return "the sweep record " + path + " is not a regular file";
    if (::flock(fd_, LOCK_EX | LOCK_NB) != 0) {
      const std::string pid = Value("pid");
      return "another sweep is writing this output (process " + (pid.empty() ? std::string("unknown") : pid) +
             ", holding " + path + "); wait for it or choose another --output";
    }
    return "";
  }
  // The previous record's lines (read before Write replaces them).
  std::vector<std::string> Lines() const {
    std::vector<std::string> lines;
    std::string text(65536, '\0');
    const ssize_t n = ::pread(fd_, text.data(), text.size(), 0);
    text.resize(n > 0 ? static_cast<std::size_t>(n) : 0);
    std::istringstream in(text);
    for (std::string line; std::getline(in, line);) lines.push_back(line);
    return lines;
  }
  std::string Value(const std::string& key) const {
    for (const std::string& line : Lines())
      if (line.rfind(key + " ", 0) == 0) return line.substr(key.size() + 1);
    return "";
  }
  // Replaces the record; `running` adds this process's pid.
  bool Write(const std::vector<std::string>& record, bool running) {
    std::string text;
    for (const std::string& line : record) text += line + "\n";
    if (running) text += "pid " + std::to_string(::getpid()) + "\n";
    if (::ftruncate(fd_, 0) != 0) return false;
    return ::pwrite(fd_, text.data(), text.size(), 0) == static_cast<ssize_t>(text.size()) && ::fsync(fd_) == 0;
  }
  void Finish(const std::vector<std::string>& record) {
    if (fd_ >= 0) Write(record, false);
  }

 private:
  std::string path_;
  int fd_ = -1;
};

std::uint64_t fnv1a(std::uint64_t h, const std::string& bytes) {
  for (unsigned char c : bytes) {
    h ^= c;
    h *= 1099511628211ull;
  }
  return h;
}

// The identity of a sweep: what decides the numbers of its rows (see SweepLock).
std::vector<std::string> sweep_record(const std::string& text, const std::vector<std::string>& inputs,
                                      const std::vector<Axis>& axes, const std::set<std::string>& q,
                                      const SweepArgs& args) {
  std::uint64_t h = fnv1a(14695981039346656037ull, text);
  for (std::size_t i = 1; i < inputs.size(); ++i) {  // the layout file, when the design names one
    std::ifstream in(inputs[i], std::ios::binary);
    std::stringstream ss;
    ss << in.rdbuf();
    h = fnv1a(fnv1a(h, "\n--layout--\n"), ss.str());
  }
  std::vector<std::string> r{"hallway-sweep-record 1", fmt::format("design {:016x}", h)};
  for (const Axis& a : axes)
    r.push_back(fmt::format("vary {}={:.17g}:{:.17g}:{}", a.key, a.si.front(), a.si.back(), a.si.size()));
  std::string groups;
  for (const std::string& g : q) groups += (groups.empty() ? "" : ",") + g;
  r.push_back("quantities " + groups);
  r.push_back(fmt::format("options zip={:d} fast={:d} cold={:d}", args.zip, args.fast, args.cold));
  return r;
}

// The rows of an earlier run's file that --resume may keep: complete (ended by a newline), with as
// many fields as the header, a point number in range, the point's own varied values (as written)
// and numbers (or empty fields) everywhere else. A point with two different rows is dropped.
std::map<std::size_t, std::string> valid_rows(const std::string& file, const std::string& header,
                                              const std::vector<Axis>& axes, const std::vector<Point>& points,
                                              std::size_t* dropped) {
  std::map<std::size_t, std::string> rows;
  std::set<std::size_t> conflicting;
  const std::size_t fields = static_cast<std::size_t>(std::count(header.begin(), header.end(), ',')) + 1;
  std::size_t begin = header.size();
  *dropped = 0;
  while (begin < file.size()) {
    const std::size_t end = file.find('\n', begin);
    if (end == std::string::npos) {  // a torn last row
      ++*dropped;
      break;
    }
    const std::string line = file.substr(begin, end - begin);
    begin = end + 1;
    std::vector<std::string> f;
    for (std::size_t at = 0;;) {
      const std::size_t comma = line.find(',', at);
      f.push_back(line.substr(at, comma == std::string::npos ? std::string::npos : comma - at));
      if (comma == std::string::npos) break;
      at = comma + 1;
    }
    bool ok = f.size() == fields && !f[0].empty() && f[0].size() <= 7 &&
              f[0].find_first_not_of("0123456789") == std::string::npos;
    const std::size_t p = ok ? std::stoul(f[0]) : 0;
    ok = ok && p < points.size();
    for (std::size_t a = 0; ok && a < axes.size(); ++a)
      ok = f[1 + a] == fmt::format("{:.10g}", axes[a].si[points[p].index[a]]);
    for (std::size_t k = 1 + axes.size(); ok && k < f.size(); ++k) {
      if (f[k].empty()) continue;
      char* stop = nullptr;
      const double x = std::strtod(f[k].c_str(), &stop);
      ok = stop == f[k].c_str() + f[k].size() && std::isfinite(x) && !std::isspace(static_cast<unsigned char>(f[k][0]));
    }
    if (!ok) {
      ++*dropped;
      continue;
    }
    const auto [it, fresh] = rows.emplace(p, line + "\n");
    if (!fresh && it->second != line + "\n") conflicting.insert(p);
  }
  for (std::size_t p : conflicting) {
    rows.erase(p);
    ++*dropped;
  }
  return rows;
}

// Rank 0's checks before anything is written, then the lock, the resume and the opened output.
int prepare_output(const SweepArgs& args, const std::string& header, const std::vector<Axis>& axes,
                   const std::vector<Point>& points, const std::vector<std::string>& record, SweepLock* lock,
                   std::map<std::size_t, std::string>* kept, std::ofstream* out) {
  auto output_error = [](const std::string& why) {
    std::cerr << "hallway: output error: " << why << "\n";
    return kExitOutputError;
  };
  const std::string record_path = args.output + ".hallway-sweep";
  try {
    RefuseInputAsOutput(args.output, {args.design_path});
    RefuseInputAsOutput(record_path, {args.design_path});
  } catch (const OutputError& e) {
    return output_error(std::string(e.what()) + "; nothing was written");
  }
  struct stat st {};
  const bool exists = ::stat(args.output.c_str(), &st) == 0;
  if (exists && !S_ISREG(st.st_mode))
    return output_error(args.output +
                        " is not a regular file; a sweep writes its rows as they finish and renames the sorted file "
                        "into place, so --output must name a regular file");
  {
    std::error_code ec;
    const auto dir = std::filesystem::absolute(args.output).parent_path();
    if (!std::filesystem::is_directory(dir, ec)) return output_error("the folder " + dir.string() + " does not exist");
  }
  if (const std::string why = lock->Take(record_path); !why.empty()) return output_error(why);
  if (args.resume && exists) {
    const std::vector<std::string> before = lock->Lines();
    std::string file;
    {
      std::ifstream in(args.output, std::ios::binary);
      std::stringstream ss;
      ss << in.rdbuf();
      file = ss.str();
    }
    if (file.compare(0, header.size(), header) != 0) {
      std::cerr << "hallway: usage error: --resume: " << args.output
                << " was written by a different sweep (its columns differ); nothing was changed\n";
      return kExitUsage;
    }
    // Which line of the identity differs (the pid line is not part of it).
    std::vector<std::string> old_identity;
    for (const std::string& line : before)
      if (line.rfind("pid ", 0) != 0) old_identity.push_back(line);
    if (old_identity.empty()) {
      // Written by an older hallway, or copied here under a new name: only the row checks apply.
      std::cerr << "hallway: warning: --resume: " << args.output << " has no sweep record (" << record_path
                << "), so a changed design cannot be detected; only rows whose varied values match this sweep's "
                   "points are kept\n";
    } else if (old_identity != record) {
      std::string why = "its sweep record differs";
      {
        for (std::size_t i = 0; i < std::max(old_identity.size(), record.size()); ++i) {
          const std::string was = i < old_identity.size() ? old_identity[i] : "(nothing)";
          const std::string now = i < record.size() ? record[i] : "(nothing)";
          if (was != now) {
            why += ": was '" + was + "', this sweep has '" + now + "'";
            break;
          }
        }
      }
      std::cerr << "hallway: usage error: --resume: " << args.output << " was written by a different sweep: " << why
                << " (the design, a --vary range or N, --quantities, --zip, --fast or --cold changed); run without "
                   "--resume to start again; nothing was changed\n";
      return kExitUsage;
    }
    std::size_t dropped = 0;
    *kept = valid_rows(file, header, axes, points, &dropped);
    if (dropped > 0)
      std::cerr << "hallway: warning: --resume: " << dropped << " incomplete or malformed row(s) of " << args.output
                << " are computed again\n";
  }
  if (!lock->Write(record, true)) return output_error("cannot write the sweep record " + record_path);
  // Rows go straight into the output as they finish, so an interrupted sweep loses nothing; the
  // finished file is rewritten sorted, atomically. A resumed file first gets its kept rows only.
  try {
    std::string start = header;
    for (const auto& [p, r] : *kept) start += r;
    WriteFileAtomically(args.output, start, {args.design_path});
  } catch (const OutputError& e) {
    return output_error(e.what());
  }
  out->open(args.output, std::ios::app);
  if (!*out) return output_error("cannot write " + args.output);
  return kExitOk;
}

}  // namespace

int RunSweep(const SweepArgs& args, int argc, char** argv) {
  // MPI only when started by mpirun (OpenMPI sets OMPI_COMM_WORLD_SIZE).
  const bool use_mpi = std::getenv("OMPI_COMM_WORLD_SIZE") != nullptr;
  int rank = 0, size = 1;
  bool threads_may_send = true;
  if (use_mpi) {
    int provided = 0;
    // Worker threads send rows one at a time under a mutex: serialized, not funnelled, use of MPI.
    MPI_Init_thread(&argc, &argv, MPI_THREAD_SERIALIZED, &provided);
    threads_may_send = provided >= MPI_THREAD_SERIALIZED;
    MPI_Comm_rank(MPI_COMM_WORLD, &rank);
    MPI_Comm_size(MPI_COMM_WORLD, &size);
  }
  struct Finalize {
    bool on;
    ~Finalize() {
      if (on) MPI_Finalize();
    }
  } finalize{use_mpi};
  auto usage = [&](const std::string& why) {
    if (rank == 0) std::cerr << "hallway: usage error: " << why << "\n";
    return kExitUsage;
  };
  std::size_t max_memory = 0;
  if (int code = 0; !ParseMaxMemory(args.max_memory, &max_memory, &code)) return code;

  Design base;
  if (int code = 0; !LoadOrReport(args.design_path, &base, &code)) return code;
  std::string text;
  {
    std::ifstream in(args.design_path, std::ios::binary);
    std::stringstream ss;
    ss << in.rdbuf();
    text = ss.str();
  }
  if (args.vary.empty()) return usage("give at least one --vary KEY=FROM:TO:N");
  if (args.output.empty()) return usage("--output FILE.csv is required");
  std::vector<Axis> axes;
  try {
    for (const auto& v : args.vary) {
      axes.push_back(parse_axis(v));
      for (std::size_t k = 0; k + 1 < axes.size(); ++k)
        if (axes[k].key == axes.back().key)
          throw std::invalid_argument("--vary " + axes.back().key + " is given twice; vary each key once");
    }
  } catch (const std::exception& e) {
    return usage(e.what());
  }
  std::set<std::string> q;
  {
    const std::string list = args.quantities.empty() ? "currents,voltages,noise,snr,fano,saddle" : args.quantities;
    std::stringstream ss(list);
    std::string item;
    const std::set<std::string> known{"currents", "voltages", "conductance", "noise",
                                      "snr",      "fano",     "saddle",      "pinchoff"};
    while (std::getline(ss, item, ',')) {
      if (!known.count(item))
        return usage("--quantities: unknown group '" + item +
                     "' (currents, voltages, conductance, noise, snr, fano, saddle, pinchoff)");
      q.insert(item);
    }
    if (args.fast && q.count("pinchoff"))
      return usage("--quantities pinchoff needs the electrostatic solves; it cannot be combined with --fast");
  }
  // Points: a Cartesian grid (first --vary slowest) or lock-step.
  std::vector<Point> points;
  if (args.zip) {
    for (const Axis& a : axes)
      if (a.values.size() != axes.front().values.size()) return usage("--zip needs the same N on every --vary");
    for (std::size_t i = 0; i < axes.front().values.size(); ++i)
      points.push_back({std::vector<std::size_t>(axes.size(), i)});
  } else {
    // Count before listing: two axes of 100000 points would otherwise be listed before the check.
    double count = 1.0;
    for (const Axis& a : axes) count *= static_cast<double>(a.values.size());
    if (count > 1e6) return usage("the grid has " + fmt::format("{:.3g}", count) + " points, more than a million");
    std::vector<std::size_t> idx(axes.size(), 0);
    while (true) {
      points.push_back({idx});
      std::size_t k = axes.size();
      while (k > 0) {
        --k;
        if (++idx[k] < axes[k].values.size()) break;
        idx[k] = 0;
        if (k == 0) goto done;
      }
      if (axes.size() == 0) break;
    }
  done:;
  }
  if (points.size() > 1000000) return usage("more than a million points");
  auto text_of = [&](const Point& p) {
    std::string t = text;
    for (std::size_t a = 0; a < axes.size(); ++a)
      t = SetDesignValue(t, args.design_path, axes[a].key, axes[a].values[p.index[a]]);
    return t;
  };
  // Every key and both ends of every range must load before any work starts.
  try {
    for (std::size_t a = 0; a < axes.size(); ++a)
      for (std::size_t end : {std::size_t{0}, axes[a].values.size() - 1}) {
        std::string t = text;
        t = SetDesignValue(t, args.design_path, axes[a].key, axes[a].values[end]);
        LoadDesignFromString(t, args.design_path + " with " + axes[a].key + " = " + axes[a].values[end]);
      }
  } catch (const DesignError& e) {
    if (rank == 0) std::cerr << "hallway: design error: " << e.what() << "\n";
    return kExitDesignError;
  }
  std::string header = "point";
  for (const Axis& a : axes) header += "," + a.key;
  header += quantities_header(base, q) + "\n";

  // Rank 0 checks the output, takes its lock and reads what --resume keeps; every rank then exits
  // with rank 0's verdict, so a refusal never leaves a rank waiting for work.
  const int chunks = static_cast<int>((points.size() + kChunk - 1) / kChunk);
  std::map<std::size_t, std::string> kept;
  std::ofstream out;
  SweepLock output_lock;
  const std::vector<std::string> record = sweep_record(text, DesignInputs(args.design_path), axes, q, args);
  int verdict = kExitOk;
  if (rank == 0) verdict = prepare_output(args, header, axes, points, record, &output_lock, &kept, &out);
  if (use_mpi) MPI_Bcast(&verdict, 1, MPI_INT, 0, MPI_COMM_WORLD);
  if (verdict != kExitOk) return verdict;

  std::vector<char> todo(static_cast<std::size_t>(chunks), 1);
  std::size_t kept_points = 0;
  for (int c = 0; c < chunks; ++c) {
    bool complete = true;
    const std::size_t first = static_cast<std::size_t>(c) * kChunk,
                      last = std::min(points.size(), static_cast<std::size_t>(c + 1) * kChunk);
    for (std::size_t p = first; p < last; ++p) complete = complete && kept.count(p);
    if (complete) {
      todo[static_cast<std::size_t>(c)] = 0;
      kept_points += last - first;
    }
  }
  if (use_mpi) MPI_Bcast(todo.data(), chunks, MPI_CHAR, 0, MPI_COMM_WORLD);

  // Rank 0 writes: the kept rows, then every finished row, flushed.
  std::mutex out_mutex;
  std::map<std::size_t, std::string> rows;
  for (int c = 0; c < chunks; ++c)
    if (!todo[static_cast<std::size_t>(c)])
      for (std::size_t p = static_cast<std::size_t>(c) * kChunk;
           p < std::min(points.size(), static_cast<std::size_t>(c + 1) * kChunk); ++p)
        rows[p] = kept[p];
  auto write_row = [&](std::size_t p, const std::string& r) {
    std::lock_guard<std::mutex> lock(out_mutex);
    rows[p] = r;
    out << r;
    out.flush();
  };
  // Chunks are handed out one at a time as workers become free, so ranks and threads stay busy when
  // points cost different amounts: rank 0 owns the queue; its threads take from it directly, the
  // other ranks' threads ask rank 0 for their next chunk.
  std::vector<int> queue;
  for (int c = 0; c < chunks; ++c)
    if (todo[static_cast<std::size_t>(c)]) queue.push_back(c);
  const int hw = std::max(1, static_cast<int>(std::thread::hardware_concurrency()) / size);
  // An MPI library without serialized thread support gets one worker thread per rank.
  const int threads = threads_may_send
                          ? std::max(1, std::min(args.threads > 0 ? args.threads : hw, static_cast<int>(queue.size())))
                          : 1;
  std::atomic<int> next{0}, done_points{0};
  SolveCounts counts;
  std::mutex mpi_mutex, error_mutex;
  std::string error;
  auto failed = [&] {
    std::lock_guard<std::mutex> lock(error_mutex);
    return !error.empty();
  };
  // The next chunk of rank 0's queue, or -1 when none is left (or a point has failed).
  auto take = [&] {
    const int i = next++;
    return i < static_cast<int>(queue.size()) && !failed() ? queue[static_cast<std::size_t>(i)] : -1;
  };
  auto next_chunk = [&] {
    if (rank == 0) return take();
    std::lock_guard<std::mutex> lock(mpi_mutex);  // request and reply as one exchange
    int c = -1;
    MPI_Send(nullptr, 0, MPI_CHAR, 0, kTagRequest, MPI_COMM_WORLD);
    MPI_Recv(&c, 1, MPI_INT, 0, kTagChunk, MPI_COMM_WORLD, MPI_STATUS_IGNORE);
    return c;
  };
  const Progress progress("sweep", static_cast<int>(points.size() - kept_points), args.quiet || rank != 0);
  auto worker = [&] {
    while (true) {
      const int c = next_chunk();
      if (c < 0) return;
      WarmChain chain;
      for (std::size_t p = static_cast<std::size_t>(c) * kChunk;
           p < std::min(points.size(), static_cast<std::size_t>(c + 1) * kChunk); ++p) {
        std::string row = std::to_string(p);
        std::vector<double> at;
        for (std::size_t a = 0; a < axes.size(); ++a) {
          at.push_back(axes[a].si[points[p].index[a]]);
          row += fmt::format(",{:.10g}", at.back());
        }
        try {
          if (args.cold) chain.reset();
          row +=
              solve_point(text_of(points[p]), args.design_path, q, args.fast, at, max_memory, &chain, &counts) + "\n";
        } catch (const GridTooLarge& e) {
          std::lock_guard<std::mutex> lock(error_mutex);
          if (error.empty())
            error = std::string(kLimitPrefix) + "point " + std::to_string(p) + ": " + e.what() +
                    "; raise the limit with --max-memory or use --fast";
          return;
        } catch (const LimitReached& e) {
          std::lock_guard<std::mutex> lock(error_mutex);
          if (error.empty()) error = std::string(kLimitPrefix) + "point " + std::to_string(p) + ": " + e.what();
          return;
        } catch (const std::exception& e) {
          std::lock_guard<std::mutex> lock(error_mutex);
          if (error.empty()) error = "point " + std::to_string(p) + ": " + e.what();
          return;
        }
        if (rank == 0) {
          write_row(p, row);
        } else {
          std::lock_guard<std::mutex> lock(mpi_mutex);
          MPI_Send(row.data(), static_cast<int>(row.size()), MPI_CHAR, 0, kTagRow, MPI_COMM_WORLD);
        }
        progress.Step(done_points++, "points");
      }
    }
  };
  std::vector<std::thread> pool;
  for (int t = 0; t < threads; ++t) pool.emplace_back(worker);
  if (rank == 0 && use_mpi) {
    // Hand out chunks and receive the other ranks' rows while the local threads work.
    int finished = 1;
    while (finished < size) {
      // Poll with a pause: a blocking probe spins and would take a core from the workers.
      MPI_Status st;
      int flag = 0;
      {
        std::lock_guard<std::mutex> lock(mpi_mutex);
        MPI_Iprobe(MPI_ANY_SOURCE, MPI_ANY_TAG, MPI_COMM_WORLD, &flag, &st);
      }
      if (!flag) {
        std::this_thread::sleep_for(std::chrono::milliseconds(5));
        continue;
      }
      std::lock_guard<std::mutex> lock(mpi_mutex);
      int count = 0;
      MPI_Get_count(&st, MPI_CHAR, &count);
      std::string buf(static_cast<std::size_t>(count), '\0');
      MPI_Recv(buf.data(), count, MPI_CHAR, st.MPI_SOURCE, st.MPI_TAG, MPI_COMM_WORLD, MPI_STATUS_IGNORE);
      if (st.MPI_TAG == kTagRequest) {
        const int c = take();
        MPI_Send(&c, 1, MPI_INT, st.MPI_SOURCE, kTagChunk, MPI_COMM_WORLD);
      } else if (st.MPI_TAG == kTagDone) {
        ++finished;
        std::lock_guard<std::mutex> elock(error_mutex);
        if (!buf.empty() && error.empty()) error = buf;
      } else {
        write_row(std::stoul(buf.substr(0, buf.find(','))), buf);
        progress.Step(done_points++, "points");
      }
    }
  }
  for (auto& t : pool) t.join();
  if (rank != 0 && use_mpi)
    MPI_Send(error.data(), static_cast<int>(error.size()), MPI_CHAR, 0, kTagDone, MPI_COMM_WORLD);
  // The solver statistics of all ranks, summed on rank 0.
  long totals[6] = {counts.applications.load(), counts.cold_applications.load(),  counts.cold_solves.load(),
                    counts.warm_solves.load(),  counts.pinch_applications.load(), counts.pinch_solves.load()};
  if (use_mpi) {
    long sum[6] = {};
    MPI_Reduce(totals, sum, 6, MPI_LONG, MPI_SUM, 0, MPI_COMM_WORLD);
    std::copy(sum, sum + 6, totals);
  }
  const int error_code = error.rfind(kLimitPrefix, 0) == 0 ? kExitResourceLimit : kExitDesignError;
  // Rank 0 finishes the file; every rank exits with its code.
  int final_code = kExitOk;
  if (rank == 0) {
    out.close();
    if (!error.empty()) {
      std::cerr << "hallway: sweep stopped: " << error << "\n(the finished points are in " << args.output
                << "; fix the cause and run again with --resume)\n";
      final_code = error_code;
    } else {
      // All points done: the sorted file replaces the output atomically.
      std::string all = header;
      for (const auto& [p, r] : rows) all += r;
      try {
        WriteFileAtomically(args.output, all, {args.design_path});
        output_lock.Finish(record);
      } catch (const OutputError& e) {
        std::cerr << "hallway: output error: " << e.what() << "\n";
        final_code = kExitOutputError;
      }
    }
  }
  if (use_mpi) MPI_Bcast(&final_code, 1, MPI_INT, 0, MPI_COMM_WORLD);
  if (final_code != kExitOk || rank != 0) return final_code;
  std::cout << "hallway sweep: " << points.size() << " points (" << kept_points << " kept from before) written to "
            << args.output << "; " << totals[0] << " electrostatic operator applications";
  if (totals[2] + totals[3] > 0)
    std::cout << fmt::format(" ({} in {} solves from scratch, {} in {} warm-started solves)", totals[1], totals[2],
                             totals[0] - totals[1], totals[3]);
  if (totals[5] > 0)
    std::cout << fmt::format("; pinch-off searches: {} solves, {} operator applications", totals[5], totals[4]);
  if (use_mpi) std::cout << " over " << size << " MPI ranks";
  std::cout << "\n";
  return kExitOk;
}

}  // namespace hallway::cli
