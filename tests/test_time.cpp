#include <catch2/catch.hpp>

#include "levelhead/core/time.hpp"

using namespace levelhead;
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
