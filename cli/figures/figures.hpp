// cli/figures/figures.hpp: hallway's figures, drawn with Cairo as PNG, SVG and PDF.
//
// Our own visual language: a sequential palette from pale sand to deep indigo for density and gate
// voltage (readable in greyscale: lightness falls monotonically), and channel colours chosen to stay
// apart for the common colour-vision deficiencies, each channel also with its own dash pattern.
#pragma once

#include <string>
#include <vector>

#include "hallway/design.hpp"
#include "hallway/electrostatics.hpp"
#include "hallway/network.hpp"

namespace hallway::figures {

enum class Format { kPng, kSvg, kPdf };
std::string ToString(Format f);  // "png", "svg", "pdf"

// What the layout map drew, for tests and for the report's captions: every arrow on an edge, with the
// point it sits at and the direction of electron travel (unit vector, layout coordinates).
struct Arrow {
  int channel = 0;
  int piece = 0;
  geometry::Point at, direction;
};
struct LayoutDrawing {
  std::vector<Arrow> arrows;
  int width_px = 0, height_px = 0;
};

// Layout map: mesa, gates shaded by voltage with a legend, contacts with name and role, constrictions
// with name and transmissions, every edge piece with arrows, a scale bar and the field direction.
LayoutDrawing DrawLayout(const Design& design, const EdgeNetwork& network, const std::string& path, Format format,
                         const std::string& title);

// Density map (local filling) with a colour bar; gates and contacts outlined on top.
void DrawDensity(const Design& design, const DensityMap& map, const std::string& path, Format format);

// A line plot with labelled axes and units; one series per entry.
struct Series {
  std::string label;
  std::vector<double> x, y;
};
void DrawPlot(const std::vector<Series>& series, const std::string& x_label, const std::string& y_label,
              const std::string& title, const std::string& path, Format format);

}  // namespace hallway::figures
