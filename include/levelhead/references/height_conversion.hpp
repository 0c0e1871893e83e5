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

#include <filesystem>
#include <optional>
#include <ostream>
#include <string>

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

// Writes `output` (CSV) and `summary` (JSON, in the same folder) all-or-nothing.
HeightConversionSummary convert_points_table(const Table& table, HeightConverter& converter,
                                             const HeightConversionOptions& options,
                                             const std::filesystem::path& output,
                                             const std::filesystem::path& summary);
// The same into streams, the summary only when `summary` is given. Rows
// are converted and written 65 536 at a time; when the conversion fails
// (a bad cell, a point that does not convert without `lenient`), the error
// is thrown after `csv` may have received the rows before it. Give a
// temporary file or a buffer (the path overload and the CLI do), never
// standard output directly.
HeightConversionSummary convert_points_table(const Table& table, HeightConverter& converter,
                                             const HeightConversionOptions& options,
                                             std::ostream& csv, std::ostream* summary);

}  // namespace levelhead
