#pragma once
// The columns of the CSV tables levelhead writes: one type and one unit per
// column name, the same in every table (docs/formats.md, "Columns of the
// CSV outputs", lists them). OutputSet writes a CSVT file beside every CSV
// from it, so that GDAL and the GISs built on it read numbers as numbers and
// ids as text (an id `007` stays `007`).
//
// Units: "length" is the table's length unit (m, or the `units` of the
// summary.json beside it: heads in the target's unit, convert in
// --out-unit); "CRS" the unit of the coordinates' CRS; any other text is
// the unit itself; empty for text and for ratios and statistics.

#include <string>
#include <string_view>
#include <vector>

namespace levelhead {

enum class ColumnType { text, integer, real, date, date_time };

struct OutputColumn {
  std::string_view name;
  ColumnType type = ColumnType::text;
  std::string_view unit;
};

// Every column name levelhead's tables use, in alphabetical order.
const std::vector<OutputColumn>& output_columns();

// The column of that name, or null (a column of the user's own, carried
// through by convert: text).
const OutputColumn* find_output_column(std::string_view name);

// GDAL's CSVT line for a header: "String","Real",... (text for a column
// levelhead does not know).
std::string csvt_line(const std::vector<std::string>& header);

// "String", "Integer", "Real", "Date", "DateTime" (GDAL's CSVT names).
std::string_view csvt_name(ColumnType type);

}  // namespace levelhead
