#pragma once
// Height surfaces of our own over longitude and latitude, evaluated at
// points through PROJ: a grid (geoid or offset grid, e.g. a site geoid) or
// an EPSG 1046 offset and slope.
//
// In:  the grid file (GTX or GeoTIFF read by PROJ; any other raster GDAL
//      reads is converted to GeoTIFF first) or the offset and slope, the CRS
//      of the points' x and y, and the points.
// Out: the surface's value (m) at each point; nullopt outside the grid or on
//      a nodata node.
// Errors: ReferenceError for a grid file that is missing, cannot be read to
//      its end (damaged or cut short) or cannot be converted, or a CRS PROJ
//      cannot bring to longitude and latitude.

#include <filesystem>
#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "levelhead/references/vertical_reference.hpp"

namespace levelhead {

// Vertical Offset and Slope (EPSG method 1046), PROJ's vertoffset:
//   shift = offset + slope_lat * rho0 * (lat - lat0) + slope_lon * nu0 * (lon - lon0) * cos(lat)
// with rho0, nu0 the meridian and prime-vertical radii at lat0 and slopes in
// arc seconds (converted to radians).
struct VerticalOffsetSlope {
  double offset = 0.0;                      // m
  double slope_lat = 0.0, slope_lon = 0.0;  // arc seconds
  double lat0 = 0.0, lon0 = 0.0;            // degrees
  std::string ellipsoid = "GRS80";          // a PROJ ellipsoid name
};

// A height surface over longitude and latitude evaluated at points: a grid
// of our own, or an EPSG 1046 offset and slope.
// Grids: values of a grid of our own (geoid or offset grid) at points, through
// PROJ's vgridshift (bilinear, nodes at pixel centres). A raster PROJ cannot
// read (anything but GTX and GeoTIFF) is first converted to GeoTIFF with
// GDAL. The grid must be in geographic longitude and latitude; the points'
// x, y are brought to longitude and latitude (WGS 84) for the lookup.
class SurfaceShift {
 public:
  SurfaceShift(const std::filesystem::path& grid, const std::string& points_crs,
               const ProjSettings& settings);
  SurfaceShift(const VerticalOffsetSlope& relation, const std::string& points_crs,
               const ProjSettings& settings);
  ~SurfaceShift();
  SurfaceShift(const SurfaceShift&) = delete;
  SurfaceShift& operator=(const SurfaceShift&) = delete;

  // The surface's value (m) at each point; nullopt outside a grid or on nodata.
  std::vector<std::optional<double>> values(const std::vector<PlanePoint>& points);
  const GridUse& grid() const;  // empty name for an EPSG 1046 relation

 private:
  void set_up(const std::string& pipeline, const std::string& points_crs,
              const ProjSettings& settings, const std::string& what);
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

}  // namespace levelhead
