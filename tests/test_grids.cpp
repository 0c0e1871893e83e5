// Grids of our own, made here with GDAL, so bilinear interpolation can be
// checked exactly: bilinear interpolation reproduces a plane exactly, so any
// error in the node convention (pixel centres) or the sign would show.

#include <gdal.h>
#include <gdal_utils.h>

#include <catch2/catch.hpp>
#include <fstream>

#include "levelhead/core/errors.hpp"
#include "levelhead/references/height_converter.hpp"
#include "support/temp_folder.hpp"

using namespace levelhead;
using Catch::Matchers::Contains;
using Catch::Matchers::WithinAbs;

namespace {

// G(lon, lat) = a + b (lon - 10) + c (lat - 45) on nodes every 0.25 degrees
// from lon 9 to 11 and lat 44 to 46 (nodes at pixel centres).
double plane(double lon, double lat) { return 1.0 + 0.5 * (lon - 10.0) + 0.25 * (lat - 45.0); }

void write_grid(const std::filesystem::path& path, const char* driver_name, bool constant) {
  GDALAllRegister();
  const int nx = 9, ny = 9;
  const double step = 0.25;
  GDALDriverH mem = GDALGetDriverByName("MEM");
  GDALDatasetH ds = GDALCreate(mem, "", nx, ny, 1, GDT_Float32, nullptr);
  double transform[6] = {9.0 - step / 2, step, 0.0, 46.0 + step / 2, 0.0, -step};
  GDALSetGeoTransform(ds, transform);
  GDALSetProjection(
      ds,
      "GEOGCS[\"WGS 84\",DATUM[\"WGS_1984\",SPHEROID[\"WGS 84\",6378137,298.257223563]],"
      "PRIMEM[\"Greenwich\",0],UNIT[\"degree\",0.0174532925199433]]");
  std::vector<float> values(nx * ny);
  for (int r = 0; r < ny; ++r) {
    for (int c = 0; c < nx; ++c) {
      const double lon = 9.0 + c * step, lat = 46.0 - r * step;
      values[r * nx + c] = static_cast<float>(constant ? 1.5 : plane(lon, lat));
    }
  }
  REQUIRE(GDALRasterIO(GDALGetRasterBand(ds, 1), GF_Write, 0, 0, nx, ny, values.data(), nx, ny,
                       GDT_Float32, 0, 0) == CE_None);
  GDALDatasetH out = GDALCreateCopy(GDALGetDriverByName(driver_name), path.string().c_str(), ds,
                                    FALSE, nullptr, nullptr, nullptr);
  REQUIRE(out != nullptr);
  GDALClose(out);
  GDALClose(ds);
}

ReferenceSet grid_reference(const std::filesystem::path& grid) {
  ReferenceDefinition d;
  d.name = "site-geoid";
  d.kind = ReferenceDefinition::Kind::grid;
  d.base = "EPSG:4979";
  d.grid = grid;
  d.relation.sigma = 0.01;
  ReferenceSet set;
  set.add(d);
  return set;
}

}  // namespace

TEST_CASE("a tilted-plane grid interpolates exactly, in GeoTIFF, GTX and GDAL-only formats",
          "[grids]") {
  testing::TempFolder tmp;
  for (const char* driver : {"GTiff", "GTX", "AAIGrid"}) {
    INFO(driver);
    const std::string extension = std::string(driver) == "GTiff" ? ".tif"
                                  : std::string(driver) == "GTX" ? ".gtx"
                                                                 : ".asc";
    const auto path = tmp.path() / (std::string("plane") + extension);
    write_grid(path, driver, false);
    SurfaceShift grid(path, "EPSG:4326", ProjSettings{});
    const auto v = grid.values({{10.1, 45.3}, {9.0, 44.0}, {10.93, 45.61}, {20.0, 45.0}});
    // Float32 nodes hold about 7 digits: 1e-6 m.
    REQUIRE(v[0]);
    CHECK_THAT(*v[0], WithinAbs(plane(10.1, 45.3), 1e-6));
    CHECK_THAT(*v[1], WithinAbs(plane(9.0, 44.0), 1e-6));
    CHECK_THAT(*v[2], WithinAbs(plane(10.93, 45.61), 1e-6));
    CHECK_FALSE(v[3]);  // outside: no value, never zero
    CHECK(grid.grid().sha256.size() == 64);
  }
}

TEST_CASE("a grid reference converts heights and names points outside it", "[grids]") {
  testing::TempFolder tmp;
  const auto path = tmp.path() / "constant.gtx";
  write_grid(path, "GTX", true);
  // H_base = H + G: heights 1.5 m below the ellipsoid's.
  HeightConverter c("site-geoid", "EPSG:4979", "EPSG:4326", grid_reference(path), ProjSettings{});
  CHECK(c.proj() == nullptr);
  const auto r = c.convert({{10.0, 45.0}, {30.0, 10.0}}, {100.0, 100.0});
  REQUIRE(r[0].height);
  CHECK_THAT(*r[0].height, WithinAbs(101.5, 1e-6));
  CHECK_THAT(r[0].variance_added, WithinAbs(1e-4, 1e-12));
  CHECK_FALSE(r[1].height);
  CHECK_THAT(r[1].failure, Contains("outside grid constant.gtx"));
  // And back the other way.
  HeightConverter back("EPSG:4979", "site-geoid", "EPSG:4326", grid_reference(path),
                       ProjSettings{});
  CHECK_THAT(*back.convert({{10.0, 45.0}}, {101.5})[0].height, WithinAbs(100.0, 1e-6));
}

TEST_CASE("a grid reference needs the points' CRS and an existing file", "[grids][errors]") {
  testing::TempFolder tmp;
  CHECK_THROWS_WITH(HeightConverter("site-geoid", "EPSG:4979", "EPSG:4326",
                                    grid_reference(tmp.path() / "none.tif"), ProjSettings{}),
                    Contains("does not exist"));
  const auto path = tmp.path() / "g.tif";
  write_grid(path, "GTiff", true);
  CHECK_THROWS_WITH(
      HeightConverter("site-geoid", "EPSG:4979", "", grid_reference(path), ProjSettings{}),
      Contains("--crs"));
}

TEST_CASE(
    "a named grid is found in PROJ's folders, and a multiplier of -1 reduces ellipsoidal heights",
    "[grids]") {
  // gnss (ellipsoidal h) -> egm96-here (H = h - N, egm96_15.gtx from
  // proj-data, multiplier -1) -> EPSG:5703 (+0.412 m, an invented tie). The
  // geoid part must agree with PROJ's own EPSG:4979 -> EGM96 height
  // operation on the same grid (an independent path through PROJ's
  // database).
  testing::TempFolder tmp;
  std::ofstream(tmp.path() / "refs.toml")
      << "[references.gnss]\nkind = \"grid\"\nbase = \"egm96-here\"\ngrid = "
         "\"egm96_15.gtx\"\nmultiplier = -1\n"
         "sigma = 0.05\n[references.egm96-here]\nkind = \"offset\"\nbase = \"EPSG:5703\"\noffset = "
         "0.412\n";
  const ReferenceSet set = ReferenceSet::load(tmp.path() / "refs.toml");
  REQUIRE(std::filesystem::exists(set.find("gnss")->grid));
  HeightConverter chain("gnss", "EPSG:5703", "EPSG:32613", set, ProjSettings{});
  CHECK(chain.proj() == nullptr);
  VerticalTransformer proj("EPSG:4979", "EPSG:4326+5773", "EPSG:32613", ProjSettings{});
  const std::vector<PlanePoint> points = {{512450.0, 4409480.0}, {530000.0, 4420000.0}};
  const auto ours = chain.convert(points, {1650.0, 1700.0});
  const auto theirs = proj.convert(points, {1650.0, 1700.0});
  for (std::size_t i = 0; i < points.size(); ++i) {
    REQUIRE(ours[i].height);
    REQUIRE(theirs[i].height);
    // Both bilinear on the same float32 grid: agreement to 1 mm.
    CHECK_THAT(*ours[i].height, WithinAbs(*theirs[i].height + 0.412, 0.001));
  }
  CHECK_THAT(chain.step_descriptions().front(), Contains("x -1"));
}
