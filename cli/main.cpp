// The `hallway` executable: parses the command line and dispatches to a subcommand.
#include <CLI/CLI.hpp>
#include <exception>
#include <iostream>
#include <string>

#include "commands.hpp"
#include "hallway/quantities.hpp"
#include "output.hpp"

#ifndef HALLWAY_VERSION
#define HALLWAY_VERSION "unknown"
#endif

namespace {
using namespace hallway::cli;

// Output names are file names: standard output is named /dev/stdout, so "-" and "" are usage errors.
const std::string kPathNote = " ('-' or an empty name is refused: give /dev/stdout for the terminal)";
const std::string kJsonHelp = "Also write the results as JSON to this file" + kPathNote;

void AddCheck(CLI::App& app, CheckArgs& a) {
  CLI::App* c = app.add_subcommand("check", "Read a design, derive the wafer figures and check layout and wiring");
  c->add_option("design", a.design_path, "Design file (YAML)")->required();
  c->add_option("--json", a.json_path, kJsonHelp);
  c->add_flag("--gate-settings", a.gate_settings,
              "Also the gate voltage each constriction needs for its declared transmissions (saddle-point model on "
              "the self-consistent window potential; a few seconds per constriction)");
}

void AddSolve(CLI::App& app, SolveArgs& a) {
  CLI::App* s = app.add_subcommand("solve", "Trace the edge channels and solve the wiring plan for +B and -B");
  s->add_option("design", a.design_path, "Design file (YAML)")->required();
  s->add_option("--max-memory", a.max_memory, "Largest electrostatic grid to allocate, e.g. 8GiB (default 4GiB)");
  s->add_option("--json", a.json_path, kJsonHelp);
  s->add_flag("--field-reversed", a.reversed_only, "Solve only the reversed field -B");
  s->add_flag("--fast", a.fast, "Bare-potential channel boundaries instead of the self-consistent density");
  s->add_option("--four-terminal", a.four_terminal,
                "Print R = (V+ - V-)/I for current I from I+ to I-: I+,I-,V+,V-");
}

void AddNoise(CLI::App& app, NoiseArgs& a) {
  CLI::App* n = app.add_subcommand("noise", "Current noise at every contact, amplifier signal-to-noise and colliders");
  n->add_option("design", a.design_path, "Design file (YAML)")->required();
  n->add_option("--max-memory", a.max_memory, "Largest electrostatic grid to allocate, e.g. 8GiB (default 4GiB)");
  n->add_option("--json", a.json_path, kJsonHelp);
  n->add_option("--sweep", a.sweep, "Sweep source bias: CONTACTS=FROM:TO:N, e.g. SA,SB=0:50uV:11");
  n->add_option("--ratio", a.ratio, "Bias factors of the swept contacts, e.g. 1,0.5 (imbalance)");
  n->add_option("--csv", a.csv_path, "Write the sweep as CSV to this file" + kPathNote);
  n->add_flag("--field-reversed", a.reversed_only, "Solve for the reversed field -B");
  n->add_flag("--fast", a.fast, "Bare-potential channel boundaries instead of the self-consistent density");
  n->add_option("--phase", a.phase_rad, "Fix the interferometer loop phase (rad) instead of averaging");
  n->add_option("--target", a.target_sigmas, "Signal-to-noise asked of every correlation (default 10)");
  n->add_option("--collider-model", a.collider_model,
                "Collider P in the contact matrix: zero-temperature (default) or finite-temperature")
      ->check(CLI::IsMember({"zero-temperature", "finite-temperature"}));
  n->add_flag("--quiet", a.quiet, "No progress line on standard error");
}

void AddMap(CLI::App& app, MapArgs& a) {
  CLI::App* mp = app.add_subcommand("map", "Self-consistent depletion, pinch-off voltages and edge positions");
  mp->add_option("design", a.design_path, "Design file (YAML)")->required();
  mp->add_option("--max-memory", a.max_memory, "Largest electrostatic grid to allocate, e.g. 8GiB (default 4GiB)");
  mp->add_option("--grid", a.grid, "Cell size of the whole-mesa grid, e.g. 10nm (default: automatic)");
  mp->add_option("--json", a.json_path, kJsonHelp);
  mp->add_option("--csv", a.csv_path, "Write the density and filling grid as CSV to this file" + kPathNote);
  mp->add_flag("--quiet", a.quiet, "No progress line on standard error");
}

void AddPaths(CLI::App& app, PathsArgs& a) {
  CLI::App* pa = app.add_subcommand("paths", "Edge lengths, velocities, thermal lengths, loops and constriction models");
  pa->add_option("design", a.design_path, "Design file (YAML)")->required();
  pa->add_option("--max-memory", a.max_memory, "Largest electrostatic grid to allocate, e.g. 8GiB (default 4GiB)");
  pa->add_option("--json", a.json_path, kJsonHelp);
  pa->add_flag("--fast", a.fast, "Bare-potential channel boundaries and a fixed drift velocity");
  pa->add_option("--target", a.target,
                 "Transmission to reach at every constriction, instead of the design's (0..1)");
  pa->add_option("--gate-limit", a.gate_limit,
                 "Most negative gate voltage to suggest, e.g. '-1.5 V' (default: the design's "
                 "conditions.gate_voltage_min, -2 V unless it says otherwise)");
  pa->add_option("--relaxation-length", a.relaxation_length,
                 "Source-to-splitter length that relaxes the beam, e.g. '1 um'");
}

void AddReport(CLI::App& app, ReportArgs& a) {
  CLI::App* rp = app.add_subcommand("report", "Figures, tables, result.json and a self-contained HTML report");
  rp->add_option("design", a.design_path, "Design file (YAML)")->required();
  rp->add_option("--max-memory", a.max_memory, "Largest electrostatic grid to allocate, e.g. 8GiB (default 4GiB)");
  rp->add_option("-o,--output", a.out_dir,
                 "Folder for report.html and the figures: built beside it and moved into place when complete; "
                 "an existing folder is replaced only when empty or a previous hallway report")
      ->required();
  rp->add_flag("--fast", a.fast, "Bare-potential channel boundaries, no electrostatic solve");
  rp->add_flag("--quiet", a.quiet, "No progress line on standard error");
}

void AddFringes(CLI::App& app, FringesArgs& a) {
  CLI::App* f = app.add_subcommand(
      "fringes", "Interferometers: kind, flux, field and gate periods, visibility, regime and a G(flux, plunger) map");
  f->add_option("design", a.design_path, "Design file (YAML)")->required();
  f->add_option("--max-memory", a.max_memory, "Largest electrostatic grid to allocate, e.g. 8GiB (default 4GiB)");
  f->add_option("--json", a.json_path, kJsonHelp);
  f->add_option("--csv", a.csv_path, "Write the map G(flux, plunger) and the excess noise as CSV to this file" + kPathNote);
  f->add_flag("--fast", a.fast, "Bare-potential channel boundaries and a fixed drift velocity");
  f->add_option("--plunger", a.plunger, "Gate swept in the map (default: the gate with the shortest period that forms no constriction)");
  f->add_option("--gate-step", a.gate_step, "Step of each gate in the differences dA/dV, e.g. '5 mV' (default 10 mV)");
  f->add_option("--flux-points", a.flux_points, "Flux points of the map (default 25)");
  f->add_option("--plunger-points", a.plunger_points, "Plunger points of the map (default 13)");
  f->add_flag("--no-map", a.no_map, "Periods, visibility and regime only");
}

// The --quantities help, from the quantity table (quantities.hpp).
std::string QuantityHelp() {
  std::string all, off;
  for (const hallway::QuantityGroup& g : hallway::QuantityGroups()) {
    all += (all.empty() ? "" : ",") + std::string(g.name);
    if (!g.default_on) off += (off.empty() ? "" : " and ") + std::string(g.name);
  }
  return "Groups: " + all + " (default: all" + (off.empty() ? "" : " but " + off) + ")";
}

void AddSweep(CLI::App& app, SweepArgs& a) {
  CLI::App* sw = app.add_subcommand("sweep", "Sweep design values (threads; MPI under mpirun) into a CSV file");
  sw->add_option("design", a.design_path, "Design file (YAML)")->required();
  sw->add_option("--max-memory", a.max_memory, "Largest electrostatic grid to allocate, e.g. 8GiB (default 4GiB)");
  sw->add_option("--vary", a.vary, "KEY=FROM:TO:N with units, e.g. gates.QL.voltage=-0.6V:-0.9V:31 (repeatable)")
      ->required();
  sw->add_flag("--zip", a.zip, "Vary the keys in lock-step instead of over a grid");
  sw->add_option("--output", a.output,
                 "CSV file, one row per point (a regular file; locked while the sweep runs)" + kPathNote)
      ->required();
  sw->add_option("--quantities", a.quantities, QuantityHelp());
  sw->add_option("--threads", a.threads, "Threads per process (default: the cores, shared among MPI ranks)");
  sw->add_flag("--resume", a.resume,
               "Keep the points already in the output file: its sweep record OUTPUT.hallway-sweep must show the same "
               "design, --vary, --quantities, --zip, --fast and --cold (else exit 2); damaged rows are recomputed");
  sw->add_flag("--fast", a.fast, "Bare-potential boundaries, no electrostatic solves");
  sw->add_flag("--quiet", a.quiet, "No progress line on standard error");
  sw->add_flag("--cold", a.cold, "Start every electrostatic solve from scratch (benchmarks)");
}

// An output named "" or "-" would otherwise mean "no output" or a file called "-".
bool RefuseDashOutputs(CLI::App& app) {
  for (CLI::App* sub : app.get_subcommands())
    for (const CLI::Option* o : sub->get_options()) {
      const std::string name = o->get_name();
      if (o->count() == 0 || (name != "--json" && name != "--csv" && name != "--output" && name != "-o,--output"))
        continue;
      for (const std::string& v : o->results())
        if (v.empty() || v == "-") {
          std::cerr << "hallway: usage error: " << o->get_name(false, true) << " needs a file name, not '" << v
                    << "' (write /dev/stdout to print the output)\n";
          return true;
        }
    }
  return false;
}

// Whether the subcommand that runs was given --fast.
bool FastGiven(CLI::App& app) {
  for (CLI::App* sub : app.get_subcommands())
    if (const CLI::Option* f = sub->get_option_no_throw("--fast"); f && f->count() > 0) return true;
  return false;
}

// Every subcommand's arguments, filled by the parser.
struct Commands {
  CheckArgs check;
  SolveArgs solve;
  NoiseArgs noise;
  MapArgs map;
  PathsArgs paths;
  ReportArgs report;
  SweepArgs sweep;
  FringesArgs fringes;
};

int Dispatch(CLI::App& app, Commands& a, int argc, char** argv) {
  try {
    if (app.got_subcommand("check")) return RunCheck(a.check);
    if (app.got_subcommand("solve")) return RunSolve(a.solve);
    if (app.got_subcommand("map")) return RunMap(a.map);
    if (app.got_subcommand("paths")) return RunPaths(a.paths);
    if (app.got_subcommand("report")) return RunReport(a.report);
    if (app.got_subcommand("sweep")) return RunSweep(a.sweep, argc, argv);
    if (app.got_subcommand("fringes")) return RunFringes(a.fringes);
    if (app.got_subcommand("noise")) {
      a.noise.phase_given = app.get_subcommand("noise")->get_option("--phase")->count() > 0;
      return RunNoise(a.noise);
    }
  } catch (const hallway::GridTooLarge& e) {
    // A grid of a later stage (constriction windows of paths, report, solve --json); --fast is
    // suggested only to a command run without it.
    return ReportGridTooLarge(e, FastGiven(app) ? GridAdvice::kMemoryOnly : GridAdvice::kFastOption);
  } catch (const std::exception& e) {
    std::cerr << "hallway: internal error: " << e.what() << "\n";
    return kExitInternal;
  }
  return kExitUsage;
}

}  // namespace

int main(int argc, char** argv) {
  using namespace hallway::cli;
  InstallCleanupHandlers();
  CLI::App app{"hallway: layout checks, edge transport and noise estimates for quantum Hall devices"};
  app.set_version_flag("--version", std::string("hallway ") + HALLWAY_VERSION);
  app.require_subcommand(1);
  Commands a;
  AddCheck(app, a.check);
  AddSolve(app, a.solve);
  AddNoise(app, a.noise);
  AddMap(app, a.map);
  AddPaths(app, a.paths);
  AddReport(app, a.report);
  AddSweep(app, a.sweep);
  AddFringes(app, a.fringes);
  try {
    app.parse(argc, argv);
  } catch (const CLI::CallForHelp& e) {
    return app.exit(e);
  } catch (const CLI::CallForVersion& e) {
    return app.exit(e);
  } catch (const CLI::ParseError& e) {
    app.exit(e);  // prints the message
    return kExitUsage;
  }
  if (RefuseDashOutputs(app)) return kExitUsage;
  return Dispatch(app, a, argc, argv);
}
