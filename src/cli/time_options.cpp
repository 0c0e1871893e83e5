#include "cli/time_options.hpp"

#include <fmt/format.h>

#include <vector>

#include "levelhead/core/errors.hpp"

namespace levelhead::cli {

namespace {

std::optional<TimeZone> zone_option(const std::string& text, const std::string& option) {
  if (text.empty()) return std::nullopt;
  auto zone = TimeZone::find(text);
  if (!zone) {
    throw OptionError(fmt::format(
        "{} '{}' is not a time zone: give an IANA name such as America/Chicago (daylight saving "
        "followed), a fixed offset such as -06:00, or UTC",
        option, text));
  }
  return zone;
}

}  // namespace

std::optional<TimeZone> TimeZoneOptions::default_time_zone() const {
  return zone_option(default_zone, "--time-zone");
}

std::optional<TimeZone> TimeZoneOptions::table_time_zone(const std::string& table) const {
  const auto it = table_zones.find(table);
  return it == table_zones.end() ? std::nullopt
                                 : zone_option(it->second, "--" + table + "-time-zone");
}

void add_time_zone_options(CLI::App& command, TimeZoneOptions& zones,
                           const std::vector<std::string>& tables) {
  command.add_option("--time-zone", zones.default_zone,
                     "Zone of every time written without one (America/Chicago, -06:00, UTC); "
                     "without it such times are read as UTC, and only while no other time has "
                     "a zone");
  for (const std::string& table : tables) {
    command.add_option("--" + table + "-time-zone", zones.table_zones[table],
                       fmt::format("Zone of the {} table's times written without one (instead "
                                   "of --time-zone)",
                                   table));
  }
}

std::string zoneless_times_line(const std::map<std::string, std::size_t>& read_in) {
  if (read_in.empty()) return {};
  std::vector<std::string> parts;
  for (const auto& [zone, count] : read_in)
    parts.push_back(fmt::format("{} read in {}", count, zone));
  return fmt::format("times without a zone: {}", fmt::join(parts, ", "));
}

}  // namespace levelhead::cli
