// Heads from water levels: hand-worked cases (invented wells) and every QA flag.

#include <fmt/format.h>
#include <gdal.h>
#include <ogr_api.h>

#include <catch2/catch.hpp>
#include <fstream>

#include "levelhead/core/errors.hpp"
#include "levelhead/heads/heads.hpp"
#include "support/temp_folder.hpp"

using namespace levelhead;
using Catch::Matchers::Contains;
using Catch::Matchers::WithinAbs;

namespace {

struct Site {
  testing::TempFolder tmp;
  std::string wells =
      "id,x,y,ground,screen_bottom\nW1,500000,4400000,12.0,20\nW2,500100,4400050,104.0,15\n";
  std::string mp =
      "well,valid_from,height,datum,sigma,reason\n"
      "W1,2020-01-01,10.000,EPSG:5703,0.002,survey\n"
      "W1,2022-01-01,9.800,EPSG:5703,0.002,casing-cut\n"
      "W2,2020-01-01,8.000,site-1998,0.002,survey\n";
  std::string levels;
  std::string monitored;  // heights_by_epoch.csv, when not empty
  std::string network;    // heights.csv of `adjust`, when not empty
  LengthUnit mp_unit = LengthUnit::metre;
  HeadOptions options;
  std::optional<TimeZone> default_zone;  // --time-zone
  TableOptions levels_table;             // its time_zone: --levels-time-zone
  std::filesystem::path levels_path;     // a levels file of the test's own, else `levels`
  ReferenceSet references;

  Site() {
    options.target = "EPSG:5703";
    options.crs = "EPSG:32613";
    ReferenceDefinition d;
    d.name = "site-1998";
    d.kind = ReferenceDefinition::Kind::offset;
    d.base = "EPSG:5703";
    d.relation.offset = 95.25;
    d.relation.sigma = 0.004;
    references.add(d);
  }

  // Runs compute_heads and returns heads.csv as a table.
  Table run() {
    write("wells.csv", wells);
    write("mp.csv", mp);
    if (levels_path.empty()) write("levels.csv", levels);
    const WellSet w = read_wells(read_table(tmp.path() / "wells.csv"));
    TimeReader times(default_zone);
    const auto records = read_measuring_points(
        read_table(tmp.path() / "mp.csv", TableOptions{{}, mp_unit, {}}), w, &times);
    MonitoredHeights moving;
    if (!monitored.empty()) {
      write("monitored.csv", monitored);
      moving = read_monitored_heights(read_table(tmp.path() / "monitored.csv"));
    }
    NetworkHeights adjusted;
    if (!network.empty()) {
      write("heights.csv", network);
      adjusted = read_network_heights(read_table(tmp.path() / "heights.csv"));
    }
    compute_heads(w, records, adjusted, moving, references, ProjSettings{}, options, times,
                  levels_path.empty() ? tmp.path() / "levels.csv" : levels_path, levels_table,
                  tmp.path() / "out", true);
    return read_table(tmp.path() / "out" / "heads.csv");
  }
  void write(const char* name, const std::string& text) {
    std::ofstream(tmp.path() / name) << text;
  }
  Table qa() { return read_table(tmp.path() / "out" / "qa.csv"); }
};

double head(const Table& t, std::size_t row) { return *t.number(row, *t.find_column("head")); }
std::string flags(const Table& t, std::size_t row) {
  return std::string(t.cell(row, *t.find_column("flags")));
}

}  // namespace

TEST_CASE("heads across a casing cut and across a change of reference", "[heads]") {
  Site site;
  site.levels =
      "well,time,depth\n"
      "W1,2021-06-01T09:00Z,3.000\n"   // before the cut: 10.000 - 3.000
      "W1,2022-06-01T09:00Z,2.850\n"   // after the cut:   9.800 - 2.850
      "W2,2021-06-01T10:00Z,3.250\n";  // site datum: 8.000 + 95.25 - 3.25
  const Table t = site.run();
  REQUIRE(t.row_count() == 3);
  CHECK_THAT(head(t, 0), WithinAbs(7.000, 1e-9));
  CHECK_THAT(head(t, 1), WithinAbs(6.950, 1e-9));
  CHECK_THAT(head(t, 2), WithinAbs(100.000, 1e-9));
  // sigma = sqrt(0.002^2 + 0.003^2) for W1; W2 adds the offset's 0.004.
  CHECK_THAT(*t.number(0, *t.find_column("sigma")), WithinAbs(std::hypot(0.002, 0.003), 1e-4));
  CHECK_THAT(*t.number(2, *t.find_column("sigma")),
             WithinAbs(std::sqrt(0.002 * 0.002 + 0.004 * 0.004 + 0.003 * 0.003), 1e-4));
  CHECK(t.cell(0, *t.find_column("datum")) == "EPSG:5703");
  CHECK_THAT(std::string(t.cell(2, *t.find_column("transform"))), Contains("site-1998"));
  // The cut of 0.200 m is reported as a measuring-point change with its reason.
  const Table qa = site.qa();
  REQUIRE(qa.row_count() >= 1);
  CHECK(qa.cell(0, *qa.find_column("flag")) == "mp-changed");
  CHECK_THAT(std::string(qa.cell(0, *qa.find_column("detail"))),
             Contains("-0.200") && Contains("casing-cut"));
}

TEST_CASE("a subsiding well interpolates its measuring point between surveys", "[heads]") {
  Site site;
  site.mp =
      "well,valid_from,height,datum,sigma,reason\n"
      "W1,2020-01-01,10.000,EPSG:5703,0.002,survey\n"
      "W1,2021-01-01,9.900,EPSG:5703,0.002,resurvey\n";
  // 2020 is a leap year: 2020-07-02T00:00 is exactly half of its 366 days.
  site.levels = "well,time,depth\nW1,2020-07-02T00:00Z,2.000\n";
  CHECK_THAT(head(site.run(), 0), WithinAbs(8.000, 1e-9));  // step: the 2020 survey holds
  site.options.interpolate = true;
  const Table t = site.run();
  CHECK_THAT(head(t, 0), WithinAbs(7.950, 1e-9));  // 9.950 - 2.000
  CHECK_THAT(flags(t, 0), Contains("mp-interpolated"));
  // Never across a casing cut.
  site.mp =
      "well,valid_from,height,datum,sigma,reason\n"
      "W1,2020-01-01,10.000,EPSG:5703,0.002,survey\n"
      "W1,2021-01-01,9.900,EPSG:5703,0.002,casing-cut\n";
  CHECK_THAT(head(site.run(), 0), WithinAbs(8.000, 1e-9));
}

TEST_CASE("a measuring point with no path to the target reference is an error, never merged",
          "[heads][errors]") {
  // A naive merge would subtract depths from 8.000 m of an undefined site
  // datum and put the head about 95 m too low; levelhead refuses.
  Site site;
  site.mp = "well,valid_from,height,datum,sigma\nW1,2020-01-01,8.000,old-site,0.002\n";
  site.levels = "well,time,depth\nW1,2021-06-01,3.0\n";
  CHECK_THROWS_WITH(site.run(), Contains("well 'W1'") && Contains("'old-site'"));
}

TEST_CASE("readings that are not numbers are carried and kept out of contouring", "[heads]") {
  Site site;
  site.levels =
      "well,time,depth,above,status\n"
      "W1,2021-06-01,dry,,\n"
      "W1,2021-06-02,>15.2,,\n"
      "W1,2021-06-03,Frozen,,\n"
      "W1,2021-06-04,,0.40,flowing\n"
      "W1,2021-06-05,3.1,,recently pumped\n";
  const Table t = site.run();
  const std::size_t state = *t.find_column("state"), contour = *t.find_column("contour");
  CHECK(t.cell(0, state) == "dry");
  CHECK(t.cell(1, state) == "deeper-than:15.2");
  CHECK(t.cell(2, state) == "frozen");
  CHECK_FALSE(t.number(0, *t.find_column("head")));
  CHECK(t.cell(0, contour) == "no");
  CHECK_THAT(head(t, 3), WithinAbs(10.40, 1e-9));  // flowing: 10.000 + 0.40 above the MP
  CHECK(flags(t, 3).empty());
  CHECK(t.cell(4, contour) == "no");
  CHECK_THAT(flags(t, 4), Contains("pumping"));
}

TEST_CASE("each QA flag is raised when it applies and not otherwise", "[heads][qa]") {
  Site site;
  site.options.event = parse_iso8601("2021-06-10T12:00Z")->seconds;
  site.levels =
      "well,time,depth\n"
      "W1,2021-06-10T08:00Z,3.000\n"   // 0 clean
      "W1,2021-06-10T08:05Z,3.001\n"   // 1 repeat within 3 mm: clean
      "W1,2021-06-10T08:10Z,3.010\n"   // 2 repeat 10 mm off: repeat-disagrees
      "W1,2021-06-10T08:10Z,3.010\n"   // 3 duplicate
      "W1,2021-06-10T07:00Z,3.000\n"   // 4 out-of-order
      "W1,2021-06-20T08:00Z,3.000\n"   // 5 outside the 48 h window
      "W1,2021-06-11T08:00Z,-0.100\n"  // 6 water above the MP, not marked flowing
      "W2,2021-06-10T10:00Z,-1.0\n"    // 7 head 104.25 above ground at 104.0
      "W2,2021-06-10T14:00Z,95.0\n";   // 8 head 8.25, below the screen bottom at 89.0
  const Table t = site.run();
  CHECK(flags(t, 0).empty());
  CHECK(flags(t, 1).empty());
  CHECK_THAT(flags(t, 2), Contains("repeat-disagrees"));
  CHECK_THAT(flags(t, 3), Contains("duplicate"));
  CHECK_THAT(flags(t, 4), Contains("out-of-order"));
  const std::size_t in_event = *t.find_column("in_event"), reason = *t.find_column("reason");
  CHECK(t.cell(5, in_event) == "no");
  CHECK(t.cell(5, reason) == "outside-synoptic-window");
  CHECK(t.cell(6, in_event) == "yes");
  CHECK_THAT(flags(t, 6), Contains("water-above-mp"));
  CHECK_THAT(flags(t, 7), Contains("water-above-ground") && Contains("water-above-mp"));
  CHECK_THAT(flags(t, 8), Contains("below-screen-bottom"));
  CHECK_FALSE(flags(t, 0).find("below-screen-bottom") != std::string::npos);
}

TEST_CASE("a target reference in feet gives the metre heads in its feet", "[heads][units]") {
  // EPSG:6360 is NAVD88 in US survey feet, EPSG:5703 the same datum in
  // metres (EPSG dataset); 1200/3937 m per US survey foot (US Federal
  // Register 1959).
  Site site;
  site.levels = "well,time,depth\nW1,2021-06-01,2.000\n";
  const Table metres = site.run();
  site.options.target = "EPSG:6360";
  const Table feet = site.run();
  const double per_foot = 1200.0 / 3937.0;
  CHECK_THAT(head(feet, 0), WithinAbs(head(metres, 0) / per_foot, 1e-4));
  const std::size_t sigma = *feet.find_column("sigma"), depth = *feet.find_column("depth");
  CHECK_THAT(*feet.number(0, sigma), WithinAbs(*metres.number(0, sigma) / per_foot, 1e-4));
  CHECK_THAT(*feet.number(0, depth), WithinAbs(2.0 / per_foot, 1e-4));
  CHECK(feet.cell(0, *feet.find_column("datum")) == "EPSG:6360");
}

TEST_CASE("a measuring point in a foot reference read as metres is refused", "[heads][units]") {
  // W1's top at 32.8083 US survey feet in NAVD88 height (ftUS), EPSG:6360,
  // is 10.000 m in EPSG:5703 (1200/3937 m per foot, US Federal Register
  // 1959). Read from a table in metres it would be 32.8 m: refused.
  Site site;
  site.mp = "well,valid_from,height,datum,sigma\nW1,2020-01-01,32.80833,EPSG:6360,0.0066\n";
  site.levels = "well,time,depth\nW1,2021-06-01,2.000\n";  // the levels table is in metres
  CHECK_THROWS_WITH(site.run(), Contains("row 2") && Contains("EPSG:6360") &&
                                    Contains("--unit us-ft") && Contains("EPSG:5703"));
  // Declared in feet, the same table gives 10.000 - 2.000 m (printed to the
  // millimetre its sigma allows).
  site.mp_unit = LengthUnit::us_survey_foot;
  const Table t = site.run();
  CHECK_THAT(head(t, 0), WithinAbs(8.000, 5e-4));
}

TEST_CASE("readings before the first survey fail unless allowed", "[heads][errors]") {
  Site site;
  site.levels = "well,time,depth\nW1,2019-06-01,3.0\n";
  CHECK_THROWS_WITH(site.run(), Contains("row 2") && Contains("older than its first") &&
                                    Contains("--allow-before-first"));
  site.options.allow_before_first = true;
  const Table t = site.run();
  CHECK_THAT(flags(t, 0), Contains("before-first-survey"));
  CHECK(t.cell(0, *t.find_column("contour")) == "no");
}

TEST_CASE("bad reading tables name the row", "[heads][errors]") {
  Site site;
  site.levels = "well,time,depth\nW9,2021-06-01,3.0\n";
  CHECK_THROWS_WITH(site.run(), Contains("row 2") && Contains("'W9'") && Contains("wells table"));
  site.levels = "well,time,depth\nW1,06/01/2021,3.0\n";
  CHECK_THROWS_WITH(site.run(), Contains("column 'time'") && Contains("ISO 8601"));
  site.levels = "well,time,depth\nW1,2021-06-01,muddy\n";
  CHECK_THROWS_WITH(site.run(), Contains("'muddy'") && Contains("dry"));
  // Millimetres in a metre column.
  site.levels = "well,time,depth\nW1,2021-06-01,3000\n";
  CHECK_THROWS_WITH(site.run(), Contains("not plausible") && Contains("--unit"));
}

TEST_CASE("saline wells get a freshwater head at their screen", "[heads][density]") {
  Site site;
  site.wells =
      "id,x,y,ground,screen_top,screen_bottom,density\n"
      "W1,500000,4400000,12.0,28,32,1025\nW2,500100,4400050,104.0,5,15,\n";
  site.levels =
      "well,time,depth,temperature,salinity\n"
      "W1,2021-06-01,2.000,,\n"      // well density 1025
      "W2,2021-06-01,3.250,5,35\n";  // EOS-80: 1027.675 kg/m^3
  const Table t = site.run();
  const std::size_t fresh = *t.find_column("freshwater_head");
  // W1: h = 8.000, screen at 12 - 30 = -18: h_f = 1.025 * 8 + 0.025 * 18 = 8.65 (by hand).
  CHECK_THAT(*t.number(0, fresh), WithinAbs(8.650, 1e-9));
  // W2: h = 100.000, screen at 104 - 10 = 94: h_f = 1.027675 * 100 - 0.027675 * 94.
  const double rho = 1027.67547 / 1000.0;
  CHECK_THAT(*t.number(1, fresh), WithinAbs(rho * 100.0 - (rho - 1.0) * 94.0, 1e-3));
  CHECK(t.cell(0, *t.find_column("environmental_head")).empty());  // no reference elevation given

  SECTION("with a reference elevation and the column's mean density: environmental-water heads") {
    site.wells =
        "id,x,y,ground,screen_top,screen_bottom,density,column_density\n"
        "W1,500000,4400000,12.0,28,32,1025,1010\nW2,500100,4400050,104.0,5,15,,\n";
    site.options.environmental_reference = 0.0;
    const Table e = site.run();
    // W1: h_n = 8.65 - 0.010 * (0 - (-18)) = 8.47 (by hand); W2 has no column density.
    CHECK_THAT(*e.number(0, *e.find_column("environmental_head")), WithinAbs(8.470, 1e-9));
    CHECK(e.cell(1, *e.find_column("environmental_head")).empty());
  }
}

TEST_CASE("measuring points without sigma take one from their method", "[heads]") {
  Site site;
  site.mp =
      "well,valid_from,height,datum,method\nW1,2020-01-01,10.000,EPSG:5703,gnss\n"
      "W2,2020-01-01,8.000,site-1998,map\n";
  site.levels = "well,time,depth\nW1,2021-06-01,3.0\n";
  CHECK_THROWS_WITH(site.run(), Contains("--map-contour-interval"));
  site.options.map_contour_interval = 1.0;
  const Table t = site.run();
  // gnss: 0.03 m (from memory, common practice) with the 0.003 m depth sigma.
  // (printed to 1 mm for a 3 cm sigma: compare to half of that)
  CHECK_THAT(*t.number(0, *t.find_column("sigma")), WithinAbs(std::hypot(0.03, 0.003), 5e-4));
  CHECK_THAT(flags(t, 0), Contains("mp-sigma-from-method"));
  CHECK(method_sigma("map", 2.0) == 1.0);
  CHECK_FALSE(method_sigma("guess", std::nullopt));
}

TEST_CASE("a head off its well's own trend goes on the re-measure list", "[heads][qa]") {
  Site site;
  site.options.event = parse_iso8601("2021-06-20T12:00Z")->seconds;
  site.options.synoptic_window_hours = 24 * 40;
  std::string levels = "well,time,depth\n";
  for (int d = 1; d <= 20; ++d) {
    const double depth = 3.0 + 0.01 * d + (d == 12 ? 0.8 : 0.0);  // one reading 0.8 m off
    levels += fmt::format("W1,2021-06-{:02d}T08:00Z,{:.3f}\n", d, depth);
  }
  site.levels = levels;
  site.run();
  const Table qa = site.qa();
  std::size_t departures = 0;
  for (std::size_t r = 0; r < qa.row_count(); ++r) {
    if (qa.cell(r, *qa.find_column("flag")) == "departs-from-history") {
      ++departures;
      CHECK_THAT(std::string(qa.cell(r, *qa.find_column("time"))), Contains("2021-06-12"));
    }
  }
  CHECK(departures == 1);
  const Table rm = read_table(site.tmp.path() / "out" / "remeasure.csv");
  bool listed = false;
  for (std::size_t r = 0; r < rm.row_count(); ++r) listed = listed || rm.cell(r, 0) == "W1";
  CHECK(listed);
}

TEST_CASE("measuring points on monitored points follow the levelling epochs", "[heads][epochs]") {
  // Invented: mark PW1 sank 10 mm between two epochs a leap year apart.
  // W1 is levelled on PW1 itself; W2 has its own survey (site datum, 95.25 m
  // below EPSG:5703) and moves with PW1. By hand: on 2024-07-02 (183 of 366
  // days) PW1 is at 9.995; on 2025-07-02 (182 days past the last epoch) the
  // nearest two epochs give 10 - 0.010 * 548 / 366 = 9.98503 (flagged).
  Site site;
  site.monitored =
      "point,epoch,time,height,sigma,reference\n"
      "PW1,E1,2024-01-01T00:00:00Z,10.00000,0.00100,EPSG:5703\n"
      "PW1,E2,2025-01-01T00:00:00Z,9.99000,0.00100,EPSG:5703\n";
  site.mp =
      "well,valid_from,point,height,datum,sigma,moves_with\n"
      "W1,2024-01-01,PW1,,,,\n"
      "W2,2024-01-01,,8.000,site-1998,0.002,PW1\n";
  site.levels = "well,time,depth\nW1,2024-07-02,2.000\nW1,2025-07-02,2.000\nW2,2025-01-01,3.000\n";
  const Table t = site.run();
  CHECK_THAT(head(t, 0), WithinAbs(7.995, 5e-4));
  CHECK_THAT(head(t, 1), WithinAbs(9.98503 - 2.0, 5e-4));
  CHECK_THAT(flags(t, 1), Contains("mp-motion-extrapolated"));
  CHECK_THAT(flags(t, 0), !Contains("mp-motion-extrapolated"));
  CHECK_THAT(head(t, 2), WithinAbs(8.000 + 95.25 - 0.010 - 3.0, 5e-4));
  CHECK_THAT(std::string(t.cell(2, *t.find_column("mp_source"))),
             Contains("moving with monitored:PW1"));

  SECTION("a moves_with point that is not monitored is named") {
    site.mp =
        "well,valid_from,height,datum,sigma,moves_with\nW1,2024-01-01,10.0,EPSG:5703,0.002,PX\n";
    site.levels = "well,time,depth\nW1,2024-07-02,2.000\n";
    CHECK_THROWS_WITH(site.run(), Contains("PX") && Contains("moves_with"));
  }
}

TEST_CASE("measuring points on unchecked levelling are flagged once and per reading",
          "[heads][qa]") {
  // Invented: W1 sits on a looped mark, W2 on a side shot of the adjustment.
  Site site;
  site.network =
      "id,height,sigma,reference,checked\n"
      "BM1,10.000,0.001,EPSG:5703,yes\n"
      "SS1,9.000,0.001,EPSG:5703,no\n";
  site.mp = "well,valid_from,point\nW1,2020-01-01,BM1\nW2,2020-01-01,SS1\n";
  site.levels = "well,time,depth\nW1,2024-07-02,2.000\nW2,2024-07-02,3.000\nW2,2024-08-02,3.1\n";
  const Table t = site.run();
  CHECK_THAT(flags(t, 0), !Contains("mp-unchecked"));
  CHECK_THAT(flags(t, 1), Contains("mp-unchecked"));
  CHECK_THAT(flags(t, 2), Contains("mp-unchecked"));
  CHECK_THAT(head(t, 1), WithinAbs(6.0, 1e-9));  // flagged, not changed
  // qa.csv names the record once, with the point and the fix.
  const Table qa = site.qa();
  std::size_t entries = 0;
  for (std::size_t r = 0; r < qa.row_count(); ++r) {
    if (qa.cell(r, *qa.find_column("flag")) != "mp-unchecked") continue;
    ++entries;
    CHECK(qa.cell(r, *qa.find_column("table")) == "measuring-points");
    CHECK(qa.cell(r, *qa.find_column("well")) == "W2");
    CHECK_THAT(std::string(qa.cell(r, *qa.find_column("detail"))),
               Contains("'SS1'") && Contains("level a loop"));
  }
  CHECK(entries == 1);

  SECTION("epochs that are unchecked flag the readings that use them") {
    site.network.clear();
    site.monitored =
        "point,epoch,time,height,sigma,reference,checked\n"
        "PW1,E1,2024-01-01T00:00:00Z,10.00000,0.00100,EPSG:5703,yes\n"
        "PW1,E2,2025-01-01T00:00:00Z,9.99000,0.00100,EPSG:5703,yes\n"
        "PW1,E3,2026-01-01T00:00:00Z,9.98000,0.00100,EPSG:5703,no\n";
    site.mp = "well,valid_from,point\nW1,2024-01-01,PW1\n";
    site.levels = "well,time,depth\nW1,2024-07-02,2.000\nW1,2025-07-02,2.000\n";
    const Table m = site.run();
    CHECK_THAT(flags(m, 0), !Contains("mp-unchecked"));  // between E1 and E2
    CHECK_THAT(flags(m, 1), Contains("mp-unchecked"));   // between E2 and E3
  }
  SECTION("a checked cell that is not yes or no is refused with its place") {
    site.network = "id,height,reference,checked\nBM1,10.000,EPSG:5703,maybe\n";
    site.mp = "well,valid_from,point\nW1,2020-01-01,BM1\n";
    site.levels = "well,time,depth\nW1,2024-07-02,2.000\n";
    CHECK_THROWS_WITH(site.run(), Contains("heights.csv") && Contains("checked") &&
                                      Contains("maybe") && Contains("yes or no"));
  }
}

TEST_CASE("an XLSX of local times read in a named zone gives the right UTC",
          "[heads][time][gdal]") {
  // Spreadsheet date-time cells carry no zone. Two tape readings of W1 at
  // 08:00 on the clock of a Chicago crew: in January on CST (-06:00), in July
  // on CDT (-05:00; US daylight saving, tz database).
  Site site;
  site.levels_path = site.tmp.path() / "levels.xlsx";
  GDALAllRegister();
  GDALDatasetH ds = GDALCreate(GDALGetDriverByName("XLSX"), site.levels_path.string().c_str(), 0, 0,
                               0, GDT_Unknown, nullptr);
  REQUIRE(ds != nullptr);
  OGRLayerH layer = GDALDatasetCreateLayer(ds, "levels", nullptr, wkbNone, nullptr);
  const std::pair<const char*, OGRFieldType> fields[] = {
      {"well", OFTString}, {"time", OFTDateTime}, {"depth", OFTReal}};
  for (const auto& [name, type] : fields) {
    OGRFieldDefnH f = OGR_Fld_Create(name, type);
    OGR_L_CreateField(layer, f, 1);
    OGR_Fld_Destroy(f);
  }
  for (const int month : {1, 7}) {
    OGRFeatureH f = OGR_F_Create(OGR_L_GetLayerDefn(layer));
    OGR_F_SetFieldString(f, 0, "W1");
    OGR_F_SetFieldDateTime(f, 1, 2021, month, 15, 8, 0, 0, 0);  // 0: zone unknown
    OGR_F_SetFieldDouble(f, 2, 3.0);
    REQUIRE(OGR_L_CreateFeature(layer, f) == OGRERR_NONE);
    OGR_F_Destroy(f);
  }
  GDALClose(ds);

  site.levels_table.time_zone = TimeZone::find("America/Chicago");
  const Table t = site.run();
  REQUIRE(t.row_count() == 2);
  CHECK(t.cell(0, *t.find_column("time_utc")) == "2021-01-15T14:00:00Z");
  CHECK(t.cell(1, *t.find_column("time_utc")) == "2021-07-15T13:00:00Z");

  SECTION("undeclared, beside a measuring point valid from a zoned time, it is an error") {
    site.levels_table.time_zone.reset();
    site.mp = "well,valid_from,height,datum,sigma\nW1,2020-01-01T00:00Z,10.000,EPSG:5703,0.002\n";
    CHECK_THROWS_WITH(site.run(), Contains("levels.xlsx, row 2, column 'time'") &&
                                      Contains("has no zone") && Contains("mp.csv, row 2"));
  }
}
