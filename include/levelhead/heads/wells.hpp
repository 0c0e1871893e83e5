#pragma once
// Wells and the survey history of their measuring points.
//
// Wells table: well (the id; earlier name id), x, y (project CRS), optional ground (ground
// elevation, m, in the reference named by ground_datum, default the target reference), screen_top
// and screen_bottom (depth below ground, m), nest, aquifer, density (kg/m^3, for saline wells),
// column_density (kg/m^3, the mean density of the water between the environmental-head reference
// elevation and the screen). Measuring-point table: well, valid_from (ISO 8601 date or time),
// height (m), datum (a reference), sigma (m), optional point (a point id of the adjusted network:
// height, sigma and reference are then taken from it), source, method (levelled, gnss, hand-level,
// ...), reason (survey, resurvey, casing-cut, repair, replaced), moves_with (a monitored point
// whose movement since valid_from the measuring point follows: see heads.hpp). Errors: InputError
// naming the row for a bad cell, an unknown well, a record with neither height nor point, two
// records of a well from the same time.

#include <optional>
#include <string>
#include <unordered_map>
#include <vector>

#include "levelhead/core/table.hpp"
#include "levelhead/core/time.hpp"
#include "levelhead/core/units.hpp"

namespace levelhead {

struct Well {
  std::string id;
  double x = 0.0, y = 0.0;
  std::optional<double> ground;  // m
  std::string ground_datum;
  std::optional<double> screen_top, screen_bottom;  // m below ground
  std::string nest, aquifer;
  std::optional<double> density;  // kg/m^3 of the water in the well
  std::optional<double>
      column_density;  // kg/m^3, mean between the environmental reference and the screen
  std::size_t row = 0;
};

struct MeasuringPointRecord {
  std::string well;
  double valid_from = 0.0;  // s, UTC
  std::string valid_from_text;
  std::optional<double> height;               // m, in `datum`
  LengthUnit table_unit = LengthUnit::metre;  // the unit the table gave it in
  std::string datum;
  std::optional<double> sigma;  // m
  std::string point;            // network point id
  std::string source, method, reason;
  std::string moves_with;  // monitored point id, or empty
  std::size_t row = 0;

  // A casing cut, repair or replacement breaks the series: never interpolate across it.
  bool starts_new_series() const;
};

struct WellSet {
  std::string file;
  std::vector<Well> wells;
  std::unordered_map<std::string, std::size_t> index;
};

WellSet read_wells(const Table& table);
// valid_from is read by `times` (time.hpp: the table's zone, else the
// default); without it, as UTC.
std::vector<MeasuringPointRecord> read_measuring_points(const Table& table, const WellSet& wells,
                                                        TimeReader* times = nullptr);

}  // namespace levelhead
