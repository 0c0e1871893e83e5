#include "levelhead/flow/contours.hpp"

#include <cpl_conv.h>
#include <cpl_error.h>
#include <cpl_string.h>
#include <fmt/format.h>
#include <gdal.h>
#include <gdal_alg.h>
#include <ogr_api.h>
#include <ogr_srs_api.h>

#include <algorithm>
#include <cmath>
#include <memory>

#include "levelhead/core/errors.hpp"
#include "util/gdal_messages.hpp"

namespace levelhead {

namespace {

// A round interval (1, 2 or 5 x 10^n m) giving about `levels` levels over `range`.
double round_interval(double range, double levels) {
  const double raw = std::max(range / levels, 1e-6);
  const double power = std::pow(10.0, std::floor(std::log10(raw)));
  for (double m : {1.0, 2.0, 5.0}) {
    if (m * power >= raw) return m * power;
  }
  return 10.0 * power;
}

// Twice the area of the largest triangle of the wells, against the square
// of their extent: zero when they lie on a line.
bool spans_an_area(const std::vector<HeadAtWell>& p, double extent) {
  for (std::size_t i = 0; i < p.size(); ++i) {
    for (std::size_t j = i + 1; j < p.size(); ++j) {
      for (std::size_t k = j + 1; k < p.size(); ++k) {
        const double area =
            std::abs((p[j].x - p[i].x) * (p[k].y - p[i].y) - (p[k].x - p[i].x) * (p[j].y - p[i].y));
        if (area > 1e-6 * extent * extent) return true;
      }
    }
  }
  return false;
}

struct DatasetCloser {
  void operator()(void* d) const { GDALClose(static_cast<GDALDatasetH>(d)); }
};
using Dataset = std::unique_ptr<void, DatasetCloser>;

}  // namespace

// Delaunay-linear gridding, then contouring (see the header).
std::optional<QuickContours> quick_contours(const std::vector<HeadAtWell>& heads,
                                            std::optional<double> interval) {
  if (interval && !(*interval > 0.0)) {
    throw OptionError(fmt::format("contour interval {} must be positive (m)", *interval));
  }
  if (heads.size() < 3) return std::nullopt;
  double min_x = INFINITY, max_x = -INFINITY, min_y = INFINITY, max_y = -INFINITY;
  double low = INFINITY, high = -INFINITY;
  std::vector<double> x, y, z;
  for (const HeadAtWell& h : heads) {
    min_x = std::min(min_x, h.x);
    max_x = std::max(max_x, h.x);
    min_y = std::min(min_y, h.y);
    max_y = std::max(max_y, h.y);
    low = std::min(low, h.head);
    high = std::max(high, h.head);
    x.push_back(h.x);
    y.push_back(h.y);
    z.push_back(h.head);
  }
  const double extent = std::max(max_x - min_x, max_y - min_y);
  if (!(extent > 0.0) || !spans_an_area(heads, extent) || !(high > low)) return std::nullopt;

  QuickContours out;
  out.interval = interval.value_or(round_interval(high - low, 8.0));
  // About 250 cells over the longer side: fine enough that the grid adds
  // nothing visible to the triangulation at report scale.
  out.cell = extent / 250.0;
  const auto nx = static_cast<GUInt32>(std::ceil((max_x - min_x) / out.cell)) + 1;
  const auto ny = static_cast<GUInt32>(std::ceil((max_y - min_y) / out.cell)) + 1;
  const double x0 = min_x - 0.5 * out.cell, y0 = min_y - 0.5 * out.cell;
  const double x1 = x0 + nx * out.cell, y1 = y0 + ny * out.cell;
  constexpr double nodata = -99999.0;
  GDALGridLinearOptions linear{};
  linear.nSizeOfStructure = sizeof(linear);
  linear.dfRadius = 0.0;  // outside the triangulation: nodata, no extrapolation
  linear.dfNoDataValue = nodata;
  std::vector<double> grid(static_cast<std::size_t>(nx) * ny);
  CPLErrorReset();
  if (GDALGridCreate(GGA_Linear, &linear, static_cast<GUInt32>(heads.size()), x.data(), y.data(),
                     z.data(), x0, x1, y0, y1, nx, ny, GDT_Float64, grid.data(), nullptr,
                     nullptr) != CE_None) {
    throw ComputationError("gridding the heads for contours failed: " +
                           std::string(CPLGetLastErrorMsg()));
  }

  // Row j of the grid holds the nodes at y0 + (j + 0.5) cell (south first).
  GDALAllRegister();
  Dataset raster(GDALCreate(GDALGetDriverByName("MEM"), "", static_cast<int>(nx),
                            static_cast<int>(ny), 1, GDT_Float64, nullptr));
  if (!raster) throw ComputationError("cannot create the in-memory grid for contours");
  double transform[6] = {x0, out.cell, 0.0, y0, 0.0, out.cell};
  GDALSetGeoTransform(raster.get(), transform);
  GDALRasterBandH band = GDALGetRasterBand(raster.get(), 1);
  if (GDALRasterIO(band, GF_Write, 0, 0, static_cast<int>(nx), static_cast<int>(ny), grid.data(),
                   static_cast<int>(nx), static_cast<int>(ny), GDT_Float64, 0, 0) != CE_None) {
    throw ComputationError("cannot fill the in-memory grid for contours");
  }
  GDALSetRasterNoDataValue(band, nodata);

  Dataset lines(GDALCreate(GDALGetDriverByName("Memory"), "", 0, 0, 0, GDT_Unknown, nullptr));
  if (!lines) throw ComputationError("cannot create the in-memory contour layer");
  OGRLayerH layer =
      GDALDatasetCreateLayer(lines.get(), "contours", nullptr, wkbLineString, nullptr);
  OGRFieldDefnH id_field = OGR_Fld_Create("id", OFTInteger);
  OGRFieldDefnH level_field = OGR_Fld_Create("level", OFTReal);
  OGR_L_CreateField(layer, id_field, TRUE);
  OGR_L_CreateField(layer, level_field, TRUE);
  OGR_Fld_Destroy(id_field);
  OGR_Fld_Destroy(level_field);
  const std::string interval_option = fmt::format("LEVEL_INTERVAL={}", out.interval);
  const std::string nodata_option = fmt::format("NODATA={}", nodata);
  const char* options[] = {interval_option.c_str(), "LEVEL_BASE=0",
                           nodata_option.c_str(),   "ID_FIELD=0",
                           "ELEV_FIELD=1",          nullptr};
  if (GDALContourGenerateEx(band, layer, options, nullptr, nullptr) != CE_None) {
    throw ComputationError("contouring the heads failed: " + std::string(CPLGetLastErrorMsg()));
  }
  OGR_L_ResetReading(layer);
  while (OGRFeatureH feature = OGR_L_GetNextFeature(layer)) {
    ContourLine line;
    line.level = OGR_F_GetFieldAsDouble(feature, 1);
    OGRGeometryH geometry = OGR_F_GetGeometryRef(feature);
    for (int i = 0; geometry && i < OGR_G_GetPointCount(geometry); ++i) {
      line.vertices.emplace_back(OGR_G_GetX(geometry, i), OGR_G_GetY(geometry, i));
    }
    if (line.vertices.size() >= 2) out.lines.push_back(std::move(line));
    OGR_F_Destroy(feature);
  }
  // A fixed order, so that outputs repeat exactly.
  std::stable_sort(out.lines.begin(), out.lines.end(),
                   [](const ContourLine& a, const ContourLine& b) { return a.level < b.level; });
  return out;
}

void write_contours_geopackage(const QuickContours& contours, const std::string& crs,
                               const std::string& reference, const std::string& unit,
                               const std::filesystem::path& path) {
  GDALAllRegister();
  CPLSetThreadLocalConfigOption("OGR_CURRENT_DATE", "2000-01-01T00:00:00.000Z");  // reproducible
  Dataset gpkg(GDALCreate(GDALGetDriverByName("GPKG"), path.string().c_str(), 0, 0, 0, GDT_Unknown,
                          nullptr));
  if (!gpkg) throw OutputError("cannot create contours.gpkg: " + std::string(CPLGetLastErrorMsg()));
  OGRSpatialReferenceH srs = OSRNewSpatialReference(nullptr);
  const util::GdalMessages gdal;
  if (OSRSetFromUserInput(srs, crs.c_str()) != OGRERR_NONE) {
    OSRDestroySpatialReference(srs);
    throw OptionError(fmt::format("'{}' is not a CRS GDAL knows{}", crs, gdal.quoted()));
  }
  const std::string description = fmt::format(
      "Quick-look contours of heads in {} ({}), every {:g} {}; linear between wells, not for "
      "decisions",
      reference, unit, contours.interval, unit);
  char** options = CSLSetNameValue(nullptr, "IDENTIFIER", "contours");
  options = CSLSetNameValue(options, "DESCRIPTION", description.c_str());
  OGRLayerH layer = GDALDatasetCreateLayer(gpkg.get(), "contours", srs, wkbLineString, options);
  CSLDestroy(options);
  OSRDestroySpatialReference(srs);
  if (!layer)
    throw OutputError("cannot create the contours layer: " + std::string(CPLGetLastErrorMsg()));
  // `datum`, as heads.gpkg and heads.csv name the reference.
  for (const char* name : {"level", "datum"}) {
    OGRFieldDefnH field = OGR_Fld_Create(name, std::string(name) == "level" ? OFTReal : OFTString);
    OGR_L_CreateField(layer, field, TRUE);
    OGR_Fld_Destroy(field);
  }
  // On the layer, as heads.gpkg keeps them.
  GDALSetMetadataItem(layer, "VERTICAL_REFERENCE", reference.c_str(), nullptr);
  GDALSetMetadataItem(layer, "HEIGHT_UNIT", unit.c_str(), nullptr);
  GDALSetMetadataItem(layer, "CONTOUR_INTERVAL", fmt::format("{}", contours.interval).c_str(),
                      nullptr);
  if (OGR_L_StartTransaction(layer) != OGRERR_NONE) {
    throw OutputError("cannot start writing contours.gpkg: " + std::string(CPLGetLastErrorMsg()));
  }
  for (const ContourLine& line : contours.lines) {
    OGRFeatureH feature = OGR_F_Create(OGR_L_GetLayerDefn(layer));
    OGR_F_SetFieldDouble(feature, 0, line.level);
    OGR_F_SetFieldString(feature, 1, reference.c_str());
    OGRGeometryH geometry = OGR_G_CreateGeometry(wkbLineString);
    for (const auto& [x, y] : line.vertices) OGR_G_AddPoint_2D(geometry, x, y);
    OGR_F_SetGeometryDirectly(feature, geometry);
    const OGRErr written = OGR_L_CreateFeature(layer, feature);
    OGR_F_Destroy(feature);
    if (written != OGRERR_NONE) {
      OGR_L_RollbackTransaction(layer);
      throw OutputError("cannot write a contour: " + std::string(CPLGetLastErrorMsg()));
    }
  }
  if (OGR_L_CommitTransaction(layer) != OGRERR_NONE) {
    throw OutputError("cannot finish writing contours.gpkg: " + std::string(CPLGetLastErrorMsg()));
  }
}

}  // namespace levelhead
