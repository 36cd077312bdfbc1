// Example of using the hallway library from another program: load a design and print the
// wide-gate depletion voltage and the gap of every constriction.
//   depletion_table DESIGN.yaml
#include <cstdio>

#include "hallway/check.hpp"
#include "hallway/design_loader.hpp"

int main(int argc, char** argv) {
  if (argc != 2) {
    std::fprintf(stderr, "usage: depletion_table DESIGN.yaml\n");
    return 2;
  }
  try {
    const hallway::Design d = hallway::LoadDesign(argv[1]);
    const hallway::CheckResult r = hallway::CheckDesign(d);
    std::printf("depletion_voltage_V %.6f\n", r.wafer.depletion_voltage_V);
    for (const auto& g : r.constrictions) std::printf("gap_nm %s %.1f\n", g.name.c_str(), g.gap_m * 1e9);
    return r.ok() ? 0 : 1;
  } catch (const hallway::DesignError& e) {
    std::fprintf(stderr, "%s\n", e.what());
    return 1;
  }
}
