#pragma once
// The "times" object of a summary.json: the zone rule, the zones declared
// and how many zone-less times were read in each (the audit of time.hpp).

#include <nlohmann/json.hpp>

#include "levelhead/core/time.hpp"

namespace levelhead::util {

inline nlohmann::json time_audit_json(const TimeReader& times) {
  return {{"rule",
           "a time with a zone is converted to UTC; one without is read in the zone declared "
           "for its logger or table, else the default zone, else as UTC (allowed only while no "
           "time of the command has a zone); a date alone begins at midnight of that zone"},
          {"default_zone", times.default_zone() ? nlohmann::json(times.default_zone()->name())
                                                : nlohmann::json(nullptr)},
          {"zoneless_read_in", times.zoneless_read_in()}};
}

}  // namespace levelhead::util
