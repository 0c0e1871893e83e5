#pragma once
// Field-book reduction: rod readings to sections.
//
// In:  a field-book table, one row per sight (see docs/formats.md):
//      run, date, setup, sight (back | fore | side), point, reading,
//      optional reading2 (double-reading schemes), distance, temperature,
//      remark. Readings and distances in the table's length unit, converted
//      to metres; temperature in degrees Celsius.
// Out: per setup: height difference with every correction and check;
//      per section between consecutive named points: dh = H(to) - H(from),
//      length (sum of sights), setups; side shots (intermediate sights) as
//      sections flagged as unchecked; repeated runs over the same pair of
//      points merged into their mean, with the spread checked against
//      k mm * sqrt(km) and a failing pair flagged, never dropped; a run
//      closed on its own start through turning points only gives a closure.
// Errors: InputError naming the row for a bad cell, a setup without exactly
//      one back and one fore sight, a broken chain (a backsight that is not
//      the previous foresight), a run that does not start and end on a named
//      point, an implausible reading; OptionError for bad options.
//
// Corrections (each recorded per setup; see docs/methods.md):
//   collimation   -c * (d_back - d_fore)            c from a two-peg test
//   curvature and refraction  -(1 - k) / (2 R) * (d_back^2 - d_fore^2)
//   rod scale     (B - F) * s * 1e-6                 s in ppm
//   rod expansion alpha * 1e-6 * (B (T_B - T0) - F (T_F - T0))

#include <cstddef>
#include <optional>
#include <string>
#include <vector>

#include "levelhead/core/table.hpp"
#include "levelhead/levelling/precision.hpp"

namespace levelhead {

enum class SightKind { back, fore, side };
std::string to_string(SightKind kind);

struct Sight {
  std::string run, date;
  std::string instrument, observer;  // optional columns; groups for variance components
  long long setup = 0;
  SightKind kind = SightKind::back;
  std::string point;                  // empty: an anonymous turning point
  double reading = 0.0;               // m
  std::optional<double> reading2;     // m, second reading of a double-reading scheme
  std::optional<double> distance;     // m
  std::optional<double> temperature;  // degrees C
  std::string remark;
  std::size_t row = 0;
};

struct FieldBook {
  std::string file;
  std::vector<Sight> sights;
};

FieldBook read_field_book(const Table& table);

// Mean radius of the Earth for curvature (m): IUGG mean radius 6371.0088 km
// rounded to 6371 km (common practice; the 0.0001 % difference is far below
// any levelling correction).
inline constexpr double earth_radius_m = 6371000.0;

struct FieldBookOptions {
  // Checks (flags; defaults from common practice for third-order and
  // monitoring levelling with a digital or automatic level).
  double max_sight_length = 60.0;            // m
  double max_setup_imbalance = 5.0;          // m, |d_back - d_fore| per setup
  double max_section_imbalance = 10.0;       // m, |sum(d_back - d_fore)| per section
  double min_reading = 0.5;                  // m, line of sight above the ground (refraction)
  double double_reading_tolerance = 0.0005;  // m, |dh1 - dh2| per setup
  // Plausibility (errors): a reading outside [0, rod_length] cannot be right.
  double rod_length = 5.0;  // m
  // Corrections.
  std::optional<double> collimation_mm_per_m;  // two-peg result, mm per m of sight
  std::optional<double> collimation_arcsec;    // or as an angle (positive: sight rises)
  bool curvature_refraction = true;
  double refraction_coefficient = 0.13;
  double rod_scale_ppm = 0.0;
  std::optional<double> rod_expansion_ppm_per_c;
  double rod_reference_temperature_c = 20.0;
  // Repeated runs over a section: |spread| <= k mm * sqrt(length in km).
  // Runs of a section agree within k mm * sqrt(km): the section closure of
  // the levelling class (precision.hpp), or given.
  double section_tolerance_mm_per_sqrt_km =
      default_levelling_class().section_closure_mm_per_sqrt_km;
  std::string levelling_class = std::string(default_levelling_class().name);  // empty: k given
  // Named points starting with this prefix (case-insensitive) are turning
  // points, not section ends. Empty: only anonymous points are turning points.
  std::string turning_point_prefix = "TP";

  void validate() const;
  // Collimation as a slope (m per m), 0 when none is given.
  double collimation_slope() const;
};

struct SetupReduction {
  std::string run, date;
  long long setup = 0;
  std::string back, fore;                              // point ids, empty for anonymous
  double back_reading = 0.0, fore_reading = 0.0;       // m (mean of the two in a double scheme)
  std::optional<double> back_distance, fore_distance;  // m
  double dh_observed = 0.0;                            // m, B - F
  std::optional<double> double_difference;             // m, (B1 - F1) - (B2 - F2)
  double collimation = 0.0, rod_scale = 0.0, rod_expansion = 0.0;  // m, corrections to dh
  std::optional<double> curvature_refraction;  // m; nullopt when distances are missing
  double dh = 0.0;                             // m, corrected
  std::optional<double> imbalance;             // m, d_back - d_fore
  std::vector<std::string> failed_checks;
  std::size_t first_row = 0;
};

struct ReducedSection {
  std::string from, to;
  double dh = 0.0;                        // m, H(to) - H(from); the mean when runs > 1
  std::optional<double> length;           // m, one-way (mean over runs)
  std::optional<double> levelled_length;  // m, all runs together
  long long setups = 0;                   // all runs together
  std::size_t runs = 1;
  std::string run, date;                           // run labels joined by '+'; date of the first
  std::string instrument, observer;                // of the runs, distinct ones joined by '+'
  bool side_shot = false;                          // from an intermediate sight: no check
  std::optional<double> imbalance;                 // m, accumulated d_back - d_fore (first run)
  std::optional<double> spread, spread_tolerance;  // m, repeated runs only
  std::vector<std::string> flags;                  // failed checks of the section or its setups
  std::vector<std::size_t> rows;                   // first field-book row of each run's part
};

// A section that returns to its own start through turning points only: its
// dh is a misclosure, judged like repeated runs.
struct RunClosure {
  std::string run, point;
  double misclosure = 0.0;          // m
  std::optional<double> length;     // m
  std::optional<double> tolerance;  // m, k mm * sqrt(length in km)
  bool passed = true;               // false also when there is no length to judge it
  std::size_t row = 0;              // row of the closing fore sight
};

struct FieldBookResult {
  std::vector<SetupReduction> setups;
  std::vector<RunClosure> closures;
  std::vector<ReducedSection> sections;  // merged, in order of first appearance
  std::size_t run_count = 0, side_shots = 0, failed_setups = 0, failed_sections = 0;
  std::size_t setups_without_distances = 0;
};

FieldBookResult reduce_field_book(const FieldBook& book, const FieldBookOptions& options);

}  // namespace levelhead
