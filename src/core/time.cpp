#include "levelhead/core/time.hpp"

#include <date/tz.h>
#include <fmt/format.h>

#include <chrono>
#include <cmath>
#include <exception>
#include <utility>

#include "util/text.hpp"

namespace levelhead {

namespace {

// Exactly `count` decimal digits at `at` (no sign: from_chars would take
// "-1" as a two-character number, reading "T-1:30" as an hour of -1).
bool digits(std::string_view text, std::size_t at, std::size_t count, int& value) {
  if (at + count > text.size()) return false;
  value = 0;
  for (std::size_t i = at; i < at + count; ++i) {
    if (text[i] < '0' || text[i] > '9') return false;
    value = value * 10 + (text[i] - '0');
  }
  return true;
}

}  // namespace

std::optional<Instant> parse_iso8601(std::string_view t) {
  int year = 0, month = 0, day = 0, hour = 0, minute = 0, second = 0;
  if (!digits(t, 0, 4, year) || t.size() < 10 || t[4] != '-' || !digits(t, 5, 2, month) ||
      t[7] != '-' || !digits(t, 8, 2, day)) {
    return std::nullopt;
  }
  const std::chrono::year_month_day date{std::chrono::year(year), std::chrono::month(month),
                                         std::chrono::day(day)};
  if (!date.ok()) return std::nullopt;
  double fraction = 0.0;
  std::size_t p = 10;
  if (p < t.size() && (t[p] == 'T' || t[p] == ' ')) {
    if (!digits(t, p + 1, 2, hour) || p + 3 >= t.size() || t[p + 3] != ':' ||
        !digits(t, p + 4, 2, minute)) {
      return std::nullopt;
    }
    p += 6;
    if (p < t.size() && t[p] == ':') {
      if (!digits(t, p + 1, 2, second)) return std::nullopt;
      p += 3;
      if (p < t.size() && (t[p] == '.' || t[p] == ',')) {
        std::size_t q = p + 1;
        double scale = 0.1;
        while (q < t.size() && t[q] >= '0' && t[q] <= '9') {
          fraction += (t[q] - '0') * scale;
          scale /= 10.0;
          ++q;
        }
        if (q == p + 1) return std::nullopt;
        p = q;
      }
    }
    if (hour > 24 || minute > 59 || second > 60 || (hour == 24 && (minute || second))) {
      return std::nullopt;
    }
  }
  Instant out;
  out.had_time = p > 10;
  double offset = 0.0;
  if (p < t.size()) {
    if (t[p] == 'Z' && p + 1 == t.size()) {
      out.had_zone = true;
    } else if (t[p] == '+' || t[p] == '-') {
      int zh = 0, zm = 0;
      const int sign = t[p] == '+' ? 1 : -1;
      if (!digits(t, p + 1, 2, zh)) return std::nullopt;
      std::size_t q = p + 3;
      if (q < t.size() && t[q] == ':') ++q;
      if (q < t.size()) {
        if (!digits(t, q, 2, zm) || q + 2 != t.size()) return std::nullopt;
      }
      if (zh > 14 || zm > 59) return std::nullopt;
      offset = sign * (zh * 3600.0 + zm * 60.0);
      out.had_zone = true;
    } else {
      return std::nullopt;
    }
  }
  const auto days = std::chrono::sys_days(date).time_since_epoch().count();
  out.seconds = static_cast<double>(days) * 86400.0 + hour * 3600.0 + minute * 60.0 + second +
                fraction - offset;
  return out;
}

namespace {

// "2026-10-06T08:30:00" of seconds since 1970 (as if UTC).
std::string format_wall_clock(double seconds) {
  const double whole_days = std::floor(seconds / 86400.0);
  const std::chrono::sys_days day{std::chrono::days(static_cast<long long>(whole_days))};
  const std::chrono::year_month_day ymd{day};
  long long rest = std::llround(seconds - whole_days * 86400.0);
  if (rest >= 86400) rest = 86399;  // a rounding at the last half second of the day
  return fmt::format("{:04d}-{:02d}-{:02d}T{:02d}:{:02d}:{:02d}", static_cast<int>(ymd.year()),
                     static_cast<unsigned>(ymd.month()), static_cast<unsigned>(ymd.day()),
                     rest / 3600, (rest / 60) % 60, rest % 60);
}

// "+05:30", "-06:00" of seconds east of UTC.
std::string format_offset(double offset) {
  const long long minutes = std::llround(std::abs(offset) / 60.0);
  return fmt::format("{}{:02d}:{:02d}", offset < 0.0 ? '-' : '+', minutes / 60, minutes % 60);
}

}  // namespace

std::string format_utc(double seconds) { return format_wall_clock(seconds) + "Z"; }

std::string format_with_offset(double utc_seconds, double offset) {
  return format_wall_clock(utc_seconds + offset) + format_offset(offset);
}

std::optional<TimeZone> TimeZone::find(std::string_view text) {
  text = util::trim(text);
  if (text.empty()) return std::nullopt;
  if (text == "Z" || text == "z" || util::to_lower(text) == "utc") return utc();
  if (text.front() == '+' || text.front() == '-') {
    const auto zoned = parse_iso8601(fmt::format("2000-01-01T00:00{}", text));
    if (!zoned || !zoned->had_zone) return std::nullopt;
    TimeZone zone;
    zone.fixed_offset_ = 946684800.0 - zoned->seconds;  // local = UTC + offset
    zone.name_ = format_offset(zone.fixed_offset_);
    return zone;
  }
  try {
    TimeZone zone;
    zone.zone_ = date::locate_zone(std::string(text));
    zone.name_ = std::string(zone.zone_->name());
    return zone;
  } catch (const std::exception&) {
    return std::nullopt;  // not in the tz database
  }
}

TimeZone TimeZone::utc() {
  TimeZone zone;
  zone.name_ = "UTC";
  return zone;
}

// The tz database's local_info (Hinnant's date/tz library, the proposal
// adopted as C++20's std::chrono time-zone support).
LocalTimeMatch TimeZone::match(double local_seconds) const {
  LocalTimeMatch m;
  if (!zone_) {
    m.earliest = m.latest = local_seconds - fixed_offset_;
    m.earliest_offset = m.latest_offset = fixed_offset_;
    return m;
  }
  const date::local_seconds local{
      std::chrono::seconds(static_cast<long long>(std::floor(local_seconds)))};
  const date::local_info info = zone_->get_info(local);
  const auto offset = [](const date::sys_info& i) { return static_cast<double>(i.offset.count()); };
  m.earliest_offset = offset(info.first);
  m.latest_offset =
      info.result == date::local_info::unique ? m.earliest_offset : offset(info.second);
  switch (info.result) {
    case date::local_info::unique:
      m.earliest = m.latest = local_seconds - m.earliest_offset;
      break;
    case date::local_info::ambiguous:
      m.kind = LocalTimeMatch::Kind::ambiguous;
      m.earliest = local_seconds - m.earliest_offset;
      m.latest = local_seconds - m.latest_offset;
      break;
    default:  // nonexistent: the clocks jumped over it
      m.kind = LocalTimeMatch::Kind::nonexistent;
      m.earliest = m.latest = static_cast<double>(info.second.begin.time_since_epoch().count());
      break;
  }
  return m;
}

double TimeZone::offset_at(double utc_seconds) const {
  if (!zone_) return fixed_offset_;
  const date::sys_seconds at{std::chrono::seconds(static_cast<long long>(std::floor(utc_seconds)))};
  return static_cast<double>(zone_->get_info(at).offset.count());
}

TimeReader::TimeReader(std::optional<TimeZone> default_zone)
    : default_zone_(std::move(default_zone)) {}

double TimeReader::read(std::string_view text, const CellLocation& where, const TimeZone* zone,
                        std::optional<double> not_before) {
  const auto instant = parse_iso8601(text);
  if (!instant) {
    throw InputError(where, std::string(text),
                     "expected an ISO 8601 date or time, e.g. 2026-10-06, 2026-10-06T08:30 or "
                     "2026-10-06T08:30-06:00");
  }
  if (instant->had_zone) {
    if (!first_zoned_) {
      first_zoned_ = where;
      first_zoned_text_ = fmt::format("'{}'", text);
    }
    return instant->seconds;
  }
  const TimeZone* in = zone ? zone : (default_zone_ ? &*default_zone_ : nullptr);
  if (!instant->had_time) return in ? in->match(instant->seconds).earliest : instant->seconds;
  if (!in) {
    ++zoneless_[undeclared_zone_name];
    if (!first_undeclared_) {
      first_undeclared_ = where;
      first_undeclared_text_ = std::string(text);
    }
    return instant->seconds;
  }
  const LocalTimeMatch m = in->match(instant->seconds);
  if (m.kind == LocalTimeMatch::Kind::nonexistent) {
    throw InputError(where, std::string(text),
                     fmt::format("this local time does not exist in {}: the clocks were set "
                                 "forward at {}. A clock that stays on standard time all year is "
                                 "described by its fixed offset (e.g. {})",
                                 in->name(), format_with_offset(m.earliest, m.latest_offset),
                                 format_offset(m.earliest_offset)));
  }
  double utc = m.earliest;
  if (m.kind == LocalTimeMatch::Kind::ambiguous) {
    if (!not_before) {
      throw InputError(
          where, std::string(text),
          fmt::format("this local time occurs twice in {} (the clocks were set back): write it "
                      "with its offset, {} or {}",
                      in->name(), format_with_offset(m.earliest, m.earliest_offset),
                      format_with_offset(m.latest, m.latest_offset)));
    }
    if (m.earliest <= *not_before) utc = m.latest;  // the second passage of the hour
  }
  ++zoneless_[in->name()];
  if (!first_zoned_) {  // its UTC is known: it counts as a time with a zone
    first_zoned_ = where;
    first_zoned_text_ = fmt::format("{}, read in {}", text, in->name());
  }
  return utc;
}

void TimeReader::require_consistent_zones() const {
  if (!first_zoned_ || !first_undeclared_) return;
  throw InputError(
      *first_undeclared_, first_undeclared_text_,
      fmt::format("this time has no zone, but {} ({}) has one: read as UTC it would be off by "
                  "the clock's offset. Write the zone in the cell, or declare the zone of this "
                  "table (e.g. --levels-time-zone America/Chicago) or of every time without one "
                  "(--time-zone; [site] time_zone in a project)",
                  describe(*first_zoned_), first_zoned_text_));
}

}  // namespace levelhead
