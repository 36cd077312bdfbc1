// Output quantities as a table. Each group names its columns, says which computation it needs and
// reads its values from the results of one operating point; `hallway sweep` and the bias scan of
// `hallway noise --sweep` build their header and their rows from this table only, so a new quantity is
// one row in quantities.cpp and one test.
#pragma once

#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "hallway/design.hpp"
#include "hallway/device.hpp"
#include "hallway/electrostatics.hpp"
#include "hallway/map.hpp"
#include "hallway/noise.hpp"
#include "hallway/transport.hpp"

namespace hallway {

// The results of one operating point; a pointer is null where that computation was not run.
struct PointResults {
  const Design* design = nullptr;
  const TransportResult* transport = nullptr;
  const NoiseResult* noise = nullptr;      // when a chosen group needs the noise
  const DensityMap* density = nullptr;     // the whole-mesa self-consistent density (not under --fast)
  const MapResult* pinch_off = nullptr;    // the pinch-off search of `hallway map`, when chosen
};

// What a group needs beyond the transport of the point.
enum class QuantityNeeds { kTransport, kNoise, kPinchOffSearch };

struct QuantityGroup {
  const char* name;         // as given to --quantities
  const char* description;  // one line for help and documentation
  bool default_on;          // chosen when --quantities is not given
  QuantityNeeds needs;
  std::vector<std::string> (*columns)(const Design&);  // column names, with the unit in the name
  // One value per column; nullopt where the value does not exist at this point (an empty field).
  std::vector<std::optional<double>> (*values)(const PointResults&);
};

// Every group, in the order their columns appear.
const std::vector<QuantityGroup>& QuantityGroups();
// The group called `name`, or null.
const QuantityGroup* FindQuantityGroup(std::string_view name);

// A bias scan on one device (`noise --sweep`, the report's figures). The source biases move neither the
// electrostatics nor the edges (the network follows from the layout and the field, docs/models.md
// "Edge network and Landauer–Büttiker transport"), so one device serves every point: its edges for the
// field sign are kept and the transport and, when asked, the noise are solved again at each point.
struct BiasPoint {
  Design design;  // the device's design with the point's biases set
  TransportResult transport;
  std::optional<NoiseResult> noise;
  // The point for the quantity table (the density is the device's; no pinch-off search).
  PointResults Results(const Device& device) const;
};
// Bias biases[i] (V, or A for a current source) at source contacts[i]. std::invalid_argument when a
// contact is not a source or the sizes differ; std::logic_error on a device that is not usable.
BiasPoint SolveAtBias(const Device& device, FieldSign sign, const std::vector<int>& contacts,
                      const std::vector<double>& biases, const NoiseOptions* noise);

}  // namespace hallway
