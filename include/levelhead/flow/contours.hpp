#pragma once
// Quick-look contours of heads for the report and a GIS (contours.gpkg).
//
// Method: the heads are triangulated (Delaunay) and interpolated linearly
// on a regular grid by GDAL's gridder (GDALGridCreate, "linear"; nodata
// outside the wells' convex hull, so nothing is extrapolated), and the grid
// is contoured by GDAL's contour generator (GDALContourGenerateEx). A
// triangulated surface honours every head exactly and follows no model of
// flow: a quick look, never a substitute for contouring by a hydrogeologist.
//
// In:  heads at wells (x, y in metres of a projected CRS, head in m), an
//      optional contour interval (m; default: a round 1, 2 or 5 x 10^n
//      giving about eight levels over the range).
// Out: contour lines (level in m, vertices in the wells' CRS), the interval
//      and the grid cell size used; nullopt when fewer than three wells, or
//      wells on a line, leave no area to contour.
// Errors: ComputationError when GDAL fails; OutputError when the GeoPackage
//      cannot be written; OptionError for an interval <= 0.

#include <filesystem>
#include <optional>
#include <string>
#include <utility>
#include <vector>

namespace levelhead {

struct HeadAtWell {
  double x = 0.0, y = 0.0, head = 0.0;
};

struct ContourLine {
  double level = 0.0;
  std::vector<std::pair<double, double>> vertices;
};

struct QuickContours {
  double interval = 0.0;  // in the heads' unit
  double cell = 0.0;      // m, grid spacing
  std::vector<ContourLine> lines;
};

std::optional<QuickContours> quick_contours(const std::vector<HeadAtWell>& heads,
                                            std::optional<double> interval = std::nullopt);

// One line layer `contours` with `level` (in `unit`, "m", "ft" or "us-ft")
// and `reference` (the vertical reference of the levels) in `crs`. Written
// to `path` (a temporary name of an OutputSet: the caller commits).
void write_contours_geopackage(const QuickContours& contours, const std::string& crs,
                               const std::string& reference, const std::string& unit,
                               const std::filesystem::path& path);

}  // namespace levelhead
