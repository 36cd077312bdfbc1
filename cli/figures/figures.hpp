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

// Every text a figure drew, with the box its ink covers (Cairo text extents, in pixels of the figure,
// y down, after any rotation), so tests can check that no two texts overlap and none covers the data.
struct TextBox {
  std::string text;
  double x0 = 0, y0 = 0, x1 = 0, y1 = 0;
};
// A polyline of plotted data in pixels (a curve of a plot; on the layout map an edge piece, in the
// order of the network's pieces, then the closed outline of each arrow head).
using PixelLine = std::vector<geometry::Point>;

// What a figure drew: its size, its texts and its data lines.
struct Drawing {
  int width_px = 0, height_px = 0;
  std::vector<TextBox> texts;
  std::vector<PixelLine> data;
};

// What the layout map drew, for tests and for the report's captions: every arrow on an edge, with the
// point it sits at and the direction of electron travel (unit vector, layout coordinates).
struct Arrow {
  int channel = 0;
  int piece = 0;
  geometry::Point at, direction;
};
struct LayoutDrawing : Drawing {
  std::vector<Arrow> arrows;
};

// True when the two boxes share interior points (touching edges do not count).
bool Overlap(const TextBox& a, const TextBox& b);
// True when the segment from p to q passes through the interior of the box.
bool Crosses(const TextBox& box, geometry::Point p, geometry::Point q);

// Layout map: mesa, gates shaded by voltage with a legend, contacts with name and role, constrictions
// with name and transmissions, every edge piece with arrows, a scale bar and the field direction.
// Edges are drawn a few pixels towards the 2DEG from their traced path (channel 1 outermost), so the
// edges on the two sides of a narrow gate, and the channels of one edge, stay apart on the page; the
// arrows report the traced (undisplaced) positions. Labels that do not fit where they belong move to
// free space, with a leader line back to what they name.
LayoutDrawing DrawLayout(const Design& design, const EdgeNetwork& network, const std::string& path, Format format,
                         const std::string& title);

// Density map (local filling) with a colour bar running from 0 to 1.25 times the bulk filling (the
// design's filling factor), so the depletion around gates shows at any filling; higher local fillings
// take the darkest colour, and the bar marks the bulk filling.
Drawing DrawDensity(const Design& design, const DensityMap& map, const std::string& path, Format format);

// A line plot with labelled axes and units; one series per entry. Ticks fall on 1, 2 or 5 times a power
// of ten, zero is written 0, and a common power of ten goes into the axis title. The points are drawn
// as given and joined by straight lines: callers sample the model finely enough.
struct Series {
  std::string label;
  std::vector<double> x, y;
};
Drawing DrawPlot(const std::vector<Series>& series, const std::string& x_label, const std::string& y_label,
                 const std::string& title, const std::string& path, Format format);

// A colour map of z on the regular grid x (columns) by y (rows), z row-major with x fastest, with axes,
// ticks and a colour bar from the smallest to the largest z (the sequential palette above). Used for
// the interference map G(flux, plunger) of `hallway report`.
struct GridMap {
  std::vector<double> x, y, z;
  std::string x_label, y_label, z_label, title;
};
Drawing DrawGridMap(const GridMap& map, const std::string& path, Format format);

}  // namespace hallway::figures
