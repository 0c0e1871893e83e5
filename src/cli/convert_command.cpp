// `levelhead convert`: heights of a points table into another reference.

#include <fmt/format.h>

#include <memory>
#include <sstream>

#include "cli/app.hpp"
#include "cli/commands.hpp"
#include "cli/reference_inputs.hpp"
#include "levelhead/core/errors.hpp"
#include "levelhead/core/output_files.hpp"
#include "levelhead/core/table.hpp"
#include "levelhead/core/units.hpp"
#include "levelhead/references/coordinate_check.hpp"
#include "levelhead/references/height_conversion.hpp"
#include "levelhead/references/references_file.hpp"

namespace levelhead::cli {

namespace {
// One file, all-or-nothing (output_files.hpp).
void write_file_whole(const std::filesystem::path& file, const std::string& text) {
  OutputSet out(file.parent_path().empty() ? "." : file.parent_path());
  out.open(file.filename().string()) << text;
  out.commit();
}

struct ConvertArguments {
  std::string from, to, input, output, summary, crs, unit, out_unit, columns, layer;
  ReferenceInputs refs;
  std::optional<double> epoch;
  bool lenient = false, quiet = false;
};
}  // namespace

CommandRunner add_convert_command(CLI::App& app) {
  auto a = std::make_shared<ConvertArguments>();
  CLI::App* c = app.add_subcommand("convert",
                                   "Convert the heights of a points table to another "
                                   "vertical reference (PROJ, no ballpark)");
  c->add_option("--from", a->from, "Reference of the input heights (EPSG code, WKT, PROJJSON)")
      ->required();
  c->add_option("--to", a->to, "Target reference")->required();
  c->add_option("--in", a->input,
                "Points table: id, x, y, height, optional sigma ('-': a CSV on standard input)")
      ->required();
  c->add_option("--out", a->output,
                "Output CSV, a .summary.json written beside it ('-': standard output, the "
                "messages then on standard error)")
      ->required();
  c->add_option("--summary", a->summary,
                "The summary JSON elsewhere than beside --out (with --out -: written only "
                "when given)");
  c->add_option(
      "--crs", a->crs,
      "CRS of x and y (x = easting or longitude); default: the horizontal part of --from");
  auto* unit = c->add_option("--unit", a->unit,
                             "Unit of height and sigma in the table: m, ft, us-ft (default: the "
                             "unit of --from, else m)");
  auto* out_unit = c->add_option("--out-unit", a->out_unit,
                                 "Unit of the written height and sigma: m, ft, us-ft (default: "
                                 "the unit of --to, else m)");
  c->add_option("--columns", a->columns, "Column map, e.g. height=Elev,x=E,y=N");
  c->add_option("--layer", a->layer, "Layer or sheet of the input file");
  add_reference_options(*c, a->refs);
  c->add_option("--epoch", a->epoch, "Epoch of the heights (decimal year), for dynamic references");
  c->add_flag("--lenient", a->lenient,
              "Write the points that convert and flag the others instead of failing");
  c->add_flag("--quiet", a->quiet, "Print nothing on success");
  return [a, unit, out_unit](std::ostream& console, std::ostream& err, StageResults*) {
    // With the table on standard output, people read the messages on stderr.
    const bool to_stdout = a->output == "-";
    std::ostream& out = to_stdout ? err : console;
    const ProjSettings settings = a->refs.settings();
    const ReferenceSet references = a->refs.load();
    HeightConverter converter(a->from, a->to, a->crs, references, settings, a->epoch);
    // Heights are read in the unit declared, else in the source reference's
    // own unit, and written in the unit asked for, else the target's own.
    const auto own_unit = [](const HeightUnit& u, const std::string& reference) {
      if (const auto known = length_unit_of(u.metres_per_unit)) return *known;
      throw ReferenceError(
          fmt::format("the heights of '{}' are in {}, a unit levelhead does not "
                      "know: declare the table's unit (m, ft, us-ft)",
                      reference, u.name));
    };
    const LengthUnit table_unit = unit->count() > 0
                                      ? parse_length_unit(a->unit)
                                      : own_unit(converter.source_unit(), converter.from());
    const LengthUnit written_unit = out_unit->count() > 0
                                        ? parse_length_unit(a->out_unit)
                                        : own_unit(converter.target_unit(), converter.to());
    const TableOptions table_options{
        parse_column_map(a->columns), table_unit, a->layer, a->crs, {}};
    // x and y are checked against the area of use of --crs, or without it of
    // the source reference's horizontal CRS, part by part as the table is read.
    const std::string xy_crs = a->crs.empty() ? converter.points_crs() : a->crs;
    const HeightConversionOptions options{a->lenient, a->epoch, written_unit};
    std::filesystem::path output(a->output);
    std::filesystem::path summary = a->summary;
    if (summary.empty() && !to_stdout)
      summary = std::filesystem::path(output).replace_extension(".summary.json");
    // A CSV is read, converted and written in parts of this many rows, so
    // that a table of millions of points never sits in memory whole.
    constexpr std::size_t rows_per_part = 65536;
    const auto convert_into = [&](CsvRows& csv, std::ostream* json) {
      PointsTableConverter writer(converter, options, csv);
      bool any_part = false;
      read_table_in_batches(a->input, table_options, rows_per_part, [&](Table& part) {
        check_coordinates_in_crs(part, xy_crs);
        writer.add(part);
        any_part = true;
      });
      // A table of a header alone comes in no part: read whole, it gives the header.
      if (!any_part) writer.add(read_table(a->input, table_options));
      return writer.finish(json);
    };
    HeightConversionSummary counts;
    if (!to_stdout && summary.parent_path() == output.parent_path()) {
      OutputSet out(output.parent_path().empty() ? "." : output.parent_path());
      CsvRows csv(out, output.filename().string());
      counts = convert_into(csv, &out.open(summary.filename().string()));
      out.commit();
    } else {
      // The table and its summary in different places, or the table on
      // standard output: each written whole, once all of it converted.
      std::ostringstream csv_text, json;
      CsvRows csv(csv_text);
      counts = convert_into(csv, summary.empty() ? nullptr : &json);
      if (const auto& cell = csv.first_non_finite())
        throw non_finite_output_error(to_stdout ? "the table" : output.filename().string(), *cell);
      if (!summary.empty()) write_file_whole(summary, json.str());
      if (to_stdout)
        console << csv_text.str() << std::flush;
      else
        write_file_whole(output, csv_text.str());
    }
    if (!a->quiet) {
      out << fmt::format(
          "Converted {} of {} heights from {} to {} (heights read in {}, written in {})\n",
          counts.converted, counts.points, converter.from(), converter.to(), to_string(table_unit),
          to_string(written_unit));
      for (const std::string& step : converter.step_descriptions())
        out << "  step: " << step << '\n';
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
      if (to_stdout) {
        out << (summary.empty()
                    ? std::string("Wrote the table to standard output\n")
                    : fmt::format("Wrote the table to standard output and {}\n", summary.string()));
      } else {
        out << fmt::format("Wrote {} and {}\n", output.string(), summary.string());
      }
    }
    return static_cast<int>(exit_ok);
  };
}

}  // namespace levelhead::cli
