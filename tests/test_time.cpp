#include <catch2/catch.hpp>

#include "levelhead/core/time.hpp"

using namespace levelhead;
using Catch::Matchers::Contains;
using Catch::Matchers::WithinAbs;

TEST_CASE("ISO 8601 dates and times, with and without zones", "[time]") {
  // 2000-01-01T00:00:00Z is 946684800 s after the Unix epoch (common knowledge
  // of Unix time: 10957 days * 86400 s).
  CHECK_THAT(parse_iso8601("2000-01-01")->seconds, WithinAbs(946684800.0, 1e-6));
  CHECK_THAT(parse_iso8601("2000-01-01T01:30:15.5Z")->seconds,
             WithinAbs(946684800.0 + 5415.5, 1e-6));
  CHECK_THAT(parse_iso8601("2000-01-01T02:00+02:00")->seconds, WithinAbs(946684800.0, 1e-6));
  CHECK_THAT(parse_iso8601("1999-12-31 19:00-0500")->seconds, WithinAbs(946684800.0, 1e-6));
  CHECK(parse_iso8601("2000-01-01T02:00+02:00")->had_zone);
  CHECK_FALSE(parse_iso8601("2000-01-01T02:00")->had_zone);
  CHECK(format_utc(946684800.0 + 5415.0) == "2000-01-01T01:30:15Z");
  for (const char* bad :
       {"2021-02-30", "06/01/2021", "2021-06-01T25:00", "2021-06-01T10:00+2", "2021-06-01X", ""}) {
    INFO(bad);
    CHECK_FALSE(parse_iso8601(bad));
  }
}

TEST_CASE("signs inside a date or time are refused, not read as numbers", "[time][safety]") {
  // Each was once read as a valid time (a negative hour, second or zone part).
  for (const char* bad :
       {"2025-01-10T-1:30", "2025-01-10T08:00:-5", "2025-01-10T08:00+-1:-1", "2025-01-10T08:-1",
        "-025-01-10", "2025--1-10", "2025-01-+1", "2026-13-45", "45678"}) {
    INFO(bad);
    CHECK_FALSE(parse_iso8601(bad));
  }
}

namespace {
double utc(const char* text) { return parse_iso8601(text)->seconds; }
}  // namespace

TEST_CASE("time zones: fixed offsets and IANA zones with daylight saving", "[time]") {
  CHECK(TimeZone::find("-06:00")->name() == "-06:00");
  CHECK(TimeZone::find("+0530")->name() == "+05:30");
  CHECK(TimeZone::find("utc")->name() == "UTC");
  CHECK(TimeZone::find("America/Chicago")->name() == "America/Chicago");
  for (const char* bad : {"", "Mars/Olympus", "CST6", "+25:00", "06:00"}) {
    INFO(bad);
    CHECK_FALSE(TimeZone::find(bad));
  }
  // US daylight saving since 2007: from the second Sunday of March to the
  // first Sunday of November at 02:00 local (Energy Policy Act of 2005); in
  // 2026 from March 8 to November 1. Chicago: CST -06:00, CDT -05:00.
  const TimeZone chicago = *TimeZone::find("America/Chicago");
  CHECK_THAT(chicago.match(utc("2026-01-15T12:00")).earliest,
             WithinAbs(utc("2026-01-15T18:00Z"), 1e-6));
  CHECK_THAT(chicago.match(utc("2026-07-01T12:00")).earliest,
             WithinAbs(utc("2026-07-01T17:00Z"), 1e-6));
  CHECK_THAT(chicago.offset_at(utc("2026-07-01T17:00Z")), WithinAbs(-5 * 3600.0, 1e-9));

  const LocalTimeMatch gap = chicago.match(utc("2026-03-08T02:30"));
  CHECK(gap.kind == LocalTimeMatch::Kind::nonexistent);
  CHECK_THAT(gap.earliest, WithinAbs(utc("2026-03-08T08:00Z"), 1e-6));
  const LocalTimeMatch twice = chicago.match(utc("2026-11-01T01:30"));
  CHECK(twice.kind == LocalTimeMatch::Kind::ambiguous);
  CHECK_THAT(twice.earliest, WithinAbs(utc("2026-11-01T06:30Z"), 1e-6));
  CHECK_THAT(twice.latest, WithinAbs(utc("2026-11-01T07:30Z"), 1e-6));

  CHECK(format_with_offset(utc("2026-07-01T17:00Z"), -5 * 3600.0) == "2026-07-01T12:00:00-05:00");
}

TEST_CASE("times without a zone: declared zones, dates, and the mixing rule", "[time][safety]") {
  const CellLocation a{"levels.csv", 2, "time"}, b{"levels.csv", 3, "time"};
  SECTION("zone-less times alone are read as UTC, and counted so") {
    TimeReader times;
    CHECK_THAT(times.read("2026-07-01T12:00", a), WithinAbs(utc("2026-07-01T12:00Z"), 1e-6));
    CHECK_NOTHROW(times.require_consistent_zones());
    CHECK(times.zoneless_read_in().at(undeclared_zone_name) == 1);
  }
  SECTION("a zoned and a zone-less time with no zone declared: an error at the zone-less one") {
    TimeReader times;
    times.read("2026-07-01T12:00", a);
    times.read("2026-07-01T12:00-05:00", b);
    CHECK_THROWS_WITH(times.require_consistent_zones(),
                      Contains("levels.csv, row 2, column 'time'") && Contains("has no zone") &&
                          Contains("row 3") && Contains("--time-zone"));
  }
  SECTION("a default zone reads them in it, daylight saving included") {
    TimeReader times(TimeZone::find("America/Chicago"));
    CHECK_THAT(times.read("2026-07-01T12:00", a), WithinAbs(utc("2026-07-01T17:00Z"), 1e-6));
    CHECK_THAT(times.read("2026-01-15T12:00", a), WithinAbs(utc("2026-01-15T18:00Z"), 1e-6));
    times.read("2026-07-01T12:00Z", b);
    CHECK_NOTHROW(times.require_consistent_zones());
    CHECK(times.zoneless_read_in().at("America/Chicago") == 2);
  }
  SECTION("a table's or logger's zone wins over the default") {
    TimeReader times(TimeZone::find("UTC"));
    const TimeZone fixed = *TimeZone::find("-06:00");
    CHECK_THAT(times.read("2026-07-01T12:00", a, &fixed),
               WithinAbs(utc("2026-07-01T18:00Z"), 1e-6));
  }
  SECTION("a date alone begins at midnight of the zone and never counts as mixing") {
    TimeReader times(TimeZone::find("America/Chicago"));
    CHECK_THAT(times.read("2026-07-01", a), WithinAbs(utc("2026-07-01T05:00Z"), 1e-6));
    TimeReader plain;
    plain.read("2026-07-01", a);
    plain.read("2026-07-01T12:00-05:00", b);
    CHECK_NOTHROW(plain.require_consistent_zones());
  }
  SECTION("a local time the clocks skip or repeat") {
    TimeReader times(TimeZone::find("America/Chicago"));
    CHECK_THROWS_WITH(times.read("2026-03-08T02:30", a),
                      Contains("does not exist in America/Chicago") && Contains("-06:00"));
    CHECK_THROWS_WITH(times.read("2026-11-01T01:30", a),
                      Contains("occurs twice") && Contains("2026-11-01T01:30:00-05:00") &&
                          Contains("2026-11-01T01:30:00-06:00"));
    // In a logger's sequence: the first passage, then the second once the
    // clock has gone back.
    const double first = times.read("2026-11-01T01:45", a, nullptr, utc("2026-11-01T06:30Z"));
    CHECK_THAT(first, WithinAbs(utc("2026-11-01T06:45Z"), 1e-6));
    CHECK_THAT(times.read("2026-11-01T01:00", a, nullptr, first),
               WithinAbs(utc("2026-11-01T07:00Z"), 1e-6));
  }
}

TEST_CASE("a time read in a logger's declared zone counts as zoned for the mixing rule",
          "[time][safety]") {
  // Records in the logger's -06:00 and a tape reading with no zone: read as
  // UTC the tape would check the logger 6 h off.
  TimeReader times;
  const TimeZone logger = *TimeZone::find("-06:00");
  times.read("2026-07-01T06:00", CellLocation{"records.csv", 2, "time"}, &logger);
  times.read("2026-07-01T12:00", CellLocation{"levels.csv", 2, "time"});
  CHECK_THROWS_WITH(times.require_consistent_zones(), Contains("levels.csv, row 2") &&
                                                          Contains("records.csv, row 2") &&
                                                          Contains("read in -06:00"));
}
