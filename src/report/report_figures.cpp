#include "report/report_figures.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <chrono>
#include <cmath>
#include <set>

#include "levelhead/core/time.hpp"
#include "levelhead/flow/contours.hpp"

namespace levelhead::report {

// The levelling network: sections coloured and dashed by |w|, removed
// sections dotted, failing loops outlined.
std::optional<Svg> network_map(const AdjustStage& adjust, const LoopsStage* loops) {
  const Network& net = adjust.network;
  std::map<std::string, PlacedPoint> points;
  for (const Point& p : net.points) {
    if (p.x && p.y) points[p.id] = {*p.x, *p.y};
  }
  if (points.size() < 2) return std::nullopt;
  Bounds b;
  for (const auto& [id, p] : points) b.add(p.x, p.y);
  Svg svg(800, 520, "Levelling network: sections by normalised residual |w|");
  const MapFrame frame(b.min_x, b.min_y, b.max_x, b.max_y, 30, 30, 540, 450);
  if (loops) {
    for (std::size_t k = 0; k < loops->result.loops.size(); ++k) {
      if (loops->result.loops[k].passed) continue;
      std::vector<std::pair<double, double>> ring;
      for (const std::string& id : loops->loop_points[k]) {
        const auto it = points.find(id);
        if (it != points.end()) ring.emplace_back(frame.x(it->second.x), frame.y(it->second.y));
      }
      if (ring.size() >= 3) svg.polyline(ring, Stroke{"#d9bfe4", 10, ""}, "#f7f0fa");
    }
  }
  for (const AdjustedSection& a : adjust.result.sections) {
    const Section& section = net.sections[a.section];
    const auto f = points.find(section.from), t = points.find(section.to);
    if (f == points.end() || t == points.end()) continue;
    Stroke s{"#7d8b8f", 1.5, ""};
    if (a.removal_step) {
      s = Stroke{"#b2352b", 3, "2 4"};
    } else if (a.w && std::abs(*a.w) > 3.29) {
      s = Stroke{"#b2352b", 3, "8 3"};
    } else if (a.w && std::abs(*a.w) > 1.96) {
      s = Stroke{"#d08c1a", 2.5, "4 2"};
    } else if (!a.w) {
      s = Stroke{"#444444", 1.2, "1 2"};
    }
    svg.line(frame.x(f->second.x), frame.y(f->second.y), frame.x(t->second.x), frame.y(t->second.y),
             s);
  }
  for (const auto& [id, p] : points) {
    svg.circle(frame.x(p.x), frame.y(p.y), 4, "#ffffff", Stroke{"#222222", 1.3});
    svg.text(frame.x(p.x) + 6, frame.y(p.y) - 6, id, 10);
  }
  // Legend.
  const double lx = 630;
  double ly = 60;
  const std::vector<std::pair<Stroke, std::string>> legend = {
      {{"#7d8b8f", 1.5, ""}, "|w| <= 1.96"},
      {{"#d08c1a", 2.5, "4 2"}, "1.96 < |w| <= 3.29"},
      {{"#b2352b", 3, "8 3"}, "|w| > 3.29 (suspect)"},
      {{"#b2352b", 3, "2 4"}, "removed by snooping"},
      {{"#444444", 1.2, "1 2"}, "no check (r = 0)"},
      {{"#d9bfe4", 10, ""}, "failed loop (band)"}};
  for (const auto& [stroke, label] : legend) {
    svg.line(lx, ly, lx + 30, ly, stroke);
    svg.text(lx + 36, ly + 4, label, 10);
    ly += 20;
  }
  north_arrow(svg, 700, 330);
  scale_bar(svg, frame, 630, 420, 540);
  return svg;
}

// Bars of |misclosure| / tolerance per loop, the limit at 1.
Svg loop_chart(const LoopResult& loops) {
  const double row = 18, top = 30, left = 60, width = 500;
  const std::size_t count = loops.loops.size();
  Svg svg(640, top + row * static_cast<double>(count) + 40, "Loop misclosures against tolerance");
  const auto ratio_of = [](const Loop& loop) {
    return loop.tolerance > 0 ? std::abs(loop.misclosure) / loop.tolerance : 0.0;
  };
  double largest = 1.5;
  for (const Loop& loop : loops.loops) largest = std::max(largest, ratio_of(loop));
  const double scale = width / largest;
  for (std::size_t k = 0; k < count; ++k) {
    const Loop& loop = loops.loops[k];
    const double ratio = ratio_of(loop);
    const double y = top + row * static_cast<double>(k);
    svg.text(left - 6, y + 12, fmt::format("loop {}", k + 1), 10, "end");
    svg.rect(left, y + 3, ratio * scale, row - 6, loop.passed ? "#2f8f83" : "#b2352b",
             Stroke{"#222222", 0.8, loop.passed ? "" : "3 2"});
    svg.text(left + ratio * scale + 4, y + 12, fmt::format("{:.2f}", ratio), 9);
  }
  const double limit_y = top + row * static_cast<double>(count);
  svg.line(left + scale, top - 5, left + scale, limit_y + 5, Stroke{"#222222", 1.2, "6 3"});
  svg.text(left + scale, top - 10, "tolerance", 10, "middle");
  svg.text(left, limit_y + 25, "|misclosure| / tolerance", 10);
  return svg;
}

// Heads of the contouring round: wells coloured by head, quick-look
// contours, the flow arrow.
HeightDisplay height_display(LengthUnit unit) {
  return {1.0 / metres_per_unit(unit), unit_label(unit)};
}

std::optional<Svg> head_map(const HeadEvent& event, const FlowStage* flow,
                            std::optional<double> interval, std::optional<QuickContours>& contours,
                            const HeightDisplay& display) {
  struct Shown {
    PlacedPoint at;
    double head;
    std::string well;
  };
  // One aquifer is contoured: the one the flow fit used, when it names one.
  const std::string aquifer = flow ? flow->aquifer : std::string();
  std::vector<Shown> shown, other_aquifers;
  Bounds b;
  for (const EventHead& h : event.heads) {
    auto& list = aquifer.empty() || h.aquifer == aquifer ? shown : other_aquifers;
    list.push_back({{h.x, h.y}, h.head * display.per_metre, h.well});
    b.add(h.x, h.y);
  }
  if (shown.size() < 2) return std::nullopt;
  double low = INFINITY, high = -INFINITY;
  for (const Shown& s : shown) {
    low = std::min(low, s.head);
    high = std::max(high, s.head);
  }
  Svg svg(760, 520, "Heads of the contouring round");
  const MapFrame frame(b.min_x, b.min_y, b.max_x, b.max_y, 50, 40, 540, 430);
  std::vector<HeadAtWell> at_wells;
  for (const Shown& s : shown) at_wells.push_back({s.at.x, s.at.y, s.head});
  contours = quick_contours(at_wells, interval);
  if (contours) {
    for (const ContourLine& line : contours->lines) {
      std::vector<std::pair<double, double>> path;
      for (const auto& [x, y] : line.vertices) path.emplace_back(frame.x(x), frame.y(y));
      svg.polyline(path, Stroke{"#5d6d7e", 1.0, "5 2"});
      const auto& [lx, ly] = path[path.size() / 2];
      svg.text(lx, ly - 2, fixed(line.level, contours->interval < 0.1 ? 2 : 1), 8.5, "middle",
               "#3d4b5a");
    }
  }
  if (flow) {
    const double azimuth = flow->result.azimuth * M_PI / 180.0;
    const double x0 = flow->result.x0, y0 = flow->result.y0;
    const double cx = frame.x(x0), cy = frame.y(y0), length = 90;
    const double dx = std::sin(azimuth) * length, dy = -std::cos(azimuth) * length;
    const Stroke arrow{"#b2352b", 3.5, ""};
    svg.line(cx - dx / 2, cy - dy / 2, cx + dx / 2, cy + dy / 2, arrow);
    const double hx = cx + dx / 2, hy = cy + dy / 2, ux = dx / length, uy = dy / length;
    svg.polyline({{hx, hy},
                  {hx - 14 * ux - 7 * uy, hy - 14 * uy + 7 * ux},
                  {hx - 14 * ux + 7 * uy, hy - 14 * uy - 7 * ux},
                  {hx, hy}},
                 Stroke{"#b2352b", 1}, "#b2352b");
    // Its label in the key, clear of the wells' labels.
    svg.line(640, 396, 668, 396, arrow);
    svg.text(674, 392, fmt::format("flow {:.0f}°", flow->result.azimuth), 10, "start", "#b2352b",
             true);
    svg.text(674, 405, fmt::format("i = {:.2g}", flow->result.gradient), 10, "start", "#b2352b");
  }
  for (const Shown& s : other_aquifers) {
    const double x = frame.x(s.at.x), y = frame.y(s.at.y);
    svg.rect(x - 4, y - 4, 8, 8, "#ffffff", Stroke{"#777777", 1});
    svg.text(x + 7, y + 12, s.well, 8, "start", "#777777");
  }
  // Labels beside their well: right, left, below right or above left,
  // whichever first misses the labels already placed (boxes of about
  // 55 x 24 px, kept by their left edge and baseline).
  std::vector<std::pair<double, double>> placed_labels;
  for (const Shown& s : shown) {
    const double x = frame.x(s.at.x), y = frame.y(s.at.y);
    svg.circle(x, y, 7, report::ramp_colour(s.head, low, high), Stroke{"#111111", 1});
    const auto clashes = [&](double left_edge, double baseline) {
      return std::any_of(placed_labels.begin(), placed_labels.end(), [&](const auto& o) {
        return std::abs(o.first - left_edge) < 55 && std::abs(o.second - baseline) < 24;
      });
    };
    struct Spot {
      double dx, dy;
      bool to_left;
    };
    const Spot spots[] = {{9, 0, false}, {-9, 0, true}, {9, 24, false}, {-9, -24, true}};
    Spot chosen = spots[0];
    for (const Spot& spot : spots) {
      if (!clashes(x + spot.dx - (spot.to_left ? 55 : 0), y + spot.dy)) {
        chosen = spot;
        break;
      }
    }
    const double lx = x + chosen.dx, ly = y + chosen.dy;
    const std::string anchor = chosen.to_left ? "end" : "start";
    svg.text(lx, ly - 3, s.well, 10, anchor);
    svg.text(lx, ly + 9, fixed(s.head, 2), 9, anchor, "#333333");
    placed_labels.emplace_back(chosen.to_left ? lx - 55 : lx, ly);
  }
  // Colour key.
  for (int i = 0; i <= 10; ++i) {
    const double v = low + (high - low) * i / 10.0;
    svg.rect(640, 80 + 20 * (10 - i), 20, 20, report::ramp_colour(v, low, high),
             Stroke{"#555555", 0.5});
  }
  svg.text(665, 95, fixed(high, 2) + " " + display.unit, 10);
  svg.text(665, 295, fixed(low, 2) + " " + display.unit, 10);
  svg.text(640, 70, "head", 10, "start", "#222222", true);
  if (contours) {
    svg.line(640, 315, 670, 315, Stroke{"#5d6d7e", 1.0, "5 2"});
    svg.text(675, 319, fmt::format("contours, {:g} {}", contours->interval, display.unit), 10);
  }
  if (!aquifer.empty()) svg.text(640, 50, aquifer, 10, "start", "#222222", true);
  if (!other_aquifers.empty()) {
    svg.rect(641, 326, 8, 8, "#ffffff", Stroke{"#777777", 1});
    svg.text(655, 334, "other aquifers", 10);
  }
  north_arrow(svg, 700, 354);
  scale_bar(svg, frame, 620, 440, 540);
  return svg;
}

// Heads over time per well, measuring-point changes as vertical lines.
std::vector<double> round_ticks(double low, double high, std::size_t max_count) {
  std::vector<double> ticks;
  if (!(high > low) || max_count < 2) return ticks;
  // A step of at least range / (max_count - 1) never gives more than max_count.
  const double rough = (high - low) / static_cast<double>(max_count - 1);
  const double power = std::pow(10.0, std::floor(std::log10(rough)));
  double step = 10.0 * power;
  for (const double m : {1.0, 2.0, 5.0}) {
    if (m * power >= rough) {
      step = m * power;
      break;
    }
  }
  // Half a step of tolerance: 0.1 + 0.2 is not 0.3 in binary.
  for (double t = std::ceil(low / step) * step; t <= high + 1e-9 * step; t += step)
    ticks.push_back(std::abs(t) < 1e-9 * step ? 0.0 : t);
  return ticks;
}

std::vector<double> month_ticks(double t0, double t1, std::size_t max_count) {
  std::vector<double> ticks;
  if (!(t1 > t0) || max_count == 0) return ticks;
  using namespace std::chrono;
  const auto month_start = [](double seconds) {
    const year_month_day day{floor<days>(
        sys_seconds(std::chrono::seconds(static_cast<long long>(std::floor(seconds)))))};
    return year_month{day.year(), day.month()};
  };
  const year_month first = month_start(t0), last = month_start(t1);
  const int span = (last.year() - first.year()).count() * 12 +
                   static_cast<int>(static_cast<unsigned>(last.month())) -
                   static_cast<int>(static_cast<unsigned>(first.month())) + 1;
  int step = 24;
  for (const int months : {1, 2, 3, 6, 12, 24}) {
    if (span / months + 1 <= static_cast<int>(max_count)) {
      step = months;
      break;
    }
  }
  for (year_month m = first;; m += std::chrono::months(1)) {
    const double at = static_cast<double>(sys_seconds(sys_days(m / 1)).time_since_epoch().count());
    if (at > t1) break;
    const int index = static_cast<int>(static_cast<unsigned>(m.month())) - 1;
    if (at >= t0 && index % step == 0) ticks.push_back(at);
  }
  return ticks;
}

std::optional<Svg> hydrographs(const std::map<std::string, std::vector<SeriesPoint>>& heads,
                               const std::vector<MeasuringPointSurvey>& surveys,
                               const HeightDisplay& display) {
  std::map<std::string, std::vector<SeriesPoint>> series;
  double t0 = INFINITY, t1 = -INFINITY;
  for (const auto& [well, points] : heads) {
    if (points.empty()) continue;
    series[well] = points;
    for (SeriesPoint& p : series[well]) p.head *= display.per_metre;
    for (const SeriesPoint& p : points) {
      t0 = std::min(t0, p.time);
      t1 = std::max(t1, p.time);
    }
  }
  if (series.empty() || !(t1 > t0)) return std::nullopt;
  std::map<std::string, std::vector<double>> changes;
  for (const MeasuringPointSurvey& m : surveys)
    changes[m.record.well].push_back(m.record.valid_from);
  // Two panels a row: at a page's width their text prints at about 8 pt.
  const std::size_t columns = 2;
  const double cell_w = 370, cell_h = 170;
  const std::size_t rows = (series.size() + columns - 1) / columns;
  Svg svg(columns * cell_w + 10, static_cast<double>(rows) * cell_h + 10, "Hydrographs per well");
  std::size_t i = 0;
  for (auto& [well, points] : series) {
    std::stable_sort(points.begin(), points.end(),
                     [](const SeriesPoint& a, const SeriesPoint& b) { return a.time < b.time; });
    const double ox = 10 + static_cast<double>(i % columns) * cell_w,
                 oy = 5 + static_cast<double>(i / columns) * cell_h;
    double lo = INFINITY, hi = -INFINITY;
    for (const SeriesPoint& p : points) {
      lo = std::min(lo, p.head);
      hi = std::max(hi, p.head);
    }
    if (hi - lo < 0.1) {
      const double mid = 0.5 * (hi + lo);
      lo = mid - 0.05;
      hi = mid + 0.05;
    }
    const double px = ox + 58, pw = cell_w - 70, py = oy + 22, ph = cell_h - 58;
    const auto X = [&](double t) { return px + (t - t0) / (t1 - t0) * pw; };
    const auto Y = [&](double h) { return py + ph - (h - lo) / (hi - lo) * ph; };
    svg.rect(px, py, pw, ph, "#fbfbf8", Stroke{"#999999", 0.6});
    svg.text(ox + 2, oy + 14, fmt::format("{}: head ({})", well, display.unit), 12, "start",
             "#222222", true);
    // Heads on round values, with their decimals; dates at month starts.
    const std::vector<double> levels = round_ticks(lo, hi, 5);
    const int decimals =
        levels.size() >= 2
            ? std::max(0, -static_cast<int>(std::floor(std::log10(levels[1] - levels[0]) + 1e-9)))
            : 2;
    for (const double h : levels) {
      svg.line(px, Y(h), px + pw, Y(h), Stroke{"#e2e2dc", 0.6});
      svg.text(px - 4, Y(h) + 3.5, fixed(h, decimals), 10, "end");
    }
    for (const double t : month_ticks(t0, t1, 4)) {
      svg.line(X(t), py + ph, X(t), py + ph + 4, Stroke{"#999999", 0.6});
      svg.text(X(t), py + ph + 15, format_utc(t).substr(0, 7), 10, "middle");
    }
    for (double c : changes[well]) {
      if (c > t0 && c < t1) svg.line(X(c), py, X(c), py + ph, Stroke{"#b2352b", 1, "3 2"});
    }
    std::vector<std::pair<double, double>> line;
    for (const SeriesPoint& p : points) {
      if (!p.excluded) line.emplace_back(X(p.time), Y(p.head));
    }
    svg.polyline(line, Stroke{"#2c347a", 1.3});
    for (const SeriesPoint& p : points) {
      svg.circle(X(p.time), Y(p.head), p.excluded ? 2.6 : 1.6, p.excluded ? "#ffffff" : "#2c347a",
                 Stroke{p.excluded ? "#b2352b" : "#2c347a", p.excluded ? 1.2 : 0.5});
    }
    ++i;
  }
  svg.text(
      10, static_cast<double>(rows) * cell_h + 5,
      fmt::format("{} to {} (UTC); heads in {}; dashed: measuring point changed; open red: not for "
                  "contouring (pumping, ...)",
                  format_utc(t0).substr(0, 10), format_utc(t1).substr(0, 10), display.unit),
      10);
  return svg;
}

// Displacements since the first epoch with their confidence intervals.
Svg displacement_chart(const EpochAnalysis& epochs) {
  struct Bar {
    std::string point;
    double d, low, high;
    bool significant, datum;
  };
  std::vector<Bar> bars;
  const std::size_t last = epochs.epochs.size() - 1;
  for (const Displacement& d : epochs.displacements) {
    if (!d.against_first || d.to_epoch != last) continue;
    bars.push_back(
        {d.point, 1000 * d.value, 1000 * d.ci_low, 1000 * d.ci_high, d.significant, d.datum_mark});
  }
  double extent = 1.0;
  for (const Bar& b : bars) extent = std::max({extent, std::abs(b.low), std::abs(b.high)});
  const double row = 18, top = 30, mid = 330, half = 250;
  Svg svg(640, top + row * static_cast<double>(bars.size()) + 40,
          "Displacement since the first epoch (mm) with 95 % interval");
  const double scale = half / extent;
  for (std::size_t i = 0; i < bars.size(); ++i) {
    const Bar& b = bars[i];
    const double y = top + row * static_cast<double>(i);
    svg.text(mid - half - 8, y + 12, b.point, 10, "end");
    const double x0 = mid + std::min(0.0, b.d) * scale;
    svg.rect(x0, y + 4, std::abs(b.d) * scale, row - 8,
             b.datum         ? "#cccccc"
             : b.significant ? "#b2352b"
                             : "#7d8b8f",
             Stroke{"#222222", 0.6, b.significant ? "" : "2 2"});
    svg.line(mid + b.low * scale, y + row / 2, mid + b.high * scale, y + row / 2,
             Stroke{"#111111", 1});
  }
  const double bottom = top + row * static_cast<double>(bars.size());
  svg.line(mid, top - 5, mid, bottom + 5, Stroke{"#222222", 1});
  svg.text(mid - half, bottom + 22, fmt::format("{:+.1f} mm", -extent), 9, "middle");
  svg.text(mid + half, bottom + 22, fmt::format("{:+.1f} mm", extent), 9, "middle");
  svg.text(mid, bottom + 22, "0", 9, "middle");
  return svg;
}

}  // namespace levelhead::report
