// Quick-look contours: GDAL gridding and contouring of heads.

#include <catch2/catch.hpp>
#include <cmath>

#include "levelhead/core/errors.hpp"
#include "levelhead/flow/contours.hpp"
#include "support/temp_folder.hpp"

using namespace levelhead;
using Catch::Matchers::WithinAbs;

TEST_CASE("contours of a plane lie on the plane, in every direction of slope", "[contours]") {
  // Invented wells on a planar water table: a triangulated surface of a
  // plane is the plane, so every contour vertex must satisfy it. A flipped
  // grid or a half-cell shift would put vertices off by up to gradient x
  // extent or gradient x cell / 2.
  for (const auto& [gx, gy] :
       std::vector<std::pair<double, double>>{{0.002, 0.0}, {0.0, -0.003}, {-0.001, 0.0015}}) {
    std::vector<HeadAtWell> wells;
    const double xs[] = {500000, 500800, 500100, 500900, 500450, 500300};
    const double ys[] = {4400000, 4400050, 4400700, 4400650, 4400350, 4400200};
    for (int i = 0; i < 6; ++i)
      wells.push_back({xs[i], ys[i], 100.0 + gx * (xs[i] - 500000) + gy * (ys[i] - 4400000)});
    const auto contours = quick_contours(wells, 0.25);
    REQUIRE(contours);
    REQUIRE_FALSE(contours->lines.empty());
    std::size_t vertices = 0, exact = 0;
    const double near_edge = std::hypot(gx, gy) * 2.0 * contours->cell;
    for (const ContourLine& line : contours->lines) {
      CHECK(std::abs(std::remainder(line.level, 0.25)) < 1e-9);
      for (const auto& [x, y] : line.vertices) {
        const double misfit = std::abs(100.0 + gx * (x - 500000) + gy * (y - 4400000) - line.level);
        ++vertices;
        exact += misfit < 1e-6;
        CHECK(misfit < near_edge);
      }
    }
    // Inside the wells' hull, linear interpolation of a plane is exact; next
    // to the hull's edge GDAL's contouring borrows from the nodata border and
    // may stray up to two cells. A flipped grid or a half-cell shift would
    // spoil most vertices, not a few.
    CHECK(static_cast<double>(exact) > 0.9 * static_cast<double>(vertices));
  }
}

TEST_CASE("contours need an area and a positive interval", "[contours]") {
  CHECK_FALSE(quick_contours({{0, 0, 1}, {10, 0, 2}}));
  CHECK_FALSE(quick_contours({{0, 0, 1}, {10, 10, 2}, {20, 20, 3}}));  // on a line
  CHECK_THROWS_AS(quick_contours({{0, 0, 1}, {10, 0, 2}, {0, 10, 3}}, 0.0), OptionError);
  const auto automatic = quick_contours({{0, 0, 10.0}, {100, 0, 10.8}, {0, 100, 11.6}});
  REQUIRE(automatic);
  CHECK_THAT(automatic->interval, WithinAbs(0.2, 1e-12));  // 1.6 m / 8 levels, rounded to 2 x 10^-1
}

TEST_CASE("contours are written to a GeoPackage layer", "[contours]") {
  levelhead::testing::TempFolder tmp;
  const auto contours =
      quick_contours({{500000, 4400000, 10.0}, {500100, 4400000, 10.8}, {500000, 4400100, 11.6}});
  REQUIRE(contours);
  write_contours_geopackage(*contours, "EPSG:32613", "EPSG:5703", "m",
                            tmp.path() / "contours.gpkg");
  CHECK(std::filesystem::file_size(tmp.path() / "contours.gpkg") > 0);
}
