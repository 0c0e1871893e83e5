#include "levelhead/heads/head_core.hpp"

#include <fmt/format.h>
#include <fmt/ranges.h>

#include <algorithm>
#include <cmath>
#include <iterator>
#include <utility>

#include "levelhead/core/errors.hpp"
#include "levelhead/heads/density.hpp"
#include "levelhead/heads/flags.hpp"

namespace levelhead {

// Measuring points brought into the target reference one datum at a time
// (one HeightConverter per datum), then ordered per well.
MeasuringPointHistory::MeasuringPointHistory(
    const WellSet& wells, const std::vector<MeasuringPointRecord>& records,
    const NetworkHeights& network, const MonitoredHeights& monitored,
    const ReferenceSet& references, const ProjSettings& settings, const HeadOptions& options)
    : records_(records),
      interpolate_(options.interpolate),
      elevations_(records.size()),
      by_well_(wells.wells.size()) {
  const GivenHeights given = resolve_sources(network, monitored, options);
  convert(wells, given, references, settings, options);
  order_and_check(wells, options);
}

// Each record's height as given and the datum it is in: its own, its network
// point's (adjusted heights) or its monitored point's (at valid_from).
MeasuringPointHistory::GivenHeights MeasuringPointHistory::resolve_sources(
    const NetworkHeights& network, const MonitoredHeights& monitored, const HeadOptions& options) {
  const std::vector<MeasuringPointRecord>& records = records_;
  GivenHeights g;
  g.height.resize(records.size());
  g.sigma.assign(records.size(), NAN);
  auto& by_datum = g.by_datum;
  auto& given = g.height;
  auto& given_sigma = g.sigma;
  for (std::size_t k = 0; k < records.size(); ++k) {
    const MeasuringPointRecord& m = records[k];
    std::string datum = m.datum;
    // A point seen in one epoch only shows no movement: the network's height is used.
    auto monitored_point = m.point.empty() ? monitored.end() : monitored.find(m.point);
    if (monitored_point != monitored.end() && monitored_point->second.epochs.size() < 2)
      monitored_point = monitored.end();
    if (!m.moves_with.empty()) {
      const auto it = monitored.find(m.moves_with);
      if (it == monitored.end()) {
        throw InputError(CellLocation{"measuring points", m.row, "moves_with"}, m.moves_with,
                         "this point is not among the monitored heights (--monitored, "
                         "heights_by_epoch.csv of `levelhead epochs`)");
      }
      elevations_[k].motion = &it->second;
      elevations_[k].motion_base = monitored_at(it->second, m.valid_from);
    }
    if (monitored_point != monitored.end()) {
      const MonitoredValue at_survey = monitored_at(monitored_point->second, m.valid_from);
      given[k] = at_survey.height;
      given_sigma[k] = at_survey.sigma;
      datum = monitored_point->second.reference;
      elevations_[k].source = "monitored:" + m.point;
      elevations_[k].motion = &monitored_point->second;
      elevations_[k].follows_point = true;
      elevations_[k].motion_base = at_survey;
      if (!m.moves_with.empty()) {
        throw InputError(CellLocation{"measuring points", m.row, "moves_with"}, m.moves_with,
                         "a record that names a monitored point already moves with it; leave "
                         "moves_with empty");
      }
    } else if (!m.point.empty()) {
      const auto it = network.find(m.point);
      if (it == network.end()) {
        throw InputError(CellLocation{"measuring points", m.row, "point"}, m.point,
                         "this point is not among the adjusted heights (--adjusted)");
      }
      given[k] = it->second.height;
      if (it->second.sigma) given_sigma[k] = *it->second.sigma;
      datum = it->second.reference.empty() ? m.datum : it->second.reference;
      elevations_[k].source = "network:" + m.point;
      elevations_[k].network_point = m.point;
      if (!it->second.checked) elevations_[k].flags.push_back("mp-unchecked");
      if (datum.empty()) {
        throw InputError(CellLocation{"measuring points", m.row, "datum"}, "",
                         fmt::format("the adjusted heights name no reference for point '{}'; give "
                                     "the datum in the measuring-point table",
                                     m.point));
      }
    } else {
      given[k] = *m.height;
      if (m.sigma) {
        given_sigma[k] = *m.sigma;
      } else if (const auto by_method = method_sigma(m.method, options.map_contour_interval)) {
        given_sigma[k] = *by_method;
        elevations_[k].flags.push_back("mp-sigma-from-method");
      }
      elevations_[k].source = m.source.empty() ? m.datum : m.source;
    }
    if (!m.moves_with.empty()) elevations_[k].source += ", moving with monitored:" + m.moves_with;
    // Levelling that nothing checks: once per record here; its readings carry mp-unchecked.
    const std::string fix = "a blunder there cannot show; level a loop through it";
    if (std::find(elevations_[k].flags.begin(), elevations_[k].flags.end(), "mp-unchecked") !=
        elevations_[k].flags.end()) {
      qa_.push_back({m.well, m.valid_from_text, "mp-unchecked",
                     fmt::format("point '{}' of the adjustment rests on levelling nothing checks "
                                 "(a side shot or spur); {}",
                                 m.point, fix),
                     m.row, "measuring-points"});
    }
    if (elevations_[k].motion) {
      std::vector<std::string> unchecked;
      for (const MonitoredEpoch& e : elevations_[k].motion->epochs) {
        if (!e.checked) unchecked.push_back(format_utc(e.time).substr(0, 10));
      }
      if (!unchecked.empty()) {
        qa_.push_back({m.well, m.valid_from_text, "mp-unchecked",
                       fmt::format("the epochs {} of '{}' rest on levelling nothing checks (a side "
                                   "shot or spur); {}",
                                   fmt::join(unchecked, ", "),
                                   m.moves_with.empty() ? m.point : m.moves_with, fix),
                       m.row, "measuring-points"});
      }
    }
    by_datum[datum].push_back(k);
  }
  return g;
}

// Every record into the target reference, one converter per datum.
void MeasuringPointHistory::convert(const WellSet& wells, const GivenHeights& g,
                                    const ReferenceSet& references, const ProjSettings& settings,
                                    const HeadOptions& options) {
  const std::vector<MeasuringPointRecord>& records = records_;
  const auto& given = g.height;
  const auto& given_sigma = g.sigma;
  for (const auto& [datum, indices] : g.by_datum) {
    std::optional<HeightConverter> made;
    try {
      made.emplace(datum, options.target, options.crs, references, settings);
    } catch (const ReferenceError& e) {
      std::vector<std::string> named;
      for (std::size_t k : indices) {
        if (named.size() < 5)
          named.push_back(fmt::format("well '{}' (row {})", records[k].well, records[k].row));
      }
      throw ReferenceError(fmt::format(
          "measuring points of {}{} are in '{}', which cannot be brought into '{}': {}. Define "
          "'{}' in a references file (an offset, a tie or a grid) or correct the datum; heads in "
          "different references are never merged",
          fmt::join(named, ", "), indices.size() > named.size() ? " and others" : "", datum,
          options.target, e.what(), datum));
    }
    HeightConverter& converter = *made;
    // A height written in a foot reference but read as metres (or the other
    // foot) is off by a factor: the table's unit must be the reference's.
    for (std::size_t k : indices) {
      const MeasuringPointRecord& m = records[k];
      if (!m.height) continue;
      if (const auto problem = table_unit_mismatch(converter.source_unit(), datum, m.table_unit))
        throw InputError(CellLocation{"measuring points", m.row, "datum"}, datum, *problem);
    }
    std::vector<PlanePoint> points;
    std::vector<double> heights;
    for (std::size_t k : indices) {
      const Well& w = wells.wells[wells.index.at(records[k].well)];
      points.push_back({w.x, w.y});
      heights.push_back(given[k]);
    }
    const auto converted = converter.convert(points, heights);
    for (std::size_t j = 0; j < indices.size(); ++j) {
      const std::size_t k = indices[j];
      if (!converted[j].height) {
        throw ReferenceError(fmt::format(
            "well '{}' (measuring points row {}): its height in '{}' cannot be brought into '{}': "
            "{}",
            records[k].well, records[k].row, datum, options.target, converted[j].failure));
      }
      MeasuringPointElevation& e = elevations_[k];
      e.height = *converted[j].height;
      const double s = std::isnan(given_sigma[k]) ? 0.0 : given_sigma[k];
      e.sigma = std::sqrt(s * s + converted[j].variance_added);
      e.sigma_relative = std::sqrt(s * s + converted[j].relative_variance_added());
      e.common = converted[j].common;
      e.sigma_known = !std::isnan(given_sigma[k]) && converted[j].variance_complete;
      e.transform = converted[j].transform;
      e.flags.insert(e.flags.end(), converted[j].flags.begin(), converted[j].flags.end());
      if (!e.sigma_known) e.flags.push_back("mp-sigma-unknown");
    }
  }
}

// Per well by time; two records at one time are an error, a change between
// surveys beyond the tolerance goes to the QA.
void MeasuringPointHistory::order_and_check(const WellSet& wells, const HeadOptions& options) {
  const std::vector<MeasuringPointRecord>& records = records_;
  for (std::size_t k = 0; k < records.size(); ++k) {
    by_well_[wells.index.at(records[k].well)].push_back(k);
  }
  for (std::vector<std::size_t>& h : by_well_) {
    std::stable_sort(h.begin(), h.end(), [&](std::size_t a, std::size_t b) {
      return records[a].valid_from < records[b].valid_from;
    });
    for (std::size_t j = 1; j < h.size(); ++j) {
      const MeasuringPointRecord& a = records[h[j - 1]];
      const MeasuringPointRecord& b = records[h[j]];
      if (std::abs(a.valid_from - b.valid_from) < 0.5) {
        throw InputError(CellLocation{"measuring points", b.row, "valid_from"}, b.valid_from_text,
                         fmt::format("well '{}' has two measuring-point records from the same "
                                     "time (rows {} and {})",
                                     b.well, a.row, b.row));
      }
      const double change = elevations_[h[j]].height - elevations_[h[j - 1]].height;
      if (std::abs(change) > options.mp_change_tolerance) {
        qa_.push_back({b.well, b.valid_from_text, "mp-changed",
                       fmt::format("{:+.3f} m since {}{}", change, a.valid_from_text,
                                   b.reason.empty() ? std::string(" (no reason given: subsidence, "
                                                                  "damage or a datum mix-up?)")
                                                    : " (" + b.reason + ")"),
                       b.row, "measuring-points"});
      }
    }
  }
}

std::optional<MeasuringPointAt> MeasuringPointHistory::at(std::size_t well, double time) const {
  const std::vector<std::size_t>& h = by_well_[well];
  if (h.empty()) return std::nullopt;
  MeasuringPointAt at;
  const auto after = std::upper_bound(h.begin(), h.end(), time, [&](double t, std::size_t k) {
    return t < records_[k].valid_from;
  });
  if (after == h.begin()) {
    at.record = h.front();
    at.before_first = true;
    at.flags.push_back("before-first-survey");
  } else {
    at.record = *(after - 1);
  }
  const std::size_t k = at.record;
  const MeasuringPointElevation& e = elevations_[k];
  at.height = e.height;
  at.sigma = e.sigma;
  at.sigma_relative = e.sigma_relative;
  at.common = &e.common;
  if (!e.network_point.empty()) at.network_point = &e.network_point;
  if (e.motion) {
    // Ground movement from the levelling epochs (heads.hpp). A record that is
    // the monitored point itself swaps the epoch's sigma at its survey for the
    // one now; a record moving with a point adds the point's.
    const MonitoredValue now = monitored_at(*e.motion, time);
    at.height += now.height - e.motion_base.height;
    const double kept =
        e.follows_point
            ? std::max(at.sigma * at.sigma - e.motion_base.sigma * e.motion_base.sigma, 0.0)
            : at.sigma * at.sigma;
    at.sigma = std::sqrt(kept + now.sigma * now.sigma);
    at.network_point = nullptr;
    // Movement is of this point alone: it adds to both.
    const double kept_relative = e.follows_point
                                     ? std::max(at.sigma_relative * at.sigma_relative -
                                                    e.motion_base.sigma * e.motion_base.sigma,
                                                0.0)
                                     : at.sigma_relative * at.sigma_relative;
    at.sigma_relative = std::sqrt(kept_relative + now.sigma * now.sigma);
    if (now.extrapolated) at.flags.push_back("mp-motion-extrapolated");
    if (!now.checked || !e.motion_base.checked) at.flags.push_back("mp-unchecked");
  } else if (interpolate_ && after != h.begin() && after != h.end() &&
             !records_[*after].starts_new_series()) {
    // Linear in time between the two surveys; the sigmas combine as the
    // weights of two independent heights.
    const std::size_t next = *after;
    const double t0 = records_[k].valid_from, t1 = records_[next].valid_from;
    const double f = (time - t0) / (t1 - t0);
    at.height = (1.0 - f) * e.height + f * elevations_[next].height;
    at.sigma = std::hypot((1.0 - f) * e.sigma, f * elevations_[next].sigma);
    at.network_point = nullptr;
    at.sigma_relative =
        std::hypot((1.0 - f) * e.sigma_relative, f * elevations_[next].sigma_relative);
    at.flags.push_back("mp-interpolated");
  }
  at.flags.insert(at.flags.end(), e.flags.begin(), e.flags.end());
  return at;
}

HeadRecord evaluate_reading(const ReadingInput& reading, MeasuringPointAt mp, const Well& well,
                            const HeadOptions& options) {
  HeadRecord r;
  // The reading's carried flags, then the measuring point's, moved (this
  // runs for every reading: no copy where none is needed).
  r.flags = reading.carried_flags;
  if (r.flags.empty()) {
    r.flags.swap(mp.flags);
  } else {
    r.flags.insert(r.flags.end(), std::make_move_iterator(mp.flags.begin()),
                   std::make_move_iterator(mp.flags.end()));
  }
  mp.flags.clear();
  r.mp = std::move(mp);
  const LevelValue& level = reading.level;
  const bool flowing = level.state == "flowing" || level.status == "flowing";
  if (level.depth) {
    r.head = r.mp.height - *level.depth;
    if (*level.depth < 0.0 && !flowing) r.flags.push_back("water-above-mp");
  } else if (flowing && reading.above) {
    r.head = r.mp.height + *reading.above;
  }
  r.sigma = std::hypot(r.mp.sigma, reading.depth_sigma.value_or(options.depth_sigma));
  r.sigma_relative =
      std::hypot(r.mp.sigma_relative, reading.depth_sigma.value_or(options.depth_sigma));
  // Saline wells: the density of this reading, else from its temperature and
  // salinity, else the well's; then the freshwater head at the screen.
  r.density = reading.density;
  if (!r.density && reading.temperature && reading.salinity)
    r.density = water_density_eos80(*reading.salinity, *reading.temperature);
  if (!r.density) r.density = well.density;
  if (r.density && r.head) {
    if (well.ground && well.screen_top && well.screen_bottom) {
      const double screen = *well.ground - 0.5 * (*well.screen_top + *well.screen_bottom);
      r.freshwater_head = freshwater_head(*r.head, *r.density, screen);
      if (options.environmental_reference && well.column_density) {
        r.environmental_head = environmental_head(*r.freshwater_head, *well.column_density, screen,
                                                  *options.environmental_reference);
      }
    } else {
      r.flags.push_back("freshwater-head-needs-screen");
    }
  }
  if (r.head && well.ground && !flowing && *r.head > *well.ground)
    r.flags.push_back("water-above-ground");
  if (r.head && well.ground && well.screen_bottom && *r.head < *well.ground - *well.screen_bottom)
    r.flags.push_back("below-screen-bottom");
  for (const std::string* word : {&level.status, &level.state}) {
    if (*word == "pumping" || *word == "recently-pumped") {
      r.flags.push_back("pumping");
      break;
    }
  }
  r.outside_event = options.event && std::abs(reading.time - *options.event) >
                                         options.synoptic_window_hours * 3600.0 / 2.0;
  r.state = !level.state.empty() ? level.state : level.status;
  return r;
}

ReadingSequence::ReadingSequence(const HeadOptions& options)
    : repeat_window_(options.repeat_window_hours * 3600.0),
      repeat_tolerance_(options.repeat_tolerance),
      last_time_(-INFINITY) {}

std::string ReadingSequence::check(double time, HeadRecord& record) {
  // Times are whole seconds or fractions of them: half a second apart is the same time.
  if (std::abs(time - last_time_) < 0.5) {
    record.flags.push_back("duplicate");
  } else if (time < last_time_) {
    record.flags.push_back("out-of-order");
  }
  while (!recent_.empty() && std::abs(time - recent_.front().first) > repeat_window_)
    recent_.pop_front();
  std::string detail;
  if (record.head) {
    for (const auto& [other_time, other_head] : recent_) {
      if (std::abs(other_head - *record.head) > repeat_tolerance_) {
        record.flags.push_back("repeat-disagrees");
        detail = fmt::format("{:+.3f} m against the reading at {}", *record.head - other_head,
                             format_utc(other_time));
        break;
      }
    }
    recent_.emplace_back(time, *record.head);
  }
  last_time_ = std::max(last_time_, time);
  return detail;
}

std::string contouring_reason(const HeadRecord& record) {
  if (!record.head) return "no head: " + record.state;
  // The first rejection in the table's order (flags.hpp), then any rejection
  // the table does not know (an earlier stage's "-rejected"), in the
  // reading's order.
  const std::string* reason = nullptr;
  std::size_t reason_rank = 0;
  for (const std::string& f : record.flags) {
    const std::size_t rank = flag_rank(f);
    const bool excludes = rank < head_flags().size() ? head_flags()[rank].excludes_contouring
                                                     : flag_info(f).excludes_contouring;
    if (excludes && (!reason || rank < reason_rank)) {
      reason = &f;
      reason_rank = rank;
    }
  }
  if (reason) return *reason;
  return record.outside_event ? std::string(outside_event_reason) : std::string();
}

void HeadSeriesSink::write(const Well& well, const ReadingInput& reading,
                           const HeadRecord& record) {
  if (!record.head) return;
  series_[well.id].push_back(
      {reading.time, *record.head, !record.contour() && record.reason != outside_event_reason});
}

}  // namespace levelhead
