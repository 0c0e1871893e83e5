// `levelhead convert`: heights of a points table into another reference.

#include <fmt/format.h>
#include <memory>

#include "cli/app.hpp"
#include "cli/commands.hpp"
#include "cli/reference_inputs.hpp"
#include "levelhead/height_conversion.hpp"
#include "levelhead/references_file.hpp"
#include "levelhead/table.hpp"
#include "levelhead/units.hpp"

namespace levelhead::cli {

namespace {
struct ConvertArguments {
  std::string from, to, input, output, crs, unit, columns, layer;
  ReferenceInputs refs;
  std::optional<double> epoch;
  bool lenient = false, quiet = false;
};
}  // namespace

CommandRunner add_convert_command(CLI::App& app) {
  auto a = std::make_shared<ConvertArguments>();
  CLI::App* c = app.add_subcommand("convert", "Convert the heights of a points table to another "
                                              "vertical reference (PROJ, no ballpark)");
  c->add_option("--from", a->from, "Reference of the input heights (EPSG code, WKT, PROJJSON)")
      ->required();
  c->add_option("--to", a->to, "Target reference")->required();
  c->add_option("--in", a->input, "Points table: id, x, y, height, optional sigma")->required();
  c->add_option("--out", a->output, "Output CSV (a .summary.json is written beside it)")
      ->required();
  c->add_option("--crs", a->crs,
                "CRS of x and y (x = easting or longitude); default: the horizontal part of --from");
  auto* unit = c->add_option("--unit", a->unit,
                             "Unit of height and sigma in the table: m, ft, us-ft (default: the "
                             "unit of --from, else m)");
  c->add_option("--columns", a->columns, "Column map, e.g. height=Elev,x=E,y=N");
  c->add_option("--layer", a->layer, "Layer or sheet of the input file");
  add_reference_options(*c, a->refs);
  c->add_option("--epoch", a->epoch, "Epoch of the heights (decimal year), for dynamic references");
  c->add_flag("--lenient", a->lenient,
              "Write the points that convert and flag the others instead of failing");
  c->add_flag("--quiet", a->quiet, "Print nothing on success");
  return [a, unit](std::ostream& out, std::ostream&) {
    const ProjSettings settings = a->refs.settings();
    const ReferenceSet references = a->refs.load();
    HeightConverter converter(a->from, a->to, a->crs, references, settings, a->epoch);
    // Heights are in the unit declared, else in the source reference's own unit.
    LengthUnit table_unit = LengthUnit::metre;
    const double source_unit = converter.source_metres_per_unit();
    if (unit->count() > 0) {
      table_unit = parse_length_unit(a->unit);
    } else if (std::abs(source_unit - metres_per_us_survey_foot) < 1e-12) {
      table_unit = LengthUnit::us_survey_foot;
    } else if (std::abs(source_unit - metres_per_international_foot) < 1e-12) {
      table_unit = LengthUnit::international_foot;
    }
    const Table table =
        read_table(a->input, TableOptions{parse_column_map(a->columns), table_unit, a->layer});
    std::filesystem::path output(a->output);
    std::filesystem::path summary = output;
    summary.replace_extension(".summary.json");
    const HeightConversionSummary counts =
        convert_points_table(table, converter, HeightConversionOptions{a->lenient, a->epoch}, output, summary);
    if (!a->quiet) {
      out << fmt::format("Converted {} of {} heights from {} to {} (heights read in {})\n",
                         counts.converted, counts.points, converter.from(), converter.to(),
                         to_string(table_unit));
      for (const std::string& step : converter.step_descriptions()) out << "  step: " << step << '\n';
      if (const VerticalTransformer* proj = converter.proj()) {
        for (const OperationRecord& op : proj->operations()) {
          if (op.points == 0) continue;
          out << fmt::format("  {} points by {}{}\n", op.points, op.name,
                             op.accuracy ? fmt::format(" (accuracy {} m)", *op.accuracy)
                                         : std::string(" (accuracy unknown)"));
        }
        for (const std::string& w : proj->warnings()) out << "Warning: " << w << '\n';
      }
      if (counts.failed) out << fmt::format("{} point(s) NOT converted (flagged)\n", counts.failed);
      out << fmt::format("Wrote {} and {}\n", output.string(), summary.string());
    }
    return static_cast<int>(exit_ok);
  };
}

}  // namespace levelhead::cli
