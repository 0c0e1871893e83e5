#pragma once
// The report's figures: the levelling network, loop misclosures, the head
// map of the contouring round, hydrographs and displacements, as SVG.

#include <algorithm>
#include <cmath>
#include <filesystem>
#include <map>
#include <optional>
#include <string>
#include <vector>

#include "levelhead/flow/contours.hpp"
#include "levelhead/report/stage_results.hpp"
#include "report/report_document.hpp"
#include "report/svg.hpp"

namespace levelhead::report {

struct PlacedPoint {
  double x = 0, y = 0;
};

struct Bounds {
  double min_x = INFINITY, min_y = INFINITY, max_x = -INFINITY, max_y = -INFINITY;
  void add(double x, double y) {
    min_x = std::min(min_x, x);
    max_x = std::max(max_x, x);
    min_y = std::min(min_y, y);
    max_y = std::max(max_y, y);
  }
  bool empty() const { return !(max_x >= min_x); }
};

// The levelling network: sections coloured and dashed by |w|, removed
// sections dotted, failing loops outlined.
std::optional<Svg> network_map(const AdjustStage& adjust, const LoopsStage* loops);

// Bars of |misclosure| / tolerance per loop, the limit at 1.
Svg loop_chart(const LoopResult& loops);

// Heights shown in the heads' unit (the target reference's).
struct HeightDisplay {
  double per_metre = 1.0;
  std::string unit = "m";
};
HeightDisplay height_display(LengthUnit unit);

// Heads of the contouring round: wells coloured by head, quick-look
// contours (interval and levels in the display unit), the flow arrow.
std::optional<Svg> head_map(const HeadEvent& event, const FlowStage* flow,
                            std::optional<double> interval, std::optional<QuickContours>& contours,
                            const HeightDisplay& display);

// Date ticks: month starts (every 1, 2, 3, 6, 12 or 24 months) within
// [t0, t1] (s, UTC), at most `max_count`.
std::vector<double> month_ticks(double t0, double t1, std::size_t max_count);

// Heads over time per well, on axes of round heads (with the unit) and
// dates; measuring-point changes as vertical lines, readings kept out of
// contouring as open circles.
std::optional<Svg> hydrographs(const std::map<std::string, std::vector<SeriesPoint>>& heads,
                               const std::vector<MeasuringPointSurvey>& surveys,
                               const HeightDisplay& display);

// Displacements since the first epoch to the last, with their confidence
// intervals (epochs has at least one epoch).
Svg displacement_chart(const EpochAnalysis& epochs);

}  // namespace levelhead::report
