// libFuzzer target: the design loader (YAML parsing, units, value ranges, layout import) and the
// design checks (CGAL geometry validation) on arbitrary bytes, and for a design that passes its
// checks the bare-potential edge network and Landauer-Buttiker solve of `hallway solve --fast`. Bad
// input must end in DesignError; a design that loads must be checkable and, if it passes, solvable
// with finite conductances and currents. Any other exception, a crash, a sanitizer report or a
// time-out is a finding. The design is placed in tests/data/gds so that seeds naming a layout file find it.
//   hallway_design_loader_fuzz CORPUS_DIR -dict=tests/fuzz/design.dict
#include <cstddef>
#include <cstdint>
#include <string>

#include <cmath>

#include "hallway/check.hpp"
#include "hallway/design_loader.hpp"
#include "hallway/network.hpp"
#include "hallway/transport.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  if (size > hallway::kMaxDesignBytes) return 0;  // LoadDesign refuses these before parsing
  const std::string text(reinterpret_cast<const char*>(data), size);
  hallway::Design design;
  try {
    design = hallway::LoadDesignFromString(text, HALLWAY_SOURCE_DIR "/tests/data/gds/fuzzed.yaml");
  } catch (const hallway::DesignError& e) {
    if (e.where().file.empty()) __builtin_trap();  // every design error names its file
    return 0;
  }
  const hallway::CheckResult check = hallway::CheckDesign(design);
  for (const hallway::Finding& f : check.findings)
    if (f.message.empty()) __builtin_trap();
  if (!check.ok()) return 0;
  const hallway::ChannelGeometry geometry = hallway::BuildChannelGeometry(design);
  for (const double field : {design.conditions.field_T, -design.conditions.field_T}) {
    const hallway::EdgeNetwork net = hallway::TraceEdges(design, geometry, field);
    bool error = false;
    for (const hallway::Finding& f : net.findings) error = error || f.severity == hallway::Severity::kError;
    if (error) continue;
    const hallway::TransportResult tr = hallway::SolveTransport(design, net);
    for (const auto& row : tr.conductance_S)
      for (const double g : row)
        if (!std::isfinite(g)) __builtin_trap();
    for (const double i : tr.current_A)
      if (!std::isfinite(i)) __builtin_trap();
  }
  return 0;
}
