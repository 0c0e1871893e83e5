#pragma once
// Levelling networks: points (benchmarks, wells, marks) and sections (one
// observed height difference each), read from tables.
//
// Points table columns: id (unique, text), optional x, y (project CRS),
// height (known height), sigma (its standard deviation; empty or 0 with a
// height = held fixed), datum, kind.
// Sections table columns: from, to, dh, length, optional setups, runs, sigma,
// date, run.
// Sign convention: dh = H(to) - H(from).
// Units: heights, dh, sigma and length are converted from the table's
// declared unit to metres.
// Errors: InputError for a bad cell (file, row, column, value); NetworkError
// for duplicate ids, sections naming a point that is not in the points
// table, and sections from a point to itself.

#include <cstddef>
#include <optional>
#include <string>
#include <string_view>
#include <unordered_map>
#include <vector>

#include "levelhead/core/table.hpp"

namespace levelhead {

struct Point {
  std::string id;
  std::optional<double> x, y;
  std::optional<double> height;  // m
  std::optional<double> sigma;   // m; nullopt or 0 with a height: fixed
  std::string datum;
  std::string kind;
  std::size_t row = 0;  // row of the points table it came from (header = 1), for messages

  bool has_control() const { return height.has_value(); }
  bool is_fixed() const { return height && (!sigma || *sigma <= 0.0); }
};

struct Section {
  std::string from, to;
  double dh = 0.0;               // m, H(to) - H(from)
  std::optional<double> length;  // m, > 0
  std::optional<double> sigma;   // m, > 0
  std::optional<long long> setups;
  // dh is the mean of this many independent runs (from field-book
  // reduction); sigmas from length or setups are divided by sqrt(runs).
  long long runs = 1;
  std::string date, run;
  std::string group;    // the value of read_sections' group column (variance components)
  std::size_t row = 0;  // row of the sections table it came from (header = 1)
};

struct PointTable {
  std::string file;  // names the source in messages
  std::vector<Point> points;
};

struct SectionTable {
  std::string file;
  std::vector<Section> sections;
};

// Move-only: point_index holds views of the ids in `points`.
struct Network {
  std::string points_file, sections_file;
  std::vector<Point> points;
  std::vector<Section> sections;
  std::unordered_map<std::string_view, std::size_t> point_index;  // id -> index in points

  // Section endpoints as indices into points, in section order.
  std::vector<std::size_t> from_index, to_index;

  Network() = default;
  Network(Network&&) = default;
  Network& operator=(Network&&) = default;
  Network(const Network&) = delete;
  Network& operator=(const Network&) = delete;

  CellLocation point_location(std::size_t point) const {
    return {points_file, points[point].row, {}};
  }
  CellLocation section_location(std::size_t section) const {
    return {sections_file, sections[section].row, {}};
  }
};

PointTable read_points(const Table& table);
// group_column: a column whose value each section carries in `group` (date
// as read for `date`); empty: none. InputError when the table lacks it.
SectionTable read_sections(const Table& table, const std::string& group_column = {});

// Checks ids and references and builds the indices. Throws NetworkError.
Network make_network(PointTable points, SectionTable sections);
// For networks built in code: the sources are named "points" and "sections".
Network make_network(std::vector<Point> points, std::vector<Section> sections);

}  // namespace levelhead
