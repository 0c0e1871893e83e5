#include "levelhead/heads/transducer.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <charconv>
#include <cmath>
#include <cstdint>
#include <limits>
#include <nlohmann/json.hpp>
#include <span>
#include <unordered_map>

#include "levelhead/core/bounds.hpp"
#include "levelhead/core/errors.hpp"
#include "levelhead/core/output_files.hpp"
#include "levelhead/core/rejects.hpp"
#include "levelhead/core/time.hpp"
#include "levelhead/core/units.hpp"
#include "levelhead/heads/levels.hpp"
#include "levelhead/heads/transducer_core.hpp"
#include "levelhead/version.hpp"
#include "util/grouped_spill.hpp"
#include "util/json_text.hpp"
#include "util/option_checks.hpp"
#include "util/text.hpp"
#include "util/time_audit.hpp"

namespace levelhead {

using namespace transducer;

void TransducerOptions::validate() const {
  const auto positive = util::require_positive;
  positive(density, "density", "kg/m^3");
  positive(gravity, "gravity", "m/s^2");
  positive(max_baro_distance, "max-baro-distance", "m");
  positive(max_baro_elevation_difference, "max-baro-elevation-difference", "m");
  positive(max_baro_gap_hours, "max-baro-gap", "hours");
  positive(max_check_gap_hours, "max-check-gap", "hours");
  positive(drift_limit, "drift-limit", "m");
  positive(sensor_sigma, "sensor-sigma", "m");
  if (!(manual_window_hours >= 0.0)) throw OptionError("manual-window must be 0 or more (hours)");
  if (min_efficiency_pairs < 2) throw OptionError("min-efficiency-pairs must be at least 2");
}

// h = p / (rho g), p in kPa (SI: 1 kPa = 1000 N/m^2).
double water_column(double pressure_kpa, double density, double gravity) {
  return pressure_kpa * 1000.0 / (density * gravity);
}

// Least squares through the origin on first differences (see the header).
std::optional<BarometricEfficiency> barometric_efficiency(const std::vector<double>& dd,
                                                          const std::vector<double>& db,
                                                          std::size_t min_pairs) {
  if (dd.size() != db.size() || dd.size() < min_pairs) return std::nullopt;
  double sxx = 0.0, sxy = 0.0;
  for (std::size_t i = 0; i < dd.size(); ++i) {
    sxx += db[i] * db[i];
    sxy += db[i] * dd[i];
  }
  // Barometric changes below 0.1 mm of water in all: nothing to regress on.
  if (!(sxx > 1e-8)) return std::nullopt;
  BarometricEfficiency be;
  be.value = sxy / sxx;
  double ss = 0.0;
  for (std::size_t i = 0; i < dd.size(); ++i) ss += std::pow(dd[i] - be.value * db[i], 2);
  be.sigma = std::sqrt(ss / static_cast<double>(dd.size() - 1) / sxx);
  be.pairs = dd.size();
  return be;
}

std::string BarometricEfficiency::text() const {
  const int decimals =
      sigma > 0.0 ? std::clamp(1 - static_cast<int>(std::floor(std::log10(sigma))), 0, 9) : 2;
  return fmt::format("{:.{}f} +- {:.{}f}", value, decimals, sigma, decimals);
}

namespace {

struct Sample {
  double time = 0.0, pressure = 0.0;
  std::size_t row = 0;
};

struct Sensor {
  std::string id, kind, well, barometer;
  std::optional<double> hung_depth, range_kpa, sigma, x, y, elevation;
  std::optional<TimeZone> zone;  // of the logger's clock, for times written without one
  std::size_t row = 0;
  std::vector<Sample> samples;  // a barometer's: they serve every sensor that names it
  std::size_t ordinal = 0;      // a well sensor's: its group in SampleSpill
  std::size_t records = 0;      // records read
  double last_time = std::numeric_limits<double>::lowest();  // of the last record read
};

// A well sensor's records, held back until the sensor's turn: archives of
// loggers run to tens of millions of rows.
using SampleSpill = util::GroupedSpill<Sample>;

std::map<std::string, Sensor> read_sensors(const Table& t, const WellSet& wells) {
  const std::size_t id = t.require_column("sensor"), kind = t.require_column("kind");
  const auto well = t.find_column("well"), baro = t.find_column("barometer"),
             hung = t.find_column("hung_depth");
  const auto range = t.find_column("range_kpa"), sigma = t.find_column("sigma"),
             zone = t.find_column("time_zone") ? t.find_column("time_zone")
                                               : t.find_column("utc_offset");  // its earlier name
  const auto x = t.find_column("x"), y = t.find_column("y"), elevation = t.find_column("elevation");
  std::map<std::string, Sensor> out;
  for (std::size_t r = 0; r < t.row_count(); ++r) {
    Sensor s;
    s.row = t.source_row(r);
    s.id = std::string(t.cell(r, id));
    s.kind = util::to_lower(t.cell(r, kind));
    if (s.kind != "vented" && s.kind != "absolute" && s.kind != "barometer") {
      throw InputError(t.location(r, kind), s.kind, "kind is vented, absolute or barometer");
    }
    if (well) s.well = std::string(t.cell(r, *well));
    if (baro) s.barometer = std::string(t.cell(r, *baro));
    if (hung) s.hung_depth = t.depth(r, *hung);
    if (range) s.range_kpa = t.number(r, *range);
    if (s.range_kpa && !(*s.range_kpa > 0.0)) {
      throw InputError(t.location(r, *range), std::string(t.cell(r, *range)),
                       "a sensor's full scale must be > 0 kPa (leave it empty if unknown)");
    }
    if (sigma) s.sigma = t.sigma(r, *sigma);
    if (x) s.x = t.number(r, *x);
    if (y) s.y = t.number(r, *y);
    if (elevation) s.elevation = t.height(r, *elevation);
    if (zone && !util::trim(t.cell(r, *zone)).empty()) {
      s.zone = TimeZone::find(t.cell(r, *zone));
      if (!s.zone)
        throw InputError(t.location(r, *zone), std::string(t.cell(r, *zone)),
                         "expected a fixed offset such as -06:00, UTC, or an IANA zone such as "
                         "America/Chicago (only for a logger whose clock follows daylight "
                         "saving)");
    }
    if (s.kind == "barometer") {
      if (!s.x || !s.y || !s.elevation) {
        throw InputError(t.location(r, id), s.id,
                         "a barometer needs x, y and elevation (m) to be matched to wells");
      }
    } else {
      if (!wells.index.count(s.well)) {
        throw InputError(t.location(r, well ? *well : id), s.well,
                         "this sensor's well is not in the wells table");
      }
      if (s.kind == "absolute" && s.barometer.empty()) {
        throw InputError(t.location(r, baro ? *baro : id), "",
                         "an absolute sensor needs a barometer to subtract the air pressure");
      }
    }
    if (!out.emplace(s.id, s).second)
      throw InputError(t.location(r, id), s.id, "two sensors of this id");
  }
  for (auto& [sid, s] : out) {
    if (s.barometer.empty()) continue;
    const auto b = out.find(s.barometer);
    if (b == out.end() || b->second.kind != "barometer") {
      throw InputError(CellLocation{t.source(), s.row, "barometer"}, s.barometer,
                       "no barometer of this id in the sensors table");
    }
  }
  return out;
}

// In time order; records of one time keep the order they were read in.
void sort_by_time(std::span<Sample> samples) {
  std::stable_sort(samples.begin(), samples.end(),
                   [](const Sample& a, const Sample& b) { return a.time < b.time; });
}

// Records are read in batches and kept as samples only: a barometer's in
// memory, a well sensor's in `spill`.
void read_records(const std::filesystem::path& path, const TableOptions& table,
                  std::map<std::string, Sensor>& sensors, SampleSpill& spill, TimeReader& times,
                  std::vector<RejectedRecord>* rejects) {
  read_table_in_batches(path, table, 100000, [&](Table& t) {
    const std::size_t sensor = t.require_column("sensor"), time = t.require_column("time");
    const std::size_t pressure = t.require_column("pressure");
    Sensor* last = nullptr;  // records come in runs of one sensor
    for (std::size_t r = 0; r < t.row_count(); ++r) try {
        const std::string_view id = t.cell(r, sensor);
        if (!last || last->id != id) {
          const auto it = sensors.find(std::string(id));
          if (it == sensors.end())
            throw InputError(t.location(r, sensor), std::string(id),
                             "this sensor is not in the sensors table");
          last = &it->second;
        }
        // Logger clocks kept in a local zone are brought to UTC; the hour
        // repeated when clocks go back is told apart by the record order.
        const double utc = times.read(t.cell(r, time), t.location(r, time),
                                      last->zone ? &*last->zone : t.time_zone(), last->last_time);
        const auto p = t.number(r, pressure);
        if (!p)
          throw InputError(t.location(r, pressure), "", "every record needs its pressure (kPa)");
        const Sample sample{utc, *p, t.source_row(r)};
        if (last->kind == "barometer")
          last->samples.push_back(sample);
        else
          spill.add(last->ordinal, sample);
        last->last_time = utc;
        ++last->records;
      } catch (const InputError& e) {
        if (!rejects) throw;
        rejects->push_back(rejected_from(e));
      }
  });
  for (auto& [id, s] : sensors) sort_by_time(s.samples);
}

// Linear between the two samples around `time` when they are at most `gap` apart.
std::optional<double> interpolate(const std::vector<Sample>& samples, double time, double gap) {
  const auto after = std::lower_bound(samples.begin(), samples.end(), time,
                                      [](const Sample& s, double t) { return s.time < t; });
  if (after != samples.end() && std::abs(after->time - time) < 0.5) return after->pressure;
  if (after == samples.begin() || after == samples.end()) return std::nullopt;
  const Sample& a = *(after - 1);
  const Sample& b = *after;
  if (b.time - a.time > gap) return std::nullopt;
  return a.pressure + (time - a.time) / (b.time - a.time) * (b.pressure - a.pressure);
}

struct ManualReading {
  double time = 0.0;
  std::optional<double> depth;
};

// A reading of a well sensor: raw depth (with the hung depth, or 0 until
// calibrated), the barometer as water column, and the corrected depth.
struct Reading {
  double time = 0.0, raw = 0.0, baro_m = 0.0, depth = 0.0;
  std::size_t row = 0;
  unsigned flags = 0;
  bool has_baro = false;
  bool rejected() const { return (flags & rejecting_flags) != 0; }
};

// A manual row of the output levels table (its line in ManualPart::lines).
struct ManualRow {
  std::size_t well_rank = 0;
  double time = 0.0;
  std::size_t line = 0;
};

// A sensor reading for the output levels table, formatted when written;
// held back by well rank until the table is written.
struct WrittenReading {
  double time = 0.0, depth = 0.0;  // s UTC, m
  std::uint32_t sensor = 0;        // the well sensor's ordinal (Sensor::ordinal)
  std::uint32_t flags = 0;
};
using WrittenSpill = util::GroupedSpill<WrittenReading>;

// Whether a time in `sorted` lies within `window` of `time`.
bool within(const std::vector<double>& sorted, double time, double window) {
  const auto after = std::lower_bound(sorted.begin(), sorted.end(), time - window);
  return after != sorted.end() && *after <= time + window;
}

// The non-rejected reading nearest `time`, at most `gap` away.
const Reading* nearest_valid(const std::vector<Reading>& readings, double time, double gap) {
  const auto at = std::lower_bound(readings.begin(), readings.end(), time,
                                   [](const Reading& r, double t) { return r.time < t; });
  const Reading* best = nullptr;
  for (auto it = at; it != readings.end() && it->time - time <= gap; ++it) {
    if (!it->rejected()) {
      best = &*it;
      break;
    }
  }
  for (auto it = at; it != readings.begin();) {
    --it;
    if (time - it->time > gap) break;
    if (it->rejected()) continue;
    if (!best || time - it->time < best->time - time) best = &*it;
    break;
  }
  return best;
}

// The manual readings as `heads` needs them passed through: every row as
// given (under levelhead's column names), and the depths that check sensors.
struct ManualPart {
  std::vector<std::string> columns;  // of the output levels table
  std::unordered_map<std::string, std::vector<ManualReading>> by_well;  // by time
  std::unordered_map<std::string, std::vector<double>> times;           // by time
  std::map<std::string, std::size_t> well_rank;                         // output order
  std::vector<std::string> lines;                                       // formatted rows
  std::vector<ManualRow> rows;
};

ManualPart read_manual(const Table& manual, const WellSet& wells,
                       const std::map<std::string, Sensor>& sensors, TimeReader& times,
                       std::vector<RejectedRecord>* rejects) {
  // A zone-less time read in a declared zone is written with its offset, so
  // that levels.csv reads the same without the declaration.
  const TimeZone* declared = manual.time_zone()
                                 ? manual.time_zone()
                                 : (times.default_zone() ? &*times.default_zone() : nullptr);
  ManualPart part;
  const std::size_t well_col = manual.require_column("well"),
                    time_col = manual.require_column("time");
  const std::size_t depth_col = manual.require_column("depth");
  const auto status_col = manual.find_column("status");
  // The output speaks levelhead's column names, whatever the column map.
  part.columns = manual.column_names();
  for (const char* ours : {"well", "time", "depth", "status", "sigma", "method", "flags", "above",
                           "density", "temperature", "salinity"}) {
    if (const auto c = manual.find_column(ours)) part.columns[*c] = ours;
  }
  for (const char* extra : {"sigma", "method", "flags"}) {
    if (std::find(part.columns.begin(), part.columns.end(), extra) == part.columns.end())
      part.columns.emplace_back(extra);
  }
  // Output order: by well id, then time.
  for (std::size_t r = 0; r < manual.row_count(); ++r)
    part.well_rank[std::string(manual.cell(r, well_col))];
  for (const auto& [id, sensor] : sensors) {
    if (sensor.kind != "barometer") part.well_rank[sensor.well];
  }
  std::size_t rank = 0;
  for (auto& [w, k] : part.well_rank) k = rank++;
  for (std::size_t r = 0; r < manual.row_count(); ++r) try {
      const std::string well(manual.cell(r, well_col));
      const double when =
          times.read(manual.cell(r, time_col), manual.location(r, time_col), manual.time_zone());
      const auto as_written = parse_iso8601(manual.cell(r, time_col));
      const bool add_offset = declared && as_written->had_time && !as_written->had_zone;
      if (!wells.index.count(well)) {
        throw InputError(manual.location(r, well_col), well, "this well is not in the wells table");
      }
      // Checked by the rules `heads` reads them with, so that a bad cell is
      // named here, in the user's table, not later in the levels.csv written
      // from it. Only a numeric depth is a check of a sensor.
      const LevelValue level =
          read_level_value(manual, r, depth_col, status_col, bounds::max_depth_to_water);
      part.by_well[well].push_back(ManualReading{when, level.depth});
      std::string line;
      for (std::size_t c = 0; c < part.columns.size(); ++c) {
        if (c) line += ',';
        if (c == time_col && add_offset)
          line += format_with_offset(when, declared->offset_at(when));
        else if (c < manual.column_names().size())
          append_csv_cell(line, manual.cell(r, c));
      }
      part.rows.push_back({part.well_rank.at(well), when, part.lines.size()});
      part.lines.push_back(std::move(line));
    } catch (const InputError& e) {
      if (!rejects) throw;
      rejects->push_back(rejected_from(e));  // left out of levels.csv
    }
  for (auto& [w, list] : part.by_well) {
    std::sort(list.begin(), list.end(),
              [](const ManualReading& a, const ManualReading& b) { return a.time < b.time; });
    for (const ManualReading& m : list) part.times[w].push_back(m.time);
  }
  return part;
}

// A barometer too far from its well, or too far above or below it, does not
// measure the well's air pressure: an error naming the sensor's row.
void check_barometer(const Sensor& sensor, const Sensor& baro, const Well& well,
                     const std::string& sensors_file, const TransducerOptions& options,
                     SensorSummary& s) {
  const double distance = std::hypot(*baro.x - well.x, *baro.y - well.y);
  if (distance > options.max_baro_distance) {
    throw InputError(
        CellLocation{sensors_file, sensor.row, "barometer"}, baro.id,
        fmt::format("barometer '{}' is {:.0f} m from well '{}', beyond --max-baro-distance "
                    "({:.0f} m): its air pressure may not be the well's",
                    baro.id, distance, well.id, options.max_baro_distance));
  }
  if (!well.ground) {
    ++s.flags["baro-elevation-unchecked"];
  } else if (std::abs(*baro.elevation - *well.ground) > options.max_baro_elevation_difference) {
    throw InputError(CellLocation{sensors_file, sensor.row, "barometer"}, baro.id,
                     fmt::format("barometer '{}' stands {:.0f} m above or below well '{}', beyond "
                                 "--max-baro-elevation-difference ({:.0f} m)",
                                 baro.id, std::abs(*baro.elevation - *well.ground), well.id,
                                 options.max_baro_elevation_difference));
  }
}

// Raw depths (with the hung depth, or 0 until calibrated): depth = hung -
// p_w / (rho g), p_w the pressure less the barometer's (interpolated) for an
// absolute sensor. A sample without a barometer sample near it gives none
// (qa.csv: baro-gap); a pressure outside the range or below the water is
// flagged for rejection.
std::vector<Reading> raw_readings(const Sensor& sensor, std::span<const Sample> samples,
                                  const Sensor* baro, const SensorSummary& s,
                                  const TransducerOptions& options, std::ostream& qa_csv,
                                  std::map<std::string, std::size_t>& flags) {
  std::vector<Reading> readings;
  readings.reserve(samples.size());
  const double hung = sensor.hung_depth.value_or(0.0);
  const double baro_gap = options.max_baro_gap_hours * 3600.0;
  for (const Sample& sample : samples) {
    std::optional<double> air;
    if (baro) air = interpolate(baro->samples, sample.time, baro_gap);
    if (sensor.kind == "absolute" && !air) {
      qa_csv << csv_cell(sensor.id) << ',' << csv_cell(sensor.well) << ','
             << format_utc(sample.time) << ',' << sample.row
             << ",baro-gap,no barometer sample within " << options.max_baro_gap_hours
             << " h on each side\n";
      ++flags["baro-gap"];
      continue;
    }
    const double water = sensor.kind == "absolute" ? sample.pressure - *air : sample.pressure;
    Reading reading;
    reading.time = sample.time;
    reading.raw = hung - water_column(water, s.density, s.gravity);
    reading.baro_m = air ? water_column(*air, s.density, s.gravity) : 0.0;
    reading.has_baro = air.has_value();
    reading.row = sample.row;
    if (sensor.range_kpa && (sample.pressure < 0.0 || sample.pressure > *sensor.range_kpa)) {
      reading.flags |= range_rejected;
    } else if (water < 0.0) {
      reading.flags |= dry_rejected;
    }
    readings.push_back(reading);
  }
  return readings;
}

// The manual checks of one sensor: offset = manual depth - the nearest valid
// raw depth.
SensorChecks find_checks(const std::vector<ManualReading>& manual,
                         const std::vector<Reading>& readings, const TransducerOptions& options,
                         SensorSummary& s) {
  SensorChecks c;
  const double check_gap = options.max_check_gap_hours * 3600.0;
  for (const ManualReading& m : manual) {
    if (!m.depth) continue;
    if (const Reading* nearest = nearest_valid(readings, m.time, check_gap))
      c.checks.push_back({m.time, *m.depth, nearest->raw, *m.depth - nearest->raw});
  }
  s.largest_drift = mark_drift(c, options.drift_limit);
  s.checks = c.checks.size();
  return c;
}

void write_checks(std::ostream& checks_csv, const Sensor& sensor, const SensorChecks& c,
                  const SensorSummary& s) {
  for (std::size_t i = 0; i < c.checks.size(); ++i) {
    const Check& check = c.checks[i];
    const double drift = i ? check.offset - c.checks[i - 1].offset : 0.0;
    checks_csv << csv_cell(sensor.id) << ',' << csv_cell(sensor.well) << ','
               << format_utc(check.time) << ','
               << fmt::format("{:.4f},{:.4f},{:.4f},{}", check.manual,
                              check.transducer + (s.calibrated ? *s.hung_depth : 0.0),
                              check.offset - (s.calibrated ? *s.hung_depth : 0.0),
                              i ? fmt::format("{:+.4f}", drift) : "")
               << ',' << (c.rejected_after[i] ? "yes" : "no") << '\n';
  }
}

// One table for `heads`, by well and then time, so readings arrive in order:
// per well, its manual rows (in table order) and its sensors' readings (by
// sensor id, then as read), sorted stably by time.
void write_levels(std::ostream& levels, const ManualPart& manual, LengthUnit unit_of_table,
                  const std::vector<const Sensor*>& sensors, WrittenSpill& readings,
                  const TransducerOptions& options) {
  const std::vector<std::string>& columns = manual.columns;
  const auto index_of = [&](const char* name) {
    return static_cast<std::size_t>(std::find(columns.begin(), columns.end(), name) -
                                    columns.begin());
  };
  const std::size_t depth_index = index_of("depth"), well_index = index_of("well"),
                    time_index = index_of("time");
  const std::size_t sigma_index = index_of("sigma"), method_index = index_of("method"),
                    flags_index = index_of("flags");
  for (std::size_t c = 0; c < columns.size(); ++c) levels << (c ? "," : "") << csv_cell(columns[c]);
  levels << '\n';
  // In the manual table's unit, which heads reads the whole table in.
  const double unit = metres_per_unit(unit_of_table);
  std::vector<std::string> cells(columns.size());
  std::string line;
  const auto write_reading = [&](const Sensor& sensor, const WrittenReading& r) {
    for (std::string& cell : cells) cell.clear();
    cells[well_index] = sensor.well;
    cells[time_index] = format_utc(r.time);
    cells[depth_index] = fmt::format("{:.4f}", r.depth / unit);
    cells[sigma_index] = fmt::format("{:.4f}", sensor.sigma.value_or(options.sensor_sigma) / unit);
    cells[method_index] = "transducer";
    for (const auto& [flag, name] : flag_names) {
      if (!(r.flags & flag)) continue;
      if (!cells[flags_index].empty()) cells[flags_index] += ' ';
      cells[flags_index] += name;
    }
    line.clear();
    for (std::size_t c = 0; c < cells.size(); ++c) {
      if (c) line += ',';
      append_csv_cell(line, cells[c]);
    }
    levels << line << '\n';
  };
  std::vector<std::vector<std::size_t>> manual_of_rank(readings.groups());
  for (std::size_t i = 0; i < manual.rows.size(); ++i)
    manual_of_rank[manual.rows[i].well_rank].push_back(i);
  struct Row {
    double time;
    const ManualRow* manual;  // or
    const WrittenReading* reading;
  };
  std::vector<Row> rows;
  readings.visit([&](std::size_t rank, std::span<WrittenReading> written) {
    rows.clear();
    for (const std::size_t i : manual_of_rank[rank])
      rows.push_back({manual.rows[i].time, &manual.rows[i], nullptr});
    for (const WrittenReading& r : written) rows.push_back({r.time, nullptr, &r});
    std::stable_sort(rows.begin(), rows.end(),
                     [](const Row& a, const Row& b) { return a.time < b.time; });
    for (const Row& row : rows) {
      if (row.manual) {
        levels << manual.lines[row.manual->line] << '\n';
        continue;
      }
      write_reading(*sensors[row.reading->sensor], *row.reading);
    }
  });
}

nlohmann::json summary_json(const TransducerSummary& summary, const TransducerOptions& options,
                            const TimeReader& times) {
  nlohmann::json json;
  json["levelhead_version"] = version_string();
  json["format_version"] = output_format_version;
  json["command"] = "transducer";
  json["units"] = "m";
  json["manual_readings"] = summary.manual;
  json["transducer_readings_written"] = summary.written;
  json["rejected"] = summary.rejected;
  json["options"] = {{"density_kg_m3", options.density},
                     {"gravity_m_s2", options.gravity},
                     {"max_baro_distance_m", options.max_baro_distance},
                     {"max_baro_elevation_difference_m", options.max_baro_elevation_difference},
                     {"max_baro_gap_hours", options.max_baro_gap_hours},
                     {"max_check_gap_hours", options.max_check_gap_hours},
                     {"drift_limit_m", options.drift_limit},
                     {"manual_window_hours", options.manual_window_hours}};
  json["head_rule"] =
      "depth = hung_depth - p_water / (rho g) + offset(t); p in Pa, rho in kg/m^3, g in m/s^2";
  nlohmann::json list = nlohmann::json::array();
  for (const SensorSummary& s : summary.sensors) {
    nlohmann::json j = {
        {"sensor", s.sensor},
        {"well", s.well},
        {"kind", s.kind},
        {"barometer", s.barometer},
        {"records", s.records},
        {"written", s.written},
        {"near_manual", s.near_manual},
        {"flags", s.flags},
        {"density_kg_m3", s.density},
        {"gravity_m_s2", s.gravity},
        {"hung_depth_m", s.hung_depth ? nlohmann::json(*s.hung_depth) : nlohmann::json(nullptr)},
        {"hung_depth_calibrated", s.calibrated},
        {"checks", s.checks},
        {"largest_drift_m", s.largest_drift}};
    j["barometric_efficiency"] = s.efficiency ? nlohmann::json{{"value", s.efficiency->value},
                                                               {"sigma", s.efficiency->sigma},
                                                               {"pairs", s.efficiency->pairs}}
                                              : nlohmann::json(nullptr);
    list.push_back(std::move(j));
  }
  json["sensors"] = std::move(list);
  json["times"] = util::time_audit_json(times);
  return json;
}

}  // namespace

TransducerSummary reduce_transducers(const WellSet& wells, const Table& sensors_table,
                                     const std::filesystem::path& records,
                                     const TableOptions& records_table, const Table& manual,
                                     const TransducerOptions& options, TimeReader& times,
                                     const std::filesystem::path& folder) {
  options.validate();
  std::map<std::string, Sensor> sensors = read_sensors(sensors_table, wells);
  std::vector<Sensor*> well_sensors;  // by ordinal: the sensors in wells, in id order
  for (auto& [id, sensor] : sensors) {
    if (sensor.kind == "barometer") continue;
    sensor.ordinal = well_sensors.size();
    well_sensors.push_back(&sensor);
  }
  // Made first: the records held back go to a temporary file in its folder.
  OutputSet out(folder);
  std::vector<RejectedRecord> rejects;
  std::vector<RejectedRecord>* set_aside = options.keep_going ? &rejects : nullptr;
  // A quarter of the default in memory: a sensor's own working set (its
  // samples and readings, 72 bytes a record) comes on top.
  constexpr std::size_t records_in_memory = std::size_t{1} << 18;
  SampleSpill samples(well_sensors.size(), out.folder(), records_in_memory);
  read_records(records, records_table, sensors, samples, times, set_aside);
  ManualPart part = read_manual(manual, wells, sensors, times, set_aside);
  times.require_consistent_zones();

  std::ostream& checks_csv = out.open("checks.csv");
  checks_csv << "sensor,well,time,manual_depth,transducer_depth,offset,drift,rejected_until_next\n";
  std::ostream& qa_csv = out.open("qa.csv");
  qa_csv << "sensor,well,time,row,flag,detail\n";

  TransducerSummary summary;
  summary.manual = manual.row_count();
  const double check_gap = options.max_check_gap_hours * 3600.0;
  const double window = options.manual_window_hours * 3600.0;
  // The readings written, by well rank, until the table is written.
  WrittenSpill written(part.well_rank.size(), out.folder(), records_in_memory);
  // One well sensor at a time, in id order, with its records alone.
  samples.visit([&](std::size_t ordinal, std::span<Sample> sensor_samples) {
    const Sensor& sensor = *well_sensors[ordinal];
    const std::string& id = sensor.id;
    sort_by_time(sensor_samples);
    SensorSummary s;
    s.sensor = id;
    s.well = sensor.well;
    s.kind = sensor.kind;
    s.barometer = sensor.barometer;
    s.records = sensor.records;
    const Well& well = wells.wells[wells.index.at(sensor.well)];
    s.density = well.density.value_or(options.density);
    s.gravity = options.gravity;
    const Sensor* baro = sensor.barometer.empty() ? nullptr : &sensors.at(sensor.barometer);
    if (baro) check_barometer(sensor, *baro, well, sensors_table.source(), options, s);
    std::vector<Reading> readings =
        raw_readings(sensor, sensor_samples, baro, s, options, qa_csv, s.flags);

    const SensorChecks checks = find_checks(part.by_well[sensor.well], readings, options, s);
    if (!sensor.hung_depth) {
      if (checks.checks.empty()) {
        throw InputError(
            CellLocation{sensors_table.source(), sensor.row, "hung_depth"}, "",
            fmt::format("sensor '{}' has no hung depth and no manual reading of well '{}' within "
                        "{} h of a record to calibrate it on; give hung_depth or a tape reading",
                        id, sensor.well, options.max_check_gap_hours));
      }
      s.calibrated = true;
      s.hung_depth = checks.checks.front().offset;
    } else {
      s.hung_depth = sensor.hung_depth;
    }
    write_checks(checks_csv, sensor, checks, s);

    // Corrected depths, the flags, and the readings written.
    std::vector<double> depth_changes, baro_changes;
    const Reading* previous = nullptr;
    const std::vector<double>& near = part.times[sensor.well];
    const std::size_t rank = part.well_rank.at(sensor.well);
    std::size_t interval = 0;
    for (std::size_t k = 0; k < readings.size(); ++k) {
      Reading& r = readings[k];
      r.depth = r.raw + correction_at(r.time, checks, check_gap, interval, r.flags);
      // Pairs of successive readings at most a day apart: longer steps mix
      // in the aquifer's own changes.
      if (previous && !previous->rejected() && !r.rejected() && r.has_baro && previous->has_baro &&
          r.time - previous->time <= 86400.0) {
        depth_changes.push_back(r.depth - previous->depth);
        baro_changes.push_back(r.baro_m - previous->baro_m);
      }
      previous = &r;
      if (within(near, r.time, window)) {
        ++s.near_manual;
        continue;
      }
      // A pressure outside the sensor's range or below the water gives no
      // depth at all: listed, not written.
      const bool no_depth = (r.flags & (range_rejected | dry_rejected)) != 0;
      for (const auto& [flag, name] : flag_names) {
        if (!(r.flags & flag)) continue;
        ++s.flags[name];
        if (flag & rejecting_flags) {
          qa_csv << csv_cell(id) << ',' << csv_cell(sensor.well) << ',' << format_utc(r.time) << ','
                 << r.row << ',' << name << (no_depth ? ",no depth written\n" : ",not contoured\n");
        }
      }
      if (no_depth) continue;
      written.add(rank, {r.time, r.depth, static_cast<std::uint32_t>(ordinal), r.flags});
      ++s.written;
    }
    if (baro)
      s.efficiency =
          barometric_efficiency(depth_changes, baro_changes, options.min_efficiency_pairs);
    summary.written += s.written;
    summary.sensors.push_back(std::move(s));
  });

  write_levels(out.open("levels.csv"), part, manual.length_unit(),
               std::vector<const Sensor*>(well_sensors.begin(), well_sensors.end()), written,
               options);
  summary.rejected = rejects.size();
  if (options.keep_going) write_rejects(out.open("rejects.csv"), rejects);
  summary.zoneless_times = times.zoneless_read_in();
  out.open("summary.json") << util::json_text(summary_json(summary, options, times)) << '\n';
  out.commit();
  return summary;
}

}  // namespace levelhead

namespace levelhead::transducer {

double mark_drift(SensorChecks& c, double drift_limit) {
  c.rejected_after.assign(c.checks.size(), false);
  double largest = 0.0;
  for (std::size_t i = 1; i < c.checks.size(); ++i) {
    const double drift = c.checks[i].offset - c.checks[i - 1].offset;
    if (std::abs(drift) > drift_limit) c.rejected_after[i - 1] = true;
    largest = std::max(largest, std::abs(drift));
  }
  return largest;
}

// Linear interpolation of the check offsets in time (the drift correction
// of common logger practice), with the flags of transducer_core.hpp.
double correction_at(double time, const SensorChecks& c, double check_gap, std::size_t& interval,
                     unsigned& flags) {
  const std::vector<Check>& checks = c.checks;
  if (checks.empty()) {
    flags |= unchecked;
    return 0.0;
  }
  if (time <= checks.front().time) {
    if (time < checks.front().time - check_gap) flags |= beyond_checks;
    return checks.front().offset;
  }
  if (time >= checks.back().time) {
    if (time > checks.back().time + check_gap) flags |= beyond_checks;
    return checks.back().offset;
  }
  while (checks[interval + 1].time < time) ++interval;
  if (c.rejected_after[interval]) {
    flags |= drift_rejected;
    return checks[interval].offset;
  }
  const Check& a = checks[interval];
  const Check& b = checks[interval + 1];
  const double f = (time - a.time) / (b.time - a.time);
  return a.offset + f * (b.offset - a.offset);
}

}  // namespace levelhead::transducer
