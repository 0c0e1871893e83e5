// `levelhead reduce`: field book to sections.

#include <fmt/format.h>

#include <memory>

#include "cli/app.hpp"
#include "cli/commands.hpp"
#include "cli/network_inputs.hpp"
#include "levelhead/core/table.hpp"
#include "levelhead/levelling/fieldbook.hpp"
#include "levelhead/levelling/fieldbook_report.hpp"
#include "levelhead/report/stage_results.hpp"

namespace levelhead::cli {

namespace {
struct ReduceArguments {
  std::string field_book, out, unit = "m", columns, layer;
  FieldBookOptions options;
  double double_tolerance_mm = 0.5;
  std::string levelling_class;
  CLI::Option* section_tolerance = nullptr;  // to tell a given k from the class's
  bool no_curvature = false;
  bool strict = false;
  bool quiet = false;
};
}  // namespace

CommandRunner add_reduce_command(CLI::App& app) {
  auto a = std::make_shared<ReduceArguments>();
  FieldBookOptions& o = a->options;
  CLI::App* c = app.add_subcommand("reduce",
                                   "Reduce a levelling field book to sections, with "
                                   "field checks and corrections");
  c->add_option("FIELDBOOK", a->field_book, "Field-book table (one row per sight)")->required();
  c->add_option("--out", a->out, "Output folder")->required();
  c->add_option("--unit", a->unit, "Unit of readings and distances: m, ft, us-ft")
      ->capture_default_str();
  c->add_option("--columns", a->columns, "Column map, e.g. reading=Rod,point=Station");
  c->add_option("--layer", a->layer, "Layer or sheet of the field-book file");
  c->add_option("--max-sight", o.max_sight_length, "Longest sight allowed (m)")
      ->capture_default_str();
  c->add_option("--max-setup-imbalance", o.max_setup_imbalance,
                "Largest |back - fore| sight length per setup (m)")
      ->capture_default_str();
  c->add_option("--max-section-imbalance", o.max_section_imbalance,
                "Largest accumulated |back - fore| per section (m)")
      ->capture_default_str();
  c->add_option("--min-reading", o.min_reading,
                "Lowest rod reading allowed: line of sight above ground (m)")
      ->capture_default_str();
  c->add_option("--double-tolerance-mm", a->double_tolerance_mm,
                "Largest difference of the two height differences of a double-read setup (mm)")
      ->capture_default_str();
  c->add_option("--rod-length", o.rod_length, "Rod length: readings beyond it are errors (m)")
      ->capture_default_str();
  auto* mm = c->add_option("--collimation-mm-per-m", o.collimation_mm_per_m,
                           "Collimation error from a two-peg test (mm per m of sight; positive: "
                           "line of sight rises)");
  c->add_option("--collimation-arcsec", o.collimation_arcsec,
                "Collimation error as an angle (arc seconds; positive: line of sight rises)")
      ->excludes(mm);
  c->add_flag("--no-curvature-refraction", a->no_curvature,
              "Do not correct for earth curvature and refraction");
  c->add_option("--refraction", o.refraction_coefficient, "Refraction coefficient k")
      ->capture_default_str();
  c->add_option("--rod-scale-ppm", o.rod_scale_ppm, "Rod scale correction (ppm)")
      ->capture_default_str();
  c->add_option("--rod-expansion", o.rod_expansion_ppm_per_c,
                "Rod thermal expansion coefficient (ppm per degree C); needs a temperature column");
  c->add_option("--rod-reference-temperature", o.rod_reference_temperature_c,
                "Temperature of the rod calibration (degrees C)")
      ->capture_default_str();
  a->section_tolerance =
      c->add_option("--section-tolerance-mm-per-sqrt-km", o.section_tolerance_mm_per_sqrt_km,
                    "Repeated runs over a section must agree within k mm * sqrt(km), instead of "
                    "--levelling-class")
          ->capture_default_str();
  add_levelling_class_option(*c, a->levelling_class, a->section_tolerance,
                             "the section tolerance (its section closure)");
  c->add_option("--turning-point-prefix", o.turning_point_prefix,
                "Named points with this prefix are turning points (empty: only anonymous ones)")
      ->capture_default_str();
  c->add_flag("--strict", a->strict, "Exit with status 3 when a field check fails");
  c->add_flag("--quiet", a->quiet, "Print nothing on success");
  return [a](std::ostream& out, std::ostream&, StageResults* chain) {
    FieldBookOptions options = a->options;
    options.double_reading_tolerance = a->double_tolerance_mm * 1e-3;
    options.curvature_refraction = !a->no_curvature;
    if (!a->levelling_class.empty()) {
      const LevellingClass& k = find_levelling_class(a->levelling_class);
      options.section_tolerance_mm_per_sqrt_km = k.section_closure_mm_per_sqrt_km;
      options.levelling_class = std::string(k.name);
    } else if (a->section_tolerance->count() > 0) {
      options.levelling_class.clear();
    }
    options.validate();
    const TableOptions table_options{
        parse_column_map(a->columns), parse_length_unit(a->unit), a->layer, {}, {}};
    if (options_check_only()) return static_cast<int>(exit_ok);
    const FieldBook book = read_field_book(read_table(a->field_book, table_options));
    FieldBookResult result = reduce_field_book(book, options);
    write_field_book_outputs(book, result, options, a->out);
    if (!a->quiet) {
      out << field_book_summary_text(result);
      out << fmt::format("Wrote sections.csv, setups.csv and summary.json in {}\n", a->out);
    }
    const int status =
        a->strict && field_book_has_failed_checks(result) ? exit_checks_failed : exit_ok;
    if (chain) chain->reduce = FieldBookStage{std::move(result), book.sights.size()};
    return status;
  };
}

}  // namespace levelhead::cli
