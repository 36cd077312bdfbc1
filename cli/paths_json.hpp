// cli/paths_json.hpp: the JSON form of the path metrics, shared by `paths` and `solve --json`.
#pragma once

#include <nlohmann/json.hpp>

#include "hallway/design.hpp"
#include "hallway/network.hpp"
#include "hallway/paths.hpp"

namespace hallway::cli {

// {"paths": [...], "loops": [...], "constriction_models": [...], "source_paths": [...], "floating_contacts": [...]}
nlohmann::json PathsJson(const Design& design, const EdgeNetwork& network, const PathResult& paths);

}  // namespace hallway::cli
