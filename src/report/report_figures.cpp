#include "report/report_figures.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <chrono>
#include <cmath>
#include <set>

#include "levelhead/core/time.hpp"
#include "levelhead/flow/contours.hpp"
#include "levelhead/levelling/statistics.hpp"

namespace levelhead::report {

namespace {

// A mark's symbol on the network map: what holds the network and what it
// carries must not look alike.
enum class MarkSymbol { fixed_control, weighted_control, benchmark, other };

MarkSymbol mark_symbol(const Point& p) {
  if (p.is_fixed()) return MarkSymbol::fixed_control;
  if (p.has_control()) return MarkSymbol::weighted_control;
  return p.kind == "benchmark" ? MarkSymbol::benchmark : MarkSymbol::other;
}

void draw_mark(Svg& svg, double x, double y, MarkSymbol symbol) {
  const Stroke outline{"#222222", 1.3};
  switch (symbol) {
    case MarkSymbol::fixed_control:
      svg.polyline({{x, y - 6}, {x - 5.5, y + 4}, {x + 5.5, y + 4}, {x, y - 6}}, outline,
                   "#222222");
      break;
    case MarkSymbol::weighted_control:
      svg.polyline({{x, y - 6}, {x - 5.5, y + 4}, {x + 5.5, y + 4}, {x, y - 6}}, outline,
                   "#ffffff");
      break;
    case MarkSymbol::benchmark:
      svg.rect(x - 4, y - 4, 8, 8, "#ffffff", outline);
      break;
    case MarkSymbol::other:
      svg.circle(x, y, 3.5, "#ffffff", outline);
      break;
  }
}

}  // namespace

// The levelling network: sections coloured and dashed by the outlier test
// the adjustment used (its own statistic and critical value), removed
// sections dotted, failing loops shaded and numbered as in the loop table,
// marks by their role, in a frame of the CRS's coordinates.
std::optional<Svg> network_map(const AdjustStage& adjust, const LoopsStage* loops) {
  const Network& net = adjust.network;
  std::map<std::string, PlacedPoint> points;
  std::map<std::string, MarkSymbol> symbols;
  for (const Point& p : net.points) {
    if (p.x && p.y) {
      points[p.id] = {*p.x, *p.y};
      symbols[p.id] = mark_symbol(p);
    }
  }
  if (points.size() < 2) return std::nullopt;
  Bounds b;
  for (const auto& [id, p] : points) b.add(p.x, p.y);
  const OutlierTest& test = adjust.result.test;
  const std::string stat = test.kind == OutlierTest::Kind::w_test ? "w" : "tau";
  Svg svg(820, 540, fmt::format("Levelling network: sections by {}", stat));
  const double left = 75, top = 20, width = 500, height = 460;
  // A margin inside the neat line, so that marks and labels stay off it.
  const double margin = 0.06 * std::max(b.max_x - b.min_x, b.max_y - b.min_y);
  const MapFrame frame(b.min_x - margin, b.min_y - margin, b.max_x + margin, b.max_y + margin, left,
                       top, width, height);
  // Rings first, then their numbers, so that no ring covers another's number.
  std::vector<std::pair<std::pair<double, double>, std::size_t>> loop_labels;
  if (loops) {
    for (std::size_t k = 0; k < loops->result.loops.size(); ++k) {
      if (loops->result.loops[k].passed) continue;
      std::vector<std::pair<double, double>> ring;
      double cx = 0.0, cy = 0.0;
      for (const std::string& id : loops->loop_points[k]) {
        const auto it = points.find(id);
        if (it == points.end()) continue;
        ring.emplace_back(frame.x(it->second.x), frame.y(it->second.y));
      }
      if (ring.size() < 3) continue;
      svg.polyline(ring, Stroke{"#d9bfe4", 10, ""}, "#f7f0fa");
      for (std::size_t v = 0; v + 1 < ring.size(); ++v) {  // the last repeats the first
        cx += ring[v].first;
        cy += ring[v].second;
      }
      const double n = static_cast<double>(ring.size() - 1);
      loop_labels.push_back({{cx / n, cy / n}, k + 1});
    }
  }
  // Labels clear of every mark and of each other.
  LabelPlacer labels({left, top, left + width, top + height});
  for (const auto& [id, p] : points) labels.keep_clear(frame.x(p.x), frame.y(p.y), 6);
  const double warn = normal_quantile(0.975);  // the usual 5 % band, for w only
  for (const AdjustedSection& a : adjust.result.sections) {
    const Section& section = net.sections[a.section];
    const auto f = points.find(section.from), t = points.find(section.to);
    if (f == points.end() || t == points.end()) continue;
    const auto statistic = a.statistic();
    Stroke s{"#7d8b8f", 1.5, ""};
    if (a.removal_step) {
      s = Stroke{"#b2352b", 3, "2 4"};
    } else if (statistic && std::abs(*statistic) > test.critical) {
      s = Stroke{"#b2352b", 3, "8 3"};
    } else if (test.kind == OutlierTest::Kind::w_test && statistic && std::abs(*statistic) > warn) {
      s = Stroke{"#d08c1a", 2.5, "4 2"};
    } else if (!statistic) {
      s = Stroke{"#444444", 1.2, "1 2"};
    }
    svg.line(frame.x(f->second.x), frame.y(f->second.y), frame.x(t->second.x), frame.y(t->second.y),
             s);
  }
  for (const auto& [at, number] : loop_labels)
    labels.place(svg, at.first, at.second, 0,
                 {{fmt::format("loop {}", number), 12, "#6a3d7c", true}});
  for (const auto& [id, p] : points) {
    draw_mark(svg, frame.x(p.x), frame.y(p.y), symbols[id]);
    labels.place(svg, frame.x(p.x), frame.y(p.y), 6, {{id, 11}});
  }
  coordinate_frame(svg, frame, left, top, width, height);
  // Legend: the sections by the test the adjustment used, then the marks.
  const double lx = 600;
  double ly = 40;
  std::vector<std::pair<Stroke, std::string>> legend = {
      {{"#7d8b8f", 1.5, ""},
       fmt::format("|{}| <= {:.2f}", stat,
                   test.kind == OutlierTest::Kind::w_test ? warn : test.critical)}};
  if (test.kind == OutlierTest::Kind::w_test)
    legend.push_back(
        {{"#d08c1a", 2.5, "4 2"}, fmt::format("{:.2f} < |w| <= {:.2f}", warn, test.critical)});
  legend.push_back(
      {{"#b2352b", 3, "8 3"}, fmt::format("|{}| > {:.2f} (suspect)", stat, test.critical)});
  legend.push_back({{"#b2352b", 3, "2 4"}, "removed by snooping"});
  legend.push_back({{"#444444", 1.2, "1 2"}, "no check (r = 0)"});
  legend.push_back({{"#d9bfe4", 10, ""}, "failed loop (numbered)"});
  for (const auto& [stroke, label] : legend) {
    svg.line(lx, ly, lx + 30, ly, stroke);
    svg.text(lx + 36, ly + 4, label, 11);
    ly += 21;
  }
  ly += 6;
  for (const auto& [symbol, label] : {std::pair{MarkSymbol::fixed_control, "fixed control"},
                                      std::pair{MarkSymbol::weighted_control, "weighted control"},
                                      std::pair{MarkSymbol::benchmark, "benchmark"},
                                      std::pair{MarkSymbol::other, "well or other mark"}}) {
    draw_mark(svg, lx + 15, ly, symbol);
    svg.text(lx + 36, ly + 4, label, 11);
    ly += 21;
  }
  svg.text(lx, ly + 10, fmt::format("{} at alpha0 = {:g}", test.name(), test.alpha0), 10);
  north_arrow(svg, 700, 380);
  scale_bar(svg, frame, 610, 470, width);
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
  Svg svg(780, 530, "Heads of the contouring round");
  const double left = 70, top = 15, width = 550, height = 480;
  const double margin = 0.06 * std::max(b.max_x - b.min_x, b.max_y - b.min_y);
  const MapFrame frame(b.min_x - margin, b.min_y - margin, b.max_x + margin, b.max_y + margin, left,
                       top, width, height);
  std::vector<HeadAtWell> at_wells;
  for (const Shown& s : shown) at_wells.push_back({s.at.x, s.at.y, s.head});
  contours = quick_contours(at_wells, interval);
  std::vector<std::vector<std::pair<double, double>>> contour_paths;
  if (contours) {
    for (const ContourLine& line : contours->lines) {
      std::vector<std::pair<double, double>> path;
      for (const auto& [x, y] : line.vertices) path.emplace_back(frame.x(x), frame.y(y));
      svg.polyline(path, Stroke{"#5d6d7e", 1.0, "5 2"});
      contour_paths.push_back(std::move(path));
    }
  }
  // The flow arrow's path, kept clear of the labels placed below.
  std::vector<std::pair<double, double>> arrow_path;
  if (flow) {
    const double azimuth = flow->result.azimuth * M_PI / 180.0;
    const double x0 = flow->result.x0, y0 = flow->result.y0;
    const double cx = frame.x(x0), cy = frame.y(y0), length = 90;
    const double dx = std::sin(azimuth) * length, dy = -std::cos(azimuth) * length;
    const Stroke arrow{"#b2352b", 3.5, ""};
    svg.line(cx - dx / 2, cy - dy / 2, cx + dx / 2, cy + dy / 2, arrow);
    for (int k = 0; k <= 10; ++k)
      arrow_path.emplace_back(cx - dx / 2 + dx * k / 10.0, cy - dy / 2 + dy * k / 10.0);
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
  // Every well's symbol first, then the labels clear of all symbols and of
  // each other (nested piezometers share a spot: their labels fan out,
  // with leader lines when they must).
  // A well of another aquifer beside a contoured one (a nest) is drawn a
  // little aside, tied to its place, so that its square does not hide under
  // the circle.
  std::vector<std::pair<double, double>> square_at;
  for (const Shown& s : other_aquifers) {
    const double x = frame.x(s.at.x), y = frame.y(s.at.y);
    const bool covered = std::any_of(shown.begin(), shown.end(), [&](const Shown& o) {
      return std::hypot(frame.x(o.at.x) - x, frame.y(o.at.y) - y) < 12.0;
    });
    square_at.emplace_back(covered ? x - 16.0 : x, covered ? y + 16.0 : y);
  }
  LabelPlacer labels({left, top, left + width, top + height});
  for (const Shown& s : shown) labels.keep_clear(frame.x(s.at.x), frame.y(s.at.y), 8);
  for (const auto& [x, y] : square_at) labels.keep_clear(x, y, 6);
  for (const auto& [x, y] : arrow_path) labels.keep_clear(x, y, 6);
  for (const Shown& s : shown) {
    svg.circle(frame.x(s.at.x), frame.y(s.at.y), 7, report::ramp_colour(s.head, low, high),
               Stroke{"#111111", 1});
  }
  for (std::size_t i = 0; i < other_aquifers.size(); ++i) {
    const double x = frame.x(other_aquifers[i].at.x), y = frame.y(other_aquifers[i].at.y);
    const auto& [sx, sy] = square_at[i];
    if (std::hypot(sx - x, sy - y) > 0.5) svg.line(x, y, sx, sy, Stroke{"#777777", 0.8});
    svg.rect(sx - 4, sy - 4, 8, 8, "#ffffff", Stroke{"#777777", 1});
  }
  for (const Shown& s : shown) {
    labels.place(svg, frame.x(s.at.x), frame.y(s.at.y), 7,
                 {{s.well, 11}, {fixed(s.head, 2), 10, "#333333"}});
  }
  for (std::size_t i = 0; i < other_aquifers.size(); ++i) {
    labels.place(svg, square_at[i].first, square_at[i].second, 5,
                 {{other_aquifers[i].well, 10, "#777777"}});
  }
  // Each contour's level on the line, where it is clear of the wells'
  // labels: the middle first, then towards either end.
  for (std::size_t c = 0; c < contour_paths.size(); ++c) {
    const auto& path = contour_paths[c];
    const std::string level = fixed(contours->lines[c].level, contours->interval < 0.1 ? 2 : 1);
    std::optional<std::pair<double, double>> at;
    for (const double f : {0.5, 0.35, 0.65, 0.2, 0.8}) {
      const auto& [x, y] = path[static_cast<std::size_t>(f * static_cast<double>(path.size() - 1))];
      const Box box = text_box(x, y - 2, level, std::max(10.0, svg.min_text_size()), "middle");
      if (labels.is_free(box)) {
        labels.take(box);
        at = {x, y};
        break;
      }
    }
    if (!at) at = path[path.size() / 2];  // nowhere clear: the middle, as before
    svg.text(at->first, at->second - 2, level, 10, "middle", "#3d4b5a");
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
  coordinate_frame(svg, frame, left, top, width, height);
  north_arrow(svg, 700, 354);
  scale_bar(svg, frame, 645, 450, width);
  return svg;
}

// Heads over time per well, measuring-point changes as vertical lines.
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
    const double px = ox + 58, pw = cell_w - 70, py = oy + 30, ph = cell_h - 66;
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
