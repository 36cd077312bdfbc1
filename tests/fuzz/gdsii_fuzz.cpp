// libFuzzer target: the GDSII stream reader on arbitrary bytes, flattening the one top cell. Bad
// input must end in GdsError; a file that reads must give finite coordinates within the declared
// limits. Any other exception, a crash, a sanitizer report, a time-out or running out of memory is a
// finding.
//   hallway_gdsii_fuzz CORPUS_DIR
#include <cmath>
#include <cstddef>
#include <cstdint>
#include <string>

#include "hallway/geometry/gdsii.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  hallway::geometry::GdsLimits limits;
  limits.max_file_bytes = 1u << 20;
  limits.max_output_vertices = 1'000'000;
  limits.max_placements = 1'000'000;
  if (size > limits.max_file_bytes) return 0;
  const std::string bytes(reinterpret_cast<const char*>(data), size);
  hallway::geometry::GdsFlat flat;
  try {
    flat = hallway::geometry::ReadGds(bytes, "", limits);
  } catch (const hallway::geometry::GdsError&) {
    return 0;
  }
  if (!(flat.database_unit_m > 0.0) || !std::isfinite(flat.database_unit_m)) __builtin_trap();
  std::size_t vertices = 0;
  for (const auto& [layer, polygons] : flat.polygons)
    for (const auto& polygon : polygons) {
      vertices += polygon.vertices.size();
      for (const auto& p : polygon.vertices)
        if (!std::isfinite(p.x) || !std::isfinite(p.y)) __builtin_trap();
    }
  for (const auto& [layer, labels] : flat.labels)
    for (const auto& label : labels)
      if (!std::isfinite(label.at.x) || !std::isfinite(label.at.y)) __builtin_trap();
  std::size_t labels = 0;
  for (const auto& [layer, list] : flat.labels) labels += list.size();
  if (vertices > limits.max_output_vertices || labels > limits.max_labels) __builtin_trap();
  return 0;
}
