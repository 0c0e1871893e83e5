#include "report/svg.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <optional>

namespace levelhead::report {

std::string escape_xml(const std::string& text) {
  std::string out;
  out.reserve(text.size());
  for (char c : text) {
    switch (c) {
      case '&':
        out += "&amp;";
        break;
      case '<':
        out += "&lt;";
        break;
      case '>':
        out += "&gt;";
        break;
      case '"':
        out += "&quot;";
        break;
      default:
        out += c;
    }
  }
  return out;
}

namespace {
std::string stroke_attributes(const Stroke& s) {
  std::string a = fmt::format(R"( stroke="{}" stroke-width="{:.2f}")", s.colour, s.width);
  if (!s.dash.empty()) a += fmt::format(R"( stroke-dasharray="{}")", s.dash);
  return a;
}
}  // namespace

Svg::Svg(double width, double height, std::string title)
    : width_(width), height_(height), title_(std::move(title)) {}

void Svg::line(double x1, double y1, double x2, double y2, const Stroke& stroke) {
  body_ += fmt::format(R"(<line x1="{:.1f}" y1="{:.1f}" x2="{:.1f}" y2="{:.1f}"{}/>)", x1, y1, x2,
                       y2, stroke_attributes(stroke));
  body_ += '\n';
}

void Svg::polyline(const std::vector<std::pair<double, double>>& points, const Stroke& stroke,
                   const std::string& fill) {
  std::string list;
  for (const auto& [x, y] : points) list += fmt::format("{:.1f},{:.1f} ", x, y);
  body_ +=
      fmt::format(R"(<polyline points="{}" fill="{}"{}/>)", list, fill, stroke_attributes(stroke));
  body_ += '\n';
}

void Svg::circle(double x, double y, double r, const std::string& fill, const Stroke& stroke) {
  body_ += fmt::format(R"(<circle cx="{:.1f}" cy="{:.1f}" r="{:.1f}" fill="{}"{}/>)", x, y, r, fill,
                       stroke_attributes(stroke));
  body_ += '\n';
}

void Svg::rect(double x, double y, double w, double h, const std::string& fill,
               const Stroke& stroke) {
  body_ +=
      fmt::format(R"(<rect x="{:.1f}" y="{:.1f}" width="{:.1f}" height="{:.1f}" fill="{}"{}/>)", x,
                  y, std::max(w, 0.0), std::max(h, 0.0), fill, stroke_attributes(stroke));
  body_ += '\n';
}

void Svg::text(double x, double y, const std::string& text, double size, const std::string& anchor,
               const std::string& colour, bool bold) {
  size = std::max(size, min_text_size());
  body_ += fmt::format(
      R"(<text x="{:.1f}" y="{:.1f}" font-size="{:.1f}" text-anchor="{}" fill="{}"{}>{}</text>)", x,
      y, size, anchor, colour, bold ? R"( font-weight="bold")" : "", escape_xml(text));
  body_ += '\n';
}

std::string Svg::str() const {
  return fmt::format(
      R"(<svg xmlns="http://www.w3.org/2000/svg" width="{:.0f}" height="{:.0f}" viewBox="0 0 {:.0f} {:.0f}" role="img" font-family="sans-serif">)"
      "\n<title>{}</title>\n{}</svg>\n",
      width_, height_, width_, height_, escape_xml(title_), body_);
}

MapFrame::MapFrame(double min_x, double min_y, double max_x, double max_y, double left, double top,
                   double width, double height)
    : min_x_(min_x), min_y_(min_y), left_(left), top_(top), height_(height) {
  const double span_x = std::max(max_x - min_x, 1.0), span_y = std::max(max_y - min_y, 1.0);
  scale_ = std::min(width / span_x, height / span_y);
  // Centre the drawing in the frame.
  left_ += 0.5 * (width - span_x * scale_);
  top_ += 0.5 * (height - span_y * scale_);
  height_ = span_y * scale_;
}

double MapFrame::x(double world_x) const { return left_ + (world_x - min_x_) * scale_; }
double MapFrame::y(double world_y) const { return top_ + height_ - (world_y - min_y_) * scale_; }
double MapFrame::world_x(double pixel_x) const { return min_x_ + (pixel_x - left_) / scale_; }
double MapFrame::world_y(double pixel_y) const {
  return min_y_ + (top_ + height_ - pixel_y) / scale_;
}

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

Box text_box(double x, double y, const std::string& text, double size, const std::string& anchor) {
  const double width = 0.6 * size * static_cast<double>(text.size());
  const double left = anchor == "middle" ? x - width / 2 : anchor == "end" ? x - width : x;
  // The line box a browser gives it (ascent and descent of a sans-serif
  // font such as DejaVu Sans, about 0.95 and 0.25 of the size).
  return {left, y - 0.95 * size, left + width, y + 0.25 * size};
}

bool LabelPlacer::is_free(const Box& box) const {
  if (box.x0 < area_.x0 || box.y0 < area_.y0 || box.x1 > area_.x1 || box.y1 > area_.y1)
    return false;
  return std::none_of(taken_.begin(), taken_.end(), [&](const Box& t) { return t.overlaps(box); });
}

void LabelPlacer::place(Svg& svg, double x, double y, double radius,
                        const std::vector<LabelLine>& given) {
  std::vector<LabelLine> lines = given;  // in the sizes the figure will draw them
  for (LabelLine& l : lines) l.size = std::max(l.size, svg.min_text_size());
  double width = 0.0, height = 0.0;
  for (const LabelLine& l : lines) {
    width = std::max(width, 0.6 * l.size * static_cast<double>(l.text.size()));
    height += 1.3 * l.size;  // the line box and a tenth of the size between lines
  }
  // Candidate boxes (left, top) around the point: right, left, above right,
  // above left, below right, below left, above, below; then farther out.
  const auto candidate = [&](int k, double gap) -> Box {
    const double r = radius + gap;
    double left = 0, top = 0;
    switch (k) {
      case 0:
        left = x + r, top = y - height / 2;
        break;
      case 1:
        left = x - r - width, top = y - height / 2;
        break;
      case 2:
        left = x + r * 0.7, top = y - r * 0.7 - height;
        break;
      case 3:
        left = x - r * 0.7 - width, top = y - r * 0.7 - height;
        break;
      case 4:
        left = x + r * 0.7, top = y + r * 0.7;
        break;
      case 5:
        left = x - r * 0.7 - width, top = y + r * 0.7;
        break;
      case 6:
        left = x - width / 2, top = y - r - height;
        break;
      default:
        left = x - width / 2, top = y + r;
        break;
    }
    return {left, top, left + width, top + height};
  };
  const auto free = [&](const Box& box) { return is_free(box); };
  std::optional<Box> chosen;
  bool leader = false;
  for (const double gap : {3.0, 16.0, 32.0}) {
    for (int k = 0; k < 8 && !chosen; ++k) {
      if (free(candidate(k, gap))) chosen = candidate(k, gap);
    }
    if (chosen) {
      leader = gap > 3.0;
      break;
    }
  }
  if (!chosen) chosen = candidate(0, 3.0);  // nowhere free: the first place, as before
  if (leader) {
    const double cx = std::clamp(x, chosen->x0, chosen->x1),
                 cy = std::clamp(y, chosen->y0, chosen->y1);
    svg.line(x, y, cx, cy, Stroke{"#777777", 0.6});
  }
  double baseline = chosen->y0;
  for (const LabelLine& l : lines) {
    baseline += 0.95 * l.size;
    svg.text(chosen->x0, baseline, l.text, l.size, "start", l.colour, l.bold);
    baseline += 0.35 * l.size;
  }
  taken_.push_back(*chosen);
}

void coordinate_frame(Svg& svg, const MapFrame& frame, double left, double top, double width,
                      double height) {
  svg.rect(left, top, width, height, "none", Stroke{"#555555", 0.8});
  const Stroke tick{"#555555", 0.8};
  for (const double e : round_ticks(frame.world_x(left), frame.world_x(left + width), 5)) {
    svg.line(frame.x(e), top + height, frame.x(e), top + height + 5, tick);
    svg.text(frame.x(e), top + height + 17, fmt::format("{:.0f}", e), 10, "middle");
  }
  for (const double n : round_ticks(frame.world_y(top + height), frame.world_y(top), 5)) {
    svg.line(left - 5, frame.y(n), left, frame.y(n), tick);
    svg.text(left - 7, frame.y(n) + 3.5, fmt::format("{:.0f}", n), 10, "end");
  }
}

void north_arrow(Svg& svg, double x, double y) {
  svg.polyline({{x, y}, {x - 7, y + 22}, {x, y + 16}, {x + 7, y + 22}, {x, y}},
               Stroke{"#222222", 1.2}, "#222222");
  svg.text(x, y - 4, "N", 12, "middle", "#222222", true);
}

void scale_bar(Svg& svg, const MapFrame& frame, double x, double y, double max_pixels) {
  const double target = 0.2 * max_pixels / frame.scale();
  const double power = std::pow(10.0, std::floor(std::log10(target)));
  double length = power;
  for (double m : {1.0, 2.0, 5.0}) {
    if (m * power <= target) length = m * power;
  }
  const double pixels = length * frame.scale();
  svg.rect(x, y, pixels / 2, 5, "#222222", Stroke{"#222222", 1});
  svg.rect(x + pixels / 2, y, pixels / 2, 5, "#ffffff", Stroke{"#222222", 1});
  svg.text(x, y + 17, "0", 10, "middle");
  svg.text(x + pixels, y + 17,
           length >= 1000 ? fmt::format("{:g} km", length / 1000) : fmt::format("{:g} m", length),
           10, "middle");
}

std::string ramp_colour(double value, double low, double high) {
  // Indigo -> teal -> ochre: readable on white, distinct in greyscale by lightness.
  static const double stops[3][3] = {{44, 52, 122}, {47, 143, 131}, {226, 190, 74}};
  double f = high > low ? (value - low) / (high - low) : 0.5;
  f = std::clamp(f, 0.0, 1.0) * 2.0;
  const int i = std::min(static_cast<int>(f), 1);
  const double t = f - i;
  int rgb[3];
  for (int c = 0; c < 3; ++c)
    rgb[c] = static_cast<int>(std::lround(stops[i][c] + t * (stops[i + 1][c] - stops[i][c])));
  return fmt::format("#{:02x}{:02x}{:02x}", rgb[0], rgb[1], rgb[2]);
}

}  // namespace levelhead::report
