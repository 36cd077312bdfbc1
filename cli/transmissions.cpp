// Constriction transmissions as text and JSON; see transmissions.hpp.
#include "transmissions.hpp"

#include <fmt/format.h>

#include "hallway/constants.hpp"
#include "hallway/units.hpp"

namespace hallway::cli {
namespace {

std::string list(const std::vector<double>& t) {
  std::string s;
  for (double x : t) s += fmt::format("{}{:.3g}", s.empty() ? "" : ", ", x);
  return "[" + s + "]";
}

bool any_fractional(const Design& d) {
  for (const Channel& c : d.channels)
    if (!c.conductance.is_integer()) return true;
  return false;
}

std::string model_text(const SaddleModel& m) {
  if (!m.ok)
    return fmt::format("no saddle curvature, a step at each channel's level (local filling {:.3g} at the saddle)",
                       m.local_filling);
  return fmt::format("local filling {:.3g} at the saddle, barrier {} from E_F, hbar w_x = {}, hbar w_y = {}",
                     m.local_filling, units::FormatSI(m.barrier_J / constants::kElementaryCharge_C, "eV"),
                     units::FormatSI(m.hbar_omega_x_J / constants::kElementaryCharge_C, "eV"),
                     units::FormatSI(m.hbar_omega_y_J / constants::kElementaryCharge_C, "eV"));
}

}  // namespace

std::string TransmissionsText(const Design& d, const std::vector<ConstrictionTransmission>& ts) {
  if (ts.empty()) return "";
  std::string out =
      "\nConstriction transmissions (used in transport and noise; the model is the saddle-point model of "
      "docs/models.md \"Transmission from the gates\")\n";
  for (const ConstrictionTransmission& ct : ts) {
    const Constriction& k = d.constrictions[static_cast<std::size_t>(ct.constriction)];
    if (ct.source == TransmissionSource::kGates)
      out += fmt::format("  {}: {} from the gates ({}; {})\n", k.name, list(ct.transmission_used),
                         ToString(ct.potential), model_text(*ct.model));
    else
      out += fmt::format("  {}: {} as the design declares{}\n", k.name, list(ct.transmission_used),
                         ct.model ? fmt::format("; the gates would give {} ({})", list(ct.model->transmission),
                                                model_text(*ct.model))
                                  : std::string());
  }
  if (any_fractional(d))
    out += "  fractional channels: the saddle-point model of the electron-like region at the channel's level; the "
           "bias dependence of tunnelling through a fractional edge is left out\n";
  return out;
}

nlohmann::json TransmissionsJson(const Design& d, const std::vector<ConstrictionTransmission>& ts) {
  nlohmann::json out = nlohmann::json::array();
  for (const ConstrictionTransmission& ct : ts) {
    const Constriction& k = d.constrictions[static_cast<std::size_t>(ct.constriction)];
    nlohmann::json model = nullptr;
    if (ct.model)
      model = {{"potential", ct.potential == SaddlePotential::kBare ? "bare" : "self-consistent window"},
               {"transmission", ct.model->transmission},
               {"saddle_curvature_found", ct.model->ok},
               {"local_filling_at_saddle", ct.model->local_filling},
               {"barrier_J", ct.model->barrier_J},
               {"hbar_omega_x_J", ct.model->hbar_omega_x_J},
               {"hbar_omega_y_J", ct.model->hbar_omega_y_J},
               {"saddle_m", {ct.model->saddle.x, ct.model->saddle.y}}};
    if (ct.model && any_fractional(d))
      model["fractional_channels"] =
          "saddle-point model of the electron-like region at the channel's level; the bias dependence of "
          "tunnelling through a fractional edge is left out";
    out.push_back({{"name", k.name},
                   {"transmission_used", ct.transmission_used},
                   {"transmission_source", ToString(ct.source)},
                   {"model", model}});
  }
  return out;
}

}  // namespace hallway::cli
