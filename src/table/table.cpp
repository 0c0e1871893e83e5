#include "levelhead/core/table.hpp"

#include <cpl_vsi.h>
#include <fmt/format.h>

#include <algorithm>
#include <cctype>
#include <charconv>
#include <cmath>
#include <iostream>
#include <set>
#include <sstream>

#include "levelhead/core/bounds.hpp"
#include "levelhead/core/input_files.hpp"
#include "levelhead/core/time.hpp"
#include "levelhead/references/coordinate_check.hpp"
#include "table/readers.hpp"
#include "util/text.hpp"

namespace levelhead {

ColumnMap parse_column_map(std::string_view text) {
  ColumnMap map;
  std::size_t start = 0;
  while (start <= text.size()) {
    std::size_t end = text.find(',', start);
    if (end == std::string_view::npos) end = text.size();
    const std::string_view item = util::trim(text.substr(start, end - start));
    if (!item.empty()) {
      const std::size_t eq = item.find('=');
      if (eq == std::string_view::npos || util::trim(item.substr(0, eq)).empty() ||
          util::trim(item.substr(eq + 1)).empty()) {
        throw OptionError(fmt::format(
            "column map entry '{}' is not of the form ours=theirs (e.g. height=Elev_m)", item));
      }
      map[util::to_lower(util::trim(item.substr(0, eq)))] =
          std::string(util::trim(item.substr(eq + 1)));
    }
    start = end + 1;
  }
  return map;
}

Table::Table(std::string source, std::vector<std::string> column_names, TableOptions options)
    : source_(std::move(source)),
      column_names_(std::move(column_names)),
      options_(std::move(options)) {
  std::set<std::string> seen;
  for (const auto& name : column_names_) {
    if (!seen.insert(util::to_lower(name)).second) {
      throw InputError(source_, fmt::format("column '{}' appears twice in the header (names are "
                                            "compared case-insensitively); rename one",
                                            name));
    }
  }
  for (const auto& [ours, theirs] : options_.column_map) {
    bool found = false;
    for (const auto& name : column_names_) found = found || util::iequals(name, theirs);
    if (!found) {
      throw InputError(source_, fmt::format("the column map sends '{}' to '{}', but the file has "
                                            "no column '{}' (columns: {})",
                                            ours, theirs, theirs, fmt::join(column_names_, ", ")));
    }
  }
}

std::optional<std::size_t> Table::find_column(std::string_view name) const {
  std::string wanted(name);
  if (const auto it = options_.column_map.find(util::to_lower(name));
      it != options_.column_map.end()) {
    wanted = it->second;
  }
  for (std::size_t i = 0; i < column_names_.size(); ++i) {
    if (util::iequals(column_names_[i], wanted)) return i;
  }
  return std::nullopt;
}

std::size_t Table::require_column(std::string_view name) const {
  if (auto index = find_column(name)) return *index;
  throw InputError(
      source_,
      fmt::format("required column '{}' is missing (columns found: {}); "
                  "rename the column or map it with a column map{}",
                  name, fmt::join(column_names_, ", "),
                  missing_column_hint_.empty() ? std::string() : ". " + missing_column_hint_));
}

std::string_view Table::cell(std::size_t row, std::size_t column) const {
  const Span span = cells_[row * column_names_.size() + column];
  return std::string_view(text_).substr(span.offset, span.size);
}

CellLocation Table::location(std::size_t row, std::size_t column) const {
  return CellLocation{source_, source_rows_[row], column_names_[column]};
}

std::optional<double> Table::number(std::size_t row, std::size_t column) const {
  const std::string_view text = cell(row, column);
  if (text.empty()) return std::nullopt;
  double value = 0.0;
  const char* first = text.data();
  const char* last = first + text.size();
  // from_chars rejects a leading plus; one plus, then a digit or a point, is allowed.
  if (*first == '+' && last - first > 1 && first[1] != '-' && first[1] != '+') ++first;
  const auto [end, ec] = std::from_chars(first, last, value);
  if (ec != std::errc() || end != last) {
    const bool decimal_comma = text.find(',') != std::string_view::npos;
    throw InputError(location(row, column), std::string(text),
                     decimal_comma ? "expected a number with a decimal point (not a comma)"
                                   : "expected a number");
  }
  if (!std::isfinite(value)) {
    throw InputError(location(row, column), std::string(text),
                     "expected a finite number (NaN and inf are not accepted; leave the cell "
                     "empty if the value is unknown)");
  }
  return value;
}

std::optional<double> Table::length(std::size_t row, std::size_t column) const {
  const auto value = number(row, column);
  if (!value) return std::nullopt;
  return *value * metres_per_unit(options_.length_unit);
}

std::optional<long long> Table::count(std::size_t row, std::size_t column) const {
  const std::string_view text = cell(row, column);
  if (text.empty()) return std::nullopt;
  // A whole number written as a decimal ("4.0", or "1.0000000000000000" as
  // spreadsheet writers give it) is that number: the zeros after the point
  // are dropped, any other digit there is refused.
  std::string_view digits = text;
  if (const std::size_t point = text.find('.'); point != std::string_view::npos) {
    const std::string_view fraction = text.substr(point + 1);
    if (fraction.find_first_not_of('0') == std::string_view::npos) digits = text.substr(0, point);
  }
  long long value = 0;
  const auto [end, ec] = std::from_chars(digits.data(), digits.data() + digits.size(), value, 10);
  if (digits.empty() || ec != std::errc() || end != digits.data() + digits.size() || value < 0) {
    throw InputError(location(row, column), std::string(text), "expected a whole number >= 0");
  }
  return value;
}

std::optional<double> Table::length_within(std::size_t row, std::size_t column, double limit,
                                           const char* what) const {
  const auto value = length(row, column);
  if (value && std::abs(*value) > limit) {
    throw InputError(location(row, column), std::string(cell(row, column)),
                     fmt::format("{} beyond {:g} m is not possible on Earth; check the value and "
                                 "the table's unit",
                                 what, limit));
  }
  return value;
}

std::optional<double> Table::height(std::size_t row, std::size_t column) const {
  return length_within(row, column, bounds::max_abs_height, "a height");
}

std::optional<double> Table::depth(std::size_t row, std::size_t column) const {
  return length_within(row, column, bounds::max_abs_height, "a depth");
}

std::optional<double> Table::sigma(std::size_t row, std::size_t column) const {
  const auto value = length_within(row, column, bounds::max_sigma, "a sigma");
  if (value && *value < 0.0) {
    throw InputError(location(row, column), std::string(cell(row, column)),
                     "a standard deviation cannot be negative");
  }
  return value;
}

std::optional<std::string> Table::date(std::size_t row, std::size_t column) const {
  const std::string_view text = cell(row, column);
  if (text.empty()) return std::nullopt;
  if (!parse_iso8601(text)) {
    throw InputError(location(row, column), std::string(text),
                     "expected an ISO 8601 date such as 2026-10-06 (year-month-day; 06/10/2026 "
                     "and spreadsheet day numbers are ambiguous)");
  }
  return std::string(text);
}

void Table::reserve(std::size_t rows, std::size_t text_bytes) {
  source_rows_.reserve(rows);
  // A guess of the row count times a wide header could ask for far more
  // cells than the text can hold: never reserve beyond one cell per byte.
  cells_.reserve(std::min(rows * column_names_.size(), text_bytes + rows));
  text_.reserve(text_bytes);
}

void Table::add_row(const std::vector<std::string_view>& cells, std::size_t source_row) {
  if (cells.size() > column_names_.size()) {
    throw InputError(CellLocation{source_, source_row, {}}, std::string(cells.back()),
                     fmt::format("this row has {} cells but the header names only {} columns; "
                                 "quote cells that contain the separator",
                                 cells.size(), column_names_.size()));
  }
  for (std::size_t i = 0; i < column_names_.size(); ++i) {
    if (i < cells.size()) {
      const std::string_view value = util::trim(cells[i]);
      cells_.push_back(Span{text_.size(), value.size()});
      text_.append(value);
    } else {
      cells_.push_back(Span{text_.size(), 0});
    }
  }
  source_rows_.push_back(source_row);
}

namespace {

// A dataset name GDAL opens that is no plain file: a virtual file system
// (/vsizip/, /vsicurl/, ...) or a connection (PG:..., MySQL:...; a prefix of
// two letters or more, so a drive letter is not one).
bool gdal_dataset_name(const std::string& name) {
  if (name.rfind("/vsi", 0) == 0) return true;
  const std::size_t colon = name.find(':');
  return colon != std::string::npos && colon >= 2 &&
         std::all_of(name.begin(), name.begin() + static_cast<std::ptrdiff_t>(colon),
                     [](unsigned char c) { return std::isalnum(c) != 0; });
}

bool delimited_extension(const std::filesystem::path& path) {
  const std::string extension = util::to_lower(path.extension().string());
  return extension == ".csv" || extension == ".tsv" || extension == ".txt";
}

// The whole of a file of a GDAL virtual file system.
std::string read_virtual_file(const std::string& name) {
  VSILFILE* file = VSIFOpenL(name.c_str(), "rb");
  if (!file) {
    throw InputError(name,
                     "GDAL cannot open this virtual file (check the archive and the path "
                     "inside it)");
  }
  std::string text;
  char buffer[1 << 16];
  std::size_t got = 0;
  while ((got = VSIFReadL(buffer, 1, sizeof buffer, file)) > 0) text.append(buffer, got);
  VSIFCloseL(file);
  return text;
}

}  // namespace

Table read_table(const std::filesystem::path& path, const TableOptions& options) {
  // "-": a CSV on standard input.
  if (path == "-") {
    std::ostringstream text;
    text << std::cin.rdbuf();
    Table table = parse_delimited_text(text.str(), "standard input", options);
    check_coordinates_in_crs(table, options.xy_crs);
    return table;
  }
  if (gdal_dataset_name(path.string())) {
    Table table =
        delimited_extension(path) && path.string().rfind("/vsi", 0) == 0
            ? parse_delimited_text(read_virtual_file(path.string()), path.string(), options)
            : detail::read_ogr_table(path, options);
    check_coordinates_in_crs(table, options.xy_crs);
    return table;
  }
  std::error_code ec;
  if (!std::filesystem::is_regular_file(path, ec)) {
    throw InputError(path.string(),
                     "no such file (check the path; relative paths are taken from "
                     "the current folder)");
  }
  note_input_file(path);
  Table table = delimited_extension(path) ? detail::read_delimited_file(path, options)
                                          : detail::read_ogr_table(path, options);
  check_coordinates_in_crs(table, options.xy_crs);
  return table;
}

}  // namespace levelhead
