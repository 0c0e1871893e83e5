#pragma once
// Vertical references of our own, defined in a TOML file.
//
//   [references.site-1998]          # a name used in tables and on the command line
//   kind = "offset"                 # or "crs"
//   base = "EPSG:5703"              # the reference it is defined over (a name or a PROJ CRS)
//   offset = -100.012               # m
//   slope_x = 0.0                   # m per m of x (optional)
//   slope_y = 0.0                   # m per m of y (optional)
//   x0 = 512500.0                   # origin of the slopes, in crs (needed with slopes)
//   y0 = 4409700.0
//   crs = "EPSG:32613"              # CRS of x0, y0 and of the points' x, y for this step
//   sigma = 0.004                   # m, of the relation at a point, or instead:
//   covariance = [[...], [...], [...]]  # of (offset, slope_x, slope_y), written by `levelhead tie`
//   hull = [[x, y], ...]            # outline of the tie points (written by `tie`)
//   source = "..."                  # free text
//
//   [references.egm96]
//   kind = "crs"
//   definition = "EPSG:4326+5773"
//
//   [references.old-datum]
//   kind = "vertoffset"             # EPSG method 1046, offset and slope
//   base = "EPSG:5703"
//   offset = 0.245                  # m
//   slope_lat = 0.012               # arc seconds
//   slope_lon = -0.008              # arc seconds
//   lat0 = 46.9                     # degrees
//   lon0 = 7.9
//   ellipsoid = "GRS80"             # optional
//   sigma = 0.01
//
//   [references.site-geoid]
//   kind = "grid"                   # a geoid or offset grid over a base
//   base = "EPSG:4979"
//   grid = "grids/site_geoid.tif"   # GTX, GeoTIFF or any raster GDAL reads;
//                                   # geographic lon/lat; relative to this file,
//                                   # else found in PROJ's grid folders by name
//   multiplier = 1.0                # scales the grid's values (-1: the grid holds
//                                   # the base's surface above this one)
//   sigma = 0.02                    # m, of the grid values (optional)
//
// Sign convention of an offset reference (heights H of this reference):
//   H_base = H + offset + slope_x (x - x0) + slope_y (y - y0)
// i.e. `offset` is the height, in the base reference, of this reference's zero.
// A grid reference holds, at each node, the height of this reference's
// surface above the base's: H_base = H + m G(lon, lat) with m the multiplier
// (for a geoid over an ellipsoid, h = H + N; ellipsoidal heights over
// orthometric ones take the geoid grid with m = -1: H = h - N). Bilinear between nodes at pixel
// centres (PROJ). Errors: InputError naming the file, line and key; unknown keys are errors with
// the nearest valid key suggested.

#include <array>
#include <filesystem>
#include <map>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "levelhead/references/surface_shift.hpp"

namespace levelhead {

struct OffsetRelation {
  double offset = 0.0, slope_x = 0.0, slope_y = 0.0;  // m, m/m, m/m
  double x0 = 0.0, y0 = 0.0;
  std::string crs;              // of x0, y0; empty: the points' CRS
  std::optional<double> sigma;  // m
  std::optional<std::array<std::array<double, 3>, 3>> covariance;  // (offset, slope_x, slope_y)
  std::vector<std::array<double, 2>> hull;  // tie outline (extrapolation check)

  // H_base - H at (x, y), and its variance (nullopt when neither sigma nor covariance is known).
  double shift(double x, double y) const;
  std::optional<double> variance(double x, double y) const;
  // The part of variance() every point shares (m^2): the offset's variance
  // (a tie's at its centroid); the rest grows with the distance from it.
  std::optional<double> common_variance() const;
  bool inside_hull(double x, double y) const;  // true when no hull is recorded
};

struct ReferenceDefinition {
  std::string name;
  enum class Kind { crs, offset, grid, vertoffset } kind = Kind::crs;
  std::string definition;            // kind crs: the PROJ CRS
  std::string base;                  // kinds offset and grid
  std::filesystem::path grid;        // kind grid: absolute path of the grid file
  double grid_multiplier = 1.0;      // kind grid: the grid's values are scaled by this (e.g. -1)
  VerticalOffsetSlope offset_slope;  // kind vertoffset (EPSG 1046)
  OffsetRelation relation;
  std::string source;
  std::string file;
};

class ReferenceSet {
 public:
  ReferenceSet() = default;
  static ReferenceSet load(const std::filesystem::path& file);
  // The same from the text of a references file; `file` names it in
  // messages and relative grid paths are taken from its folder.
  static ReferenceSet parse(std::string_view text, const std::filesystem::path& file);
  void add(ReferenceDefinition definition);

  const ReferenceDefinition* find(const std::string& name) const;
  bool empty() const { return definitions_.empty(); }
  const std::map<std::string, ReferenceDefinition>& definitions() const { return definitions_; }

 private:
  std::map<std::string, ReferenceDefinition> definitions_;
};

// The TOML text of one offset reference (as `levelhead tie` writes it).
std::string to_toml(const ReferenceDefinition& definition);

// A reference name that a references file, a table's datum column and the
// command line all carry unchanged: ASCII letters, digits, '-' and '_',
// starting with a letter (no dots, spaces, quotes or slashes: a TOML key
// with a dot is a nested table, and the name also names files). Throws
// OptionError naming `option` and the first character not allowed.
void require_reference_name(const std::string& name, const std::string& option);

}  // namespace levelhead
