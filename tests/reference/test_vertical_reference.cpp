// Height conversion through PROJ against published values.

#include <catch2/catch.hpp>
#include <cmath>

#include "levelhead/core/errors.hpp"
#include "levelhead/core/units.hpp"
#include "levelhead/references/vertical_reference.hpp"

using namespace levelhead;
using Catch::Matchers::Contains;
using Catch::Matchers::WithinAbs;

TEST_CASE("EGM96 geoid heights from the proj-data grid match NGA's test values",
          "[reference][proj]") {
  // Test points and geoid undulations N of NGA's EGM96 test file
  // (OUTINTPT.DAT, distributed with the EGM96 interpolation software);
  // values recalled from memory. H = h - N, so converting h = 0 gives -N.
  // Tolerance 0.1 m: the 15-minute grid interpolated bilinearly departs from
  // the spherical-harmonic values by several centimetres in rough terrain
  // (differences up to 0.06 m are seen at these points).
  struct Case {
    double lat, lon, n;
  };
  const Case cases[] = {
      {38.6281550, 269.7791550 - 360.0, -31.628}, {-14.6212170, 305.0211140 - 360.0, -2.969},
      {46.8743190, 102.4487290, -43.575},         {-23.6174460, 133.8747120, 15.871},
      {38.6254730, 359.9995000 - 360.0, 50.066},  {-0.4667440, 0.0023000, 17.329}};
  VerticalTransformer t("EPSG:4979", "EPSG:4326+5773", "EPSG:4326", ProjSettings{});
  std::vector<PlanePoint> points;
  for (const Case& c : cases) points.push_back({c.lon, c.lat});  // x = longitude
  const auto results = t.convert(points, std::vector<double>(points.size(), 0.0));
  for (std::size_t i = 0; i < points.size(); ++i) {
    INFO("point " << i);
    REQUIRE(results[i].height);
    CHECK_THAT(-*results[i].height, WithinAbs(cases[i].n, 0.1));
  }
  REQUIRE(t.operations().size() >= 1);
  const OperationRecord& op = t.operations()[*results[0].operation];
  CHECK_THAT(op.name, Contains("EGM96"));
  REQUIRE(op.grids.size() == 1);
  CHECK(op.grids[0].sha256.size() == 64);
  CHECK_THAT(op.pipeline, Contains("vgridshift"));
}

TEST_CASE("a reference whose grid is missing is refused, never a ballpark", "[reference][proj]") {
  // EGM2008 heights (EPSG:3855) need us_nga_egm08_25.tif, which proj-data
  // does not ship; PROJ alone would return the height unchanged.
  try {
    VerticalTransformer t("EPSG:4979", "EPSG:4326+3855", "EPSG:4326", ProjSettings{});
    FAIL("expected a ReferenceError");
  } catch (const ReferenceError& e) {
    CHECK_THAT(e.what(), Contains("egm08") && Contains("not installed") && Contains("Searched"));
  }
}

TEST_CASE("projected points convert through the geoid with x as easting", "[proj]") {
  // The same place as the third NGA point above, in UTM zone 48N (EPSG:32648):
  // x, y computed with PROJ 9.1.1's cs2cs (EPSG:4326 -> EPSG:32648) to 1 mm.
  VerticalTransformer lonlat("EPSG:4979", "EPSG:4326+5773", "EPSG:4326", ProjSettings{});
  const double h = *lonlat.convert({{102.4487290, 46.8743190}}, {100.0})[0].height;
  VerticalTransformer utm("EPSG:4979", "EPSG:4326+5773", "EPSG:32648", ProjSettings{});
  const auto r = utm.convert({{305587.920, 5194357.913}}, {100.0});
  REQUIRE(r[0].height);
  // 1 mm of position moves the geoid by far less than 1e-6 m.
  CHECK_THAT(*r[0].height, WithinAbs(h, 1e-6));
  // Swapping x and y (northing given as x) lands far away and is caught by
  // a different height, never silently accepted as the same.
  const auto swapped = utm.convert({{5194357.913, 305587.920}}, {100.0});
  CHECK((!swapped[0].height || std::abs(*swapped[0].height - h) > 0.01));
}

TEST_CASE("horizontal and unknown references are refused with a reason", "[proj][errors]") {
  CHECK_THROWS_WITH(VerticalTransformer("EPSG:4326", "EPSG:5773", "EPSG:4326", ProjSettings{}),
                    Contains("has no heights"));
  CHECK_THROWS_WITH(VerticalTransformer("EPSG:99999999", "EPSG:5773", "EPSG:4326", ProjSettings{}),
                    Contains("EPSG:99999999"));
  CHECK_THROWS_WITH(VerticalTransformer("EPSG:4979", "EPSG:5773", "EPSG:5773", ProjSettings{}),
                    Contains("projected or geographic 2D"));
}

TEST_CASE("heights of a US survey foot reference are handled in metres", "[proj][units]") {
  // NAVD88 height (ftUS), EPSG:6360, and NAVD88 height (m), EPSG:5703: the
  // same datum, so a height converts by the unit alone, which levelhead does
  // itself (metres in, metres out): the conversion is the identity in metres.
  VerticalTransformer t("EPSG:6360", "EPSG:5703", "EPSG:4326", ProjSettings{});
  CHECK_THAT(t.source().metres_per_unit, WithinAbs(metres_per_us_survey_foot, 1e-15));
  const auto r = t.convert({{-100.0, 40.0}}, {304.8006096});  // 1000 US survey ft
  REQUIRE(r[0].height);
  CHECK_THAT(*r[0].height, WithinAbs(304.8006096, 1e-6));
}

TEST_CASE("the height unit of a reference, and its metre sibling", "[proj][units]") {
  // EPSG dataset as shipped with PROJ: EPSG:6360 NAVD88 height (ftUS) and
  // EPSG:8228 NAVD88 height (ft) share the datum of EPSG:5703 NAVD88 height
  // (m); the US survey foot is 1200/3937 m (US Federal Register, 1959).
  const HeightUnit us = height_unit_of("EPSG:6360");
  CHECK_FALSE(us.metric());
  CHECK_THAT(us.metres_per_unit, WithinAbs(1200.0 / 3937.0, 1e-15));
  CHECK(us.metre_equivalent == "EPSG:5703");
  CHECK(height_unit_of("EPSG:8228").metre_equivalent == "EPSG:5703");
  CHECK(height_unit_of("EPSG:4326+6360").metre_equivalent == "EPSG:5703");
  CHECK(height_unit_of("EPSG:5703").metric());
  CHECK(height_unit_of("EPSG:4979").metric());                   // ellipsoidal heights in metres
  CHECK_THROWS_AS(height_unit_of("EPSG:4326"), ReferenceError);  // no heights
}

TEST_CASE("a dynamic reference needs an epoch", "[proj][errors]") {
  // ITRF2014 (EPSG:7912) is a dynamic geodetic reference frame in the EPSG
  // dataset: coordinates in it move with the plates, so an epoch is required.
  CHECK_THROWS_WITH(VerticalTransformer("EPSG:7912", "EPSG:4326+5773", "EPSG:4326", ProjSettings{}),
                    Contains("dynamic") && Contains("--epoch"));
  VerticalTransformer t("EPSG:7912", "EPSG:4326+5773", "EPSG:4326", ProjSettings{}, 2026.9);
  CHECK(t.source().dynamic);
  // Between ITRF2014 and the WGS 84 ensemble EPSG has no operation but a
  // ballpark outside North America (the only other path runs through NAD83):
  // in Europe the point is refused rather than shifted by nothing.
  const auto r = t.convert({{10.0, 45.0}}, {100.0});
  CHECK_FALSE(r[0].height);
  CHECK_THAT(r[0].failure, Contains("no usable operation"));
}

TEST_CASE("a batch split over threads gives the same heights as small serial calls", "[proj]") {
  // 120000 points: above the per-thread minimum, so a multi-core machine
  // converts them on several PROJ contexts at once.
  std::vector<PlanePoint> points;
  std::vector<double> heights;
  for (int i = 0; i < 120000; ++i) {
    points.push_back({-170.0 + (i % 3400) * 0.1, -70.0 + (i / 3400) * 4.0});
    heights.push_back(100.0 + i % 7);
  }
  VerticalTransformer batch("EPSG:4979", "EPSG:4326+5773", "EPSG:4326", ProjSettings{});
  const auto all = batch.convert(points, heights);
  VerticalTransformer serial("EPSG:4979", "EPSG:4326+5773", "EPSG:4326", ProjSettings{});
  std::size_t counted = 0;
  for (std::size_t start = 0; start < points.size(); start += 1000) {
    const std::vector<PlanePoint> p(points.begin() + start, points.begin() + start + 1000);
    const std::vector<double> h(heights.begin() + start, heights.begin() + start + 1000);
    const auto part = serial.convert(p, h);
    for (std::size_t i = 0; i < part.size(); ++i) {
      REQUIRE(part[i].height.has_value() == all[start + i].height.has_value());
      if (part[i].height)
        CHECK(*part[i].height == *all[start + i].height);  // same arithmetic, bit for bit
    }
  }
  for (const auto& op : batch.operations()) counted += op.points;
  CHECK(counted == points.size());
}
