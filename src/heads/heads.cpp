#include "levelhead/heads/heads.hpp"

#include <cpl_conv.h>
#include <fmt/format.h>
#include <gdal.h>
#include <ogr_api.h>
#include <ogr_srs_api.h>

#include <algorithm>
#include <charconv>
#include <cmath>
#include <deque>
#include <nlohmann/json.hpp>
#include <span>

#include "heads/head_writers.hpp"
#include "levelhead/core/errors.hpp"
#include "levelhead/core/output_files.hpp"
#include "levelhead/core/rejects.hpp"
#include "levelhead/heads/density.hpp"
#include "levelhead/heads/event_qa.hpp"
#include "levelhead/heads/flags.hpp"
#include "levelhead/heads/head_core.hpp"
#include "levelhead/heads/levels.hpp"
#include "levelhead/version.hpp"
#include "util/grouped_spill.hpp"
#include "util/json_text.hpp"
#include "util/option_checks.hpp"
#include "util/text.hpp"
#include "util/time_audit.hpp"

namespace levelhead {

void HeadOptions::validate() const {
  util::require_positive(depth_sigma, "depth sigma", "m");
  util::require_positive(mp_change_tolerance, "measuring-point change tolerance", "m");
  util::require_positive(repeat_tolerance, "repeat tolerance", "m");
  util::require_positive(repeat_window_hours, "repeat window", "h");
  util::require_positive(synoptic_window_hours, "synoptic window", "h");
  util::require_positive(max_depth, "largest plausible depth", "m");
  util::require_positive(history_tolerance, "history tolerance", "m");
  if (map_contour_interval)
    util::require_positive(*map_contour_interval, "map contour interval", "m");
  if (target.empty()) throw OptionError("a target reference is needed (--target)");
  if (environmental_reference && !std::isfinite(*environmental_reference)) {
    throw OptionError("the environmental-head reference elevation must be a number (m)");
  }
}

std::optional<double> method_sigma(const std::string& method,
                                   std::optional<double> contour_interval) {
  const std::string m = util::to_lower(method);
  if (m == "levelled" || m == "leveled" || m == "levelling") return 0.005;
  if (m == "gnss" || m == "gps" || m == "rtk") return 0.03;
  if (m == "hand-level") return 0.02;
  if (m == "altimeter") return 1.0;
  if (m == "map") {
    if (!contour_interval) {
      throw OptionError(
          "a measuring point read from a map has no sigma: give the map's contour "
          "interval (--map-contour-interval) or the record's sigma");
    }
    return 0.5 * *contour_interval;
  }
  return std::nullopt;
}

namespace {

// The `checked` cell (yes/no) of the outputs of `adjust` and `epochs`.
bool read_checked(const Table& t, std::size_t row, std::size_t column) {
  const std::string_view value = t.cell(row, column);
  if (!util::iequals(value, "yes") && !util::iequals(value, "no")) {
    throw InputError(t.location(row, column), std::string(value),
                     "expected yes or no, as the outputs of `levelhead adjust` and `levelhead "
                     "epochs` have");
  }
  return util::iequals(value, "yes");
}

}  // namespace

LengthUnit target_length_unit(const std::string& target, const ReferenceSet& references) {
  const HeightUnit unit = reference_height_unit(target, references);
  if (const auto known = length_unit_of(unit.metres_per_unit)) return *known;
  throw ReferenceError(
      fmt::format("the target reference '{}' measures heights in {}; heads are written in metres, "
                  "international feet or US survey feet: give a target in one of them",
                  target, unit.name));
}

NetworkHeights read_network_heights(const Table& t) {
  const std::size_t id = t.require_column("id"), height = t.require_column("height");
  const auto sigma = t.find_column("sigma"), reference = t.find_column("reference");
  const auto checked = t.find_column("checked");
  NetworkHeights out;
  for (std::size_t r = 0; r < t.row_count(); ++r) {
    const auto h = t.height(r, height);
    if (!h) continue;
    NetworkHeight n;
    n.height = *h;
    if (sigma) n.sigma = t.sigma(r, *sigma);
    if (reference) n.reference = std::string(t.cell(r, *reference));
    if (checked) n.checked = read_checked(t, r, *checked);
    out.emplace(std::string(t.cell(r, id)), n);
  }
  return out;
}

MonitoredHeights read_monitored_heights(const Table& t) {
  const std::size_t point = t.require_column("point"), time = t.require_column("time");
  const std::size_t height = t.require_column("height"), reference = t.require_column("reference");
  const auto sigma = t.find_column("sigma"), checked = t.find_column("checked");
  MonitoredHeights out;
  for (std::size_t r = 0; r < t.row_count(); ++r) {
    const std::string id(t.cell(r, point));
    const auto when = parse_iso8601(t.cell(r, time));
    if (!when) {
      throw InputError(
          t.location(r, time), std::string(t.cell(r, time)),
          "expected an ISO 8601 time, as heights_by_epoch.csv of `levelhead epochs` has");
    }
    const auto h = t.height(r, height);
    if (!h) throw InputError(t.location(r, height), "", "every epoch height needs a value");
    MonitoredSeries& series = out[id];
    const std::string ref(t.cell(r, reference));
    if (series.epochs.empty()) {
      series.reference = ref;
    } else if (series.reference != ref) {
      throw InputError(
          t.location(r, reference), ref,
          fmt::format("point '{}' has epochs in '{}' and '{}'; one reference per point", id,
                      series.reference, ref));
    }
    series.epochs.push_back({when->seconds, *h, sigma ? t.sigma(r, *sigma).value_or(0.0) : 0.0,
                             checked ? read_checked(t, r, *checked) : true});
  }
  order_monitored_epochs(out, t.source());
  return out;
}

void order_monitored_epochs(MonitoredHeights& heights, const std::string& source) {
  for (auto& [id, series] : heights) {
    std::stable_sort(
        series.epochs.begin(), series.epochs.end(),
        [](const MonitoredEpoch& a, const MonitoredEpoch& b) { return a.time < b.time; });
    // Heights are interpolated in time between epochs: two at one time
    // leave no time between them (a division by zero).
    for (std::size_t i = 1; i < series.epochs.size(); ++i) {
      if (series.epochs[i].time - series.epochs[i - 1].time < 1.0) {
        throw InputError(source,
                         fmt::format("point '{}' has two epochs at {}; epochs must be apart in "
                                     "time (merge them, or correct the dates in `levelhead "
                                     "epochs`)",
                                     id, format_utc(series.epochs[i].time)));
      }
    }
  }
}

// Linear in time between the two epochs around `time`, or through the
// nearest two beyond them (flagged); sigma interpolated alike, and the
// nearest epoch's beyond them (an extrapolation is less certain than that).
MonitoredValue monitored_at(const MonitoredSeries& series, double time) {
  const auto& e = series.epochs;
  if (e.size() == 1)
    return {e[0].height, e[0].sigma, std::abs(time - e[0].time) > 0.5, e[0].checked};
  const bool before = time<e.front().time, after = time> e.back().time;
  std::size_t i = 1;
  while (i + 1 < e.size() && e[i].time < time) ++i;
  const MonitoredEpoch& a = e[i - 1];
  const MonitoredEpoch& b = e[i];
  const double f = (time - a.time) / (b.time - a.time);
  MonitoredValue v;
  v.height = a.height + f * (b.height - a.height);
  v.sigma = before ? a.sigma : after ? b.sigma : a.sigma + f * (b.sigma - a.sigma);
  v.extrapolated = before || after;
  v.checked = a.checked && b.checked;
  return v;
}

namespace {

struct LevelsColumns {
  std::size_t well, time, depth;
  std::optional<std::size_t> status, sigma, above, density, temperature, salinity, flags;

  explicit LevelsColumns(const Table& t)
      : well(t.require_column("well")),
        time(t.require_column("time")),
        depth(t.require_column("depth")),
        status(t.find_column("status")),
        sigma(t.find_column("sigma")),
        above(t.find_column("above")),
        density(t.find_column("density")),
        temperature(t.find_column("temperature")),
        salinity(t.find_column("salinity")),
        flags(t.find_column("flags")) {}  // carried from an earlier stage (transducer)
};

// One row of the levels table, every cell checked and named when bad.
ReadingInput read_reading(const Table& t, std::size_t r, const LevelsColumns& c,
                          const WellSet& wells, const HeadOptions& options, TimeReader& times) {
  ReadingInput reading;
  reading.row = t.source_row(r);
  const std::string well_id(t.cell(r, c.well));
  const auto well = wells.index.find(well_id);
  if (well == wells.index.end())
    throw InputError(t.location(r, c.well), well_id, "this well is not in the wells table");
  reading.well = well->second;
  reading.time_text = std::string(t.cell(r, c.time));
  reading.time = times.read(reading.time_text, t.location(r, c.time), t.time_zone());
  if (c.flags) {
    std::string_view given = util::trim(t.cell(r, *c.flags));
    while (!given.empty()) {
      const std::size_t space = given.find(' ');
      const std::string_view flag = given.substr(0, space);
      if (!flag.empty()) reading.carried_flags.emplace_back(flag);
      given =
          space == std::string_view::npos ? std::string_view() : util::trim(given.substr(space));
    }
  }
  reading.level = read_level_value(t, r, c.depth, c.status, options.max_depth);
  if (c.above) reading.above = t.depth(r, *c.above);
  if (c.sigma) reading.depth_sigma = t.sigma(r, *c.sigma);
  if (c.density) reading.density = t.number(r, *c.density);
  if (c.temperature && c.salinity) {
    reading.temperature = t.number(r, *c.temperature);
    reading.salinity = t.number(r, *c.salinity);
  }
  return reading;
}

// What the later steps need of each well's readings.
struct WellState {
  explicit WellState(const HeadOptions& options) : sequence(options) {}
  ReadingSequence sequence;
  std::optional<EventHead> event;  // contourable reading nearest the event
  double event_distance = INFINITY;
  bool repeat_problem = false;
};

void write_qa(std::ostream& qa_csv, const QaEntry& e) {
  qa_csv << e.table << ',' << e.row << ',' << csv_cell(e.well) << ',' << csv_cell(e.time) << ','
         << e.flag << ',' << csv_cell(e.detail) << '\n';
}

std::vector<MeasuringPointSurvey> measuring_point_surveys(const MeasuringPointHistory& history,
                                                          std::size_t well_count) {
  std::vector<MeasuringPointSurvey> surveys;
  for (std::size_t w = 0; w < well_count; ++w) {
    for (std::size_t k : history.records_of(w)) {
      const MeasuringPointElevation& e = history.elevations()[k];
      surveys.push_back({history.records()[k], e.height, e.sigma, e.source, e.transform, e.flags,
                         e.sigma_relative, e.common});
    }
  }
  return surveys;
}

// Lengths in the target's unit: `per_metre` of them in a metre.
void write_measuring_points(std::ostream& mp_csv, const std::vector<MeasuringPointSurvey>& surveys,
                            const std::string& target, double per_metre) {
  mp_csv << "well,valid_from,height,sigma,reference,sigma_relative,common,source,method,reason,"
            "transform,flags,row,given_height,given_datum\n";
  for (const MeasuringPointSurvey& e : surveys) {
    const MeasuringPointRecord& m = e.record;
    mp_csv << csv_cell(m.well) << ',' << csv_cell(m.valid_from_text) << ','
           << fmt::format("{:.4f},{:.4f}", e.height * per_metre, e.sigma * per_metre) << ','
           << csv_cell(target) << ',' << fmt::format("{:.4f}", e.sigma_relative * per_metre) << ','
           << csv_cell(format_common_errors(e.common, per_metre)) << ',' << csv_cell(e.source)
           << ',' << csv_cell(m.method) << ',' << csv_cell(m.reason) << ',' << csv_cell(e.transform)
           << ',' << csv_cell(fmt::format("{}", fmt::join(e.flags, " "))) << ',' << m.row << ','
           << (m.height ? fmt::format("{:.4f}", *m.height * per_metre) : std::string()) << ','
           << csv_cell(m.height ? m.datum : std::string()) << '\n';
  }
}

struct TimeHead {
  double time = 0.0, head = 0.0;  // s UTC, m
};
// Each well's heads for its history check, in bounded memory.
using WellSeries = util::GroupedSpill<TimeHead>;

// A head that departs from the running median of its 5 neighbours in time
// on each side by more than max(tolerance, 5 * 1.4826 * MAD of the well's
// departures) (a robust scale, Hampel 1974). Departures as (time, m);
// `series` sorted by time, then head.
std::vector<std::pair<double, double>> departures_from_history(std::span<const TimeHead> series,
                                                               double tolerance) {
  std::vector<std::pair<double, double>> out;
  if (series.size() < 7) return out;
  std::vector<double> departure(series.size());
  for (std::size_t i = 0; i < series.size(); ++i) {
    std::vector<double> around;
    for (std::size_t j = i >= 5 ? i - 5 : 0; j <= std::min(series.size() - 1, i + 5); ++j) {
      if (j != i) around.push_back(series[j].head);
    }
    std::nth_element(around.begin(), around.begin() + around.size() / 2, around.end());
    departure[i] = series[i].head - around[around.size() / 2];
  }
  std::vector<double> magnitude;
  for (double d : departure) magnitude.push_back(std::abs(d));
  std::nth_element(magnitude.begin(), magnitude.begin() + magnitude.size() / 2, magnitude.end());
  const double limit = std::max(tolerance, 5.0 * 1.4826 * magnitude[magnitude.size() / 2]);
  for (std::size_t i = 0; i < series.size(); ++i) {
    if (std::abs(departure[i]) > limit) out.emplace_back(series[i].time, departure[i]);
  }
  return out;
}

// One reading through the core and into the sinks, the QA and the state.
void process_reading(const ReadingInput& reading, const Table& t, std::size_t r,
                     const LevelsColumns& c, const WellSet& wells,
                     const MeasuringPointHistory& history, const HeadOptions& options,
                     std::vector<WellState>& state, WellSeries& series,
                     const std::vector<HeadSink*>& sinks, std::ostream& qa_csv,
                     HeadsSummary& summary) {
  const Well& well = wells.wells[reading.well];
  const auto mp = history.at(reading.well, reading.time);
  if (!mp) {
    throw InputError(t.location(r, c.well), well.id,
                     "this well has no measuring-point record; add its survey");
  }
  if (mp->before_first && !options.allow_before_first) {
    throw InputError(
        t.location(r, c.time), reading.time_text,
        fmt::format("this reading of well '{}' is older than its first "
                    "measuring-point survey ({}); add the earlier survey or "
                    "allow it with --allow-before-first",
                    well.id,
                    history.records()[history.records_of(reading.well).front()].valid_from_text));
  }
  HeadRecord record = evaluate_reading(reading, std::move(*mp), well, options);
  WellState& ws = state[reading.well];
  const std::string repeat_detail = ws.sequence.check(reading.time, record);
  if (!repeat_detail.empty()) {
    write_qa(qa_csv, {well.id, reading.time_text, "repeat-disagrees", repeat_detail, reading.row,
                      "levels"});
    ws.repeat_problem = true;
  }
  record.reason = contouring_reason(record);
  if (record.contour() && options.event &&
      std::abs(reading.time - *options.event) < ws.event_distance) {
    ws.event_distance = std::abs(reading.time - *options.event);
    std::optional<double> middle;
    if (well.screen_top && well.screen_bottom)
      middle = 0.5 * (*well.screen_top + *well.screen_bottom);
    ws.event = EventHead{well.id,
                         well.aquifer,
                         well.nest,
                         reading.time_text,
                         well.x,
                         well.y,
                         *record.head,
                         record.sigma,
                         middle,
                         record.mp.common ? *record.mp.common : std::vector<CommonError>(),
                         record.mp.network_point ? *record.mp.network_point : std::string()};
  }
  if (record.head && (record.contour() || record.reason == outside_event_reason))
    series.add(reading.well, {reading.time, *record.head});
  summary.heads += record.head.has_value();
  summary.contourable += record.contour();
  summary.in_event += options.event && !record.outside_event;
  if (!record.state.empty()) {
    ++summary.states;
    const std::string kind = record.state.substr(0, record.state.find(':'));
    ++summary.states_by_kind[kind];
    std::vector<std::string>& examples = summary.state_examples[kind];
    if (examples.size() < 5)
      examples.push_back(fmt::format("{} at {}", well.id, reading.time_text));
  }
  for (const std::string& f : record.flags) {
    ++summary.flags[f];
    if (flag_info(f).qa == QaListing::each_reading)
      write_qa(qa_csv, {well.id, reading.time_text, f, "", reading.row, "levels"});
  }
  for (HeadSink* sink : sinks) sink->write(well, reading, record);
}

// Across wells, for the synoptic event: one head per well (the contourable
// reading nearest the centre), checked against its neighbours and in nests
// (event_qa.hpp), and the wells to re-measure.
HeadEvent synoptic_event(const WellSet& wells, const std::vector<WellState>& state,
                         const std::map<std::string, std::vector<std::string>>& history_departures,
                         double centre, const HeadOptions& options) {
  HeadEvent event;
  event.centre = centre;
  for (const WellState& ws : state) {
    if (ws.event) event.heads.push_back(*ws.event);
  }
  EventQaOptions checks;
  checks.network_covariance = options.network_covariance;
  event.checks = check_event(event.heads, checks);
  for (std::size_t i = 0; i < event.heads.size(); ++i) {
    const EventCheck& c = event.checks.wells[i];
    for (const std::string& f : c.flags) {
      if (f == "neighbour-misfit") {
        event.remeasure[event.heads[i].well].push_back(
            fmt::format("head {:+.3f} m off its neighbours' plane", *c.misfit));
      }
      if (f == "mp-sigma-large")
        event.remeasure[event.heads[i].well].push_back(
            "measuring point too uncertain beside its neighbours");
    }
  }
  for (std::size_t w = 0; w < wells.wells.size(); ++w) {
    const std::string& id = wells.wells[w].id;
    if (!state[w].event) event.remeasure[id].push_back("no usable reading in the event window");
    if (state[w].repeat_problem) event.remeasure[id].push_back("repeat readings disagree");
    if (const auto d = history_departures.find(id); d != history_departures.end())
      for (const std::string& departure : d->second) event.remeasure[id].push_back(departure);
  }
  return event;
}

// event.csv, nests.csv and remeasure.csv; returns the event's part of summary.json.
nlohmann::json write_event(const HeadEvent& event, OutputSet& out, double per_metre) {
  const double k = per_metre;
  std::ostream& ev = out.open("event.csv");
  ev << "well,time,head,sigma,sigma_relative,common,aquifer,nest,prediction,misfit,flags\n";
  for (std::size_t i = 0; i < event.heads.size(); ++i) {
    const EventHead& h = event.heads[i];
    const EventCheck& c = event.checks.wells[i];
    const double relative = std::sqrt(std::max(h.sigma * h.sigma - total_variance(h.common), 0.0));
    ev << csv_cell(h.well) << ',' << csv_cell(h.time) << ','
       << fmt::format("{:.4f},{:.4f},{:.4f}", h.head * k, h.sigma * k, relative * k) << ','
       << csv_cell(format_common_errors(h.common, k)) << ',' << csv_cell(h.aquifer) << ','
       << csv_cell(h.nest) << ',' << (c.prediction ? fmt::format("{:.4f}", *c.prediction * k) : "")
       << ',' << (c.misfit ? fmt::format("{:+.4f}", *c.misfit * k) : "") << ','
       << csv_cell(fmt::format("{}", fmt::join(c.flags, " "))) << '\n';
  }
  std::ostream& nests = out.open("nests.csv");
  nests << "nest,shallow,deep,dh,sigma,direction,significant\n";
  for (const NestPair& n : event.checks.nests) {
    nests << csv_cell(n.nest) << ',' << csv_cell(n.shallow) << ',' << csv_cell(n.deep) << ','
          << fmt::format("{:+.4f},{:.4f}", n.dh * k, n.sigma * k) << ',' << n.direction << ','
          << (n.significant ? "yes" : "no") << '\n';
  }
  std::ostream& rm = out.open("remeasure.csv");
  rm << "well,reasons\n";
  for (const auto& [well_id, reasons] : event.remeasure) {
    rm << csv_cell(well_id) << ',' << csv_cell(fmt::format("{}", fmt::join(reasons, "; "))) << '\n';
  }
  return {{"centre", format_utc(event.centre)},
          {"wells_with_reading", event.heads.size()},
          {"remeasure", event.remeasure.size()},
          {"nest_pairs", event.checks.nests.size()}};
}

}  // namespace

HeadsResult compute_heads(const WellSet& wells, const std::vector<MeasuringPointRecord>& records,
                          const NetworkHeights& network, const MonitoredHeights& monitored,
                          const ReferenceSet& references, const ProjSettings& settings,
                          const HeadOptions& options, TimeReader& times,
                          const std::filesystem::path& levels, const TableOptions& levels_table,
                          const std::filesystem::path& folder, bool geopackage,
                          const std::vector<HeadSink*>& more_sinks) {
  options.validate();
  const LengthUnit unit = target_length_unit(options.target, references);
  const double per_metre = 1.0 / metres_per_unit(unit);
  // 1. Every measuring point in the target reference, and its history.
  const MeasuringPointHistory history(wells, records, network, monitored, references, settings,
                                      options);
  HeadsResult result;
  result.measuring_points = measuring_point_surveys(history, wells.wells.size());
  result.measuring_point_qa = history.qa();
  OutputSet out(folder);
  result.unit = unit;
  write_measuring_points(out.open("measuring_points.csv"), result.measuring_points, options.target,
                         per_metre);
  std::optional<HeadsGpkgWriter> gpkg;
  if (geopackage)
    gpkg.emplace(out.reserve("heads.gpkg"),
                 options.compound_crs ? options.crs + "+" + options.target : options.crs,
                 options.target, options.event.has_value(), unit);
  std::ostream& qa_csv = out.open("qa.csv");
  qa_csv << "table,row,well,time,flag,detail\n";
  for (const QaEntry& e : history.qa()) write_qa(qa_csv, e);
  HeadsCsvWriter heads_csv(out, history, options.target, options.event.has_value(), per_metre);
  std::vector<HeadSink*> sinks = {&heads_csv};
  if (gpkg) sinks.push_back(&*gpkg);
  sinks.insert(sinks.end(), more_sinks.begin(), more_sinks.end());

  // 2. Readings, streamed through the core into the sinks.
  HeadsSummary& summary = result.summary;
  std::vector<WellState> state(wells.wells.size(), WellState(options));
  // (time, head) of the contourable numeric heads, and those outside the
  // event's window, for step 3.
  WellSeries series(wells.wells.size(), out.folder());
  std::vector<RejectedRecord> rejects;
  read_table_in_batches(levels, levels_table, 100000, [&](Table& t) {
    const LevelsColumns columns(t);
    for (std::size_t r = 0; r < t.row_count(); ++r) {
      ++summary.readings;
      try {
        process_reading(read_reading(t, r, columns, wells, options, times), t, r, columns, wells,
                        history, options, state, series, sinks, qa_csv, summary);
      } catch (const InputError& e) {
        // A row fails before anything of it is written or counted.
        if (!options.keep_going) throw;
        rejects.push_back(rejected_from(e));
      }
    }
  });
  times.require_consistent_zones();
  summary.zoneless_times = times.zoneless_read_in();
  summary.rejected = rejects.size();
  if (options.keep_going) write_rejects(out.open("rejects.csv"), rejects);
  heads_csv.finish();
  if (gpkg) gpkg->finish();

  // 3. Each well against its own history.
  std::map<std::string, std::vector<std::string>> history_departures;
  series.visit([&](std::size_t w, std::span<TimeHead> points) {
    std::sort(points.begin(), points.end(), [](const TimeHead& a, const TimeHead& b) {
      return a.time != b.time ? a.time < b.time : a.head < b.head;
    });
    for (const auto& [time, departure] :
         departures_from_history(points, options.history_tolerance)) {
      const std::string when = format_utc(time);
      write_qa(qa_csv,
               {wells.wells[w].id, when, "departs-from-history",
                fmt::format("{:+.3f} m from the well's running median", departure), 0, "levels"});
      history_departures[wells.wells[w].id].push_back(
          fmt::format("head at {} departs {:+.3f} m from its own trend", when, departure));
      ++summary.flags["departs-from-history"];
    }
  });

  // 4. Across wells, for the synoptic event.
  nlohmann::json event_summary = nullptr;
  if (options.event) {
    result.event = synoptic_event(wells, state, history_departures, *options.event, options);
    summary.remeasure = result.event->remeasure.size();
    event_summary = write_event(*result.event, out, per_metre);
    event_summary["window_hours"] = options.synoptic_window_hours;
    event_summary["readings_in_window"] = summary.in_event;
  }

  nlohmann::json s;
  s["event"] = event_summary;
  s["levelhead_version"] = version_string();
  s["format_version"] = output_format_version;
  s["command"] = "heads";
  s["target_reference"] = options.target;
  s["units"] = to_string(unit);
  s["times"] = util::time_audit_json(times);
  s["counts"] = {{"readings", summary.readings}, {"heads", summary.heads},
                 {"states", summary.states},     {"contourable", summary.contourable},
                 {"rejected", summary.rejected}, {"measuring_point_records", records.size()},
                 {"wells", wells.wells.size()}};
  s["flags"] = summary.flags;
  s["states"] = summary.states_by_kind;
  s["options"] = {{"interpolate", options.interpolate},
                  {"allow_before_first", options.allow_before_first},
                  {"depth_sigma_m", options.depth_sigma},
                  {"measuring_point_change_tolerance_m", options.mp_change_tolerance},
                  {"repeat_tolerance_m", options.repeat_tolerance},
                  {"repeat_window_hours", options.repeat_window_hours},
                  {"synoptic_window_hours", options.synoptic_window_hours},
                  {"max_depth_m", options.max_depth},
                  {"keep_going", options.keep_going},
                  {"history_tolerance_m", options.history_tolerance},
                  {"event", options.event ? nlohmann::json(format_utc(*options.event))
                                          : nlohmann::json(nullptr)}};
  out.open("summary.json") << util::json_text(s) << '\n';
  out.commit();
  return result;
}

}  // namespace levelhead
