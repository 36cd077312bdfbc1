// cli/json_parts.hpp: JSON forms of the results, shared by the commands and `hallway report`.
#pragma once

#include <nlohmann/json.hpp>

#include "hallway/check.hpp"
#include "hallway/design.hpp"
#include "hallway/network.hpp"
#include "hallway/noise.hpp"
#include "hallway/paths.hpp"
#include "hallway/transport.hpp"

namespace hallway::cli {

// {"paths": [...], "loops": [...], "constriction_models": [...], "source_paths": [...], "floating_contacts": [...]}
nlohmann::json PathsJson(const Design& design, const EdgeNetwork& network, const PathResult& paths);
// What `hallway check --json` writes.
std::string CheckJsonText(const Design& design, const CheckResult& check);
// One field direction of `hallway solve --json`.
nlohmann::json TransportJson(const Design& design, const EdgeNetwork& network, const TransportResult& transport);
// The body of `hallway noise --json`.
nlohmann::json NoiseJson(const Design& design, const NoiseResult& noise);

}  // namespace hallway::cli
