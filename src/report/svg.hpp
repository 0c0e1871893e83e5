#pragma once
// A small SVG writer for the report's figures: plain shapes in pixel
// coordinates, a map frame (equal scale, y up), north arrow and scale bar.
// Written by hand because the figures need only these few elements, and a
// plotting library would add a dependency and external resources.

#include <algorithm>
#include <string>
#include <utility>
#include <vector>

namespace levelhead::report {

std::string escape_xml(const std::string& text);

struct Stroke {
  Stroke(std::string colour_ = "#333333", double width_ = 1.0, std::string dash_ = {})
      : colour(std::move(colour_)), width(width_), dash(std::move(dash_)) {}
  std::string colour;
  double width;
  std::string dash;  // SVG dash array, empty for solid: style tells classes apart in print too
};

// Printed on A4 (210 mm less 2 x 14 mm margins, at 96 px per inch) a figure
// wider than this is scaled down to it; its text must stay at 7 pt or more
// (9.33 px), a common floor for print legibility.
inline constexpr double print_width_px = 688.0;
inline constexpr double min_print_text_px = 9.4;

class Svg {
 public:
  Svg(double width, double height, std::string title);
  void line(double x1, double y1, double x2, double y2, const Stroke& stroke);
  void polyline(const std::vector<std::pair<double, double>>& points, const Stroke& stroke,
                const std::string& fill = "none");
  void circle(double x, double y, double r, const std::string& fill, const Stroke& stroke);
  void rect(double x, double y, double w, double h, const std::string& fill, const Stroke& stroke);
  // anchor: start, middle, end. A size too small to read once the figure is
  // printed at the page's width is raised to the smallest that is
  // (min_text_size()).
  void text(double x, double y, const std::string& text, double size = 11.0,
            const std::string& anchor = "start", const std::string& colour = "#222222",
            bool bold = false);
  double width() const { return width_; }
  double min_text_size() const {
    return min_print_text_px * std::max(1.0, width_ / print_width_px);
  }
  double height() const { return height_; }
  std::string str() const;

 private:
  double width_, height_;
  std::string title_, body_;
};

// World coordinates (m of a projected CRS) to pixels, equal scale, north up.
class MapFrame {
 public:
  MapFrame(double min_x, double min_y, double max_x, double max_y, double left, double top,
           double width, double height);
  double x(double world_x) const;
  double y(double world_y) const;
  double world_x(double pixel_x) const;
  double world_y(double pixel_y) const;
  double scale() const { return scale_; }  // pixels per metre

 private:
  double min_x_, min_y_, left_, top_, scale_, height_;
};

// A rectangle in pixels.
struct Box {
  double x0 = 0, y0 = 0, x1 = 0, y1 = 0;
  bool overlaps(const Box& o) const { return x0 < o.x1 && o.x0 < x1 && y0 < o.y1 && o.y0 < y1; }
};

// The box of a text as Svg::text draws it, estimated from its size (an
// average sans-serif glyph is about 0.6 of the font size wide).
Box text_box(double x, double y, const std::string& text, double size, const std::string& anchor);

// One line of a map label.
struct LabelLine {
  std::string text;
  double size = 11.0;
  std::string colour = "#222222";
  bool bold = false;
};

// Labels of map points placed so that none overlaps another label or a
// symbol: a greedy placement (points in the order given) trying eight
// places around the point, then the same farther out with a leader line.
// Symbols are registered first, so that no label hides a mark.
class LabelPlacer {
 public:
  explicit LabelPlacer(Box area) : area_(area) {}
  void keep_clear(const Box& box) { taken_.push_back(box); }
  void keep_clear(double x, double y, double radius) {
    taken_.push_back({x - radius, y - radius, x + radius, y + radius});
  }
  // Draws the lines beside the point at (x, y), its symbol `radius` wide.
  void place(Svg& svg, double x, double y, double radius, const std::vector<LabelLine>& lines);
  // Whether `box` lies in the area and clear of everything taken; take it.
  bool is_free(const Box& box) const;
  void take(const Box& box) { taken_.push_back(box); }

 private:
  Box area_;  // labels stay inside
  std::vector<Box> taken_;
};

// Axis ticks: round values (1, 2 or 5 x 10^n apart) within [low, high], at
// most `max_count`.
std::vector<double> round_ticks(double low, double high, std::size_t max_count);

void north_arrow(Svg& svg, double x, double y);
// A neat line around the map area (pixels) with easting ticks below and
// northing ticks on the left, at round coordinates of the CRS.
void coordinate_frame(Svg& svg, const MapFrame& frame, double left, double top, double width,
                      double height);
// A bar of a round length (1, 2 or 5 x 10^n m) near a fifth of `max_pixels`.
void scale_bar(Svg& svg, const MapFrame& frame, double x, double y, double max_pixels);

// Colour of `value` on the report's own ramp (indigo, teal, ochre) between low and high.
std::string ramp_colour(double value, double low, double high);

}  // namespace levelhead::report
