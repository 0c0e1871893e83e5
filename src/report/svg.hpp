#pragma once
// A small SVG writer for the report's figures: plain shapes in pixel
// coordinates, a map frame (equal scale, y up), north arrow and scale bar.
// Written by hand because the figures need only these few elements, and a
// plotting library would add a dependency and external resources.

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

class Svg {
 public:
  Svg(double width, double height, std::string title);
  void line(double x1, double y1, double x2, double y2, const Stroke& stroke);
  void polyline(const std::vector<std::pair<double, double>>& points, const Stroke& stroke,
                const std::string& fill = "none");
  void circle(double x, double y, double r, const std::string& fill, const Stroke& stroke);
  void rect(double x, double y, double w, double h, const std::string& fill, const Stroke& stroke);
  // anchor: start, middle, end
  void text(double x, double y, const std::string& text, double size = 11.0,
            const std::string& anchor = "start", const std::string& colour = "#222222",
            bool bold = false);
  double width() const { return width_; }
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
  double scale() const { return scale_; }  // pixels per metre

 private:
  double min_x_, min_y_, left_, top_, scale_, height_;
};

void north_arrow(Svg& svg, double x, double y);
// A bar of a round length (1, 2 or 5 x 10^n m) near a fifth of `max_pixels`.
void scale_bar(Svg& svg, const MapFrame& frame, double x, double y, double max_pixels);

// Colour of `value` on the report's own ramp (indigo, teal, ochre) between low and high.
std::string ramp_colour(double value, double low, double high);

}  // namespace levelhead::report
