// Pressure transducers: compensation, checks, drift, rejections, clocks,
// barometric efficiency. Invented wells and records.

#include <fmt/format.h>

#include <catch2/catch.hpp>
#include <cmath>
#include <fstream>
#include <nlohmann/json.hpp>
#include <sstream>

#include "cli/app.hpp"
#include "levelhead/core/errors.hpp"
#include "levelhead/core/time.hpp"
#include "levelhead/heads/transducer.hpp"
#include "levelhead/heads/transducer_core.hpp"
#include "support/temp_folder.hpp"

using namespace levelhead;
using Catch::Matchers::Contains;
using Catch::Matchers::WithinAbs;

namespace {

// Pressure (kPa) of a water column of h metres at rho = 1000, standard gravity.
double kpa(double metres) { return metres * 1000.0 * 9.80665 / 1000.0; }

struct Bench {
  testing::TempFolder tmp;
  std::string wells = "id,x,y,ground\nW1,500000,4400000,100.0\n";
  std::string sensors;
  std::string records = "sensor,time,pressure\n";
  std::string levels = "well,time,depth\n";
  TransducerOptions options;
  std::optional<TimeZone> default_zone;  // --time-zone

  TransducerSummary run() {
    write("wells.csv", wells);
    write("sensors.csv", sensors);
    write("records.csv", records);
    write("levels.csv", levels);
    TimeReader times(default_zone);
    return reduce_transducers(read_wells(read_table(tmp.path() / "wells.csv")),
                              read_table(tmp.path() / "sensors.csv"), tmp.path() / "records.csv",
                              TableOptions{}, read_table(tmp.path() / "levels.csv"), options, times,
                              tmp.path() / "out");
  }
  void write(const char* name, const std::string& text) {
    std::ofstream(tmp.path() / name) << text;
  }
  Table output(const char* name) { return read_table(tmp.path() / "out" / name); }
  // Hourly records of one sensor over `hours`, pressure from `p(hour)`.
  template <class F>
  void hourly(const std::string& sensor, int hours, F p) {
    for (int h = 0; h < hours; ++h)
      records += fmt::format("{},{},{:.6f}\n", sensor, format_utc(1.7e9 + h * 3600.0), p(h));
  }
  std::string at(double hour) { return format_utc(1.7e9 + hour * 3600.0); }
};

// Depth written for `well` at `time` in levels.csv, or NaN.
double depth_at(const Table& t, const std::string& time) {
  for (std::size_t r = 0; r < t.row_count(); ++r) {
    if (t.cell(r, *t.find_column("time")) == time) return *t.number(r, *t.find_column("depth"));
  }
  return NAN;
}
std::string flags_at(const Table& t, const std::string& time) {
  for (std::size_t r = 0; r < t.row_count(); ++r) {
    if (t.cell(r, *t.find_column("time")) == time)
      return std::string(t.cell(r, *t.find_column("flags")));
  }
  return "?";
}

}  // namespace

TEST_CASE("a vented sensor: depth from hung depth and pressure, drift corrected between checks",
          "[transducer]") {
  // Sensor hung 20 m below the measuring point under a steady 8 m of water:
  // depth 12 m. The tape says 12.000 at hour 0 and 12.010 at hour 100 (the
  // sensor drifted 10 mm): the offset runs linearly from 0 to +0.010.
  Bench b;
  b.sensors = "sensor,kind,well,hung_depth,range_kpa\nT1,vented,W1,20.0,200\n";
  b.hourly("T1", 101, [](int) { return kpa(8.0); });
  b.levels += b.at(0).insert(0, "W1,") + ",12.000\n" + b.at(100).insert(0, "W1,") + ",12.010\n";
  const TransducerSummary s = b.run();
  REQUIRE(s.sensors.size() == 1);
  CHECK(s.sensors[0].checks == 2);
  CHECK_THAT(s.sensors[0].largest_drift, WithinAbs(0.010, 1e-9));
  const Table levels = b.output("levels.csv");
  CHECK(levels.row_count() ==
        2 + 99);  // the two manual readings, the samples at their times left out
  CHECK_THAT(depth_at(levels, b.at(50)), WithinAbs(12.005, 1e-6));
  CHECK_THAT(depth_at(levels, b.at(25)), WithinAbs(12.0025, 1e-6));
  CHECK(flags_at(levels, b.at(50)).empty());
}

TEST_CASE("drift beyond the limit is flagged and left uncorrected", "[transducer]") {
  Bench b;
  b.sensors = "sensor,kind,well,hung_depth\nT1,vented,W1,20.0\n";
  b.hourly("T1", 101, [](int) { return kpa(8.0); });
  b.levels += "W1," + b.at(0) + ",12.000\nW1," + b.at(100) + ",12.050\n";  // 50 mm > 30 mm
  b.run();
  const Table levels = b.output("levels.csv");
  CHECK_THAT(depth_at(levels, b.at(50)),
             WithinAbs(12.000, 1e-6));  // the earlier offset, not a guess
  CHECK_THAT(flags_at(levels, b.at(50)), Contains("transducer-drift-rejected"));
  const Table checks = b.output("checks.csv");
  CHECK(checks.cell(0, *checks.find_column("rejected_until_next")) == "yes");
}

TEST_CASE("an absolute sensor is compensated by its barometer; a gap is a flag", "[transducer]") {
  // Air 101.3 kPa, rising 0.1 kPa an hour; the absolute sensor reads air +
  // 8 m of water. The barometer misses hours 40-49 (a gap of 11 h).
  Bench b;
  b.sensors =
      "sensor,kind,well,hung_depth,barometer,x,y,elevation\nT1,absolute,W1,20.0,B1,,,\n"
      "B1,barometer,,,,500500,4400500,110.0\n";
  b.hourly("T1", 100, [](int h) { return 101.3 + 0.1 * h + kpa(8.0); });
  for (int h = 0; h < 100; ++h) {
    if (h < 40 || h >= 50) b.records += fmt::format("B1,{},{:.6f}\n", b.at(h), 101.3 + 0.1 * h);
  }
  const TransducerSummary s = b.run();
  CHECK(s.sensors[0].flags.at("baro-gap") == 10);
  const Table levels = b.output("levels.csv");
  CHECK(levels.row_count() == 90);
  CHECK_THAT(depth_at(levels, b.at(30)), WithinAbs(12.0, 1e-6));
  CHECK(std::isnan(depth_at(levels, b.at(45))));
  CHECK_THAT(flags_at(levels, b.at(30)), Contains("transducer-unchecked"));
}

TEST_CASE("a barometer too far or too high is refused, naming the sensor row", "[transducer]") {
  Bench b;
  b.hourly("T1", 3, [](int) { return 110.0; });
  SECTION("distance") {
    b.sensors =
        "sensor,kind,well,hung_depth,barometer,x,y,elevation\nT1,absolute,W1,20.0,B1,,,\n"
        "B1,barometer,,,,530000,4400000,100.0\n";
    CHECK_THROWS_WITH(b.run(), Contains("sensors.csv") && Contains("row 2") && Contains("30000 m"));
  }
  SECTION("elevation") {
    b.sensors =
        "sensor,kind,well,hung_depth,barometer,x,y,elevation\nT1,absolute,W1,20.0,B1,,,\n"
        "B1,barometer,,,,500100,4400000,450.0\n";
    CHECK_THROWS_WITH(b.run(), Contains("350 m above or below"));
  }
}

TEST_CASE("readings outside the sensor's range or out of the water are rejected", "[transducer]") {
  Bench b;
  b.sensors = "sensor,kind,well,hung_depth,range_kpa\nT1,vented,W1,20.0,100\n";
  b.records += "T1," + b.at(0) + "," + std::to_string(kpa(8.0)) + "\nT1," + b.at(1) +
               ",120.0\nT1," + b.at(2) + ",-1.5\n";
  const TransducerSummary s = b.run();
  const Table levels = b.output("levels.csv");
  CHECK(levels.row_count() == 1);  // no depth is written for the two bad readings
  CHECK(s.sensors[0].flags.at("transducer-range-rejected") == 2);
  const Table qa = b.output("qa.csv");
  REQUIRE(qa.row_count() == 2);
  CHECK(qa.cell(0, *qa.find_column("flag")) == "transducer-range-rejected");
  CHECK(qa.cell(0, *qa.find_column("row")) == "3");  // the records table's row

  SECTION("without a range, a negative water pressure means the sensor is out of the water") {
    b.sensors = "sensor,kind,well,hung_depth\nT1,vented,W1,20.0\n";
    const TransducerSummary dry = b.run();
    CHECK(dry.sensors[0].flags.at("transducer-dry-rejected") == 1);
    CHECK(b.output("levels.csv").row_count() == 2);
  }
}

TEST_CASE("logger clocks in a local zone are brought to UTC (column under its earlier name)",
          "[transducer]") {
  Bench b;
  b.sensors = "sensor,kind,well,hung_depth,utc_offset\nT1,vented,W1,20.0,-06:00\n";
  b.records += "T1,2026-01-15T06:00:00," + std::to_string(kpa(8.0)) + "\n";
  b.run();
  CHECK_THAT(depth_at(b.output("levels.csv"), "2026-01-15T12:00:00Z"), WithinAbs(12.0, 1e-6));
}

TEST_CASE("a logger on daylight-saving time across the night the clocks go back",
          "[transducer][time]") {
  // America/Chicago leaves CDT (-05:00) for CST (-06:00) on 2026-11-01 at
  // 02:00 local (US rule since 2007, first Sunday of November; tz database).
  // The logger writes 00:30, 01:30, 01:30 again, 02:30: the second 01:30 is
  // an hour after the first, told apart by the record order.
  Bench b;
  b.sensors = "sensor,kind,well,hung_depth,time_zone\nT1,vented,W1,20.0,America/Chicago\n";
  for (const char* local : {"00:30", "01:30", "01:30", "02:30"})
    b.records += fmt::format("T1,2026-11-01T{}:00,{:.6f}\n", local, kpa(8.0));
  // A tape reading in local time, the levels table declared in the same zone
  // (as a default zone): written back with its offset.
  b.default_zone = TimeZone::find("America/Chicago");
  b.levels += "W1,2026-10-31T12:00,12.000\n";
  const TransducerSummary s = b.run();
  CHECK(s.sensors[0].records == 4);
  const Table levels = b.output("levels.csv");
  for (const char* utc : {"2026-11-01T05:30:00Z", "2026-11-01T06:30:00Z", "2026-11-01T07:30:00Z",
                          "2026-11-01T08:30:00Z"}) {
    INFO(utc);
    CHECK_THAT(depth_at(levels, utc), WithinAbs(12.0, 1e-6));
  }
  CHECK_THAT(depth_at(levels, "2026-10-31T12:00:00-05:00"), WithinAbs(12.0, 1e-9));
  CHECK(s.zoneless_times.at("America/Chicago") == 5);

  SECTION("a zone-less tape reading among zoned ones, with no zone declared, stops the stage") {
    b.default_zone.reset();
    b.sensors = "sensor,kind,well,hung_depth\nT1,vented,W1,20.0\n";
    b.records = "sensor,time,pressure\nT1,2026-10-31T17:00:00Z," + std::to_string(kpa(8.0)) + "\n";
    CHECK_THROWS_WITH(b.run(), Contains("levels.csv, row 2, column 'time'") &&
                                   Contains("has no zone") && Contains("records.csv, row 2"));
    // The earlier run's output stays as it was.
    CHECK_THAT(depth_at(b.output("levels.csv"), "2026-10-31T12:00:00-05:00"),
               WithinAbs(12.0, 1e-9));
  }
}

TEST_CASE("a sensor without a hung depth is calibrated on the first tape reading", "[transducer]") {
  Bench b;
  b.sensors = "sensor,kind,well\nT1,vented,W1\n";
  b.hourly("T1", 10, [](int h) { return kpa(8.0 - 0.01 * h); });  // water falls 10 mm an hour
  b.levels += "W1," + b.at(0) + ",12.000\n";
  const TransducerSummary s = b.run();
  CHECK(s.sensors[0].calibrated);
  CHECK_THAT(*s.sensors[0].hung_depth, WithinAbs(20.0, 1e-9));
  CHECK_THAT(depth_at(b.output("levels.csv"), b.at(5)), WithinAbs(12.05, 1e-6));

  SECTION("and without any reading it is an error") {
    b.levels = "well,time,depth\n";
    CHECK_THROWS_WITH(b.run(), Contains("no hung depth"));
  }
}

TEST_CASE("barometric efficiency from paired changes", "[transducer]") {
  // Invented confined well: the depth to water follows 0.6 of the
  // barometric change (as water height) plus a slow decline.
  Bench b;
  b.sensors =
      "sensor,kind,well,hung_depth,barometer,x,y,elevation\nT1,vented,W1,20.0,B1,,,\n"
      "B1,barometer,,,,500100,4400000,100.0\n";
  const auto air = [](int h) {
    return 101.3 + 0.8 * std::sin(h * 0.26) + 0.3 * std::sin(h * 0.07);
  };
  b.hourly("B1", 200, air);
  b.hourly("T1", 200, [&](int h) {
    const double baro_m = (air(h) - 101.3) * 1000.0 / (1000.0 * 9.80665);
    return kpa(8.0 - 0.6 * baro_m - 0.0001 * h);
  });
  const TransducerSummary s = b.run();
  REQUIRE(s.sensors[0].efficiency);
  CHECK_THAT(s.sensors[0].efficiency->value, WithinAbs(0.6, 0.01));
  CHECK(s.sensors[0].efficiency->pairs == 199);
}

TEST_CASE("transducer levels feed heads: rejected readings are not contoured",
          "[transducer][cli]") {
  Bench b;
  b.sensors = "sensor,kind,well,hung_depth\nT1,vented,W1,20.0\n";
  b.hourly("T1", 101, [](int) { return kpa(8.0); });
  b.levels += "W1," + b.at(0) + ",12.000\nW1," + b.at(100) + ",12.050\n";
  b.run();
  b.write("mp.csv", "well,valid_from,height,datum,sigma\nW1,2020-01-01,101.000,EPSG:5703,0.003\n");
  std::ostringstream out, err;
  const int code = levelhead::cli::run(
      {"levelhead", "heads", "--wells", (b.tmp.path() / "wells.csv").string(), "--measuring-points",
       (b.tmp.path() / "mp.csv").string(), "--levels",
       (b.tmp.path() / "out" / "levels.csv").string(), "--target", "EPSG:5703", "--crs",
       "EPSG:32613", "--out", (b.tmp.path() / "heads").string(), "--no-gpkg"},
      out, err);
  INFO(err.str());
  REQUIRE(code == 0);
  const Table heads = read_table(b.tmp.path() / "heads" / "heads.csv");
  std::size_t rejected = 0;
  for (std::size_t r = 0; r < heads.row_count(); ++r) {
    if (heads.cell(r, *heads.find_column("reason")) == "transducer-drift-rejected") {
      ++rejected;
      CHECK(heads.cell(r, *heads.find_column("contour")) == "no");
    }
  }
  CHECK(rejected == 99);
}

TEST_CASE("keep_going sets bad records and manual readings aside in rejects.csv",
          "[transducer][rejects]") {
  Bench b;
  b.sensors = "sensor,kind,well,hung_depth\nT1,vented,W1,20.0\n";
  b.hourly("T1", 24, [](int) { return kpa(15.0); });
  b.records += "T9," + b.at(30) + ",150.0\n";  // a sensor not in the sensors table
  b.records += "T1," + b.at(31) + ",high\n";   // a pressure in words
  b.levels += "W1," + b.at(2) + ",5.000\n";
  b.levels += "W1," + b.at(3) + ",five\n";  // a depth in words
  SECTION("without it the first bad row stops the stage") { CHECK_THROWS_AS(b.run(), InputError); }
  SECTION("with it the others are reduced and each reject is named") {
    b.options.keep_going = true;
    const TransducerSummary s = b.run();
    CHECK(s.rejected == 3);
    const Table rejects = b.output("rejects.csv");
    REQUIRE(rejects.row_count() == 3);
    CHECK(rejects.cell(0, *rejects.find_column("column")) == "sensor");
    CHECK(rejects.cell(1, *rejects.find_column("column")) == "pressure");
    CHECK(rejects.cell(2, *rejects.find_column("column")) == "depth");
    // The good manual reading checks the sensor; the bad one is not passed on.
    CHECK(s.sensors.at(0).checks == 1);
    CHECK(s.manual == 2);
    const Table levels = b.output("levels.csv");
    for (std::size_t r = 0; r < levels.row_count(); ++r)
      CHECK(levels.cell(r, *levels.find_column("depth")) != "five");
  }
}

TEST_CASE("the transducer core: drift between checks and the correction of a reading",
          "[transducer][core]") {
  // Invented checks: offsets 10, 30 and 31 mm at t = 0, 1000 and 2000 s.
  namespace td = levelhead::transducer;
  td::SensorChecks c;
  c.checks = {{0.0, 5.0, 4.990, 0.010}, {1000.0, 5.0, 4.970, 0.030}, {2000.0, 5.0, 4.969, 0.031}};
  // Drifts 20 mm and 1 mm: only the first interval exceeds a 15 mm limit.
  CHECK_THAT(td::mark_drift(c, 0.015), WithinAbs(0.020, 1e-12));
  CHECK(c.rejected_after == std::vector<bool>{true, false, false});
  std::size_t interval = 0;
  const double gap = 3600.0;
  const auto at = [&](double time, unsigned& flags) {
    return td::correction_at(time, c, gap, interval, flags);
  };
  unsigned flags = 0;
  CHECK_THAT(at(-4000.0, flags), WithinAbs(0.010, 1e-15));  // more than the gap before
  CHECK(flags == td::beyond_checks);
  flags = 0;
  CHECK_THAT(at(-10.0, flags), WithinAbs(0.010, 1e-15));  // within the gap: the first offset
  CHECK(flags == 0);
  CHECK_THAT(at(500.0, flags), WithinAbs(0.010, 1e-15));  // a rejected interval keeps the earlier
  CHECK(flags == td::drift_rejected);
  flags = 0;
  // A quarter of the way from 1000 to 2000 s: 0.030 + 0.25 * 0.001 = 0.03025 m.
  CHECK_THAT(at(1250.0, flags), WithinAbs(0.03025, 1e-15));
  CHECK(flags == 0);
  CHECK_THAT(at(6000.0, flags), WithinAbs(0.031, 1e-15));  // beyond the last, past the gap
  CHECK(flags == td::beyond_checks);
  td::SensorChecks none;
  std::size_t from = 0;
  flags = 0;
  CHECK_THAT(td::correction_at(10.0, none, gap, from, flags), WithinAbs(0.0, 1e-15));
  CHECK(flags == td::unchecked);
}

TEST_CASE("a barometric efficiency is written to the digits its sigma carries", "[transducer]") {
  CHECK(BarometricEfficiency{6.2e-5, 0.00091, 100}.text() == "0.00006 +- 0.00091");
  CHECK(BarometricEfficiency{0.62, 0.031, 100}.text() == "0.620 +- 0.031");
}

// The records are held back per sensor and the readings per well until
// levels.csv is written: the table must still come out by well, then time,
// with two sensors of a well at one time in id order, however the archive
// interleaves them. A sensor reading at a tape's time gives way to the tape.
TEST_CASE("levels.csv is ordered by well and time, whatever the order of the records",
          "[transducer]") {
  Bench b;
  b.wells += "W2,500050,4400000,100.0\n";
  // A and C in W2, B in W1: W1's sensor sits between W2's in id order. Each
  // sensor's sigma tells its rows apart in levels.csv.
  b.sensors =
      "sensor,kind,well,hung_depth,range_kpa,sigma\n"
      "A,vented,W2,20.0,200,0.01\nB,vented,W1,20.0,200,0.03\nC,vented,W2,20.0,200,0.02\n";
  b.options.manual_window_hours = 0.0;  // only readings at a tape's very time give way
  // Records interleaved across sensors, C's hours given backwards.
  for (int h = 0; h < 6; ++h) {
    b.records += fmt::format("B,{},{:.6f}\n", b.at(h), kpa(8.0));
    b.records += fmt::format("A,{},{:.6f}\n", b.at(h), kpa(7.0));
    b.records += fmt::format("C,{},{:.6f}\n", b.at(5 - h), kpa(6.0));
  }
  b.levels += "W2," + b.at(3) + ",13.000\nW1," + b.at(3) + ",12.000\nW2," + b.at(0) + ",13.000\n";
  b.run();
  const Table levels = b.output("levels.csv");
  std::vector<std::string> order;
  for (std::size_t r = 0; r < levels.row_count(); ++r) {
    const bool tape = levels.cell(r, *levels.find_column("method")).empty();
    order.push_back(fmt::format("{} {} {}", levels.cell(r, *levels.find_column("well")),
                                levels.cell(r, *levels.find_column("time")),
                                tape ? "tape" : levels.cell(r, *levels.find_column("sigma"))));
  }
  std::vector<std::string> expected;
  const auto add = [&](const char* well, int hour, const char* what) {
    expected.push_back(fmt::format("{} {} {}", well, b.at(hour), what));
  };
  for (int h = 0; h < 6; ++h) {
    add("W1", h, h == 3 ? "tape" : "0.0300");  // B
  }
  for (int h = 0; h < 6; ++h) {
    if (h == 0 || h == 3) {
      add("W2", h, "tape");
      continue;
    }
    add("W2", h, "0.0100");  // A
    add("W2", h, "0.0200");  // C
  }
  CHECK(order == expected);
}
