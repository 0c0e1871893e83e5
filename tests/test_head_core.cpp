// The per-reading core of `heads` at full precision, without files: the
// measuring point in force, one reading into a head record, the sequence
// checks, the contouring decision and the flag table. Invented wells; every
// expected value is worked by hand from the formulas in head_core.hpp.

#include <fmt/format.h>
#include <gdal.h>
#include <ogr_api.h>
#include <ogr_srs_api.h>

#include <algorithm>
#include <catch2/catch.hpp>
#include <cmath>
#include <fstream>
#include <nlohmann/json.hpp>
#include <set>

#include "levelhead/heads/flags.hpp"
#include "levelhead/heads/head_core.hpp"
#include "support/cli_run.hpp"
#include "support/temp_folder.hpp"

using namespace levelhead;
using Catch::Matchers::WithinAbs;
namespace fs = std::filesystem;

namespace {

// Two surveys of one well a year apart (2020-01-01, 2021-01-01: 366 days),
// both in the target reference, so no conversion changes them.
struct TwoSurveys {
  WellSet wells;
  std::vector<MeasuringPointRecord> records;
  HeadOptions options;

  TwoSurveys() {
    Well w;
    w.id = "W1";
    w.x = 500000.0;
    w.y = 4400000.0;
    w.ground = 12.0;
    w.screen_bottom = 20.0;
    wells.index.emplace("W1", 0);
    wells.wells.push_back(w);
    records.push_back(record("2020-01-01", 10.000, 0.004, 2));
    records.push_back(record("2021-01-01", 9.800, 0.002, 3));
    options.target = "EPSG:5703";
    options.crs = "EPSG:32613";
  }

  static MeasuringPointRecord record(const char* from, double height, double sigma,
                                     std::size_t row) {
    MeasuringPointRecord m;
    m.well = "W1";
    m.valid_from_text = from;
    m.valid_from = parse_iso8601(from)->seconds;
    m.height = height;
    m.sigma = sigma;
    m.datum = "EPSG:5703";
    m.row = row;
    return m;
  }

  MeasuringPointHistory history() const {
    return MeasuringPointHistory(wells, records, {}, {}, ReferenceSet{}, ProjSettings{}, options);
  }
};

double seconds(const char* time) { return parse_iso8601(time)->seconds; }

ReadingInput reading_at(const char* time, std::optional<double> depth) {
  ReadingInput r;
  r.time_text = time;
  r.time = seconds(time);
  r.level.depth = depth;
  return r;
}

bool has(const std::vector<std::string>& flags, const std::string& flag) {
  return std::find(flags.begin(), flags.end(), flag) != flags.end();
}

// One well with one survey, for the command-line cases: `heads_args` runs
// `heads` on `levels` (lines after the header) into `out`.
struct OneWellFiles {
  levelhead::testing::TempFolder tmp;
  std::string wells = write("wells.csv", "id,x,y\nW1,500000,4400000\n");
  std::string mp = write("mp.csv",
                         "well,valid_from,height,datum,sigma\n"
                         "W1,2020-01-01,10.000,EPSG:5703,0.002\n");

  std::string write(const char* name, const std::string& text) {
    std::ofstream(tmp.path() / name) << text;
    return (tmp.path() / name).string();
  }
  std::vector<std::string> heads_args(const std::string& levels, const char* out) {
    return {"heads",
            "--wells",
            wells,
            "--measuring-points",
            mp,
            "--levels",
            write("levels.csv", "well,time,depth\n" + levels),
            "--target",
            "EPSG:5703",
            "--crs",
            "EPSG:32613",
            "--no-gpkg",
            "--quiet",
            "--out",
            (tmp.path() / out).string()};
  }
  // heads_args with heads.gpkg written.
  std::vector<std::string> heads_gpkg_args(const std::string& levels, const char* out) {
    std::vector<std::string> args = heads_args(levels, out);
    args.erase(std::find(args.begin(), args.end(), "--no-gpkg"));
    return args;
  }
};

// heads.gpkg in `folder`, opened read-only; the caller closes it.
GDALDatasetH open_heads_gpkg(const std::filesystem::path& folder) {
  GDALAllRegister();
  GDALDatasetH gpkg = GDALOpenEx((folder / "heads.gpkg").string().c_str(),
                                 GDAL_OF_VECTOR | GDAL_OF_READONLY, nullptr, nullptr, nullptr);
  REQUIRE(gpkg);
  return gpkg;
}

}  // namespace

TEST_CASE("the measuring point in force: the latest survey, or interpolated between two",
          "[heads][core]") {
  TwoSurveys site;
  SECTION("without interpolation the earlier survey holds until the next") {
    const auto at = site.history().at(0, seconds("2020-07-01"));
    REQUIRE(at);
    CHECK(at->record == 0);
    CHECK_THAT(at->height, WithinAbs(10.000, 1e-12));
    CHECK_THAT(at->sigma, WithinAbs(0.004, 1e-12));
    CHECK(at->flags.empty());
  }
  SECTION("interpolated at a quarter of the interval") {
    site.options.interpolate = true;
    // A quarter of 366 days after 2020-01-01 is 91.5 days: 2020-04-01T12:00.
    const auto at = site.history().at(0, seconds("2020-04-01T12:00Z"));
    REQUIRE(at);
    // 0.75 * 10.000 + 0.25 * 9.800 = 9.950; sigma = hypot(0.75 * 0.004, 0.25 * 0.002).
    CHECK_THAT(at->height, WithinAbs(9.950, 1e-12));
    CHECK_THAT(at->sigma, WithinAbs(std::hypot(0.003, 0.0005), 1e-15));
    CHECK(has(at->flags, "mp-interpolated"));
  }
  SECTION("on the day of the second survey, that survey") {
    site.options.interpolate = true;
    const auto at = site.history().at(0, seconds("2021-01-01"));
    REQUIRE(at);
    CHECK(at->record == 1);
    CHECK_THAT(at->height, WithinAbs(9.800, 1e-12));
    CHECK_FALSE(has(at->flags, "mp-interpolated"));
  }
  SECTION("before the first survey: the first, marked") {
    const auto at = site.history().at(0, seconds("2019-12-31"));
    REQUIRE(at);
    CHECK(at->before_first);
    CHECK(at->record == 0);
    CHECK(has(at->flags, "before-first-survey"));
  }
  SECTION("a change between surveys beyond the tolerance is in the history's QA") {
    // |9.800 - 10.000| = 0.200 m > 0.02 m (the default tolerance).
    const auto history = site.history();
    REQUIRE(history.qa().size() == 1);
    CHECK(history.qa()[0].flag == "mp-changed");
    CHECK(history.qa()[0].row == 3);
  }
}

TEST_CASE("a reading evaluated into a head record", "[heads][core]") {
  TwoSurveys site;
  const Well& well = site.wells.wells[0];
  const auto mp = *site.history().at(0, seconds("2020-06-01"));
  SECTION("head = measuring point - depth, sigma from both") {
    ReadingInput r = reading_at("2020-06-01T08:00Z", 4.3217);
    r.depth_sigma = 0.003;
    const HeadRecord h = evaluate_reading(r, mp, well, site.options);
    REQUIRE(h.head);
    CHECK_THAT(*h.head, WithinAbs(10.000 - 4.3217, 1e-12));
    CHECK_THAT(h.sigma, WithinAbs(0.005, 1e-15));  // hypot(0.004, 0.003)
    CHECK(h.flags.empty());
    CHECK(contouring_reason(h).empty());
  }
  SECTION("a flowing well: head = measuring point + water above it") {
    ReadingInput r = reading_at("2020-06-01T08:00Z", std::nullopt);
    r.level.state = "flowing";
    r.above = 0.35;
    const HeadRecord h = evaluate_reading(r, mp, well, site.options);
    REQUIRE(h.head);
    CHECK_THAT(*h.head, WithinAbs(10.35, 1e-12));
    CHECK_FALSE(has(h.flags, "water-above-mp"));
  }
  SECTION("a negative depth without flowing is flagged and not contoured") {
    const HeadRecord h =
        evaluate_reading(reading_at("2020-06-01T08:00Z", -0.10), mp, well, site.options);
    CHECK(has(h.flags, "water-above-mp"));
    CHECK(contouring_reason(h) == "water-above-mp");
  }
  SECTION("a state has no head and gives the reason") {
    ReadingInput r = reading_at("2020-06-01T08:00Z", std::nullopt);
    r.level.state = "dry";
    const HeadRecord h = evaluate_reading(r, mp, well, site.options);
    CHECK_FALSE(h.head);
    CHECK(contouring_reason(h) == "no head: dry");
  }
}

TEST_CASE("the synoptic window's edge: just inside and just outside", "[heads][core]") {
  TwoSurveys site;
  site.options.event = seconds("2020-06-10T12:00Z");
  site.options.synoptic_window_hours = 48.0;  // +-24 h
  const Well& well = site.wells.wells[0];
  const auto mp = *site.history().at(0, seconds("2020-06-10"));
  const auto outside_at = [&](const char* time) {
    const HeadRecord r = evaluate_reading(reading_at(time, 4.0), mp, well, site.options);
    // Outside the window is no flag: it says nothing about the head itself.
    CHECK(r.flags.empty());
    return r.outside_event;
  };
  CHECK_FALSE(outside_at("2020-06-11T11:59:59Z"));
  CHECK_FALSE(outside_at("2020-06-09T12:00:01Z"));
  CHECK(outside_at("2020-06-11T12:00:01Z"));
  CHECK(outside_at("2020-06-09T11:59:59Z"));
}

TEST_CASE("the sequence checks of a well's readings", "[heads][core]") {
  TwoSurveys site;
  site.options.repeat_tolerance = 0.003;
  site.options.repeat_window_hours = 0.25;
  ReadingSequence sequence(site.options);
  const auto record = [](double head) {
    HeadRecord r;
    r.head = head;
    return r;
  };
  HeadRecord first = record(5.000);
  CHECK(sequence.check(seconds("2020-06-01T08:00Z"), first).empty());
  CHECK(first.flags.empty());
  HeadRecord agrees = record(5.002);  // 2 mm within 10 min: a repeat that agrees
  CHECK(sequence.check(seconds("2020-06-01T08:10Z"), agrees).empty());
  CHECK(agrees.flags.empty());
  HeadRecord disagrees = record(5.010);  // 10 mm from the first, 8 mm from the second
  const std::string detail = sequence.check(seconds("2020-06-01T08:12Z"), disagrees);
  CHECK(has(disagrees.flags, "repeat-disagrees"));
  CHECK(detail.find("+0.010 m") != std::string::npos);
  HeadRecord same_time = record(5.010);
  sequence.check(seconds("2020-06-01T08:12Z"), same_time);
  CHECK(has(same_time.flags, "duplicate"));
  HeadRecord older = record(5.000);
  sequence.check(seconds("2020-06-01T07:00Z"), older);
  CHECK(has(older.flags, "out-of-order"));
}

TEST_CASE("the flag table decides contouring, qa.csv and --strict", "[heads][flags]") {
  SECTION("every flag has a meaning, and the names are unique") {
    std::set<std::string_view> names;
    for (const FlagInfo& f : head_flags()) {
      CHECK_FALSE(f.meaning.empty());
      CHECK(names.insert(f.name).second);
      // A rejection keeps the head out of contours; nothing else does.
      CHECK(f.excludes_contouring == (f.kind == FlagClass::rejection));
    }
  }
  SECTION("a parameter in parentheses is ignored for the lookup") {
    CHECK(flag_info("outside-ties-hull(site-1998)").name == "outside-ties-hull");
  }
  SECTION("unknown flags: an earlier stage's rejection excludes, anything else is a caution") {
    CHECK(flag_info("sonde-spike-rejected").excludes_contouring);
    CHECK_FALSE(flag_info("logger-battery-low").excludes_contouring);
    CHECK(flag_info("logger-battery-low").fails_strict);
  }
  SECTION("information never fails --strict") {
    CHECK_FALSE(flag_info("mp-interpolated").fails_strict);
    CHECK(flag_info("pumping").fails_strict);
  }
  SECTION("the reason is the first rejection in the table's order") {
    HeadRecord r;
    r.head = 1.0;
    r.flags = {"before-first-survey", "pumping"};
    CHECK(contouring_reason(r) == "pumping");
    r.flags = {"mp-interpolated", "transducer-drift-rejected"};
    CHECK(contouring_reason(r) == "transducer-drift-rejected");
  }
  SECTION("outside the event's window is a reason after every rejection, never a flag") {
    HeadRecord r;
    r.head = 1.0;
    r.outside_event = true;
    CHECK(contouring_reason(r) == "outside-synoptic-window");
    r.flags = {"pumping"};
    CHECK(contouring_reason(r) == "pumping");
    CHECK(flag_rank("outside-synoptic-window") == head_flags().size());
  }
}

TEST_CASE("heads --strict with an event does not fail on readings outside its window",
          "[heads][cli][flags]") {
  // Regression: every reading outside the synoptic window (information, not a
  // defect) made `heads --strict --event` exit 3 on clean data, so `run
  // --strict` with an event always failed.
  OneWellFiles files;
  const std::string readings = "W1,2020-03-01T08:00Z,4.100\nW1,2020-06-10T08:00Z,4.200\n";
  std::vector<std::string> args = files.heads_args(readings, "clean");
  args.insert(args.end(), {"--event", "2020-06-10T12:00Z", "--strict"});
  const auto clean = levelhead::testing::run_cli(args);
  INFO(clean.err);
  CHECK(clean.code == 0);
  const std::string heads_csv =
      levelhead::testing::read_file(files.tmp.path() / "clean" / "heads.csv");
  CHECK_THAT(heads_csv, Catch::Matchers::Contains(",no,outside-synoptic-window,no,"));
  CHECK_THAT(heads_csv, Catch::Matchers::Contains(",yes,,yes,"));
  const auto summary = nlohmann::json::parse(
      levelhead::testing::read_file(files.tmp.path() / "clean" / "summary.json"));
  CHECK(summary["event"]["readings_in_window"] == 1);
  // A flag that needs a look still fails: a negative depth without `flowing`.
  args = files.heads_args(readings + "W1,2020-06-10T09:00Z,-0.2\n", "flagged");
  args.insert(args.end(), {"--event", "2020-06-10T12:00Z", "--strict"});
  CHECK(levelhead::testing::run_cli(args).code == 3);
}

TEST_CASE("heads --keep-going sets bad readings aside and finishes with status 4",
          "[heads][cli][rejects]") {
  OneWellFiles files;
  const std::string readings =
      "W1,2020-03-01T08:00Z,4.100\n"
      "W9,2020-03-02T08:00Z,4.150\n"
      "W1,2020-03-03T08:00Z,deep\n"
      "W1,2020-03-04T08:00Z,4.200\n";
  SECTION("without it the first bad reading stops the stage, nothing written") {
    const auto run = levelhead::testing::run_cli(files.heads_args(readings, "stop"));
    CHECK(run.code == 1);
    CHECK_THAT(run.err, Catch::Matchers::Contains("row 3"));
    CHECK_FALSE(std::filesystem::exists(files.tmp.path() / "stop"));
  }
  SECTION("with it the others are processed and the rejects listed") {
    std::vector<std::string> args = files.heads_args(readings, "going");
    args.push_back("--keep-going");
    const auto run = levelhead::testing::run_cli(args);
    CHECK(run.code == 4);
    CHECK_THAT(run.err, Catch::Matchers::Contains("2 reading(s) set aside in rejects.csv"));
    const fs::path out = files.tmp.path() / "going";
    const std::string rejects = levelhead::testing::read_file(out / "rejects.csv");
    CHECK_THAT(rejects, Catch::Matchers::StartsWith("file,row,column,problem\n"));
    CHECK_THAT(rejects, Catch::Matchers::Contains(",3,well,") &&
                            Catch::Matchers::Contains("this well is not in the wells table"));
    CHECK_THAT(rejects,
               Catch::Matchers::Contains(",4,depth,") && Catch::Matchers::Contains("'deep'"));
    const std::string heads = levelhead::testing::read_file(out / "heads.csv");
    CHECK(std::count(heads.begin(), heads.end(), '\n') == 3);  // header and the two good rows
  }
}

TEST_CASE("heads.gpkg is typed as a GIS expects, with NULLs and the layer's metadata",
          "[heads][gpkg]") {
  OneWellFiles files;
  std::vector<std::string> args =
      files.heads_gpkg_args("W1,2020-03-01T08:00-06:00,4.100\nW1,2020-06-10T08:00Z,dry\n", "typed");
  args.insert(args.end(), {"--event", "2020-06-10T12:00Z", "--compound-crs"});
  const auto run = levelhead::testing::run_cli(args);
  INFO(run.err);
  REQUIRE(run.code == 0);
  GDALDatasetH gpkg = open_heads_gpkg(files.tmp.path() / "typed");
  OGRLayerH layer = GDALDatasetGetLayerByName(gpkg, "heads");
  REQUIRE(layer);
  OGRFeatureDefnH defn = OGR_L_GetLayerDefn(layer);
  const auto field = [&](const char* name) {
    const int i = OGR_FD_GetFieldIndex(defn, name);
    REQUIRE(i >= 0);
    return OGR_FD_GetFieldDefn(defn, i);
  };
  CHECK(OGR_Fld_GetType(field("time_utc")) == OFTDateTime);
  CHECK(OGR_Fld_GetType(field("head")) == OFTReal);
  CHECK(OGR_Fld_GetSubType(field("contour")) == OFSTBoolean);
  CHECK(OGR_Fld_GetSubType(field("in_event")) == OFSTBoolean);
  CHECK_THAT(std::string(GDALGetMetadataItem(layer, "DESCRIPTION", nullptr)),
             Catch::Matchers::Contains("EPSG:5703") && Catch::Matchers::Contains("(m)"));
  // The compound CRS: UTM 13N + NAVD88 height.
  OGRSpatialReferenceH srs = OGR_L_GetSpatialRef(layer);
  REQUIRE(srs);
  CHECK(OSRIsCompound(srs));
  // First reading: a head, no state (NULL), outside the event; second: dry, no head.
  OGR_L_ResetReading(layer);
  OGRFeatureH first = OGR_L_GetNextFeature(layer);
  OGRFeatureH second = OGR_L_GetNextFeature(layer);
  REQUIRE(first);
  REQUIRE(second);
  const auto index = [&](const char* name) { return OGR_FD_GetFieldIndex(defn, name); };
  CHECK(OGR_F_IsFieldNull(first, index("state")));
  CHECK_FALSE(OGR_F_IsFieldNull(first, index("head")));
  CHECK(OGR_F_GetFieldAsInteger(first, index("in_event")) == 0);
  int y = 0, mo = 0, d = 0, h = 0, mi = 0, tz = 0;
  float s = 0;
  REQUIRE(OGR_F_GetFieldAsDateTimeEx(first, index("time_utc"), &y, &mo, &d, &h, &mi, &s, &tz));
  CHECK((y == 2020 && mo == 3 && d == 1 && h == 14 && mi == 0 && tz == 100));  // 08:00-06:00
  CHECK(OGR_F_IsFieldNull(second, index("head")));
  CHECK(std::string(OGR_F_GetFieldAsString(second, index("state"))) == "dry");
  // Both readings at the well's position (one point object is reused for all).
  for (OGRFeatureH f : {first, second}) {
    OGRGeometryH point = OGR_F_GetGeometryRef(f);
    REQUIRE(point);
    CHECK(OGR_G_GetX(point, 0) == Approx(500000.0).margin(1e-6));
    CHECK(OGR_G_GetY(point, 0) == Approx(4400000.0).margin(1e-6));
  }
  // Each reading gets its own row id, and the second's unset fields stay NULL
  // although the first filled them.
  CHECK(OGR_F_GetFID(first) != OGR_F_GetFID(second));
  CHECK(OGR_F_IsFieldNull(second, index("sigma")));
  CHECK(OGR_F_GetFieldAsInteger(second, index("contour")) == 0);
  OGR_F_Destroy(first);
  OGR_F_Destroy(second);
  GDALClose(gpkg);
}

// heads.gpkg is written by a thread of its own, batch by batch: every
// reading must arrive once and in order, and a bad row after some batches
// have been written must stop it all and leave nothing.
TEST_CASE("heads.gpkg holds every reading in order across batches, or nothing",
          "[heads][gpkg][safety]") {
  OneWellFiles files;
  const int readings = 10000;  // a few of the writer's batches
  const auto levels = [&](int bad_row) {
    std::string text;
    for (int i = 0; i < readings; ++i) {
      text += fmt::format("W1,{}T{:02d}:{:02d}Z,{}\n", i < 5000 ? "2020-03-01" : "2020-03-02",
                          (i % 5000) / 60 % 24, i % 60, i == bad_row ? "deep" : "4.000");
    }
    return text;
  };
  const auto run = levelhead::testing::run_cli(files.heads_gpkg_args(levels(-1), "all"));
  INFO(run.err);
  REQUIRE(run.code == 0);
  GDALDatasetH gpkg = open_heads_gpkg(files.tmp.path() / "all");
  OGRLayerH layer = GDALDatasetGetLayerByName(gpkg, "heads");
  REQUIRE(layer);
  CHECK(OGR_L_GetFeatureCount(layer, 1) == readings);
  // The time column in row order is the levels table's order.
  const int time = OGR_FD_GetFieldIndex(OGR_L_GetLayerDefn(layer), "time");
  OGR_L_ResetReading(layer);
  int in_order = 0;
  for (int i = 0; i < readings; ++i) {
    OGRFeatureH f = OGR_L_GetNextFeature(layer);
    REQUIRE(f);
    const std::string expected = fmt::format(
        "{}T{:02d}:{:02d}Z", i < 5000 ? "2020-03-01" : "2020-03-02", (i % 5000) / 60 % 24, i % 60);
    in_order += std::string(OGR_F_GetFieldAsString(f, time)) == expected;
    OGR_F_Destroy(f);
  }
  CHECK(in_order == readings);
  GDALClose(gpkg);

  const auto stopped = levelhead::testing::run_cli(files.heads_gpkg_args(levels(9000), "stopped"));
  CHECK(stopped.code == 1);
  CHECK_THAT(stopped.err, Catch::Matchers::Contains("row 9002"));
  CHECK_FALSE(std::filesystem::exists(files.tmp.path() / "stopped"));
}
