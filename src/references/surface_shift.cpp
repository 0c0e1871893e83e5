#include "levelhead/references/surface_shift.hpp"

#include <cpl_error.h>
#include <fmt/format.h>
#include <gdal.h>
#include <gdal_utils.h>
#include <proj.h>
#include <unistd.h>

#include <algorithm>
#include <cmath>
#include <vector>

#include "levelhead/core/checksums.hpp"
#include "levelhead/core/errors.hpp"
#include "levelhead/core/input_files.hpp"
#include "references/proj_handles.hpp"
#include "util/encoding.hpp"

namespace levelhead {

using proj::ContextPtr;
using proj::PjPtr;

struct SurfaceShift::Impl {
  ContextPtr ctx{proj::make_context()};
  PjPtr to_lonlat, pipeline;
  GridUse grid;
  std::filesystem::path converted;  // GeoTIFF made from a raster PROJ cannot read
  ~Impl() {
    if (!converted.empty()) {
      std::error_code ignored;
      std::filesystem::remove(converted, ignored);
    }
  }
};

namespace {

// A grid cut short (an interrupted download or copy) would make PROJ report
// every point as outside the grid. Reading its first and last rows through
// GDAL finds that, whichever way the format stores its rows, at the cost of
// two rows.
void require_complete_grid(const std::filesystem::path& grid) {
  GDALAllRegister();
  CPLErrorReset();
  CPLPushErrorHandler(CPLQuietErrorHandler);
  GDALDatasetH dataset = GDALOpen(grid.string().c_str(), GA_ReadOnly);
  std::string problem;
  if (!dataset) {
    problem = CPLGetLastErrorMsg();
  } else {
    GDALRasterBandH band = GDALGetRasterBand(dataset, 1);
    const int columns = GDALGetRasterXSize(dataset), rows = GDALGetRasterYSize(dataset);
    std::vector<float> row(static_cast<std::size_t>(std::max(columns, 1)));
    for (const int y : {0, rows - 1}) {
      if (!band || rows < 1 ||
          GDALRasterIO(band, GF_Read, 0, y, columns, 1, row.data(), columns, 1, GDT_Float32, 0,
                       0) != CE_None) {
        problem = band ? CPLGetLastErrorMsg() : "the file holds no raster band";
        break;
      }
    }
    GDALClose(dataset);
  }
  CPLPopErrorHandler();
  if (!problem.empty()) {
    throw ReferenceError(
        fmt::format("grid file '{}' cannot be read completely ({}); it is damaged or cut short (an "
                    "interrupted download or copy?): get the grid again",
                    util::shortened(grid.string(), 200), problem));
  }
}

// PROJ reads GTX and GeoTIFF grids; other rasters are translated by GDAL.
std::filesystem::path readable_by_proj(const std::filesystem::path& grid,
                                       std::filesystem::path& converted) {
  std::string extension = grid.extension().string();
  std::transform(extension.begin(), extension.end(), extension.begin(), ::tolower);
  if (extension == ".gtx" || extension == ".tif" || extension == ".tiff") return grid;
  GDALAllRegister();
  GDALDatasetH source = GDALOpen(grid.string().c_str(), GA_ReadOnly);
  if (!source) {
    throw ReferenceError(fmt::format("grid '{}' cannot be read by GDAL: {}",
                                     util::shortened(grid.string(), 200), CPLGetLastErrorMsg()));
  }
  converted = std::filesystem::temp_directory_path() /
              fmt::format("levelhead-grid-{}-{}.tif", getpid(), grid.stem().string());
  const char* args[] = {"-of", "GTiff", "-ot", "Float32", nullptr};
  GDALTranslateOptions* options = GDALTranslateOptionsNew(const_cast<char**>(args), nullptr);
  GDALDatasetH out = GDALTranslate(converted.string().c_str(), source, options, nullptr);
  GDALTranslateOptionsFree(options);
  GDALClose(source);
  if (!out) {
    throw ReferenceError(fmt::format("grid '{}' could not be converted to GeoTIFF for PROJ: {}",
                                     util::shortened(grid.string(), 200), CPLGetLastErrorMsg()));
  }
  GDALClose(out);
  return converted;
}

}  // namespace

SurfaceShift::SurfaceShift(const std::filesystem::path& grid, const std::string& points_crs,
                           const ProjSettings& settings)
    : impl_(std::make_unique<Impl>()) {
  std::error_code not_a_file;
  if (!std::filesystem::is_regular_file(grid, not_a_file)) {
    throw ReferenceError(
        fmt::format("grid file '{}' does not exist", util::shortened(grid.string(), 200)));
  }
  require_complete_grid(grid);
  impl_->grid = GridUse{grid.filename().string(), grid.string(), file_sha256(grid)};
  const std::filesystem::path readable = readable_by_proj(grid, impl_->converted);
  // The grid name is absolute and carries no '@', so a missing or unreadable
  // grid fails here instead of being skipped; the multiplier is written out
  // (PROJ's default is -1).
  set_up(fmt::format("+step +proj=vgridshift +grids={} +multiplier=1", readable.string()),
         points_crs, settings, "grid " + util::shortened(grid.string(), 200));
}

SurfaceShift::SurfaceShift(const VerticalOffsetSlope& r, const std::string& points_crs,
                           const ProjSettings& settings)
    : impl_(std::make_unique<Impl>()) {
  set_up(fmt::format("+step +proj=vertoffset +lat_0={:.12g} +lon_0={:.12g} +dh={:.12g} "
                     "+slope_lat={:.12g} +slope_lon={:.12g} +ellps={}",
                     r.lat0, r.lon0, r.offset, r.slope_lat, r.slope_lon, r.ellipsoid),
         points_crs, settings, "offset and slope (EPSG 1046)");
}

void SurfaceShift::set_up(const std::string& step, const std::string& points_crs,
                          const ProjSettings& settings, const std::string& what) {
  PJ_CONTEXT* ctx = impl_->ctx.get();
  proj_context_set_enable_network(ctx, settings.allow_network ? 1 : 0);
  if (points_crs.empty()) {
    throw ReferenceError(
        fmt::format("{} is evaluated by position: give the CRS of the points' x "
                    "and y (--crs)",
                    what));
  }
  PjPtr from(proj_create(ctx, points_crs.c_str()));
  PjPtr wgs84(proj_create(ctx, "EPSG:4326"));
  if (!from) throw ReferenceError(fmt::format("unknown CRS '{}'", points_crs));
  PjPtr raw(proj_create_crs_to_crs_from_pj(ctx, from.get(), wgs84.get(), nullptr, nullptr));
  if (!raw)
    throw ReferenceError(fmt::format("cannot bring '{}' to longitude and latitude", points_crs));
  impl_->to_lonlat.reset(proj_normalize_for_visualization(ctx, raw.get()));
  const std::string pipeline = "+proj=pipeline +step +proj=unitconvert +xy_in=deg +xy_out=rad " +
                               step + " +step +proj=unitconvert +xy_in=rad +xy_out=deg";
  impl_->pipeline.reset(proj_create(ctx, pipeline.c_str()));
  if (!impl_->pipeline) {
    throw ReferenceError(
        fmt::format("PROJ cannot use {} ({}); a grid must be a geographic "
                    "(longitude, latitude) height grid",
                    what, proj::message(ctx)));
  }
}

SurfaceShift::~SurfaceShift() = default;

const GridUse& SurfaceShift::grid() const { return impl_->grid; }

std::vector<std::optional<double>> SurfaceShift::values(const std::vector<PlanePoint>& points) {
  std::vector<std::optional<double>> out(points.size());
  for (std::size_t i = 0; i < points.size(); ++i) {
    const PJ_COORD ll = proj_trans(impl_->to_lonlat.get(), PJ_FWD,
                                   proj_coord(points[i].x, points[i].y, 0.0, HUGE_VAL));
    if (!std::isfinite(ll.xy.x)) continue;
    proj_errno_reset(impl_->pipeline.get());
    const PJ_COORD r =
        proj_trans(impl_->pipeline.get(), PJ_FWD, proj_coord(ll.xy.x, ll.xy.y, 0.0, HUGE_VAL));
    if (r.xyz.z != HUGE_VAL && std::isfinite(r.xyz.z)) out[i] = r.xyz.z;
  }
  return out;
}

}  // namespace levelhead
