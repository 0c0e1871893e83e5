#include "levelhead/report.hpp"

#include <fmt/format.h>
#include <gdal.h>
#include <proj.h>

#include <algorithm>
#include <cmath>
#include <fstream>
#include <map>
#include <nlohmann/json.hpp>
#include <set>

#include "levelhead/checksums.hpp"
#include "levelhead/contours.hpp"
#include "levelhead/errors.hpp"
#include "levelhead/output_files.hpp"
#include "levelhead/table.hpp"
#include "levelhead/time.hpp"
#include "levelhead/version.hpp"
#include "levelhead/vertical_reference.hpp"
#include "report/svg.hpp"
#include "util/json_text.hpp"

namespace levelhead {

namespace fs = std::filesystem;
using report::MapFrame;
using report::Stroke;
using report::Svg;

namespace {

// ---------------------------------------------------------------- reading

// A stage's CSV output, read by column name.
class Csv {
 public:
  explicit Csv(const fs::path& path) : table_(read_table(path)) {}
  // An input of the project, read with its column map.
  explicit Csv(const ReportInput& input)
      : table_(
            read_table(input.resolved,
                       TableOptions{parse_column_map(input.columns), LengthUnit::metre, {}, {}})) {}
  std::size_t rows() const { return table_.row_count(); }
  bool has(const std::string& column) const { return table_.find_column(column).has_value(); }
  std::string get(std::size_t row, const std::string& column) const {
    const auto c = table_.find_column(column);
    return c ? std::string(table_.cell(row, *c)) : std::string();
  }
  std::optional<double> number(std::size_t row, const std::string& column) const {
    const auto c = table_.find_column(column);
    return c ? table_.number(row, *c) : std::nullopt;
  }

 private:
  Table table_;
};

nlohmann::json read_json(const fs::path& path) {
  std::ifstream in(path);
  if (!in) throw InputError(path.string(), "cannot read this stage output");
  try {
    return nlohmann::json::parse(in);
  } catch (const nlohmann::json::exception& e) {
    throw InputError(path.string(), std::string("not valid JSON: ") + e.what());
  }
}

std::vector<std::string> split(const std::string& text, char separator) {
  std::vector<std::string> out;
  std::string item;
  for (char c : text) {
    if (c == separator) {
      out.push_back(item);
      item.clear();
    } else {
      item += c;
    }
  }
  out.push_back(item);
  return out;
}

// ---------------------------------------------------------------- document

// Text taken literally in Markdown: ids and file names may hold characters
// that Markdown reads as markup or HTML (CommonMark lets any ASCII
// punctuation be escaped with a backslash).
std::string markdown_text(const std::string& text) {
  std::string out;
  for (const char c : text) {
    if (std::string_view("\\`*_<>[]|").find(c) != std::string_view::npos) out += '\\';
    out += c;
  }
  return out;
}

// One document rendered twice: Markdown (figures as files) and HTML (inline).
class Document {
 public:
  void heading(int level, const std::string& text) {
    md_ += fmt::format("\n{} {}\n\n", std::string(static_cast<std::size_t>(level), '#'),
                       markdown_text(text));
    html_ += fmt::format("<h{0}>{1}</h{0}>\n", level, report::escape_xml(text));
  }
  void paragraph(const std::string& text) {
    md_ += markdown_text(text) + "\n\n";
    html_ += "<p>" + report::escape_xml(text) + "</p>\n";
  }
  void bullets(const std::vector<std::string>& items) {
    if (items.empty()) return;
    html_ += "<ul>\n";
    for (const std::string& i : items) {
      md_ += "- " + markdown_text(i) + "\n";
      html_ += "<li>" + report::escape_xml(i) + "</li>\n";
    }
    md_ += "\n";
    html_ += "</ul>\n";
  }
  void table(const std::vector<std::string>& header,
             const std::vector<std::vector<std::string>>& rows, std::size_t limit = 60) {
    md_ += "|";
    html_ += "<table>\n<thead><tr>";
    for (const std::string& h : header) {
      md_ += fmt::format(" {} |", markdown_text(h));
      html_ += "<th>" + report::escape_xml(h) + "</th>";
    }
    md_ += "\n|";
    for (std::size_t i = 0; i < header.size(); ++i) md_ += "---|";
    md_ += "\n";
    html_ += "</tr></thead>\n<tbody>\n";
    for (std::size_t r = 0; r < rows.size() && r < limit; ++r) {
      md_ += "|";
      html_ += "<tr>";
      for (const std::string& c : rows[r]) {
        md_ += fmt::format(" {} |", markdown_text(c));
        html_ += "<td>" + report::escape_xml(c) + "</td>";
      }
      md_ += "\n";
      html_ += "</tr>\n";
    }
    html_ += "</tbody></table>\n";
    md_ += "\n";
    if (rows.size() > limit) {
      paragraph(fmt::format("({} more rows in the stage's table.)", rows.size() - limit));
    }
  }
  void figure(const std::string& name, const Svg& svg, const std::string& caption) {
    const std::string file = "figures/" + name + ".svg";
    figures_.emplace_back(file, svg.str());
    md_ += fmt::format("![{0}]({1})\n\n*{0}*\n\n", markdown_text(caption), file);
    html_ += fmt::format("<figure id=\"fig-{}\">\n{}<figcaption>{}</figcaption>\n</figure>\n", name,
                         svg.str(), report::escape_xml(caption));
  }
  const std::string& markdown() const { return md_; }
  const std::string& html() const { return html_; }
  const std::vector<std::pair<std::string, std::string>>& figures() const { return figures_; }

 private:
  std::string md_, html_;
  std::vector<std::pair<std::string, std::string>> figures_;
};

const char* const css =
    R"(body{font-family:Georgia,'DejaVu Serif',serif;max-width:60em;margin:2em auto;padding:0 1em;color:#1d1d1d;line-height:1.45}
h1{font-family:sans-serif;border-bottom:3px solid #2f8f83;padding-bottom:.2em}
h2{font-family:sans-serif;color:#2c347a;margin-top:2em;border-bottom:1px solid #bbb}
h3{font-family:sans-serif}
table{border-collapse:collapse;margin:.8em 0;font-size:.9em}
th,td{border:1px solid #999;padding:.25em .55em;text-align:left}
th{background:#e9eef0}
figure{margin:1.2em 0;page-break-inside:avoid}
figcaption{font-size:.9em;font-style:italic}
.note{font-size:.85em;color:#444}
@media print{body{max-width:none}h2{page-break-after:avoid}}
)";

// ---------------------------------------------------------------- versions

std::string gdal_version() { return GDALVersionInfo("RELEASE_NAME"); }

std::string epsg_version() {
  const char* v = proj_context_get_database_metadata(nullptr, "EPSG.VERSION");
  return v ? v : "unknown";
}

std::string fixed(double value, int decimals) { return fmt::format("{:.{}f}", value, decimals); }

// ---------------------------------------------------------------- figures

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
std::optional<Svg> network_map(const std::map<std::string, PlacedPoint>& points,
                               const fs::path& run) {
  if (points.size() < 2 || !fs::exists(run / "adjust" / "residuals.csv")) return std::nullopt;
  Bounds b;
  for (const auto& [id, p] : points) b.add(p.x, p.y);
  Svg svg(800, 520, "Levelling network: sections by normalised residual |w|");
  const MapFrame frame(b.min_x, b.min_y, b.max_x, b.max_y, 30, 30, 540, 450);
  const Csv residuals(run / "adjust" / "residuals.csv");
  if (fs::exists(run / "loops" / "loops.csv")) {
    const Csv loops(run / "loops" / "loops.csv");
    for (std::size_t r = 0; r < loops.rows(); ++r) {
      if (loops.get(r, "passed") == "yes") continue;
      std::vector<std::pair<double, double>> ring;
      for (const std::string& id : split(loops.get(r, "points"), '>')) {
        const auto it = points.find(id);
        if (it != points.end()) ring.emplace_back(frame.x(it->second.x), frame.y(it->second.y));
      }
      if (ring.size() >= 3) svg.polyline(ring, Stroke{"#d9bfe4", 10, ""}, "#f7f0fa");
    }
  }
  for (std::size_t r = 0; r < residuals.rows(); ++r) {
    const auto f = points.find(residuals.get(r, "from")), t = points.find(residuals.get(r, "to"));
    if (f == points.end() || t == points.end()) continue;
    const auto w = residuals.number(r, "w");
    Stroke s{"#7d8b8f", 1.5, ""};
    if (!residuals.get(r, "removed_step").empty()) {
      s = Stroke{"#b2352b", 3, "2 4"};
    } else if (w && std::abs(*w) > 3.29) {
      s = Stroke{"#b2352b", 3, "8 3"};
    } else if (w && std::abs(*w) > 1.96) {
      s = Stroke{"#d08c1a", 2.5, "4 2"};
    } else if (!w) {
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
Svg loop_chart(const Csv& loops) {
  const double row = 18, top = 30, left = 60, width = 500;
  Svg svg(640, top + row * static_cast<double>(loops.rows()) + 40,
          "Loop misclosures against tolerance");
  double largest = 1.5;
  for (std::size_t r = 0; r < loops.rows(); ++r) {
    const auto m = loops.number(r, "misclosure"), t = loops.number(r, "tolerance");
    if (m && t && *t > 0) largest = std::max(largest, std::abs(*m) / *t);
  }
  const double scale = width / largest;
  for (std::size_t r = 0; r < loops.rows(); ++r) {
    const auto m = loops.number(r, "misclosure"), t = loops.number(r, "tolerance");
    const double ratio = m && t && *t > 0 ? std::abs(*m) / *t : 0.0;
    const bool passed = loops.get(r, "passed") == "yes";
    const double y = top + row * static_cast<double>(r);
    svg.text(left - 6, y + 12, "loop " + loops.get(r, "loop"), 10, "end");
    svg.rect(left, y + 3, ratio * scale, row - 6, passed ? "#2f8f83" : "#b2352b",
             Stroke{"#222222", 0.8, passed ? "" : "3 2"});
    svg.text(left + ratio * scale + 4, y + 12, fmt::format("{:.2f}", ratio), 9);
  }
  const double limit_y = top + row * static_cast<double>(loops.rows());
  svg.line(left + scale, top - 5, left + scale, limit_y + 5, Stroke{"#222222", 1.2, "6 3"});
  svg.text(left + scale, top - 10, "tolerance", 10, "middle");
  svg.text(left, limit_y + 25, "|misclosure| / tolerance", 10);
  return svg;
}

// Heads of the contouring round: wells coloured by head, quick-look
// contours, the flow arrow.
std::optional<Svg> head_map(const Csv& event, const Csv& wells, const fs::path& flow_json,
                            std::optional<double> interval,
                            std::optional<QuickContours>& contours) {
  std::map<std::string, PlacedPoint> placed;
  for (std::size_t r = 0; r < wells.rows(); ++r) {
    const auto x = wells.number(r, "x"), y = wells.number(r, "y");
    if (x && y) placed[wells.get(r, "id")] = {*x, *y};
  }
  struct Shown {
    PlacedPoint at;
    double head;
    std::string well;
  };
  // One aquifer is contoured: the one the flow fit used, when it names one.
  std::string aquifer;
  if (fs::exists(flow_json)) aquifer = read_json(flow_json).value("aquifer", std::string());
  std::vector<Shown> shown, other_aquifers;
  Bounds b;
  for (std::size_t r = 0; r < event.rows(); ++r) {
    const auto it = placed.find(event.get(r, "well"));
    const auto h = event.number(r, "head");
    if (it == placed.end() || !h) continue;
    auto& list = aquifer.empty() || event.get(r, "aquifer") == aquifer ? shown : other_aquifers;
    list.push_back({it->second, *h, it->first});
    b.add(it->second.x, it->second.y);
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
  if (fs::exists(flow_json)) {
    const nlohmann::json flow = read_json(flow_json);
    const double azimuth = flow["azimuth"]["value"].get<double>() * M_PI / 180.0;
    const double x0 = flow["plane"]["x0"].get<double>(), y0 = flow["plane"]["y0"].get<double>();
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
    svg.text(674, 392, fmt::format("flow {:.0f}°", flow["azimuth"]["value"].get<double>()), 10,
             "start", "#b2352b", true);
    svg.text(674, 405, fmt::format("i = {:.2g}", flow["gradient"]["value"].get<double>()), 10,
             "start", "#b2352b");
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
  svg.text(665, 95, fixed(high, 2) + " m", 10);
  svg.text(665, 295, fixed(low, 2) + " m", 10);
  svg.text(640, 70, "head", 10, "start", "#222222", true);
  if (contours) {
    svg.line(640, 315, 670, 315, Stroke{"#5d6d7e", 1.0, "5 2"});
    svg.text(675, 319, fmt::format("contours, {:g} m", contours->interval), 10);
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
std::optional<Svg> hydrographs(const Csv& heads, const Csv& mps) {
  struct Reading {
    double time, head;
    bool excluded;  // kept out of contouring for a reason other than the window
    bool operator<(const Reading& o) const { return time < o.time; }
  };
  std::map<std::string, std::vector<Reading>> series;
  double t0 = INFINITY, t1 = -INFINITY;
  for (std::size_t r = 0; r < heads.rows(); ++r) {
    const auto h = heads.number(r, "head");
    const auto when = parse_iso8601(heads.get(r, "time_utc"));
    if (!h || !when) continue;
    const std::string reason = heads.get(r, "reason");
    series[heads.get(r, "well")].push_back(
        {when->seconds, *h, !reason.empty() && reason != "outside-synoptic-window"});
    t0 = std::min(t0, when->seconds);
    t1 = std::max(t1, when->seconds);
  }
  if (series.empty() || !(t1 > t0)) return std::nullopt;
  std::map<std::string, std::vector<double>> changes;
  for (std::size_t r = 0; r < mps.rows(); ++r) {
    const auto when = parse_iso8601(mps.get(r, "valid_from"));
    if (when) changes[mps.get(r, "well")].push_back(when->seconds);
  }
  const std::size_t columns = 3;
  const double cell_w = 245, cell_h = 120;
  const std::size_t rows = (series.size() + columns - 1) / columns;
  Svg svg(columns * cell_w + 10, static_cast<double>(rows) * cell_h + 10, "Hydrographs per well");
  std::size_t i = 0;
  for (auto& [well, points] : series) {
    std::sort(points.begin(), points.end());
    const double ox = 10 + static_cast<double>(i % columns) * cell_w,
                 oy = 5 + static_cast<double>(i / columns) * cell_h;
    double lo = INFINITY, hi = -INFINITY;
    for (const Reading& p : points) {
      lo = std::min(lo, p.head);
      hi = std::max(hi, p.head);
    }
    if (hi - lo < 0.1) {
      const double mid = 0.5 * (hi + lo);
      lo = mid - 0.05;
      hi = mid + 0.05;
    }
    const double px = ox + 40, pw = cell_w - 55, py = oy + 18, ph = cell_h - 42;
    const auto X = [&](double t) { return px + (t - t0) / (t1 - t0) * pw; };
    const auto Y = [&](double h) { return py + ph - (h - lo) / (hi - lo) * ph; };
    svg.rect(px, py, pw, ph, "#fbfbf8", Stroke{"#999999", 0.6});
    svg.text(ox + 2, oy + 12, well, 11, "start", "#222222", true);
    svg.text(px - 3, py + 8, fixed(hi, 2), 8, "end");
    svg.text(px - 3, py + ph, fixed(lo, 2), 8, "end");
    for (double c : changes[well]) {
      if (c > t0 && c < t1) svg.line(X(c), py, X(c), py + ph, Stroke{"#b2352b", 1, "3 2"});
    }
    std::vector<std::pair<double, double>> line;
    for (const Reading& p : points) {
      if (!p.excluded) line.emplace_back(X(p.time), Y(p.head));
    }
    svg.polyline(line, Stroke{"#2c347a", 1.3});
    for (const Reading& p : points) {
      svg.circle(X(p.time), Y(p.head), p.excluded ? 2.6 : 1.6, p.excluded ? "#ffffff" : "#2c347a",
                 Stroke{p.excluded ? "#b2352b" : "#2c347a", p.excluded ? 1.2 : 0.5});
    }
    ++i;
  }
  svg.text(
      10, static_cast<double>(rows) * cell_h + 5,
      fmt::format(
          "{} to {}; dashed: measuring point changed; open red: not for contouring (pumping, ...)",
          format_utc(t0).substr(0, 10), format_utc(t1).substr(0, 10)),
      9);
  return svg;
}

// Displacements since the first epoch with their confidence intervals.
Svg displacement_chart(const Csv& moves, const std::string& last_epoch) {
  struct Bar {
    std::string point;
    double d, low, high;
    bool significant, datum;
  };
  std::vector<Bar> bars;
  for (std::size_t r = 0; r < moves.rows(); ++r) {
    if (moves.get(r, "against") != "first" || moves.get(r, "to_epoch") != last_epoch) continue;
    bars.push_back({moves.get(r, "point"), 1000 * moves.number(r, "displacement").value_or(0),
                    1000 * moves.number(r, "ci_low").value_or(0),
                    1000 * moves.number(r, "ci_high").value_or(0),
                    moves.get(r, "significant") == "yes", !moves.get(r, "note").empty()});
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

// ---------------------------------------------------------------- sections

struct Findings {
  std::vector<std::string> items;
};

std::map<std::string, PlacedPoint> read_points(const ReportContext& c) {
  std::map<std::string, PlacedPoint> points;
  for (const ReportInput& i : c.inputs) {
    if (i.role != "points") continue;
    const Csv t(i);
    for (std::size_t r = 0; r < t.rows(); ++r) {
      const auto x = t.number(r, "x"), y = t.number(r, "y");
      if (x && y) points[t.get(r, "id")] = {*x, *y};
    }
  }
  return points;
}

const ReportInput* input(const ReportContext& c, const std::string& role) {
  for (const ReportInput& i : c.inputs) {
    if (i.role == role) return &i;
  }
  return nullptr;
}

void levelling_section(Document& doc, Findings& findings, const ReportContext& c,
                       const fs::path& run) {
  if (!fs::exists(run / "adjust")) return;
  doc.heading(2, "Levelling network");
  if (fs::exists(run / "reduce" / "summary.json")) {
    const nlohmann::json r = read_json(run / "reduce" / "summary.json");
    const auto& n = r["counts"];
    doc.paragraph(fmt::format(
        "Field book: {} runs, {} setups and {} sights reduced to {} sections; {} setup(s) "
        "and {} section(s) failed a field check (reduce/setups.csv, reduce/sections.csv).",
        n.value("runs", 0), n.value("setups", 0), n.value("sights", 0), n.value("sections", 0),
        n.value("failed_setups", 0), n.value("flagged_sections", 0)));
  }
  if (auto map = network_map(read_points(c), run)) {
    doc.figure("network", *map,
               "Levelling network. Line colour and dash give the normalised residual |w| of each "
               "section after adjustment; failed loops are outlined.");
  }
  if (fs::exists(run / "loops" / "loops.csv")) {
    const Csv loops(run / "loops" / "loops.csv");
    doc.heading(3, "Loop misclosures");
    std::vector<std::vector<std::string>> rows;
    std::size_t failed = 0;
    for (std::size_t r = 0; r < loops.rows(); ++r) {
      failed += loops.get(r, "passed") != "yes";
      rows.push_back({loops.get(r, "loop"), loops.get(r, "points"), loops.get(r, "length"),
                      fixed(1000 * loops.number(r, "misclosure").value_or(0), 2),
                      fixed(1000 * loops.number(r, "tolerance").value_or(0), 2),
                      loops.get(r, "passed")});
    }
    doc.table({"loop", "points", "length (m)", "misclosure (mm)", "tolerance (mm)", "passed"},
              rows);
    if (loops.rows() > 0)
      doc.figure("loops", loop_chart(loops), "Loop misclosures as a fraction of their tolerance.");
    if (failed > 0) {
      findings.items.push_back(fmt::format(
          "{} of {} levelling loops failed their closure tolerance.", failed, loops.rows()));
    }
  }
  const nlohmann::json s = read_json(run / "adjust" / "summary.json");
  doc.heading(3, "Adjustment");
  std::vector<std::vector<std::string>> stats = {
      {"redundancy (dof)", std::to_string(s["dof"].get<long>())},
      {"sigma0 (a posteriori)", s["sigma0"].is_null() ? "-" : fixed(s["sigma0"].get<double>(), 3)},
      {"reference of the heights", s.value("reference", std::string())}};
  if (!s["global_test"].is_null()) {
    const auto& g = s["global_test"];
    stats.push_back({"global test (chi-square)",
                     fmt::format("{:.2f} in [{:.2f}, {:.2f}]: {}", g["statistic"].get<double>(),
                                 g["lower"].get<double>(), g["upper"].get<double>(),
                                 g["passed"].get<bool>() ? "passed" : "failed")});
  }
  doc.table({"quantity", "value"}, stats);
  std::vector<std::vector<std::string>> removed;
  for (const auto& r : s["removals"]) {
    removed.push_back({std::to_string(r["step"].get<long>()), r["from"].get<std::string>(),
                       r["to"].get<std::string>(), fixed(r["w"].get<double>(), 1),
                       std::to_string(r["row"].get<long>())});
    findings.items.push_back(
        fmt::format("Blunder: the section {} -> {} (sections row {}) failed data snooping with w = "
                    "{:.1f} and was "
                    "removed; re-level it.",
                    r["from"].get<std::string>(), r["to"].get<std::string>(), r["row"].get<long>(),
                    r["w"].get<double>()));
  }
  if (!removed.empty()) {
    doc.paragraph("Sections removed by iterative data snooping (Baarda's w-test), in order:");
    doc.table({"step", "from", "to", "w", "row"}, removed);
  }
  std::vector<std::vector<std::string>> suspects;
  for (const auto& r : s["suspects"]) {
    suspects.push_back(
        {r["from"].get<std::string>(), r["to"].get<std::string>(), fixed(r["w"].get<double>(), 2)});
  }
  doc.paragraph(suspects.empty() ? "No observation fails data snooping after the removals."
                                 : "Observations still failing data snooping:");
  if (!suspects.empty()) doc.table({"from", "to", "w"}, suspects);
  const Csv heights(run / "adjust" / "heights.csv");
  std::vector<std::vector<std::string>> rows;
  for (std::size_t r = 0; r < heights.rows(); ++r) {
    rows.push_back({heights.get(r, "id"), heights.get(r, "height"), heights.get(r, "sigma"),
                    heights.get(r, "control")});
  }
  doc.paragraph("Adjusted heights (m):");
  doc.table({"point", "height", "sigma", "control"}, rows);
}

void gnss_section(Document& doc, Findings& findings, const fs::path& run) {
  if (!fs::exists(run / "gnss-check" / "gnss_check.csv")) return;
  const nlohmann::json s = read_json(run / "gnss-check" / "summary.json");
  const Csv marks(run / "gnss-check" / "gnss_check.csv");
  doc.heading(2, "GNSS heights against the levelling");
  doc.paragraph(fmt::format(
      "GNSS heights ({}) brought into {} through the references, against the adjusted "
      "heights of the same marks; the differences are the residuals of the tie.",
      s["gnss_reference"].get<std::string>(), s["levelled_reference"].get<std::string>()));
  std::vector<std::vector<std::string>> rows;
  std::size_t failing = 0;
  for (std::size_t r = 0; r < marks.rows(); ++r) {
    const std::string verdict = marks.get(r, "verdict");
    failing += verdict != "consistent";
    rows.push_back({marks.get(r, "id"), marks.get(r, "levelled"), marks.get(r, "gnss_converted"),
                    fixed(1000 * marks.number(r, "difference").value_or(0), 1),
                    fixed(1000 * marks.number(r, "sigma").value_or(0), 1), verdict});
  }
  doc.table(
      {"mark", "levelled (m)", "GNSS converted (m)", "difference (mm)", "sigma (mm)", "verdict"},
      rows);
  if (failing > 0) {
    findings.items.push_back(fmt::format(
        "{} of {} marks disagree between GNSS and levelling (gnss-check).", failing, marks.rows()));
  }
}

void monitoring_section(Document& doc, Findings& findings, const fs::path& run) {
  if (!fs::exists(run / "epochs" / "summary.json")) return;
  const nlohmann::json s = read_json(run / "epochs" / "summary.json");
  doc.heading(2, "Monitoring epochs");
  std::vector<std::vector<std::string>> rows;
  for (const auto& e : s["epochs"]) {
    rows.push_back({e["name"].get<std::string>(), e["first_date"].get<std::string>(),
                    e["last_date"].get<std::string>(), std::to_string(e["sections"].get<long>()),
                    e["sigma0"].is_null() ? "-" : fixed(e["sigma0"].get<double>(), 2),
                    e["global_test"].is_null()               ? "none"
                    : e["global_test"]["passed"].get<bool>() ? "passed"
                                                             : "failed"});
  }
  doc.table({"epoch", "from", "to", "sections", "sigma0", "global test"}, rows);
  const auto& first = s["congruence_tests"][0];
  doc.paragraph(fmt::format(
      "Global congruence test of the candidate reference marks: {} = {:.3f} against {:.3f}: {}.",
      first["distribution"].get<std::string>(), first["statistic"].get<double>(),
      first["critical"].get<double>(), first["passed"].get<bool>() ? "passed" : "failed"));
  rows.clear();
  for (const auto& m : s["marks"]) {
    rows.push_back({m["mark"].get<std::string>(), m["verdict"].get<std::string>(),
                    m["reason"].get<std::string>()});
    if (m["verdict"] != "stable") {
      findings.items.push_back(
          fmt::format("Reference mark {} is {}: {}", m["mark"].get<std::string>(),
                      m["verdict"].get<std::string>(), m["reason"].get<std::string>()));
    }
  }
  doc.table({"mark", "verdict", "reason"}, rows);
  const Csv moves(run / "epochs" / "displacements.csv");
  const std::string last = s["epochs"].back()["name"].get<std::string>();
  doc.figure("displacements", displacement_chart(moves, last),
             fmt::format("Displacement of every point from the first epoch to {} (mm); solid red: "
                         "significant, grey: stable reference mark.",
                         last));
  const Csv rates(run / "epochs" / "rates.csv");
  rows.clear();
  for (std::size_t r = 0; r < rates.rows(); ++r) {
    rows.push_back({rates.get(r, "point"), rates.get(r, "epochs"), rates.get(r, "rate_mm_per_year"),
                    rates.get(r, "sigma_mm_per_year"), rates.get(r, "significant")});
  }
  if (!rows.empty()) {
    doc.paragraph("Rates (mm per year, weighted least squares over the epochs):");
    doc.table({"point", "epochs", "rate", "sigma", "significant"}, rows);
  }
  const long significant = s["significant_displacements"].get<long>();
  if (significant > 0) {
    findings.items.push_back(
        fmt::format("{} significant displacement(s) between epochs; measuring points on "
                    "monitored points follow them.",
                    significant));
  }
  for (const auto& w : s["warnings"])
    findings.items.push_back("Monitoring: " + w.get<std::string>());
}

void transducer_section(Document& doc, Findings& findings, const fs::path& run) {
  if (!fs::exists(run / "transducer" / "summary.json")) return;
  const nlohmann::json s = read_json(run / "transducer" / "summary.json");
  doc.heading(2, "Pressure transducers");
  doc.paragraph(
      fmt::format("Depth to water = hung depth - water pressure / (rho g) + offset from the tape "
                  "checks, linear in time between checks; g = {} m/s^2.",
                  s["options"]["gravity_m_s2"].get<double>()));
  std::vector<std::vector<std::string>> rows;
  for (const auto& sensor : s["sensors"]) {
    std::size_t rejected = 0;
    std::vector<std::string> flags;
    for (const auto& [flag, count] : sensor["flags"].items()) {
      flags.push_back(fmt::format("{} {}", flag, count.get<long>()));
      if (flag.find("-rejected") != std::string::npos || flag == "baro-gap")
        rejected += count.get<std::size_t>();
    }
    const auto& be = sensor["barometric_efficiency"];
    rows.push_back({sensor["sensor"].get<std::string>(), sensor["well"].get<std::string>(),
                    sensor["kind"].get<std::string>(),
                    std::to_string(sensor["written"].get<long>()),
                    std::to_string(sensor["checks"].get<long>()),
                    fixed(1000 * sensor["largest_drift_m"].get<double>(), 1),
                    be.is_null() ? "-"
                                 : fmt::format("{:.2f} +- {:.2f}", be["value"].get<double>(),
                                               be["sigma"].get<double>()),
                    fmt::format("{:g}", sensor["density_kg_m3"].get<double>()),
                    fmt::format("{}", fmt::join(flags, ", "))});
    if (rejected > 0) {
      findings.items.push_back(fmt::format(
          "Transducer {} in {}: {} reading(s) rejected or left uncomputed "
          "(transducer/qa.csv).",
          sensor["sensor"].get<std::string>(), sensor["well"].get<std::string>(), rejected));
    }
  }
  doc.table({"sensor", "well", "kind", "readings", "checks", "largest drift (mm)",
             "barometric efficiency", "rho (kg/m^3)", "flags"},
            rows);
}

void heads_section(Document& doc, Findings& findings, const ReportContext& c, const fs::path& run,
                   std::optional<QuickContours>& contours) {
  if (!fs::exists(run / "heads" / "summary.json")) return;
  const nlohmann::json s = read_json(run / "heads" / "summary.json");
  const Csv mps(run / "heads" / "measuring_points.csv");
  doc.heading(2, "Measuring points");
  doc.paragraph(fmt::format("Every measuring-point survey brought into {}:", c.target));
  std::vector<std::vector<std::string>> rows;
  for (std::size_t r = 0; r < mps.rows(); ++r) {
    rows.push_back({mps.get(r, "well"), mps.get(r, "valid_from"), mps.get(r, "height"),
                    mps.get(r, "sigma"), mps.get(r, "source"), mps.get(r, "reason"),
                    mps.get(r, "flags")});
  }
  doc.table({"well", "valid from", "height (m)", "sigma (m)", "source", "reason", "flags"}, rows,
            200);

  // The datum mix-up a naive merge would have made.
  if (const ReportInput* given = input(c, "measuring_points")) {
    const Csv original(*given);
    std::map<std::string, std::pair<double, std::set<std::string>>> shift_by_datum;
    for (std::size_t r = 0; r < mps.rows(); ++r) {
      const auto row = mps.number(r, "row");
      const auto converted = mps.number(r, "height");
      if (!row || !converted) continue;
      const std::size_t index = static_cast<std::size_t>(*row) - 2;
      if (index >= original.rows()) continue;
      const std::string datum = original.get(index, "datum");
      const auto height = original.number(index, "height");
      if (!height || datum.empty() || datum == c.target) continue;
      auto& entry = shift_by_datum[datum];
      entry.first = *converted - *height;
      entry.second.insert(mps.get(r, "well"));
    }
    for (const auto& [datum, entry] : shift_by_datum) {
      if (std::abs(entry.first) < 0.01) continue;
      findings.items.push_back(
          fmt::format("Datum mix-up avoided: the measuring points of {} well(s) were surveyed on "
                      "'{}'; merged with "
                      "heights in {} as if in one reference, their heads would be {:.3f} m too {}.",
                      entry.second.size(), datum, c.target, std::abs(entry.first),
                      entry.first > 0 ? "low" : "high"));
    }
  }

  // Measuring points on levelling that no redundant observation checks.
  if (fs::exists(run / "heads" / "qa.csv")) {
    const Csv qa(run / "heads" / "qa.csv");
    std::set<std::string> wells;
    for (std::size_t r = 0; r < qa.rows(); ++r) {
      if (qa.get(r, "flag") == "mp-unchecked") wells.insert(qa.get(r, "well"));
    }
    if (!wells.empty()) {
      findings.items.push_back(fmt::format(
          "Unchecked levelling: the measuring point(s) of {} rest on a side shot or spur that no "
          "loop checks, so a blunder there would not show (heads/qa.csv); level a loop through "
          "them.",
          fmt::join(wells, ", ")));
    }
  }

  doc.heading(2, "Heads");
  const auto& counts = s["counts"];
  doc.paragraph(fmt::format("{} readings, {} heads in {}, {} ready for contouring.",
                            counts.value("readings", 0), counts.value("heads", 0), c.target,
                            counts.value("contourable", 0)));
  if (fs::exists(run / "heads" / "event.csv")) {
    const Csv event(run / "heads" / "event.csv");
    if (const ReportInput* w = input(c, "wells")) {
      const Csv wells(*w);
      if (auto map =
              head_map(event, wells, run / "flow" / "flow.json", c.contour_interval, contours)) {
        doc.figure(
            "heads", *map,
            "Heads of the synoptic round, one per well (colour) of the aquifer the flow fit "
            "used, quick-look contours (dashed; linear between wells, also in contours.gpkg) and "
            "the flow direction from the planar fit (arrow); squares: wells of other aquifers, "
            "not contoured. A quick look, not a contour map for decisions.");
      }
    }
  }
  if (fs::exists(run / "flow" / "flow.json")) {
    const nlohmann::json f = read_json(run / "flow" / "flow.json");
    std::vector<std::vector<std::string>> flow = {
        {"hydraulic gradient (m/m)",
         fmt::format("{:.2e} +- {:.1e}", f["gradient"]["value"].get<double>(),
                     f["gradient"]["sigma"].get<double>())},
        {"flow direction (degrees from grid north)",
         fmt::format("{:.1f} +- {:.1f}", f["azimuth"]["value"].get<double>(),
                     f["azimuth"]["sigma"].get<double>())},
        {"wells in the fit", std::to_string(f["wells"].get<long>())}};
    if (f.contains("darcy")) {
      const auto& d = f["darcy"];
      flow.push_back(
          {"average linear velocity (m/day)",
           fmt::format("{:.2g} to {:.2g}", 86400 * d["velocity_m_per_s"]["low"].get<double>(),
                       86400 * d["velocity_m_per_s"]["high"].get<double>())});
      flow.push_back(
          {fmt::format("travel time over {:g} m (years)", d["distance_m"].get<double>()),
           fmt::format("{:.2g} to {:.2g}", d["travel_time_s"]["low"].get<double>() / 3.15576e7,
                       d["travel_time_s"]["high"].get<double>() / 3.15576e7)});
    }
    doc.table({"flow", "value"}, flow);
    findings.items.push_back(
        fmt::format("Groundwater flows towards {:.0f} degrees (grid) with a gradient of {:.1e}.",
                    f["azimuth"]["value"].get<double>(), f["gradient"]["value"].get<double>()));
  }
  const Csv heads(run / "heads" / "heads.csv");
  if (auto figure = hydrographs(heads, mps)) {
    doc.figure("hydrographs", *figure,
               "Heads over time per well; dashed red lines mark measuring-point changes.");
  }
  doc.heading(2, "QA flags and re-measure list");
  rows.clear();
  for (const auto& [flag, count] : s["flags"].items())
    rows.push_back({flag, std::to_string(count.get<long>())});
  if (rows.empty()) {
    doc.paragraph("No reading was flagged.");
  } else {
    doc.table({"flag", "readings"}, rows);
  }
  if (fs::exists(run / "heads" / "remeasure.csv")) {
    const Csv re(run / "heads" / "remeasure.csv");
    rows.clear();
    for (std::size_t r = 0; r < re.rows(); ++r)
      rows.push_back({re.get(r, "well"), re.get(r, "reasons")});
    doc.paragraph(rows.empty() ? "No well needs re-measuring."
                               : "Wells to re-measure before contouring:");
    if (!rows.empty()) {
      doc.table({"well", "reasons"}, rows);
      findings.items.push_back(fmt::format("{} well(s) on the re-measure list.", rows.size()));
    }
  }
}

void inputs_section(Document& doc, const ReportContext& c, const std::string& config_hash) {
  doc.heading(2, "What went in");
  std::vector<std::vector<std::string>> rows;
  for (const ReportInput& i : c.inputs) {
    rows.push_back({i.role, i.path, file_sha256(i.resolved)});
  }
  doc.table({"input", "file", "SHA-256"}, rows, 200);
  rows.clear();
  for (const fs::path& g : c.grids) rows.push_back({g.filename().string(), file_sha256(g)});
  if (!rows.empty()) doc.table({"grid", "SHA-256"}, rows);
  doc.table({"software", "version"}, {{"levelhead", version_string()},
                                      {"PROJ", proj_version_text()},
                                      {"GDAL", gdal_version()},
                                      {"EPSG database", epsg_version()}});
  rows.clear();
  for (const ReportSetting& s : c.settings) {
    rows.push_back({s.name, s.value, s.default_value.empty() ? "(none)" : s.default_value,
                    s.chain_default ? "chain default" : "project file"});
  }
  doc.paragraph(rows.empty() ? "Every setting is at its default."
                             : "Settings that differ from the command defaults:");
  if (!rows.empty()) doc.table({"setting", "value", "default", "set by"}, rows);
  doc.paragraph("Configuration hash (SHA-256 of the settings and the inputs' checksums): " +
                config_hash);
}

const std::vector<std::string>& cautions() {
  static const std::vector<std::string> text = {
      "Heights, heads and flow directions here are computed from the data given; their quality is "
      "that of the surveys and readings, within the stated uncertainties.",
      "The head map and flow arrow are quick looks from a planar fit: they are not a substitute "
      "for "
      "contouring by a qualified person or for a groundwater model.",
      "Decisions on construction, flood defence or water supply must follow local codes and "
      "standards and rest on the judgement of a licensed surveyor, engineer or hydrogeologist.",
      "Check every flagged reading and every removed observation in the field before relying on "
      "the results."};
  return text;
}

// Every file the stages wrote, with its checksum, so that `diff` (or anyone)
// can tell a file changed or cut short after the run from the run's own.
nlohmann::json stage_outputs(const ReportContext& c, const fs::path& folder) {
  std::vector<std::string> names;
  for (const std::string& stage : c.stages) {
    if (!fs::is_directory(folder / stage)) continue;
    for (const auto& entry : fs::directory_iterator(folder / stage)) {
      if (entry.is_regular_file() && entry.path().filename().string().front() != '.')
        names.push_back((fs::path(stage) / entry.path().filename()).generic_string());
    }
  }
  std::sort(names.begin(), names.end());
  nlohmann::json outputs = nlohmann::json::array();
  for (const std::string& name : names) {
    outputs.push_back({{"path", name},
                       {"sha256", file_sha256(folder / name)},
                       {"bytes", fs::file_size(folder / name)}});
  }
  return outputs;
}

nlohmann::json run_record(const ReportContext& c, const std::string& config_hash,
                          const fs::path& folder) {
  nlohmann::json record;
  record["levelhead_version"] = version_string();
  record["proj_version"] = proj_version_text();
  record["gdal_version"] = gdal_version();
  record["epsg_version"] = epsg_version();
  record["site"] = c.site;
  record["crs"] = c.crs;
  record["target"] = c.target;
  nlohmann::json inputs = nlohmann::json::array();
  for (const ReportInput& i : c.inputs) {
    inputs.push_back({{"role", i.role},
                      {"path", i.path},
                      {"sha256", file_sha256(i.resolved)},
                      {"bytes", fs::file_size(i.resolved)}});
  }
  record["inputs"] = std::move(inputs);
  nlohmann::json grids = nlohmann::json::array();
  for (const fs::path& g : c.grids)
    grids.push_back({{"file", g.filename().string()}, {"sha256", file_sha256(g)}});
  record["grids"] = std::move(grids);
  nlohmann::json settings = nlohmann::json::array();
  for (const ReportSetting& s : c.settings) {
    settings.push_back({{"setting", s.name},
                        {"value", s.value},
                        {"default", s.default_value},
                        {"chain_default", s.chain_default}});
  }
  record["settings_changed"] = std::move(settings);
  record["configuration_sha256"] = config_hash;
  record["stages"] = c.stages;
  record["outputs"] = stage_outputs(c, folder);
  return record;
}

}  // namespace

std::string configuration_hash(const ReportContext& c) {
  std::string text;
  for (const ReportSetting& s : c.settings) text += fmt::format("setting {}={}\n", s.name, s.value);
  for (const ReportInput& i : c.inputs)
    text += fmt::format("input {}={}\n", i.role, file_sha256(i.resolved));
  for (const fs::path& g : c.grids) text += fmt::format("grid {}\n", file_sha256(g));
  text += fmt::format("site crs={} target={}\n", c.crs, c.target);
  return text_sha256(text);
}

void write_report(const ReportContext& c, const fs::path& folder) {
  const std::string hash = configuration_hash(c);
  Document body;
  Findings findings;
  levelling_section(body, findings, c, folder);
  gnss_section(body, findings, folder);
  monitoring_section(body, findings, folder);
  transducer_section(body, findings, folder);
  std::optional<QuickContours> contours;
  heads_section(body, findings, c, folder, contours);
  inputs_section(body, c, hash);
  body.heading(2, "Cautions");
  body.bullets(cautions());
  body.heading(2, "Stages run");
  body.paragraph(
      fmt::format("{} (each in its own folder beside this report).", fmt::join(c.stages, ", ")));

  Document head;
  head.heading(1, c.title);
  std::vector<std::string> facts;
  if (!c.site.empty()) facts.push_back("Site: " + c.site);
  if (!c.prepared_for.empty()) facts.push_back("Prepared for: " + c.prepared_for);
  if (!c.prepared_by.empty()) facts.push_back("Prepared by: " + c.prepared_by);
  if (!c.target.empty()) facts.push_back("Heights and heads in: " + c.target);
  if (!c.crs.empty()) facts.push_back("Horizontal coordinates: " + c.crs);
  facts.push_back("Computed with " + version_string() + " on " + c.run_time);
  head.bullets(facts);
  head.heading(2, "Findings");
  if (findings.items.empty()) findings.items.push_back("No check failed.");
  head.bullets(findings.items);

  // Figures first: the report is the last file to appear.
  OutputSet figures(folder / "figures");
  for (const auto& [name, svg] : body.figures())
    figures.open(fs::path(name).filename().string()) << svg;
  figures.commit();
  OutputSet out(folder);
  out.open("report.md") << head.markdown() << body.markdown();
  out.open("report.html")
      << "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n<title>"
      << report::escape_xml(c.title) << "</title>\n<style>\n"
      << css << "</style>\n</head>\n<body>\n"
      << head.html() << body.html() << "</body>\n</html>\n";
  out.open("run.json") << util::json_text(run_record(c, hash, folder)) << '\n';
  if (contours && !c.crs.empty())
    write_contours_geopackage(*contours, c.crs, c.target, out.reserve("contours.gpkg"));
  out.commit();
}

}  // namespace levelhead
