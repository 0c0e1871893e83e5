#pragma once
// ISO 8601 dates and times.
//
// Accepted: YYYY-MM-DD, YYYY-MM-DDTHH:MM, YYYY-MM-DDTHH:MM:SS[.fff] (a space
// may replace the T), optionally followed by Z or +HH:MM / -HH:MM (also +HHMM,
// +HH). Rule: a time with a zone is converted to UTC; a time without one is
// read as UTC. Give the zone when a logger kept local time.

#include <optional>
#include <string>
#include <string_view>

namespace levelhead {

struct Instant {
  double seconds = 0.0;   // since 1970-01-01T00:00:00Z (proleptic Gregorian)
  bool had_zone = false;  // the text carried a zone
};

// nullopt when the text is not a valid date or time (the caller names the cell).
std::optional<Instant> parse_iso8601(std::string_view text);

// "2026-10-06T08:30:00Z"
std::string format_utc(double seconds);

}  // namespace levelhead
