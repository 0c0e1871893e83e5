#include "levelhead/levelling/network.hpp"

#include <fmt/format.h>

#include "levelhead/core/bounds.hpp"

namespace levelhead {

namespace {

std::string optional_text(const Table& table, std::size_t row, std::optional<std::size_t> column) {
  return column ? std::string(table.cell(row, *column)) : std::string();
}

std::string required_text(const Table& table, std::size_t row, std::size_t column,
                          const char* what) {
  const std::string_view text = table.cell(row, column);
  if (text.empty()) throw InputError(table.location(row, column), "", what);
  return std::string(text);
}

template <typename T>
std::optional<T> optional_cell(std::optional<std::size_t> column, auto read) {
  return column ? read(*column) : std::nullopt;
}

}  // namespace

PointTable read_points(const Table& table) {
  const std::size_t id_col = table.require_column("id");
  const auto x_col = table.find_column("x");
  const auto y_col = table.find_column("y");
  const auto height_col = table.find_column("height");
  const auto sigma_col = table.find_column("sigma");
  const auto datum_col = table.find_column("datum");
  const auto kind_col = table.find_column("kind");

  PointTable out{table.source(), {}};
  std::vector<Point>& points = out.points;
  points.reserve(table.row_count());
  for (std::size_t row = 0; row < table.row_count(); ++row) {
    Point p;
    p.id = required_text(table, row, id_col, "every point needs an id");
    p.row = table.source_row(row);
    p.x = optional_cell<double>(x_col, [&](std::size_t c) { return table.number(row, c); });
    p.y = optional_cell<double>(y_col, [&](std::size_t c) { return table.number(row, c); });
    p.height = optional_cell<double>(height_col, [&](std::size_t c) {
      return table.length_within(row, c, bounds::max_abs_height, "a height");
    });
    p.sigma = optional_cell<double>(sigma_col, [&](std::size_t c) {
      return table.length_within(row, c, bounds::max_sigma, "a sigma");
    });
    if (p.sigma && *p.sigma < 0.0) {
      throw InputError(
          table.location(row, *sigma_col), std::string(table.cell(row, *sigma_col)),
          "a standard deviation cannot be negative (empty or 0 holds the height fixed)");
    }
    if (p.sigma && *p.sigma > 0.0 && !p.height) {
      throw InputError(table.location(row, *sigma_col), std::string(table.cell(row, *sigma_col)),
                       "a sigma is given but no height; give the known height or clear the sigma");
    }
    p.datum = optional_text(table, row, datum_col);
    p.kind = optional_text(table, row, kind_col);
    points.push_back(std::move(p));
  }
  return out;
}

SectionTable read_sections(const Table& table, const std::string& group_column) {
  const std::size_t from_col = table.require_column("from");
  const std::size_t to_col = table.require_column("to");
  const std::size_t dh_col = table.require_column("dh");
  const auto length_col = table.find_column("length");
  const auto sigma_col = table.find_column("sigma");
  const auto setups_col = table.find_column("setups");
  const auto date_col = table.find_column("date");
  const auto run_col = table.find_column("run");
  const auto runs_col = table.find_column("runs");
  std::optional<std::size_t> group_col;
  if (!group_column.empty()) {
    group_col = table.find_column(group_column);
    if (!group_col) {
      throw InputError(table.source(),
                       fmt::format("variance groups by '{}', but the sections table has no such "
                                   "column; name one of its columns (e.g. run, date, instrument, "
                                   "observer)",
                                   group_column));
    }
  }

  SectionTable out{table.source(), {}};
  std::vector<Section>& sections = out.sections;
  sections.reserve(table.row_count());
  for (std::size_t row = 0; row < table.row_count(); ++row) {
    Section s;
    s.from = required_text(table, row, from_col, "every section needs a 'from' point id");
    s.to = required_text(table, row, to_col, "every section needs a 'to' point id");
    s.row = table.source_row(row);
    const auto dh =
        table.length_within(row, dh_col, bounds::max_abs_height_difference, "a height difference");
    if (!dh) throw InputError(table.location(row, dh_col), "", "every section needs its dh");
    s.dh = *dh;
    if (length_col) {
      s.length =
          table.length_within(row, *length_col, bounds::max_section_length, "a section length");
      if (s.length && *s.length <= 0.0) {
        throw InputError(table.location(row, *length_col),
                         std::string(table.cell(row, *length_col)),
                         "a section length must be > 0 m");
      }
    }
    if (sigma_col) {
      s.sigma = table.length_within(row, *sigma_col, bounds::max_sigma, "a sigma");
      if (s.sigma && *s.sigma <= 0.0) {
        throw InputError(
            table.location(row, *sigma_col), std::string(table.cell(row, *sigma_col)),
            "a section sigma must be > 0 (leave it empty to weight by length or setups)");
      }
    }
    if (setups_col) {
      s.setups = table.count(row, *setups_col);
      if (s.setups && *s.setups == 0) {
        throw InputError(table.location(row, *setups_col), "0", "a section needs at least 1 setup");
      }
    }
    if (runs_col) {
      const auto runs = table.count(row, *runs_col);
      if (runs && *runs == 0) {
        throw InputError(table.location(row, *runs_col), "0", "runs must be at least 1");
      }
      s.runs = runs.value_or(1);
    }
    if (date_col) s.date = table.date(row, *date_col).value_or("");
    s.run = optional_text(table, row, run_col);
    if (group_col) s.group = group_column == "date" ? s.date : optional_text(table, row, group_col);
    sections.push_back(std::move(s));
  }
  if (sections.empty()) {
    throw InputError(table.source(),
                     "the table holds no sections, only a header; a network "
                     "needs at least one observed height difference");
  }
  return out;
}

Network make_network(PointTable point_table, SectionTable section_table) {
  Network net;
  net.points_file = std::move(point_table.file);
  net.sections_file = std::move(section_table.file);
  net.points = std::move(point_table.points);
  const std::vector<Point>& points = net.points;
  net.point_index.reserve(points.size());
  for (std::size_t i = 0; i < points.size(); ++i) {
    const auto [it, inserted] = net.point_index.emplace(points[i].id, i);
    if (!inserted) {
      throw NetworkError(
          fmt::format("{}: point id '{}' appears twice (first at row {}); ids must "
                      "be unique",
                      describe(net.point_location(i)), points[i].id, points[it->second].row),
          {points[i].id});
    }
  }
  net.sections = std::move(section_table.sections);
  net.from_index.reserve(net.sections.size());
  net.to_index.reserve(net.sections.size());
  for (std::size_t k = 0; k < net.sections.size(); ++k) {
    const Section& s = net.sections[k];
    const auto from = net.point_index.find(s.from);
    const auto to = net.point_index.find(s.to);
    for (const auto& [it, id] : {std::pair{from, &s.from}, std::pair{to, &s.to}}) {
      if (it == net.point_index.end()) {
        throw NetworkError(fmt::format("{}: section {} -> {} names point '{}', which is not in the "
                                       "points table; add it there (with an empty height if it is "
                                       "new) or correct the id",
                                       describe(net.section_location(k)), s.from, s.to, *id),
                           {*id});
      }
    }
    if (from->second == to->second) {
      throw NetworkError(fmt::format("{}: section goes from '{}' to itself; a section needs two "
                                     "different points",
                                     describe(net.section_location(k)), s.from),
                         {s.from});
    }
    net.from_index.push_back(from->second);
    net.to_index.push_back(to->second);
  }
  return net;
}

Network make_network(std::vector<Point> points, std::vector<Section> sections) {
  return make_network(PointTable{"points", std::move(points)},
                      SectionTable{"sections", std::move(sections)});
}

}  // namespace levelhead
