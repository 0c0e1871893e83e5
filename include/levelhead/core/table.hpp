#pragma once
// Tables: the one reader every stage uses.
//
// In:  a path. Plain text tables (.csv, .tsv, .txt) go through a fast
//      built-in reader (separator `,`, `;` or tab, detected from the header;
//      RFC 4180 quoting). Anything else goes through GDAL/OGR (XLSX, ODS,
//      GeoPackage, Shapefile/DBF, GeoJSON, ...), every field read as text so
//      that GDAL's type guessing never changes a value (an id `007` stays
//      `007`). A point layer without x/y columns gets x and y from its geometry.
// Out: a Table of text cells, columns found by name, case-insensitively,
//      through an optional column map (our name -> the file's name).
//      Typed accessors parse numbers locale-free (decimal point only) and
//      convert lengths from the table's declared unit to metres.
// Errors: InputError naming file, row (header = row 1), column, the value and
//      what was expected. NaN and inf are never accepted.

#include <cstddef>
#include <filesystem>
#include <functional>
#include <map>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "levelhead/core/errors.hpp"
#include "levelhead/core/time.hpp"
#include "levelhead/core/units.hpp"

namespace levelhead {

// Our column name -> the column name in the file.
using ColumnMap = std::map<std::string, std::string>;

// Parses "ours=theirs,ours2=theirs2" (as given on the command line).
ColumnMap parse_column_map(std::string_view text);

struct TableOptions {
  ColumnMap column_map;
  LengthUnit length_unit = LengthUnit::metre;  // unit of every length-carrying column
  std::string layer;                           // OGR layer or sheet; empty = the first
  // The CRS the caller takes x and y in (e.g. "EPSG:32613"); when x and y
  // come from a layer's point geometry in another CRS, reading fails (an
  // InputError naming both) rather than mixing degrees and metres; read_table
  // also checks x and y against the CRS's area of use
  // (levelhead/references/coordinate_check.hpp). Empty: not checked.
  std::string xy_crs;
  // The zone of the table's times written without one (time.hpp); unset:
  // the command's default zone.
  std::optional<TimeZone> time_zone;
};

class Table {
 public:
  Table(std::string source, std::vector<std::string> column_names, TableOptions options);

  const std::string& source() const noexcept { return source_; }
  std::size_t row_count() const noexcept { return source_rows_.size(); }
  const std::vector<std::string>& column_names() const noexcept { return column_names_; }
  LengthUnit length_unit() const noexcept { return options_.length_unit; }
  // The zone declared for this table's zone-less times, or null.
  const TimeZone* time_zone() const noexcept {
    return options_.time_zone ? &*options_.time_zone : nullptr;
  }

  // Index of our column `name` (after the column map), or nullopt.
  std::optional<std::size_t> find_column(std::string_view name) const;
  // As find_column, but a missing column is an InputError listing the columns there are.
  std::size_t require_column(std::string_view name) const;

  // Cell text, trimmed of surrounding blanks; empty when the row is short.
  std::string_view cell(std::size_t row, std::size_t column) const;
  CellLocation location(std::size_t row, std::size_t column) const;
  std::size_t source_row(std::size_t row) const { return source_rows_[row]; }

  // Typed access. Empty cells give nullopt; anything else must parse fully.
  std::optional<double> number(std::size_t row, std::size_t column) const;
  // A number in the table's length unit, returned in metres.
  std::optional<double> length(std::size_t row, std::size_t column) const;
  // A whole number >= 0.
  std::optional<long long> count(std::size_t row, std::size_t column) const;
  // As length(), refusing a value beyond +-limit metres (levelhead/core/bounds.hpp);
  // `what` names the quantity in the message ("a height difference").
  std::optional<double> length_within(std::size_t row, std::size_t column, double limit,
                                      const char* what) const;
  // Shorthands of length_within with the bounds of levelhead/core/bounds.hpp: a
  // height (of any reference), a depth or length below a measuring point,
  // and a standard deviation (also refused when negative).
  std::optional<double> height(std::size_t row, std::size_t column) const;
  std::optional<double> depth(std::size_t row, std::size_t column) const;
  std::optional<double> sigma(std::size_t row, std::size_t column) const;
  // An ISO 8601 date or date-time (levelhead/core/time.hpp), as written.
  std::optional<std::string> date(std::size_t row, std::size_t column) const;

  // Building (used by the readers).
  void reserve(std::size_t rows, std::size_t text_bytes);
  // Added to the message of a missing column: what the reader saw that may
  // explain it (an empty first row, other sheets of the file).
  void set_missing_column_hint(std::string hint) { missing_column_hint_ = std::move(hint); }
  void add_row(const std::vector<std::string_view>& cells, std::size_t source_row);

 private:
  struct Span {
    std::size_t offset;
    std::size_t size;
  };
  std::string source_;
  std::vector<std::string> column_names_;
  TableOptions options_;
  std::string text_;
  std::vector<Span> cells_;  // row-major, column_names_.size() per row
  std::vector<std::size_t> source_rows_;
  std::string missing_column_hint_;
};

// Reads a table from a file (see the header comment for formats).
Table read_table(const std::filesystem::path& path, const TableOptions& options = {});

// Reads a table in batches of at most `batch_rows` rows, so that very large
// CSV/TSV files (readings by the million) never sit in memory as one table:
// `consume` gets each batch (row numbers as in the file). Other formats are
// read whole and passed as one batch.
void read_table_in_batches(const std::filesystem::path& path, const TableOptions& options,
                           std::size_t batch_rows, const std::function<void(Table&)>& consume);

// Parses delimited text held in memory; `source` names it in messages.
Table parse_delimited_text(std::string_view text, const std::string& source,
                           const TableOptions& options = {});

}  // namespace levelhead
