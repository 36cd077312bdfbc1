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
#include <array>
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
#include "hallway/quantities.hpp"
#include "hallway/device.hpp"
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

// The chosen groups of quantities.hpp, in the table's order.
std::vector<const QuantityGroup*> chosen_groups(const std::set<std::string>& q) {
  std::vector<const QuantityGroup*> out;
  for (const QuantityGroup& g : QuantityGroups())
    if (q.count(g.name)) out.push_back(&g);
  return out;
}

std::string quantities_header(const Design& d, const std::set<std::string>& q) {
  std::string h;
  for (const QuantityGroup* g : chosen_groups(q))
    for (const std::string& c : g->columns(d)) h += "," + c;
  return h;
}

// A memory or iteration bound was reached (exit code 5, not a design error).
class LimitReached : public std::runtime_error {
 public:
  using std::runtime_error::runtime_error;
};
constexpr const char* kLimitPrefix = "resource limit: ";

struct SolveCounts {
  std::atomic<long> applications{0}, cold_applications{0}, cold_solves{0}, warm_solves{0};
  std::atomic<long> pinch_applications{0}, pinch_solves{0};  // the pinch-off searches, apart
};

// The pinch-off search of `hallway map` (constrictions only, both sides swept together).
MapResult pinch_off_search(const Design& d, std::size_t max_memory, SolveCounts* counts) {
  MapOptions mo;
  mo.constrictions_only = true;
  mo.electrostatics.threads = 1;
  mo.electrostatics.max_memory_bytes = max_memory;
  MapResult mr = ComputeMap(d, mo);
  counts->pinch_applications += mr.operator_applications;
  counts->pinch_solves += mr.solves;
  if (!mr.all_converged) throw LimitReached("a solve of the pinch-off search did not converge within its iteration bound");
  return mr;
}

// Solves one point at parameters `at` and returns its CSV fields (each with its leading comma) for the
// chosen groups of quantities.hpp. A value that does not exist (the voltage of an isolated floating
// contact, P of a constriction that is no collider) is an empty field; a value that should exist and is
// not finite stops the sweep. *warm carries the electrostatic solutions of the chunk's earlier points.
std::string solve_point(const std::string& text, const std::string& path, const std::set<std::string>& q, bool fast,
                        const std::vector<double>& at, std::size_t max_memory, WarmStarts* warm, SolveCounts* counts) {
  DeviceOptions options;
  options.bare_estimate = fast;
  options.electrostatics.threads = 1;
  options.electrostatics.max_memory_bytes = max_memory;
  options.check_declared_transmissions = false;  // the warnings would not be shown per point
  if (!fast) options.start = warm->StartFor(at);
  const Device device(LoadDesignFromString(text, path), options);
  const Design& d = device.design();
  // The first error, at its place in the user's file (the point's values are set in place).
  if (!device.check().ok())
    for (const Finding& f : device.check().findings)
      if (f.severity == Severity::kError)
        throw DesignError(f.where.file.empty() ? SourceLocation{path, 0, 0, ""} : f.where,
                          "a sweep point fails the design checks: " + f.message);
  if (const auto& es = device.summary().electrostatics) {
    counts->applications += es->operator_applications;
    if (device.summary().warm_started) {
      ++counts->warm_solves;
    } else {
      ++counts->cold_solves;
      counts->cold_applications += es->operator_applications;
    }
    if (!es->converged)
      throw LimitReached("the electrostatic solve did not converge within " +
                         std::to_string(es->operator_applications) + " operator applications (residual " +
                         fmt::format("{:.2g}", es->residual) + " of the ungated density)");
    warm->Push(*device.density(), at);
  }
  for (const Finding& f : device.summary().findings)
    if (f.severity == Severity::kError) throw std::runtime_error(f.message);
  for (const Finding& f : device.edges().findings)
    if (f.severity == Severity::kError) throw std::runtime_error(f.message);
  const std::vector<const QuantityGroup*> groups = chosen_groups(q);
  auto needs = [&](QuantityNeeds n) {
    return std::any_of(groups.begin(), groups.end(), [&](const QuantityGroup* g) { return g->needs == n; });
  };
  std::optional<NoiseResult> noise;
  if (needs(QuantityNeeds::kNoise)) {
    NoiseOptions nopt;
    nopt.phase_samples = 64;
    noise = device.noise(nopt);
  }
  std::optional<MapResult> pinch;
  if (needs(QuantityNeeds::kPinchOffSearch)) pinch = pinch_off_search(d, max_memory, counts);
  const PointResults results{&d, &device.transport(), noise ? &*noise : nullptr, device.density(),
                             pinch ? &*pinch : nullptr};
  std::string row;
  for (const QuantityGroup* g : groups)
    for (const std::optional<double>& x : g->values(results)) {
      if (x && !std::isfinite(*x))
        throw std::runtime_error(std::string("a value that is not finite appeared in the group '") + g->name +
                                 "'; nothing is written for this point");
      row += x ? fmt::format(",{:.10g}", *x) : std::string(",");
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


// MPI only when started by mpirun (OpenMPI sets OMPI_COMM_WORLD_SIZE); finalised on destruction.
struct Mpi {
  bool use = false;
  int rank = 0, size = 1;
  bool threads_may_send = true;  // the library supports serialized calls from worker threads
  Mpi(int& argc, char**& argv) : use(std::getenv("OMPI_COMM_WORLD_SIZE") != nullptr) {
    if (!use) return;
    int provided = 0;
    // Worker threads send rows one at a time under a mutex: serialized, not funnelled, use of MPI.
    MPI_Init_thread(&argc, &argv, MPI_THREAD_SERIALIZED, &provided);
    threads_may_send = provided >= MPI_THREAD_SERIALIZED;
    MPI_Comm_rank(MPI_COMM_WORLD, &rank);
    MPI_Comm_size(MPI_COMM_WORLD, &size);
  }
  ~Mpi() {
    if (use) MPI_Finalize();
  }
  Mpi(const Mpi&) = delete;
  Mpi& operator=(const Mpi&) = delete;
  // Every rank takes rank 0's value.
  int Share(int value) const {
    if (use) MPI_Bcast(&value, 1, MPI_INT, 0, MPI_COMM_WORLD);
    return value;
  }
};

// What a sweep computes: the design, its axes and points, the chosen quantities and the CSV header.
struct SweepPlan {
  std::size_t max_memory = 0;
  Design base;
  std::string text;  // the design file's bytes; each point changes its values in place
  std::vector<Axis> axes;
  std::set<std::string> q;
  std::vector<Point> points;
  std::string header;
  std::string warnings;  // printed before the run: the design checks' and the swept gate voltages'

  std::string TextOf(const Point& p, const std::string& path) const {
    std::string t = text;
    for (std::size_t a = 0; a < axes.size(); ++a) t = SetDesignValue(t, path, axes[a].key, axes[a].values[p.index[a]]);
    return t;
  }
};

std::vector<Axis> parse_axes(const std::vector<std::string>& vary) {
  std::vector<Axis> axes;
  for (const auto& v : vary) {
    axes.push_back(parse_axis(v));
    for (std::size_t k = 0; k + 1 < axes.size(); ++k)
      if (axes[k].key == axes.back().key)
        throw std::invalid_argument("--vary " + axes.back().key + " is given twice; vary each key once");
  }
  return axes;
}

// The groups --quantities names (or the table's defaults).
std::set<std::string> parse_quantities(const SweepArgs& args) {
  std::string defaults, all;
  for (const QuantityGroup& g : QuantityGroups()) {
    all += (all.empty() ? "" : ", ") + std::string(g.name);
    if (g.default_on) defaults += (defaults.empty() ? "" : ",") + std::string(g.name);
  }
  std::set<std::string> q;
  std::stringstream ss(args.quantities.empty() ? defaults : args.quantities);
  for (std::string item; std::getline(ss, item, ',');) {
    if (!FindQuantityGroup(item)) throw std::invalid_argument("--quantities: unknown group '" + item + "' (" + all + ")");
    q.insert(item);
  }
  if (args.fast && q.count("pinchoff"))
    throw std::invalid_argument("--quantities pinchoff needs the electrostatic solves; it cannot be combined with --fast");
  return q;
}

// Points: a Cartesian grid (first --vary slowest) or lock-step; at most a million.
std::vector<Point> list_points(const std::vector<Axis>& axes, bool zip) {
  std::vector<Point> points;
  if (zip) {
    for (const Axis& a : axes)
      if (a.values.size() != axes.front().values.size())
        throw std::invalid_argument("--zip needs the same N on every --vary");
    for (std::size_t i = 0; i < axes.front().values.size(); ++i)
      points.push_back({std::vector<std::size_t>(axes.size(), i)});
    return points;
  }
  // Count before listing: two axes of 100000 points would otherwise be listed before the check.
  double count = 1.0;
  for (const Axis& a : axes) count *= static_cast<double>(a.values.size());
  if (count > 1e6)
    throw std::invalid_argument("the grid has " + fmt::format("{:.3g}", count) + " points, more than a million");
  std::vector<std::size_t> idx(axes.size(), 0);
  while (true) {
    points.push_back({idx});
    std::size_t k = axes.size();
    while (k > 0) {
      --k;
      if (++idx[k] < axes[k].values.size()) break;
      idx[k] = 0;
      if (k == 0) return points;
    }
    if (axes.empty()) return points;
  }
}

// What to say before the run: every gate whose voltage over the sweep leaves the design's gate-voltage
// window (GateLimitProblem, check.hpp), with the gate, the swept range and the limit; then the design's
// own check warnings, less those about a swept gate's fixed voltage (the sweep replaces it). The values
// vary linearly, so the ends of each range are its extremes; the window is the narrowest any end of any
// range gives (a swept limit), so a grid is judged at its worst combination.
std::string sweep_warnings(const SweepPlan& plan, const std::vector<std::array<Design, 2>>& ends) {
  Design strict = plan.base;  // the base design under the narrowest window of the sweep
  for (const auto& pair : ends)
    for (const Design& e : pair) {
      strict.conditions.gate_voltage_min_V =
          std::max(strict.conditions.gate_voltage_min_V, e.conditions.gate_voltage_min_V);
      strict.conditions.gate_voltage_max_V =
          std::min(strict.conditions.gate_voltage_max_V, e.conditions.gate_voltage_max_V);
    }
  std::string out;
  std::set<std::string> swept;  // key paths of the swept gates' `voltage:`
  for (std::size_t g = 0; g < plan.base.gates.size(); ++g) {
    const Gate& base = plan.base.gates[g];
    std::string line;
    for (std::size_t a = 0; a < plan.axes.size() && line.empty(); ++a) {
      const double first = ends[a][0].gates[g].voltage_V, last = ends[a][1].gates[g].voltage_V;
      if (first == base.voltage_V && last == base.voltage_V) continue;
      swept.insert(base.voltage_where.key_path);
      for (const double v : {first, last})
        if (const auto why = GateLimitProblem(strict, v); why && line.empty())
          line = "gate " + base.name + " is swept from " + units::FormatSI(first, "V") + " to " +
                 units::FormatSI(last, "V") + " (--vary " + plan.axes[a].key + "); at " + units::FormatSI(v, "V") +
                 " it " + *why;
    }
    if (!swept.count(base.voltage_where.key_path) && !GateLimitProblem(plan.base, base.voltage_V))
      if (const auto why = GateLimitProblem(strict, base.voltage_V))  // inside the design's window, not the swept one
        line =
            "gate " + base.name + " at " + units::FormatSI(base.voltage_V, "V") + " (under the swept limits) " + *why;
    if (!line.empty()) out += "  - " + line + " [gate-voltage-limit]\n";
  }
  for (const Finding& f : CheckDesign(plan.base).findings)
    if (f.severity == Severity::kWarning && !(f.code == "gate-voltage-limit" && swept.count(f.where.key_path)))
      out += "  - " + f.message + " [" + f.code + "]\n";
  return out.empty() ? out : "\nWarnings\n" + out;
}

// Everything before any work: options, the design, axes, quantities, points, and both ends of every
// range loaded. Every rank runs it on the same input and reaches the same verdict.
int plan_sweep(const SweepArgs& args, int rank, SweepPlan* plan) {
  auto usage = [&](const std::string& why) {
    if (rank == 0) std::cerr << "hallway: usage error: " << why << "\n";
    return kExitUsage;
  };
  if (int code = 0; !ParseMaxMemory(args.max_memory, &plan->max_memory, &code)) return code;
  if (int code = 0; !LoadOrReport(args.design_path, &plan->base, &code)) return code;
  {
    std::ifstream in(args.design_path, std::ios::binary);
    std::stringstream ss;
    ss << in.rdbuf();
    plan->text = ss.str();
  }
  if (args.vary.empty()) return usage("give at least one --vary KEY=FROM:TO:N");
  if (args.output.empty()) return usage("--output FILE.csv is required");
  try {
    plan->axes = parse_axes(args.vary);
    plan->q = parse_quantities(args);
    plan->points = list_points(plan->axes, args.zip);
  } catch (const std::exception& e) {
    return usage(e.what());
  }
  // Every key and both ends of every range must load before any work starts; the values are changed
  // in place, so a message cites the line of the user's file.
  std::vector<std::array<Design, 2>> ends;  // per axis, the design at its first and last value
  try {
    for (const Axis& a : plan->axes) {
      ends.emplace_back();
      for (std::size_t k = 0; k < 2; ++k) {  // the first value, then the last (the same for N = 1)
        const std::string& value = a.values[k == 0 ? 0 : a.values.size() - 1];
        const std::string t = SetDesignValue(plan->text, args.design_path, a.key, value);
        ends.back()[k] = LoadDesignFromString(t, args.design_path + " with " + a.key + " = " + value);
      }
    }
  } catch (const DesignError& e) {
    if (rank == 0) std::cerr << "hallway: design error: " << e.what() << "\n";
    return kExitDesignError;
  }
  plan->warnings = sweep_warnings(*plan, ends);
  plan->header = "point";
  for (const Axis& a : plan->axes) plan->header += "," + a.key;
  plan->header += quantities_header(plan->base, plan->q) + "\n";
  return kExitOk;
}

// The CSV row of point p: its index, its varied values, then its quantities.
std::string point_row(const SweepArgs& args, const SweepPlan& plan, std::size_t p, WarmStarts* chain,
                      SolveCounts* counts) {
  std::string row = std::to_string(p);
  std::vector<double> at;
  for (std::size_t a = 0; a < plan.axes.size(); ++a) {
    at.push_back(plan.axes[a].si[plan.points[p].index[a]]);
    row += fmt::format(",{:.10g}", at.back());
  }
  if (args.cold) chain->Reset();
  return row + solve_point(plan.TextOf(plan.points[p], args.design_path), args.design_path, plan.q, args.fast, at,
                           plan.max_memory, chain, counts) +
         "\n";
}

// Runs the chunks still to do over threads and MPI ranks. Chunks are handed out one at a time as
// workers become free, so ranks and threads stay busy when points cost different amounts: rank 0 owns
// the queue; its threads take from it directly, the other ranks' threads ask rank 0 for their next
// chunk. Rank 0 writes every finished row to the output, flushed.
class Scheduler {
 public:
  Scheduler(const SweepArgs& args, const SweepPlan& plan, const Mpi& mpi, std::ofstream& out,
            std::map<std::size_t, std::string>& rows, const std::vector<char>& todo, std::size_t remaining)
      : args_(args), plan_(plan), mpi_(mpi), out_(out), rows_(rows),
        progress_("sweep", static_cast<int>(remaining), args.quiet || mpi.rank != 0) {
    for (std::size_t c = 0; c < todo.size(); ++c)
      if (todo[c]) queue_.push_back(static_cast<int>(c));
  }

  // Returns the first error ("" when every point was solved); counts are this rank's.
  std::string Run() {
    const int hw = std::max(1, static_cast<int>(std::thread::hardware_concurrency()) / mpi_.size);
    // An MPI library without serialized thread support gets one worker thread per rank.
    const int threads =
        mpi_.threads_may_send
            ? std::max(1, std::min(args_.threads > 0 ? args_.threads : hw, static_cast<int>(queue_.size())))
            : 1;
    std::vector<std::thread> pool;
    for (int t = 0; t < threads; ++t) pool.emplace_back([this] { Work(); });
    if (mpi_.rank == 0 && mpi_.use) Serve();
    for (auto& t : pool) t.join();
    if (mpi_.rank != 0 && mpi_.use)
      MPI_Send(error_.data(), static_cast<int>(error_.size()), MPI_CHAR, 0, kTagDone, MPI_COMM_WORLD);
    return error_;
  }
  SolveCounts counts;

 private:
  bool Failed() {
    std::lock_guard<std::mutex> lock(error_mutex_);
    return !error_.empty();
  }
  void Fail(const std::string& why) {
    std::lock_guard<std::mutex> lock(error_mutex_);
    if (error_.empty()) error_ = why;
  }
  // The next chunk of rank 0's queue, or -1 when none is left (or a point has failed).
  int Take() {
    const int i = next_++;
    return i < static_cast<int>(queue_.size()) && !Failed() ? queue_[static_cast<std::size_t>(i)] : -1;
  }
  int NextChunk() {
    if (mpi_.rank == 0) return Take();
    std::lock_guard<std::mutex> lock(mpi_mutex_);  // request and reply as one exchange
    int c = -1;
    MPI_Send(nullptr, 0, MPI_CHAR, 0, kTagRequest, MPI_COMM_WORLD);
    MPI_Recv(&c, 1, MPI_INT, 0, kTagChunk, MPI_COMM_WORLD, MPI_STATUS_IGNORE);
    return c;
  }
  void WriteRow(std::size_t p, const std::string& r) {
    std::lock_guard<std::mutex> lock(out_mutex_);
    rows_[p] = r;
    out_ << r;
    out_.flush();
  }
  // Solves one point; false (with the error kept) when it failed.
  bool Solve(std::size_t p, WarmStarts* chain) {
    const std::string at = "point " + std::to_string(p) + ": ";
    std::string row;
    try {
      row = point_row(args_, plan_, p, chain, &counts);
    } catch (const GridTooLarge& e) {
      Fail(std::string(kLimitPrefix) + at + e.what() +
           (args_.fast ? "; raise the limit with --max-memory" : "; raise the limit with --max-memory or use --fast"));
      return false;
    } catch (const LimitReached& e) {
      Fail(std::string(kLimitPrefix) + at + e.what());
      return false;
    } catch (const std::exception& e) {
      Fail(at + e.what());
      return false;
    }
    if (mpi_.rank == 0) {
      WriteRow(p, row);
    } else {
      std::lock_guard<std::mutex> lock(mpi_mutex_);
      MPI_Send(row.data(), static_cast<int>(row.size()), MPI_CHAR, 0, kTagRow, MPI_COMM_WORLD);
    }
    progress_.Step(done_points_++, "points");
    return true;
  }
  void Work() {
    const std::size_t n = plan_.points.size();
    for (int c = NextChunk(); c >= 0; c = NextChunk()) {
      WarmStarts chain;
      for (std::size_t p = static_cast<std::size_t>(c) * kChunk; p < std::min(n, static_cast<std::size_t>(c + 1) * kChunk);
           ++p)
        if (!Solve(p, &chain)) return;
    }
  }
  // Rank 0 hands out chunks and receives the other ranks' rows while its own threads work.
  void Serve() {
    int finished = 1;
    while (finished < mpi_.size) {
      // Poll with a pause: a blocking probe spins and would take a core from the workers.
      MPI_Status st;
      int flag = 0;
      {
        std::lock_guard<std::mutex> lock(mpi_mutex_);
        MPI_Iprobe(MPI_ANY_SOURCE, MPI_ANY_TAG, MPI_COMM_WORLD, &flag, &st);
      }
      if (!flag) {
        std::this_thread::sleep_for(std::chrono::milliseconds(5));
        continue;
      }
      std::lock_guard<std::mutex> lock(mpi_mutex_);
      int count = 0;
      MPI_Get_count(&st, MPI_CHAR, &count);
      std::string buf(static_cast<std::size_t>(count), '\0');
      MPI_Recv(buf.data(), count, MPI_CHAR, st.MPI_SOURCE, st.MPI_TAG, MPI_COMM_WORLD, MPI_STATUS_IGNORE);
      if (st.MPI_TAG == kTagRequest) {
        const int c = Take();
        MPI_Send(&c, 1, MPI_INT, st.MPI_SOURCE, kTagChunk, MPI_COMM_WORLD);
      } else if (st.MPI_TAG == kTagDone) {
        ++finished;
        if (!buf.empty()) Fail(buf);
      } else {
        WriteRow(std::stoul(buf.substr(0, buf.find(','))), buf);
        progress_.Step(done_points_++, "points");
      }
    }
  }

  const SweepArgs& args_;
  const SweepPlan& plan_;
  const Mpi& mpi_;
  std::ofstream& out_;
  std::map<std::size_t, std::string>& rows_;
  const Progress progress_;
  std::vector<int> queue_;
  std::atomic<int> next_{0}, done_points_{0};
  std::mutex mpi_mutex_, error_mutex_, out_mutex_;
  std::string error_;
};

// The chunks whose points --resume kept in full need no work; *rows gets their rows.
std::vector<char> chunks_to_do(std::size_t points, const std::map<std::size_t, std::string>& kept,
                               std::map<std::size_t, std::string>* rows, std::size_t* kept_points) {
  const std::size_t chunks = (points + kChunk - 1) / kChunk;
  std::vector<char> todo(chunks, 1);
  *kept_points = 0;
  for (std::size_t c = 0; c < chunks; ++c) {
    const std::size_t first = c * kChunk, last = std::min(points, (c + 1) * kChunk);
    bool complete = true;
    for (std::size_t p = first; p < last; ++p) complete = complete && kept.count(p);
    if (!complete) continue;
    todo[c] = 0;
    *kept_points += last - first;
    for (std::size_t p = first; p < last; ++p) (*rows)[p] = kept.at(p);
  }
  return todo;
}

// `ranks`: the MPI ranks when run under mpirun, else 0.
void print_summary(const SweepArgs& args, std::size_t points, std::size_t kept_points, const long* totals, int ranks) {
  std::cout << "hallway sweep: " << points << " points (" << kept_points << " kept from before) written to "
            << args.output << "; " << totals[0] << " electrostatic operator applications";
  if (totals[2] + totals[3] > 0)
    std::cout << fmt::format(" ({} in {} solves from scratch, {} in {} warm-started solves)", totals[1], totals[2],
                             totals[0] - totals[1], totals[3]);
  if (totals[5] > 0)
    std::cout << fmt::format("; pinch-off searches: {} solves, {} operator applications", totals[5], totals[4]);
  if (ranks > 0) std::cout << " over " << ranks << " MPI ranks";
  std::cout << "\n";
}

}  // namespace

int RunSweep(const SweepArgs& args, int argc, char** argv) {
  const Mpi mpi(argc, argv);
  SweepPlan plan;
  if (const int code = plan_sweep(args, mpi.rank, &plan); code != kExitOk) return code;
  // Rank 0 checks the output, takes its lock and reads what --resume keeps; every rank then exits
  // with rank 0's verdict, so a refusal never leaves a rank waiting for work.
  std::map<std::size_t, std::string> kept;
  std::ofstream out;
  SweepLock output_lock;
  const std::vector<std::string> record =
      sweep_record(plan.text, DesignInputs(args.design_path), plan.axes, plan.q, args);
  int verdict = kExitOk;
  if (mpi.rank == 0)
    verdict = prepare_output(args, plan.header, plan.axes, plan.points, record, &output_lock, &kept, &out);
  if (const int code = mpi.Share(verdict); code != kExitOk) return code;
  if (mpi.rank == 0)
    std::cout << "hallway sweep  " << args.design_path << "\n" << plan.warnings << kSafetyCaution << "\n" << std::flush;

  std::map<std::size_t, std::string> rows;
  std::size_t kept_points = 0;
  std::vector<char> todo = chunks_to_do(plan.points.size(), kept, &rows, &kept_points);
  if (mpi.use) MPI_Bcast(todo.data(), static_cast<int>(todo.size()), MPI_CHAR, 0, MPI_COMM_WORLD);
  Scheduler scheduler(args, plan, mpi, out, rows, todo, plan.points.size() - kept_points);
  const std::string error = scheduler.Run();
  // The solver statistics of all ranks, summed on rank 0.
  const SolveCounts& counts = scheduler.counts;
  long totals[6] = {counts.applications.load(), counts.cold_applications.load(),  counts.cold_solves.load(),
                    counts.warm_solves.load(),  counts.pinch_applications.load(), counts.pinch_solves.load()};
  if (mpi.use) {
    long sum[6] = {};
    MPI_Reduce(totals, sum, 6, MPI_LONG, MPI_SUM, 0, MPI_COMM_WORLD);
    std::copy(sum, sum + 6, totals);
  }
  // Rank 0 finishes the file; every rank exits with its code.
  int final_code = kExitOk;
  if (mpi.rank == 0) {
    out.close();
    if (!error.empty()) {
      std::cerr << "hallway: sweep stopped: " << error << "\n(the finished points are in " << args.output
                << "; fix the cause and run again with --resume)\n";
      final_code = error.rfind(kLimitPrefix, 0) == 0 ? kExitResourceLimit : kExitDesignError;
    } else {
      // All points done: the sorted file replaces the output atomically.
      std::string all = plan.header;
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
  final_code = mpi.Share(final_code);
  if (final_code != kExitOk || mpi.rank != 0) return final_code;
  print_summary(args, plan.points.size(), kept_points, totals, mpi.use ? mpi.size : 0);
  return kExitOk;
}
}  // namespace hallway::cli
