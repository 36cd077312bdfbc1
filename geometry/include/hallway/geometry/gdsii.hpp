// hallway/geometry/gdsii.hpp: a reader for GDSII stream files (the Calma stream format), flattened to
// polygons and text labels per layer and datatype, in metres.
//
// Handled: the library header and UNITS (database unit in metres), BOUNDARY, BOX, PATH (width; end
// types 0 flush, 1 round, 2 half-width extension, 4 explicit extensions; mitred corners), TEXT, SREF and
// AREF with STRANS reflection, MAG and ANGLE, nested to any depth; reference cycles are errors. Bad,
// truncated or hostile input throws GdsError with the byte offset; sizes are bounded before anything
// is allocated.
#pragma once

#include <cstdint>
#include <map>
#include <stdexcept>
#include <string>
#include <utility>
#include <vector>

#include "hallway/geometry/polygon.hpp"

namespace hallway::geometry {

class GdsError : public std::runtime_error {
 public:
  GdsError(std::size_t offset, const std::string& message)
      : std::runtime_error("byte " + std::to_string(offset) + ": " + message), offset_(offset) {}
  std::size_t offset() const { return offset_; }

 private:
  std::size_t offset_;
};

struct GdsLayer {
  int layer = 0, datatype = 0;
  friend bool operator<(const GdsLayer& a, const GdsLayer& b) {
    return std::pair(a.layer, a.datatype) < std::pair(b.layer, b.datatype);
  }
  friend bool operator==(const GdsLayer& a, const GdsLayer& b) = default;
};

struct GdsLabel {
  std::string text;
  Point at;
};

struct GdsFlat {
  double database_unit_m = 0.0;
  std::vector<std::string> cells;  // every structure in the file
  std::map<GdsLayer, std::vector<Polygon>> polygons;
  std::map<GdsLayer, std::vector<GdsLabel>> labels;  // texttype in place of datatype
};

struct GdsLimits {
  std::size_t max_file_bytes = std::size_t{256} << 20;
  std::size_t max_output_vertices = 20'000'000;  // polygon vertices after flattening
  std::size_t max_labels = 100'000;              // text labels after flattening (a design names dozens)
  std::size_t max_placements = 20'000'000;       // structure placements visited while flattening
  // Elements visited while flattening, whether or not they produce anything (a label without a
  // position, an empty path): bounds the work, not only the output. About a minute at most.
  std::size_t max_element_visits = 200'000'000;
  int max_depth = 64;
};

// Parses `bytes` and flattens the structure `cell` (empty: the one top cell, an error if several).
GdsFlat ReadGds(const std::string& bytes, const std::string& cell, const GdsLimits& limits = {});

}  // namespace hallway::geometry
