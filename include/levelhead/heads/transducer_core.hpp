#pragma once
// The per-record core of `transducer`, free of files: the flags of a
// reading, the manual checks of a sensor with their drift, and the
// correction a reading takes from them (transducer.hpp composes them).
//
// In:  times in s (UTC), depths and offsets in m.
// Out: corrections (m) and flags; pure functions.
// Errors: none.

#include <cstddef>
#include <utility>
#include <vector>

namespace levelhead::transducer {

// Flags of a transducer reading, in the order they are written (the names
// are in the flag table, levelhead/heads/flags.hpp).
enum Flag : unsigned {
  range_rejected = 1u << 0,
  dry_rejected = 1u << 1,
  unchecked = 1u << 2,
  beyond_checks = 1u << 3,
  drift_rejected = 1u << 4,
};
inline constexpr std::pair<Flag, const char*> flag_names[] = {
    {range_rejected, "transducer-range-rejected"},
    {dry_rejected, "transducer-dry-rejected"},
    {unchecked, "transducer-unchecked"},
    {beyond_checks, "transducer-beyond-checks"},
    {drift_rejected, "transducer-drift-rejected"}};
inline constexpr unsigned rejecting_flags = range_rejected | dry_rejected | drift_rejected;

// A manual check of a sensor: the tape's depth, the sensor's raw depth
// nearest it, and their difference (the offset the sensor needs then).
struct Check {
  double time = 0.0, manual = 0.0, transducer = 0.0, offset = 0.0;
};

// A sensor's checks in time order; an offset that moves by more than the
// drift limit between two checks rejects the readings between them.
struct SensorChecks {
  std::vector<Check> checks;
  std::vector<bool> rejected_after;  // per check: the interval after it is rejected
};

// Marks the intervals whose drift exceeds `drift_limit` (m); returns the
// largest drift between two successive checks (m).
double mark_drift(SensorChecks& checks, double drift_limit);

// The correction (m) of a reading at `time`: linear in time between the two
// checks around it; the nearest check's offset beyond them (flagged
// beyond_checks when more than `check_gap` s away); the earlier check's in
// a rejected interval (flagged drift_rejected); 0 without checks (flagged
// unchecked). `interval` carries the index of the check at or before the
// previous reading: call with readings in ascending time, starting at 0.
double correction_at(double time, const SensorChecks& checks, double check_gap,
                     std::size_t& interval, unsigned& flags);

}  // namespace levelhead::transducer
