// The transmissions each constriction uses and where they came from (the design, or the gates through
// the saddle-point model), as text and JSON; shared by solve, noise, paths, check and report.
#pragma once

#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "hallway/design.hpp"
#include "hallway/saddle_model.hpp"

namespace hallway::cli {

// "Constriction transmissions" block: one line per constriction.
std::string TransmissionsText(const Design& design, const std::vector<ConstrictionTransmission>& transmissions);
// [{name, transmission_used, transmission_source, model: {...} | null}, ...]
nlohmann::json TransmissionsJson(const Design& design, const std::vector<ConstrictionTransmission>& transmissions);

}  // namespace hallway::cli
