// cli/json_parts.hpp: JSON forms of the results, shared by the commands and `hallway report`.
#pragma once

#include <nlohmann/json.hpp>

#include "hallway/check.hpp"
#include "hallway/design.hpp"
#include "hallway/network.hpp"
#include "hallway/noise.hpp"
#include "hallway/paths.hpp"
#include "hallway/transport.hpp"
#include "hallway/wiring.hpp"

namespace hallway::cli {

// {"paths": [...], "loops": [...], "constriction_models": [...], "source_paths": [...], "floating_contacts": [...]}
nlohmann::json PathsJson(const Design& design, const EdgeNetwork& network, const PathResult& paths);
// What `hallway check --json` writes.
std::string CheckJsonText(const Design& design, const CheckResult& check);
// `hallway check` on a loaded design: the checks, the transmissions from the gates (written into the
// design; their findings join the checks'), with gate_settings the gate voltage each constriction needs
// for its declared transmissions (a bisection of window solves per channel), the wiring on the bare
// edges; the text it prints and the JSON it writes. Shared by the CLI and the Python module.
struct CheckRun {
  CheckResult result;
  std::string text, json;
};
CheckRun RunCheckOn(Design* design, bool gate_settings);
// One field direction of `hallway solve --json`.
nlohmann::json TransportJson(const Design& design, const EdgeNetwork& network, const TransportResult& transport);
// The body of `hallway noise --json`.
nlohmann::json NoiseJson(const Design& design, const NoiseResult& noise);
// The wiring verdict (hallway/wiring.hpp): `wiring_verdict` of check, solve, noise and report --json.
nlohmann::json WiringVerdictJson(const Design& design, const WiringVerdict& verdict);
// The same as text: the one-line verdict, what each amplifier, collider and source does, the problems
// with their fixes, then the wiring card. `edges` says which edge model the verdict was computed on.
std::string WiringVerdictText(const Design& design, const WiringVerdict& verdict, const std::string& edges);
// "bare-potential edges, as `check`" or "self-consistent edges": which edges a verdict was computed on.
std::string EdgesLabel(const ChannelGeometry& geometry);

}  // namespace hallway::cli
