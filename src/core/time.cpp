#include "levelhead/core/time.hpp"

#include <fmt/format.h>

#include <chrono>
#include <cmath>

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

std::string format_utc(double seconds) {
  const double whole_days = std::floor(seconds / 86400.0);
  const std::chrono::sys_days day{std::chrono::days(static_cast<long long>(whole_days))};
  const std::chrono::year_month_day ymd{day};
  long long rest = std::llround(seconds - whole_days * 86400.0);
  if (rest >= 86400) rest = 86399;  // a rounding at the last half second of the day
  return fmt::format("{:04d}-{:02d}-{:02d}T{:02d}:{:02d}:{:02d}Z", static_cast<int>(ymd.year()),
                     static_cast<unsigned>(ymd.month()), static_cast<unsigned>(ymd.day()),
                     rest / 3600, (rest / 60) % 60, rest % 60);
}

}  // namespace levelhead
