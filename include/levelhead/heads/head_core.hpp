#pragma once
// The per-reading core of `heads`, free of files: the measuring point in
// force at a time, one reading evaluated into a head record with its flags,
// the checks that need a well's earlier readings, and the sink that records
// go to (heads.csv and heads.gpkg implement it; compute_heads in heads.hpp
// composes them).
//
// In:  wells, measuring-point records and what they rest on (heads.hpp), and
//      readings already parsed from the levels table (ReadingInput).
// Out: MeasuringPointAt (m, target reference), HeadRecord (m; flags from
//      flags.hpp, which decide contouring).
// Errors: MeasuringPointHistory throws InputError naming the measuring-point
//      row (an unknown network or monitored point, two records at one time)
//      and ReferenceError when a record cannot be brought into the target;
//      evaluation itself does not throw.

#include <cstddef>
#include <deque>
#include <map>
#include <optional>
#include <string>
#include <string_view>
#include <utility>
#include <vector>

#include "levelhead/heads/heads.hpp"
#include "levelhead/heads/levels.hpp"

namespace levelhead {

// The measuring point of a well at one time.
struct MeasuringPointAt {
  std::size_t record = 0;       // index into the records: the survey in force
  double height = 0.0;          // m, target reference, moved or interpolated to the time
  double sigma = 0.0;           // m, of the absolute height
  double sigma_relative = 0.0;  // m, without the errors shared with other heights
  // The shared errors (common_error.hpp), of the survey in force; owned by
  // the history.
  const std::vector<CommonError>* common = nullptr;
  // The adjusted network point the height is, unmoved and not interpolated
  // (its covariance with other points is the adjustment's); owned by the
  // history; null otherwise.
  const std::string* network_point = nullptr;
  bool before_first = false;       // the time precedes the first survey (the first is used)
  std::vector<std::string> flags;  // motion, interpolation and the record's own flags
};

// Every measuring-point record in the target reference, per well in time
// order, with the QA of the records (mp-unchecked once per record, mp-changed
// between surveys).
// It keeps pointers into `monitored`, which must outlive it.
class MeasuringPointHistory {
 public:
  MeasuringPointHistory(const WellSet& wells, const std::vector<MeasuringPointRecord>& records,
                        const NetworkHeights& network, const MonitoredHeights& monitored,
                        const ReferenceSet& references, const ProjSettings& settings,
                        const HeadOptions& options);

  const std::vector<MeasuringPointRecord>& records() const { return records_; }
  const std::vector<MeasuringPointElevation>& elevations() const { return elevations_; }
  // Record indices of well `well` (index in the WellSet), by valid_from.
  const std::vector<std::size_t>& records_of(std::size_t well) const { return by_well_[well]; }
  const std::vector<QaEntry>& qa() const { return qa_; }

  // The measuring point of well `well` at `time` (s, UTC): the survey in
  // force (the latest at or before the time; the first one before it, with
  // before_first set), moved with its monitored point or, with
  // options.interpolate, interpolated linearly between two surveys of one
  // series. nullopt when the well has no record.
  std::optional<MeasuringPointAt> at(std::size_t well, double time) const;

 private:
  struct GivenHeights {
    std::map<std::string, std::vector<std::size_t>> by_datum;  // record indices per datum
    std::vector<double> height, sigma;                         // m, as given; sigma NaN: none
  };
  GivenHeights resolve_sources(const NetworkHeights& network, const MonitoredHeights& monitored,
                               const HeadOptions& options);
  void convert(const WellSet& wells, const GivenHeights& given, const ReferenceSet& references,
               const ProjSettings& settings, const HeadOptions& options);
  void order_and_check(const WellSet& wells, const HeadOptions& options);

  std::vector<MeasuringPointRecord> records_;
  bool interpolate_;
  std::vector<MeasuringPointElevation> elevations_;
  std::vector<std::vector<std::size_t>> by_well_;
  std::vector<QaEntry> qa_;
};

// One row of the levels table, parsed and checked.
struct ReadingInput {
  std::size_t well = 0;  // index in the WellSet
  double time = 0.0;     // s, UTC
  std::string time_text;
  LevelValue level;
  std::optional<double> above;        // m of water above the measuring point (flowing)
  std::optional<double> depth_sigma;  // m; empty: the option
  std::optional<double> density, temperature, salinity;  // kg/m^3, degrees C, PSU
  std::vector<std::string> carried_flags;                // from an earlier stage
  std::size_t row = 0;                                   // row of the levels table
};

struct HeadRecord {
  std::optional<double> head;   // m, target reference; empty for a state
  double sigma = 0.0;           // m, of the absolute head
  double sigma_relative = 0.0;  // m, without the errors shared with other heads (mp.common)
  MeasuringPointAt mp;          // the measuring point used; its flags are in `flags`
  std::string state;            // the reading's state, else its status
  std::optional<double> density, freshwater_head, environmental_head;  // kg/m^3, m, m
  std::vector<std::string> flags;
  // With an event: whether the reading lies outside its synoptic window. Not
  // a flag: most readings of a series lie outside, and nothing is wrong with
  // them; heads.csv says it in `in_event`, the summary counts it.
  bool outside_event = false;
  std::string reason;  // why it is not contoured; empty: contoured
  bool contour() const { return reason.empty(); }
};

// Pure: head = measuring point - depth (or + above for a flowing well),
// sigma = hypot(mp sigma, depth sigma), the freshwater and environmental
// heads for a saline well (density.hpp), and the flags of the reading alone.
// The reason is left empty: it is decided after the sequence checks.
HeadRecord evaluate_reading(const ReadingInput& reading, MeasuringPointAt mp, const Well& well,
                            const HeadOptions& options);

// The checks that need a well's earlier readings, in table order: duplicate
// (same time), out-of-order (older than the latest so far), repeat-disagrees
// (heads within the repeat window differ by more than the tolerance).
class ReadingSequence {
 public:
  explicit ReadingSequence(const HeadOptions& options);
  // Adds the flags to `record`; returns the detail of a repeat disagreement
  // (for qa.csv), empty when there is none.
  std::string check(double time, HeadRecord& record);

 private:
  double repeat_window_, repeat_tolerance_;
  double last_time_;
  std::deque<std::pair<double, double>> recent_;  // (time, head) within the window
};

// The reason a record is not contoured, from its flags (flags.hpp), whether
// it has a head and whether it lies in the event's window
// ("outside-synoptic-window", after any rejection flag): "" when it is
// contoured.
std::string contouring_reason(const HeadRecord& record);
inline constexpr std::string_view outside_event_reason = "outside-synoptic-window";

// Where head records go, one at a time (the readings stream: a sink must not
// need them all at once).
class HeadSink {
 public:
  virtual ~HeadSink() = default;
  virtual void write(const Well& well, const ReadingInput& reading, const HeadRecord& record) = 0;
};

// Heads over time per well, for hydrographs: every numeric head with its
// time and whether it was kept out of contouring for a reason other than the
// synoptic window (pumping, a flag). About 24 bytes per head.
struct SeriesPoint {
  double time = 0.0;  // s, UTC
  double head = 0.0;  // m, target reference
  bool excluded = false;
};
class HeadSeriesSink : public HeadSink {
 public:
  void write(const Well& well, const ReadingInput& reading, const HeadRecord& record) override;
  // Per well id, in reading order.
  const std::map<std::string, std::vector<SeriesPoint>>& series() const { return series_; }
  std::map<std::string, std::vector<SeriesPoint>> release() { return std::move(series_); }

 private:
  std::map<std::string, std::vector<SeriesPoint>> series_;
};

}  // namespace levelhead
