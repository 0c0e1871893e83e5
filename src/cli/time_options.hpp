#pragma once
// Options shared by the commands that read times: --time-zone (the default
// zone of every time written without one) and --TABLE-time-zone (the zone of
// one table's zone-less times). Zones: levelhead/core/time.hpp.

#include <CLI/CLI.hpp>
#include <cstddef>
#include <map>
#include <optional>
#include <string>

#include "levelhead/core/time.hpp"

namespace levelhead::cli {

struct TimeZoneOptions {
  std::string default_zone;
  std::map<std::string, std::string> table_zones;  // table (levels, records) -> zone as given

  // Parsed; OptionError naming the option for a zone that is neither an
  // offset, UTC nor in the tz database.
  std::optional<TimeZone> default_time_zone() const;
  std::optional<TimeZone> table_time_zone(const std::string& table) const;
};

// --time-zone, and --TABLE-time-zone for each of `tables`.
void add_time_zone_options(CLI::App& command, TimeZoneOptions& zones,
                           const std::vector<std::string>& tables);

// "times without a zone: 3382 read in -06:00"; empty when there were none.
std::string zoneless_times_line(const std::map<std::string, std::size_t>& read_in);

}  // namespace levelhead::cli
