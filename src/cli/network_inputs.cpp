#include "cli/network_inputs.hpp"

#include <fmt/format.h>

#include <exception>
#include <map>
#include <optional>
#include <thread>

#include "levelhead/core/errors.hpp"
#include "levelhead/core/table.hpp"
#include "levelhead/levelling/precision.hpp"
#include "levelhead/references/vertical_reference.hpp"

namespace levelhead::cli {

void add_network_input_options(CLI::App& command, NetworkInputs& inputs) {
  command.add_option("--points", inputs.points, "Points table (id, height, sigma, ...)")
      ->required();
  command.add_option("--sections", inputs.sections, "Sections table (from, to, dh, length, ...)")
      ->required();
  command.add_option("--out", inputs.out, "Output folder")->required();
  command
      .add_option("--unit", inputs.unit,
                  "Length unit of the input tables: m, ft (0.3048 m), us-ft (1200/3937 m)")
      ->capture_default_str();
  command.add_option("--sections-unit", inputs.sections_unit,
                     "Length unit of the sections table when it differs from --unit (the "
                     "sections.csv of levelhead reduce is in m)");
  command.add_option("--points-columns", inputs.points_columns,
                     "Column map for the points table, e.g. id=Station,height=Elev");
  command.add_option("--sections-columns", inputs.sections_columns,
                     "Column map for the sections table, e.g. from=BS,to=FS");
  command.add_option("--points-layer", inputs.points_layer, "Layer or sheet of the points file");
  command.add_option("--sections-layer", inputs.sections_layer,
                     "Layer or sheet of the sections file");
}

void require_point_units(const PointTable& points, LengthUnit table_unit) {
  std::map<std::string, std::optional<HeightUnit>> units;  // datum -> unit, if PROJ knows it
  for (const Point& p : points.points) {
    if (!p.height || p.datum.empty()) continue;
    auto [it, fresh] = units.try_emplace(p.datum);
    if (fresh) {
      try {
        it->second = height_unit_of(p.datum);
      } catch (const ReferenceError& e) {
        // A plain name is a reference of a references file (used by later
        // stages); a code, WKT or PROJJSON must be a CRS with heights.
        const bool looks_like_crs = p.datum.find(':') != std::string::npos ||
                                    p.datum.find('[') != std::string::npos ||
                                    p.datum.front() == '{';
        if (looks_like_crs) {
          throw InputError(CellLocation{points.file, p.row, "datum"}, p.datum,
                           std::string(e.what()) +
                               "; a datum is a vertical, compound or geographic 3D CRS (e.g. "
                               "EPSG:5703) or the name of a reference of a references file");
        }
        it->second.reset();
      }
    }
    if (!it->second) continue;
    if (const auto problem = table_unit_mismatch(*it->second, p.datum, table_unit))
      throw InputError(CellLocation{points.file, p.row, "datum"}, p.datum, *problem);
  }
}

void check_network_input_options(const NetworkInputs& inputs) {
  parse_length_unit(inputs.unit);
  if (!inputs.sections_unit.empty()) parse_length_unit(inputs.sections_unit);
  parse_column_map(inputs.points_columns);
  parse_column_map(inputs.sections_columns);
}

Network load_network(const NetworkInputs& inputs, const std::string& group_column) {
  const LengthUnit unit = parse_length_unit(inputs.unit);
  const TableOptions point_options{
      parse_column_map(inputs.points_columns), unit, inputs.points_layer, {}, {}};
  const LengthUnit sections_unit =
      inputs.sections_unit.empty() ? unit : parse_length_unit(inputs.sections_unit);
  const TableOptions section_options{
      parse_column_map(inputs.sections_columns), sections_unit, inputs.sections_layer, {}, {}};
  // The two tables are read at once, the points on another core. Should
  // both fail, the points' error is the one reported, as when read in turn.
  // (Progress is shown for the sections, the larger table.)
  std::optional<PointTable> points;
  std::exception_ptr points_failure;
  std::thread points_reader([&] {
    try {
      points = read_points(read_table(inputs.points, point_options));
      require_point_units(*points, unit);
    } catch (...) {
      points_failure = std::current_exception();
    }
  });
  std::optional<SectionTable> sections;
  std::exception_ptr sections_failure;
  try {
    sections = read_sections(read_table(inputs.sections, section_options), group_column);
  } catch (...) {
    sections_failure = std::current_exception();
  }
  points_reader.join();
  if (points_failure) std::rethrow_exception(points_failure);
  if (sections_failure) std::rethrow_exception(sections_failure);
  return make_network(std::move(*points), std::move(*sections));
}

CLI::Option* add_levelling_class_option(CLI::App& command, std::string& name,
                                        CLI::Option* explicit_value, const std::string& what) {
  std::string classes;
  for (const LevellingClass& c : levelling_classes()) {
    classes += fmt::format(" {} (sigma {} mm, section {} mm, loop {} mm per sqrt(km));", c.name,
                           c.sigma_mm_per_sqrt_km, c.section_closure_mm_per_sqrt_km,
                           c.loop_closure_mm_per_sqrt_km);
  }
  classes.pop_back();
  return command
      .add_option("--levelling-class", name,
                  fmt::format("Levelling class that sets {} (default {}):{}", what,
                              default_levelling_class().name, classes))
      ->excludes(explicit_value);
}

void apply_levelling_class(const std::string& name, const CLI::Option* given,
                           AdjustmentOptions& options) {
  if (!name.empty()) {
    const LevellingClass& c = find_levelling_class(name);
    options.mm_per_sqrt_km = c.sigma_mm_per_sqrt_km;
    options.levelling_class = std::string(c.name);
  } else if (given && given->count() > 0) {
    options.levelling_class.clear();
  }
}

}  // namespace levelhead::cli
