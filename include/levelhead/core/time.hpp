#pragma once
// ISO 8601 dates and times, time zones, and the rule for times written
// without a zone.
//
// Accepted: YYYY-MM-DD, YYYY-MM-DDTHH:MM, YYYY-MM-DDTHH:MM:SS[.fff] (a space
// may replace the T), optionally followed by Z or +HH:MM / -HH:MM (also +HHMM,
// +HH). A time with a zone is converted to UTC.
//
// A time without a zone (a logger on local time, a spreadsheet's date-time
// cell) is read in the zone declared for it: a logger's zone, a table's zone,
// else the default zone of the command. Zones are fixed offsets (-06:00, UTC)
// or IANA names (America/Chicago) whose offset follows daylight saving, from
// the system's tz database. Without any declared zone such a time is read as
// UTC, but only while no other time of the command carries a zone or was read
// in a declared one: mixing both is an error, since the zone-less ones would
// silently shift by the site's offset.
//
// A date alone (YYYY-MM-DD) names a day: it begins at midnight of the
// declared zone (UTC when none) and never counts as mixing.

#include <cstddef>
#include <map>
#include <optional>
#include <string>
#include <string_view>

#include "levelhead/core/errors.hpp"

namespace date {
class time_zone;
}

namespace levelhead {

struct Instant {
  double seconds = 0.0;   // since 1970-01-01T00:00:00Z (proleptic Gregorian)
  bool had_zone = false;  // the text carried a zone
  bool had_time = false;  // the text had a time of day (not a date alone)
};

// nullopt when the text is not a valid date or time (the caller names the cell).
// A zone-less text is returned as if it were UTC: its wall-clock reading.
std::optional<Instant> parse_iso8601(std::string_view text);

// "2026-10-06T08:30:00Z"
std::string format_utc(double seconds);
// "2026-10-06T02:30:00-06:00": the wall-clock time at `offset` seconds east of UTC.
std::string format_with_offset(double utc_seconds, double offset);

// The UTC instants a wall-clock reading of a zone stands for.
struct LocalTimeMatch {
  enum class Kind { unique, ambiguous, nonexistent };
  Kind kind = Kind::unique;
  // UTC seconds. Unique: both equal. Ambiguous (clocks set back): the first
  // and the second passage. Nonexistent (clocks set forward): both are the
  // instant of the change.
  double earliest = 0.0, latest = 0.0;
  double earliest_offset = 0.0, latest_offset = 0.0;  // s east of UTC
};

// A clock's zone: UTC, a fixed offset from UTC, or an IANA zone.
class TimeZone {
 public:
  // "UTC", "Z", "+02:00", "-0600", "-06", or an IANA name such as
  // "America/Chicago" or "Etc/GMT+6"; nullopt when it is none of these.
  static std::optional<TimeZone> find(std::string_view text);
  static TimeZone utc();

  // As a person reads it: "-06:00", "UTC", "America/Chicago".
  const std::string& name() const { return name_; }
  // The UTC instants of a wall-clock reading (seconds since 1970 as if UTC).
  LocalTimeMatch match(double local_seconds) const;
  // Seconds east of UTC at a UTC instant.
  double offset_at(double utc_seconds) const;

 private:
  std::string name_;
  double fixed_offset_ = 0.0;              // s east of UTC, when zone_ is null
  const date::time_zone* zone_ = nullptr;  // owned by the tz database
};

// The zones declared for a command's times, and the record of how its
// zone-less times were read (the audit of summary.json).
//
// read() converts one cell to UTC. A zone in the text wins. Otherwise the
// zone given (a logger's or a table's), else the default. An ambiguous
// wall-clock time (the hour repeated when clocks are set back) is resolved
// by `not_before`, the UTC time of the previous record of the same logger:
// its first passage unless that is not after the previous record. Without
// `not_before` an ambiguous time is an error, as is a time that does not
// exist in the zone (clocks set forward).
// Errors: InputError naming `where` for a bad text, an ambiguous or
//   nonexistent local time; require_consistent_zones() for a zone-less time
//   read as UTC while another time of the command had a zone (naming both).
class TimeReader {
 public:
  explicit TimeReader(std::optional<TimeZone> default_zone = std::nullopt);

  double read(std::string_view text, const CellLocation& where, const TimeZone* zone = nullptr,
              std::optional<double> not_before = std::nullopt);

  // After every time of the command is read: the error for a zone-less time
  // read as UTC while another time had a zone.
  void require_consistent_zones() const;

  const std::optional<TimeZone>& default_zone() const { return default_zone_; }
  // Zone-less times (not dates alone) read, by the zone they were read in
  // ("UTC (none declared)" when none was).
  const std::map<std::string, std::size_t>& zoneless_read_in() const { return zoneless_; }

 private:
  std::optional<TimeZone> default_zone_;
  std::map<std::string, std::size_t> zoneless_;
  std::optional<CellLocation> first_zoned_, first_undeclared_;
  std::string first_zoned_text_, first_undeclared_text_;
};

// The name zoneless_read_in() uses for times read as UTC for want of a zone.
inline constexpr const char* undeclared_zone_name = "UTC (none declared)";

}  // namespace levelhead
