// cli/report.hpp: the parts of `hallway report` (report_command.cpp computes and writes, report_page.cpp
// writes the page). Every number comes from one Device (device.hpp) and the map search, printed with the
// formats of the text command that prints it, so the report and `solve`, `noise`, `paths`, `map` and
// `check` show the same digits.
#pragma once

#include <filesystem>
#include <optional>
#include <string>
#include <utility>
#include <vector>

#include <nlohmann/json.hpp>

#include "hallway/device.hpp"
#include "hallway/interferometer.hpp"
#include "hallway/map.hpp"
#include "hallway/quantities.hpp"
#include "hallway/wiring.hpp"

namespace hallway::cli {

// What `hallway fringes` prints and writes (interferometer_command.cpp), shared with the report: the
// interferometer sections and the map summary, the map as CSV, and the JSON object.
std::string FringesText(const Design& d, const EdgeNetwork& net, const InterferometerResult& r);
std::string FringesCsv(const InterferenceMap& m);
nlohmann::json FringesJson(const Design& d, const EdgeNetwork& net, const InterferometerResult& r);

}  // namespace hallway::cli

namespace hallway::cli::report {

std::string HtmlEscape(const std::string& s);

struct Table {
  std::vector<std::string> head;
  std::vector<std::vector<std::string>> rows;
  std::string html() const;
  std::string csv() const;
};

// Every source bias scaled together from 0 to twice the design bias: one row per scale, the columns
// of every group of the quantity table (quantities.hpp) that the transport or the noise gives.
struct BiasScan {
  std::vector<double> scale;                             // bias / design bias
  std::vector<std::string> columns;                      // quantity columns, unit in the name
  std::vector<std::vector<std::optional<double>>> rows;  // one per scale
  // The value of `column` at every scale (nullopt where it does not exist), empty if no such column.
  std::vector<std::optional<double>> Column(const std::string& column) const;
};

// Everything the report is made of, computed once by RunReport.
struct ReportData {
  const Device& device;
  const Design& d;
  bool fast = false;
  std::string es_note;  // the electrostatics line of `solve`, `noise`, `paths` (BuildDevice)
  const EdgeNetwork &plus, &minus;
  const TransportResult &tp, &tm;
  const NoiseResult& noise;
  const PathResult& paths;
  const PathOptions& path_options;
  const std::optional<MapResult>& map;  // `hallway map`'s search; absent under --fast
  const WiringVerdict& verdict;
  const BiasScan& scan;
  const std::optional<InterferometerResult>& fringes;  // `hallway fringes`; absent without a loop
};

// The wiring card as a table (page and wiring_card.csv): the rows of `hallway check`.
Table CardTable(const Design& d, const WiringVerdict& v);
// The tables also written as CSV files.
Table ConductanceTable(const ReportData& r);
Table ContactsTable(const ReportData& r);
Table NoiseTable(const ReportData& r);
Table AmplifierTable(const ReportData& r);
// Every collider's P and drains' cross-correlation against the distance from the sources (the page and
// distance_curve.csv; docs/models.md "Distance from the sources"), numbers in SI.
Table DistanceTable(const ReportData& r);

// A figure of the page, its PNG inlined (the page loads nothing).
std::string FigureHtml(const std::filesystem::path& png, const std::string& caption);

// Every warning the text commands print for the design, each once, in the order of the sections.
std::vector<std::string> ReportWarnings(const ReportData& r);

// The whole page: wiring verdict, signals and times, the physics behind them, figures, warnings.
std::string PageHtml(const ReportData& r, const std::vector<std::pair<std::filesystem::path, std::string>>& pictures,
                     const std::vector<std::string>& warnings);

}  // namespace hallway::cli::report
