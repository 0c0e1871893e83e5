#pragma once
// Pressure-transducer records to depths to water, checked against the
// manual readings (`levelhead transducer`).
//
// In:  wells (wells.hpp; x, y, ground, density), a sensors table, a records
//      table and the manual water-level readings (the levels table of
//      `heads`).
//      Sensors: sensor (id), kind (vented, absolute, barometer), well (for
//      vented and absolute), barometer (the barometer that compensates an
//      absolute sensor, optional for a vented one: then used only to
//      estimate the barometric efficiency), hung_depth (m below the
//      measuring point; empty: calibrated on the first manual check),
//      range_kpa (the sensor's full scale), sigma (m, the sensor's accuracy
//      as water depth), time_zone (the zone of the logger's clock for times
//      written without one: -06:00, or America/Chicago for a clock that
//      follows daylight saving; earlier name utc_offset), x, y, elevation
//      (barometers).
//      Records: sensor, time (ISO 8601), pressure (kPa).
// Out: levels.csv: the manual readings as given and, per well sensor, one
//      reading per record: depth = hung_depth - p_w / (rho g) + c(t), with
//      p_w the water pressure (kPa; absolute sensors minus the barometer,
//      interpolated linearly in time), rho the well's density (else the
//      option), g the option (standard gravity by default), and c(t) the
//      offset from the manual checks, linear in time between checks and the
//      nearest check's beyond them. Each reading has sigma, method =
//      transducer and flags; readings within the manual window of a manual
//      reading are left out (the manual one is the better measurement).
//      checks.csv (each check: manual and transducer depth, offset, drift),
//      qa.csv (readings flagged or left out, with the reason), summary.json
//      (per sensor: counts, density and gravity used, drift, barometric
//      efficiency with its standard error where the record allows).
// Flags, never silent corrections: transducer-drift-rejected (the offset
//      changed by more than drift_limit between two checks: the readings
//      between them keep the earlier offset and are not contoured),
//      transducer-range-rejected (pressure outside 0..range_kpa) and
//      transducer-dry-rejected (water pressure below zero: the sensor is out
//      of the water): no depth is written, qa.csv lists them;
//      transducer-beyond-checks (before the first or after the
//      last check: the nearest offset is used). A reading without a
//      barometer sample within max_baro_gap on each side is not computed:
//      qa.csv lists it as baro-gap.
// Errors: InputError naming the table, row and column for a bad cell, an
//      unknown sensor, well or barometer, a barometer beyond the distance or
//      elevation limits, an absolute sensor without a barometer, a sensor
//      without a hung depth and without any manual check; OptionError for an
//      option out of range.

#include <cstddef>
#include <filesystem>
#include <map>
#include <optional>
#include <string>
#include <vector>

#include "levelhead/core/table.hpp"
#include "levelhead/heads/wells.hpp"

namespace levelhead {

struct TransducerOptions {
  double density = 1000.0;                       // kg/m^3, for wells that give none
  double gravity = 9.80665;                      // m/s^2, standard gravity (3rd CGPM, 1901)
  double max_baro_distance = 15000.0;            // m between a well and its barometer
  double max_baro_elevation_difference = 100.0;  // m
  double max_baro_gap_hours = 2.0;               // longest gap between barometer samples bridged
  double max_check_gap_hours = 1.0;              // a manual check needs a record sample this close
  double drift_limit = 0.03;                     // m, largest change of offset between two checks
  double sensor_sigma = 0.01;                    // m, for sensors that give none
  double manual_window_hours = 0.25;  // record samples this close to a manual reading are left out
  std::size_t min_efficiency_pairs =
      48;  // paired changes needed to estimate a barometric efficiency
  // A record or manual reading that cannot be read goes to rejects.csv and
  // the others go on (levelhead/core/rejects.hpp); false: the first one stops.
  bool keep_going = false;
  void validate() const;
};

// Water column (m) above a sensor from its water pressure (kPa): h = p / (rho g).
double water_column(double pressure_kpa, double density, double gravity);

struct BarometricEfficiency {
  double value = 0.0, sigma = 0.0;  // dimensionless, 0..1 for a confined aquifer
  std::size_t pairs = 0;
  // "0.0001 +- 0.0009": decimals to two significant digits of the sigma, as
  // the console and the report both give it.
  std::string text() const;
};

// Barometric efficiency by least squares on first differences: the change
// of depth to water against the change of barometric pressure as water
// height between successive readings at most a day apart, dd = BE db,
// fitted through the origin (Rasmussen and Crawford
// 1997, Ground Water 35(3); the first differences remove slow trends).
// nullopt with fewer than min_pairs pairs or no barometric variation.
std::optional<BarometricEfficiency> barometric_efficiency(const std::vector<double>& depth_changes,
                                                          const std::vector<double>& baro_changes,
                                                          std::size_t min_pairs);

struct SensorSummary {
  std::string sensor, well, kind, barometer;
  std::size_t records = 0, written = 0, near_manual = 0;
  std::map<std::string, std::size_t> flags;  // flag -> readings
  double density = 0.0, gravity = 0.0;
  std::optional<double> hung_depth;  // m, as given or calibrated
  bool calibrated = false;           // hung depth from the first check
  std::size_t checks = 0;
  double largest_drift = 0.0;  // m between two checks
  std::optional<BarometricEfficiency> efficiency;
};

struct TransducerSummary {
  std::vector<SensorSummary> sensors;
  std::size_t manual = 0, written = 0;
  std::size_t rejected = 0;  // records and manual readings set aside (keep_going)
  // Times written without a zone, by the zone they were read in (time.hpp).
  std::map<std::string, std::size_t> zoneless_times;
};

// The records table is read from `records` in batches (it may hold tens of
// millions of rows) and kept as compact samples; memory grows by about 100
// bytes per record. Times are read by `times` (time.hpp): a record in its
// logger's zone, else the records table's, else the default; a manual
// reading in the levels table's zone, else the default. A manual time read
// in a declared zone is written to levels.csv with its UTC offset.
TransducerSummary reduce_transducers(const WellSet& wells, const Table& sensors,
                                     const std::filesystem::path& records,
                                     const TableOptions& records_table, const Table& manual_levels,
                                     const TransducerOptions& options, TimeReader& times,
                                     const std::filesystem::path& folder);

}  // namespace levelhead
