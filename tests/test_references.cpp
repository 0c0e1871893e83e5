#include <catch2/catch.hpp>
#include <cmath>
#include <fstream>
#include <random>

#include "levelhead/core/errors.hpp"
#include "levelhead/references/height_converter.hpp"
#include "levelhead/references/references_file.hpp"
#include "levelhead/references/site_tie.hpp"
#include "support/temp_folder.hpp"

using namespace levelhead;
using Catch::Matchers::Contains;
using Catch::Matchers::WithinAbs;

namespace {

ReferenceDefinition offset_reference(std::string name, std::string base, double offset) {
  ReferenceDefinition d;
  d.name = std::move(name);
  d.kind = ReferenceDefinition::Kind::offset;
  d.base = std::move(base);
  d.relation.offset = offset;
  d.relation.sigma = 0.004;
  return d;
}

}  // namespace

TEST_CASE("an offset with slopes shifts heights as written (hand computation)", "[references]") {
  // H_base = H + offset + slope_x (x - x0) + slope_y (y - y0):
  // 1.0 + 1e-5 * (1500 - 1000) + (-2e-5) * (1000 - 2000) = 1.0 + 0.005 + 0.02 = 1.025 m.
  OffsetRelation r;
  r.offset = 1.0;
  r.slope_x = 1e-5;
  r.slope_y = -2e-5;
  r.x0 = 1000.0;
  r.y0 = 2000.0;
  CHECK_THAT(r.shift(1500.0, 1000.0), WithinAbs(1.025, 1e-12));
  // Variance from the covariance of (offset, slope_x, slope_y): g' C g with
  // g = (1, 500, -1000): 1e-6 + 500^2 * 1e-12 + 1000^2 * 1e-12 = 2.25e-6.
  r.covariance = std::array<std::array<double, 3>, 3>{{{1e-6, 0, 0}, {0, 1e-12, 0}, {0, 0, 1e-12}}};
  CHECK_THAT(*r.variance(1500.0, 1000.0), WithinAbs(2.25e-6, 1e-18));
}

TEST_CASE("named references chain without PROJ when they share a base", "[references]") {
  ReferenceSet set;
  set.add(offset_reference("site-1998", "EPSG:5703", 95.25));
  set.add(offset_reference("site-2010", "site-1998", -0.012));
  HeightConverter up("site-2010", "EPSG:5703", "EPSG:32613", set, ProjSettings{});
  CHECK(up.proj() == nullptr);
  const auto r = up.convert({{0.0, 0.0}}, {10.0});
  REQUIRE(r[0].height);
  CHECK_THAT(*r[0].height, WithinAbs(10.0 - 0.012 + 95.25, 1e-12));
  CHECK_THAT(r[0].variance_added, WithinAbs(2 * 0.004 * 0.004, 1e-15));
  // Between two site references only their own steps apply.
  HeightConverter across("site-2010", "site-1998", "", set, ProjSettings{});
  CHECK_THAT(*across.convert({{0.0, 0.0}}, {10.0})[0].height, WithinAbs(9.988, 1e-12));
  HeightConverter down("EPSG:5703", "site-2010", "", set, ProjSettings{});
  CHECK_THAT(*down.convert({{0.0, 0.0}}, {105.238})[0].height, WithinAbs(10.0, 1e-12));
}

TEST_CASE("a named reference over a PROJ CRS chains through PROJ", "[references][proj]") {
  // Site heights 20 m below EGM96 heights; then EGM96 -> ellipsoidal by the geoid.
  ReferenceSet set;
  set.add(offset_reference("site", "EPSG:4326+5773", 20.0));
  HeightConverter chained("site", "EPSG:4979", "EPSG:4326", set, ProjSettings{});
  REQUIRE(chained.proj() != nullptr);
  HeightConverter direct("EPSG:4326+5773", "EPSG:4979", "EPSG:4326", set, ProjSettings{});
  const auto a = chained.convert({{10.0, 45.0}}, {80.0});
  const auto b = direct.convert({{10.0, 45.0}}, {100.0});
  REQUIRE(a[0].height);
  CHECK_THAT(*a[0].height, WithinAbs(*b[0].height, 1e-9));
  CHECK_THAT(a[0].transform, Contains("site -> EPSG:4326+5773") && Contains("EGM96"));
}

TEST_CASE("references files are parsed strictly", "[references][errors]") {
  testing::TempFolder tmp;
  const auto path = tmp.path() / "refs.toml";
  std::ofstream(path) << "[references.old]\nkind = \"offset\"\nbase = \"EPSG:5703\"\noffset = 1.5\n"
                         "sigma = 0.002\nhull = [[0, 0], [10, 0], [10, 10], [0, 10]]\n"
                         "[references.egm]\nkind = \"crs\"\ndefinition = \"EPSG:4326+5773\"\n";
  const ReferenceSet set = ReferenceSet::load(path);
  REQUIRE(set.find("old"));
  CHECK_THAT(set.find("old")->relation.offset, WithinAbs(1.5, 1e-15));
  CHECK(set.find("old")->relation.inside_hull(5, 5));
  CHECK_FALSE(set.find("old")->relation.inside_hull(15, 5));
  CHECK(set.find("egm")->definition == "EPSG:4326+5773");

  std::ofstream(path)
      << "[references.old]\nkind = \"offset\"\nbase = \"EPSG:5703\"\noffest = 1.5\n";
  CHECK_THROWS_WITH(ReferenceSet::load(path),
                    Contains("line 4") && Contains("did you mean 'offset'"));
  std::ofstream(path) << "[references.old]\nkind = \"offset\"\noffset = 1.5\n";
  CHECK_THROWS_WITH(ReferenceSet::load(path), Contains("needs 'base'"));
  std::ofstream(path) << "[references.old\nkind = 1\n";
  CHECK_THROWS_WITH(ReferenceSet::load(path), Contains("line 1"));
  std::ofstream(path) << "[references.a]\nkind = \"offset\"\nbase = \"b\"\noffset = 1\n"
                         "[references.b]\nkind = \"offset\"\nbase = \"a\"\noffset = 1\n";
  CHECK_THROWS_WITH(HeightConverter("a", "EPSG:5703", "", ReferenceSet::load(path), ProjSettings{}),
                    Contains("loop"));
}

TEST_CASE("points outside the hull of a tie are flagged as extrapolated", "[references]") {
  ReferenceSet set;
  ReferenceDefinition d = offset_reference("site", "EPSG:5703", 1.0);
  d.relation.hull = {{0, 0}, {100, 0}, {100, 100}, {0, 100}};
  set.add(d);
  HeightConverter c("site", "EPSG:5703", "", set, ProjSettings{});
  const auto r = c.convert({{50, 50}, {150, 50}}, {1.0, 1.0});
  CHECK(r[0].flags.empty());
  CHECK(r[1].flags == std::vector<std::string>{"outside-ties-hull(site)"});
}

TEST_CASE("a tie recovers a known offset and slope, and a bad tie stands out",
          "[references][tie]") {
  // Invented ties: offset 95.25 m, slopes 20 and -10 mm/km, noise 1 mm, one tie 25 mm off.
  std::mt19937_64 rng(11);
  std::normal_distribution<double> noise(0.0, 0.001);
  std::uniform_real_distribution<double> coordinate(0.0, 2000.0);
  std::vector<TiePoint> ties;
  for (int i = 0; i < 12; ++i) {
    TiePoint t;
    t.id = "T" + std::to_string(i);
    t.x = coordinate(rng);
    t.y = coordinate(rng);
    t.site_height = 10.0 + i;
    t.base_height =
        t.site_height + 95.25 + 2e-5 * (t.x - 1000.0) - 1e-5 * (t.y - 1000.0) + noise(rng);
    t.site_sigma = t.base_sigma = 0.001 / std::sqrt(2.0);
    ties.push_back(t);
  }
  TieOptions options;
  options.model = TieModel::plane;
  const TieResult clean = estimate_tie(ties, options);
  const auto& cov = *clean.relation.covariance;
  // Within 4 sigma of the truth (the centroid is not (1000, 1000), so compare the shift there).
  CHECK_THAT(clean.relation.shift(1000.0, 1000.0), WithinAbs(95.25, 4 * 0.001));
  CHECK_THAT(clean.relation.slope_x, WithinAbs(2e-5, 4 * std::sqrt(cov[1][1])));
  CHECK_THAT(clean.relation.slope_y, WithinAbs(-1e-5, 4 * std::sqrt(cov[2][2])));
  CHECK(clean.suspects.empty());
  CHECK(clean.relation.hull.size() >= 3);

  ties[4].base_height += 0.025;
  const TieResult bad = estimate_tie(ties, options);
  REQUIRE_FALSE(bad.suspects.empty());
  CHECK(bad.suspects.front() == 4);
}

TEST_CASE("ties refuse too few points and collinear slopes", "[references][tie][errors]") {
  std::vector<TiePoint> ties(2);
  ties[1].x = 1.0;
  CHECK_THROWS_WITH(estimate_tie(ties, TieOptions{}), Contains("only 2") && Contains("at least 3"));
  std::vector<TiePoint> line(5);
  for (int i = 0; i < 5; ++i) line[i].x = i * 100.0, line[i].base_height = 1.0 + 0.001 * i;
  TieOptions plane;
  plane.model = TieModel::plane;
  CHECK_THROWS_WITH(estimate_tie(line, plane), Contains("on a line"));
  CHECK_THROWS_AS(parse_tie_model("tilt"), OptionError);
}

TEST_CASE("an EPSG 1046 offset and slope matches the formula worked by hand",
          "[references][proj]") {
  // EPSG Guidance Note 7-2, method 1046 (Vertical Offset and Slope):
  //   shift = A + slope_lat rho0 (lat - lat0) + slope_lon nu0 (lon - lon0) cos(lat),
  // slopes in radians (here 2" and -1"). Worked by hand for GRS80
  // (a = 6378137, 1/f = 298.257222101) at lat0 46.9, lon0 7.9, point (47.0, 8.0):
  // rho0 = 6369508.25 m, nu0 = 6389549.41 m, giving 1.5 + 0.1077924 - 0.0368728 = 1.5709196 m.
  ReferenceDefinition d;
  d.name = "old";
  d.kind = ReferenceDefinition::Kind::vertoffset;
  d.base = "EPSG:5703";
  d.offset_slope = VerticalOffsetSlope{1.5, 2.0, -1.0, 46.9, 7.9, "GRS80"};
  d.relation.sigma = 0.01;
  ReferenceSet set;
  set.add(d);
  HeightConverter c("old", "EPSG:5703", "EPSG:4326", set, ProjSettings{});
  const auto r = c.convert({{8.0, 47.0}}, {100.0});
  REQUIRE(r[0].height);
  CHECK_THAT(*r[0].height, WithinAbs(101.5709196, 1e-6));
  CHECK_THAT(r[0].transform, Contains("EPSG 1046"));

  testing::TempFolder tmp;
  const auto path = tmp.path() / "refs.toml";
  std::ofstream(path) << "[references.old]\nkind = \"vertoffset\"\nbase = \"EPSG:5703\"\n"
                         "offset = 1.5\nslope_lat = 2\nslope_lon = -1\nlat0 = 46.9\nlon0 = 7.9\n";
  const ReferenceSet loaded = ReferenceSet::load(path);
  CHECK_THAT(loaded.find("old")->offset_slope.slope_lat, WithinAbs(2.0, 1e-15));
  HeightConverter from_file("old", "EPSG:5703", "EPSG:4326", loaded, ProjSettings{});
  CHECK_THAT(*from_file.convert({{8.0, 47.0}}, {100.0})[0].height, WithinAbs(101.5709196, 1e-6));
}

TEST_CASE("a tie without sigmas flags a blunder with Pope's tau test", "[references][tie]") {
  // Regression: without sigmas each residual was studentised by sigma0 and
  // compared with the normal quantile 3.29; such a statistic never exceeds
  // sqrt(redundancy) (3.0 for 10 ties of an offset), so a 5 m error in one of
  // 10 ties was never flagged and moved the offset by 0.5 m.
  std::vector<TiePoint> ties;
  for (int i = 0; i < 10; ++i) {
    TiePoint t;
    t.id = "T" + std::to_string(i);
    t.x = 100.0 * i;
    t.y = 50.0 * (i % 3);
    t.site_height = 10.0 + i;
    // Invented: offset 95.25 m with +-2 mm of scatter.
    t.base_height = t.site_height + 95.25 + 0.002 * ((i % 3) - 1);
    ties.push_back(t);
  }
  const TieResult clean = estimate_tie(ties, TieOptions{});
  CHECK_FALSE(clean.weighted);
  CHECK(clean.test == "Pope's tau test");
  CHECK(clean.suspects.empty());
  ties[6].base_height += 5.0;
  const TieResult bad = estimate_tie(ties, TieOptions{});
  // r = 9: the critical value is 2.616 (reference test above); the blunder's
  // tau is close to its bound 3.0.
  CHECK_THAT(bad.w_critical, WithinAbs(2.616, 5e-4));
  REQUIRE(bad.suspects.size() == 1);
  CHECK(bad.suspects.front() == 6);
}

TEST_CASE("tie points on the corners and edges of their own hull are inside it",
          "[references][tie]") {
  // Regression: the ray-crossing test put some corners of the tie area
  // outside (flagged outside-ties-hull) and others inside.
  std::vector<TiePoint> ties;
  const double corners[][2] = {{512000.125, 4409000.5}, {513000.25, 4409000.5},
                               {513000.25, 4410000.75}, {512000.125, 4410000.75},
                               {512500.0, 4409500.0},   {512500.0, 4409000.5}};
  for (std::size_t i = 0; i < std::size(corners); ++i) {
    TiePoint t;
    t.id = "T" + std::to_string(i);
    t.x = corners[i][0];
    t.y = corners[i][1];
    t.site_height = 10.0;
    t.base_height = 105.25 + 0.001 * static_cast<double>(i % 2);
    ties.push_back(t);
  }
  const TieResult tie = estimate_tie(ties, TieOptions{});
  // Through the references file and back, as `convert` meets it.
  ReferenceDefinition d = offset_reference("site", "EPSG:5703", 0.0);
  d.relation = tie.relation;
  const std::string toml_text = to_toml(d);
  const ReferenceSet set = ReferenceSet::parse(toml_text, "references.toml");
  const OffsetRelation& read_back = set.find("site")->relation;
  for (const TiePoint& t : ties) {
    INFO(t.id);
    CHECK(tie.relation.inside_hull(t.x, t.y));
    CHECK(read_back.inside_hull(t.x, t.y));
  }
  // 1 mm outside an edge is outside.
  CHECK_FALSE(read_back.inside_hull(512000.124, 4409500.0));
  CHECK_FALSE(read_back.inside_hull(512500.0, 4409000.499));
}

TEST_CASE("the tau test of ties without sigmas raises false alarms at its alpha0",
          "[references][tie][statistics]") {
  // Simulated blunder-free ties (invented: offset 95.25 m, normal scatter
  // 3 mm, no sigmas given), 2000 sets of 10: each tie's tau is tested at
  // alpha0 = 0.001, so about 2000 * 10 * 0.001 = 20 ties are flagged by
  // chance (binomial, standard deviation 4.5). Accept 5..45 (beyond 3
  // standard deviations either way).
  std::mt19937_64 rng(2026);
  std::normal_distribution<double> noise(0.0, 0.003);
  std::size_t flagged = 0;
  for (int set = 0; set < 2000; ++set) {
    std::vector<TiePoint> ties;
    for (int i = 0; i < 10; ++i) {
      TiePoint t;
      t.id = "T" + std::to_string(i);
      t.x = 100.0 * i;
      t.y = 37.0 * (i % 4);
      t.site_height = 10.0;
      t.base_height = 105.25 + noise(rng);
      ties.push_back(t);
    }
    flagged += estimate_tie(ties, TieOptions{}).suspects.size();
  }
  CHECK(flagged >= 5);
  CHECK(flagged <= 45);
}
