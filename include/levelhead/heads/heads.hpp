#pragma once
// Water levels to heads, with the QA a hydrogeologist runs before contouring.
//
// In:  wells and measuring-point histories (wells.hpp), optionally the
//      adjusted heights of a levelling network (heights.csv of `adjust`) for
//      records that name a network point, the heights of monitored points
//      by epoch (MonitoredHeights below), the references needed to bring
//      every measuring point into the target reference, and readings:
//      well, time (ISO 8601; see time.hpp for zones), depth (m below the
//      measuring point; negative: water above it), optional status, sigma,
//      method, above (m of water above the measuring point in a flowing well).
//      A depth cell may hold a state instead of a number: dry, flowing,
//      frozen, obstructed, pumping, recently-pumped, or a censored value
//      ">12.5" (deeper than) / "<0.3"; states are carried, never coerced.
// Out: per reading: head = measuring-point elevation at that time - depth
//      (m, in the target reference), sigma = sqrt(sigma_mp^2 + sigma_depth^2)
//      (m), the measuring point used and its transform, flags, and whether it
//      may be contoured (with the reason if not).
// Errors: InputError naming the row (unknown well, bad time or depth, a
//      reading before the first survey unless allowed); ReferenceError when a
//      measuring point cannot be brought into the target reference (naming
//      the well and reference).

#include <cstddef>
#include <filesystem>
#include <functional>
#include <map>
#include <optional>
#include <string>
#include <unordered_map>
#include <vector>

#include "levelhead/core/bounds.hpp"
#include "levelhead/core/common_error.hpp"
#include "levelhead/core/table.hpp"
#include "levelhead/core/time.hpp"
#include "levelhead/heads/event_qa.hpp"
#include "levelhead/heads/wells.hpp"
#include "levelhead/references/height_converter.hpp"

namespace levelhead {

struct HeadOptions {
  // In a run: the covariance of two adjusted network points (m^2, scaled as
  // their sigmas), for the event's checks across wells; unset: none.
  std::function<double(const std::string&, const std::string&)> network_covariance;
  std::string target;                   // target vertical reference
  std::string crs;                      // CRS of the wells' x, y
  bool interpolate = false;             // linear between surveys (moving ground)
  bool compound_crs = false;            // heads.gpkg in the compound CRS crs + target
  bool allow_before_first = false;      // use the first survey for earlier readings (flagged)
  double depth_sigma = 0.003;           // m, a tape or sounder reading (about 0.01 ft)
  double mp_change_tolerance = 0.02;    // m, measuring point change between surveys
  double repeat_tolerance = 0.003;      // m, repeat readings must agree (about 0.01 ft)
  double repeat_window_hours = 0.25;    // readings of a well this close are repeats (15 min)
  std::optional<double> event;          // s since epoch: centre of a synoptic event
  double synoptic_window_hours = 48.0;  // the event's window (centred on it)
  double max_depth = bounds::max_depth_to_water;  // m; deeper readings are errors (a unit mix-up)
  std::optional<double> map_contour_interval;     // m, for measuring points read from a map
  double history_tolerance = 0.30;  // m, smallest departure from a well's own trend flagged
  std::optional<double>
      environmental_reference;  // m, z_r of environmental-water heads (target reference)
  // A reading that cannot be read (a bad cell, an unknown well, no survey in
  // force) goes to rejects.csv and the others go on (levelhead/core/rejects.hpp);
  // false: the first one stops the stage.
  bool keep_going = false;
  void validate() const;
};

// Standard deviation of a measuring-point height by survey method, for
// records that give none (common practice, from memory): levelled 0.005 m,
// gnss 0.03 m, hand-level 0.02 m, altimeter 1.0 m, map half the contour
// interval. nullopt for an unknown method (the head is then flagged).
std::optional<double> method_sigma(const std::string& method,
                                   std::optional<double> contour_interval);

struct NetworkHeight {
  double height = 0.0;
  std::optional<double> sigma;
  std::string reference;
  bool checked = true;  // false: a side shot or spur; its heads are flagged mp-unchecked
};
using NetworkHeights = std::unordered_map<std::string, NetworkHeight>;

// The unit heads are written in: that of the target reference (EPSG:6360 is
// in US survey feet; a reference of our own in metres). Inside, heads stay
// in metres. Throws ReferenceError for a target in any other unit.
LengthUnit target_length_unit(const std::string& target, const ReferenceSet& references);

// heights.csv of `levelhead adjust`: id, height, sigma, reference, and
// optionally checked (yes/no; without the column every height counts as
// checked).
NetworkHeights read_network_heights(const Table& table);

// Heights of monitored points per levelling epoch (heights_by_epoch.csv of
// `levelhead epochs`: point, time, height, sigma, reference). A measuring
// point whose record names such a point (column `point`) takes its height at
// each reading's time from the epochs, linearly between them (a point seen
// in a single epoch shows no movement: its network height is used); one whose
// record names it in `moves_with` keeps its own surveyed height and follows
// the point's movement since valid_from. Beyond the first or last epoch the
// nearest two epochs are extrapolated and the head is flagged
// mp-motion-extrapolated.
struct MonitoredEpoch {
  double time = 0.0;                 // s, UTC
  double height = 0.0, sigma = 0.0;  // m
  bool checked = true;               // false: a side shot or spur in that epoch
};
struct MonitoredSeries {
  std::vector<MonitoredEpoch> epochs;  // by time
  std::string reference;
};
using MonitoredHeights = std::unordered_map<std::string, MonitoredSeries>;

// Optional column `checked` (yes/no, as heights_by_epoch.csv of `epochs`
// writes it): heads whose measuring point rests on unchecked epoch heights
// are flagged mp-unchecked. Throws InputError naming the row for a bad time,
// height or checked cell, or a point with epochs in two references.
MonitoredHeights read_monitored_heights(const Table& table);

// Sorts each point's epochs by time; throws InputError naming `source` when
// two epochs of a point are less than a second apart.
void order_monitored_epochs(MonitoredHeights& heights, const std::string& source);

// Height (m) and sigma (m) of a monitored point at `time`, and whether the
// time lies outside its epochs.
struct MonitoredValue {
  double height = 0.0, sigma = 0.0;
  bool extrapolated = false;
  bool checked = true;  // every epoch it comes from is checked
};
MonitoredValue monitored_at(const MonitoredSeries& series, double time);

// A measuring-point record brought into the target reference.
struct MeasuringPointElevation {
  double height = 0.0;              // m, target reference
  double sigma = 0.0;               // m, of the absolute height
  double sigma_relative = 0.0;      // m, sigma without the parts in `common`
  std::vector<CommonError> common;  // errors shared with heights converted alike
  std::string network_point;        // the adjusted point it is, for "network:ID" records
  bool sigma_known = true;
  std::string source;                       // "network:ID", "monitored:ID" or the record's datum
  const MonitoredSeries* motion = nullptr;  // the monitored point it moves with
  bool follows_point = false;               // the record is the monitored point itself
  MonitoredValue motion_base;               // the monitored point at valid_from
  std::string transform;
  std::vector<std::string> flags;
};

struct QaEntry {
  std::string well, time, flag, detail;
  std::size_t row = 0;  // row of the table it came from
  std::string table;    // "levels" or "measuring-points"
};

struct HeadsSummary {
  std::size_t readings = 0, heads = 0, states = 0, contourable = 0;
  std::size_t remeasure = 0;  // wells on the re-measure list (with an event)
  std::size_t rejected = 0;   // readings set aside (keep_going)
  std::size_t in_event = 0;   // readings inside the event's window (with an event)
  // Times written without a zone, by the zone they were read in (time.hpp).
  std::map<std::string, std::size_t> zoneless_times;
  std::map<std::string, std::size_t> flags;  // flag -> count
  std::map<std::string, std::size_t> states_by_kind;
  // Per kind of state, the first few readings as "WELL at TIME" (for findings).
  std::map<std::string, std::vector<std::string>> state_examples;
};

// One measuring-point survey as it went into the heads: the record as given
// and its height in the target reference (a row of measuring_points.csv).
struct MeasuringPointSurvey {
  MeasuringPointRecord record;
  double height = 0.0, sigma = 0.0;  // m, target reference
  std::string source, transform;
  std::vector<std::string> flags;
  double sigma_relative = 0.0;  // m
  std::vector<CommonError> common;
};

// The synoptic round: one head per well (the contourable reading nearest the
// centre), its checks against the neighbours and in nests (event_qa.hpp),
// and the wells to re-measure with their reasons.
struct HeadEvent {
  double centre = 0.0;                                        // s, UTC
  std::vector<EventHead> heads;                               // in well order
  EventQaResult checks;                                       // checks.wells[i] belongs to heads[i]
  std::map<std::string, std::vector<std::string>> remeasure;  // well -> reasons
};

struct HeadsResult {
  HeadsSummary summary;
  std::vector<MeasuringPointSurvey> measuring_points;  // per well in wells order, by valid_from
  std::vector<QaEntry> measuring_point_qa;  // of the records (mp-unchecked, mp-changed, ...)
  std::optional<HeadEvent> event;           // with options.event
  LengthUnit unit = LengthUnit::metre;  // of the tables written (the target's); values here in m
};

class HeadSink;  // head_core.hpp

// Writes heads.csv, qa.csv, measuring_points.csv, summary.json, (unless
// no_geopackage) heads.gpkg and (with keep_going) rejects.csv into
// `folder`, all-or-nothing; with an event also
// event.csv (one head per well, neighbour checks; event_qa.hpp), nests.csv
// (vertical differences in piezometer nests) and remeasure.csv. Every
// reading also goes to `more_sinks` (e.g. HeadSeriesSink for hydrographs).
// The files are written from the result returned. The readings' times are
// read by `times`, the reader that read the event and the measuring points,
// so that its zone rule spans all three (time.hpp): a zone-less time while
// another had a zone and none is declared is an InputError before anything
// is written.
HeadsResult compute_heads(const WellSet& wells, const std::vector<MeasuringPointRecord>& records,
                          const NetworkHeights& network, const MonitoredHeights& monitored,
                          const ReferenceSet& references, const ProjSettings& settings,
                          const HeadOptions& options, TimeReader& times,
                          const std::filesystem::path& levels, const TableOptions& levels_table,
                          const std::filesystem::path& folder, bool geopackage,
                          const std::vector<HeadSink*>& more_sinks = {});

}  // namespace levelhead
