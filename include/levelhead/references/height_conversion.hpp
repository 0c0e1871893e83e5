#pragma once
// `levelhead convert`: the height column of a points table into another
// vertical reference.
//
// In:  a points table (id, x, y, height, optional sigma, other columns kept),
//      its heights in the table's length unit, a HeightConverter.
// Out: the same table with height and sigma converted (in
//      options.output_unit: the CLI's default is the target reference's own
//      unit, so heights labelled EPSG:6360 are US survey feet) and the
//      columns reference, transform (operation name) and flags added;
//      a summary (JSON) with every operation used (name, pipeline, accuracy,
//      grids with SHA-256), PROJ version and warnings.
//      sigma_out^2 = sigma_in^2 + the variance of every step (PROJ's
//      accuracy, an offset's sigma or a tie's covariance); a step of unknown
//      variance is flagged.
// Errors: InputError for bad cells; ReferenceError naming the points that
//      could not be converted (unless lenient: then they are flagged, left
//      empty, and the summary says lenient).

#include <memory>
#include <optional>
#include <ostream>
#include <string>

#include "levelhead/core/output_files.hpp"
#include "levelhead/core/table.hpp"
#include "levelhead/core/units.hpp"
#include "levelhead/references/height_converter.hpp"

namespace levelhead {

struct HeightConversionOptions {
  bool lenient = false;
  std::optional<double> epoch;  // decimal year; written as an `epoch` column when given
  LengthUnit output_unit = LengthUnit::metre;  // of the written height and sigma
};

struct HeightConversionSummary {
  std::size_t points = 0, converted = 0, failed = 0;
};

// The conversion of a table that comes in parts (read_table_in_batches):
// each part's rows are converted and written as they come, the header with
// the first part. finish() throws when a point did not convert (unless
// lenient), and writes the summary. On an error `csv` may hold the rows
// before it: write it to a temporary file or a buffer, never standard
// output. Its first_non_finite() is for the caller to check (an OutputSet
// does at commit).
class PointsTableConverter {
 public:
  PointsTableConverter(HeightConverter& converter, const HeightConversionOptions& options,
                       CsvRows& csv);
  ~PointsTableConverter();
  PointsTableConverter(const PointsTableConverter&) = delete;
  PointsTableConverter& operator=(const PointsTableConverter&) = delete;

  // Every part has the first part's columns.
  void add(const Table& part);
  // The summary is written only when `summary` is given.
  HeightConversionSummary finish(std::ostream* summary);

 private:
  struct State;
  std::unique_ptr<State> state_;
};

}  // namespace levelhead
