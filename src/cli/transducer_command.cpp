// `levelhead transducer`: pressure records to depths to water, checked
// against the manual readings, as a levels table for `levelhead heads`.

#include <fmt/format.h>

#include <memory>

#include "cli/app.hpp"
#include "cli/commands.hpp"
#include "cli/time_options.hpp"
#include "levelhead/core/errors.hpp"
#include "levelhead/core/table.hpp"
#include "levelhead/core/units.hpp"
#include "levelhead/heads/flags.hpp"
#include "levelhead/heads/transducer.hpp"
#include "levelhead/report/stage_results.hpp"

namespace levelhead::cli {

namespace {
struct TransducerArguments {
  std::string wells, sensors, records, levels, out, unit = "m";
  std::string wells_columns, levels_columns, crs;
  TimeZoneOptions zones;
  TransducerOptions options;
  bool strict = false, quiet = false;
};
}  // namespace

CommandRunner add_transducer_command(CLI::App& app) {
  auto a = std::make_shared<TransducerArguments>();
  TransducerOptions& o = a->options;
  CLI::App* c = app.add_subcommand(
      "transducer",
      "Pressure-transducer records to depths to water, checked against tape readings");
  c->add_option("--wells", a->wells, "Wells table (well, x, y, ground, density)")->required();
  c->add_option(
       "--sensors", a->sensors,
       "Sensors (sensor, kind, well, barometer, hung_depth, range_kpa, sigma, time_zone, x, y, "
       "elevation)")
      ->required();
  c->add_option("--records", a->records, "Pressure records (sensor, time, pressure in kPa)")
      ->required();
  c->add_option("--levels", a->levels, "Manual water-level readings (the checks; passed through)")
      ->required();
  c->add_option("--out", a->out, "Output folder")->required();
  c->add_option("--unit", a->unit, "Length unit of the tables: m, ft, us-ft")
      ->capture_default_str();
  c->add_option("--wells-columns", a->wells_columns, "Column map for the wells table");
  c->add_option("--crs", a->crs,
                "CRS of the wells' and barometers' x and y (checked against a GIS layer's own)");
  c->add_option(
      "--levels-columns", a->levels_columns,
      "Column map for the manual readings (levels.csv is written with levelhead's names)");
  add_time_zone_options(*c, a->zones, {"levels", "records"});
  c->add_option("--density", o.density, "Water density for wells that give none (kg/m^3)")
      ->capture_default_str();
  c->add_option("--gravity", o.gravity, "Acceleration of gravity (m/s^2; default standard gravity)")
      ->capture_default_str();
  c->add_option("--max-baro-distance", o.max_baro_distance,
                "Farthest a barometer may be from its well (m)")
      ->capture_default_str();
  c->add_option("--max-baro-elevation-difference", o.max_baro_elevation_difference,
                "Largest elevation difference between a barometer and its well (m)")
      ->capture_default_str();
  c->add_option("--max-baro-gap", o.max_baro_gap_hours,
                "Longest gap in a barometer record bridged (h)")
      ->capture_default_str();
  c->add_option("--max-check-gap", o.max_check_gap_hours,
                "A manual check needs a record this close in time (h)")
      ->capture_default_str();
  c->add_option("--drift-limit", o.drift_limit,
                "Largest change of the sensor's offset between two checks; beyond it readings are "
                "rejected, not corrected (m)")
      ->capture_default_str();
  c->add_option("--sensor-sigma", o.sensor_sigma, "Sigma of a transducer depth without one (m)")
      ->capture_default_str();
  c->add_option("--manual-window", o.manual_window_hours,
                "Records this close to a manual reading are left out (h)")
      ->capture_default_str();
  c->add_flag("--keep-going", o.keep_going,
              "Set a record or manual reading that cannot be read aside in rejects.csv and go on "
              "(exit status 4 at the end); without it the first bad row stops the stage");
  c->add_flag("--strict", a->strict,
              "Exit with status 3 when a reading is rejected or left uncomputed");
  c->add_flag("--quiet", a->quiet, "Print nothing on success");
  return [a](std::ostream& out, std::ostream& err, StageResults* chain) -> int {
    a->options.validate();
    const TableOptions table{{}, parse_length_unit(a->unit), {}, {}, {}};
    const TableOptions levels{parse_column_map(a->levels_columns),
                              table.length_unit,
                              {},
                              {},
                              a->zones.table_time_zone("levels")};
    TableOptions records;
    records.time_zone = a->zones.table_time_zone("records");
    TimeReader times(a->zones.default_time_zone());
    parse_column_map(a->wells_columns);
    if (options_check_only()) return exit_ok;
    const WellSet wells = read_wells(read_table(
        a->wells,
        TableOptions{parse_column_map(a->wells_columns), table.length_unit, {}, a->crs, {}}));
    TransducerSummary s =
        reduce_transducers(wells, read_table(a->sensors, table), a->records, records,
                           read_table(a->levels, levels), a->options, times, a->out);
    bool problems = false;
    if (!a->quiet) {
      out << fmt::format("{} manual readings passed through, {} transducer readings written\n",
                         s.manual, s.written);
    }
    for (const SensorSummary& sensor : s.sensors) {
      std::size_t flagged = 0;
      for (const auto& [flag, count] : sensor.flags) {
        if (flag_info(flag).fails_strict) flagged += count;
      }
      problems = problems || flagged > 0;
      if (a->quiet) continue;
      out << fmt::format(
          "  {} ({} in {}): {} records, {} written, {} checks, largest drift {:.3f} m, hung depth "
          "{:.3f} m{}, rho {:g} kg/m^3, g {:g} m/s^2\n",
          sensor.sensor, sensor.kind, sensor.well, sensor.records, sensor.written, sensor.checks,
          sensor.largest_drift, sensor.hung_depth.value_or(0.0),
          sensor.calibrated ? " (calibrated)" : "", sensor.density, sensor.gravity);
      for (const auto& [flag, count] : sensor.flags)
        out << fmt::format("    {}: {}\n", flag, count);
      if (sensor.efficiency) {
        out << fmt::format("    barometric efficiency {} ({} paired changes)\n",
                           sensor.efficiency->text(), sensor.efficiency->pairs);
      }
    }
    if (const std::string line = zoneless_times_line(s.zoneless_times); !line.empty() && !a->quiet)
      out << line << '\n';
    if (!a->quiet)
      out << fmt::format("Wrote levels.csv, checks.csv, qa.csv and summary.json in {}\n", a->out);
    const int status = s.rejected > 0 ? report_rejected(err, "transducer", s.rejected, "row(s)")
                                      : (a->strict && problems ? exit_checks_failed : exit_ok);
    if (chain) chain->transducer = TransducerStage{std::move(s), a->options.gravity};
    return status;
  };
}

}  // namespace levelhead::cli
