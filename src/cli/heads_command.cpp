// `levelhead heads`: water levels to heads in one reference, with QA.

#include <fmt/format.h>

#include <algorithm>
#include <memory>

#include "cli/app.hpp"
#include "cli/commands.hpp"
#include "cli/reference_inputs.hpp"
#include "cli/time_options.hpp"
#include "levelhead/core/errors.hpp"
#include "levelhead/core/table.hpp"
#include "levelhead/core/time.hpp"
#include "levelhead/heads/flags.hpp"
#include "levelhead/heads/head_core.hpp"
#include "levelhead/heads/heads.hpp"
#include "levelhead/report/stage_results.hpp"

namespace levelhead::cli {

namespace {
struct HeadArguments {
  std::string wells, mp, levels, out, adjusted, monitored, event, unit = "m";
  std::string wells_columns, mp_columns, levels_columns;
  ReferenceInputs refs;
  TimeZoneOptions zones;
  HeadOptions options;
  bool no_geopackage = false, strict = false, quiet = false;
};
}  // namespace

CommandRunner add_heads_command(CLI::App& app) {
  auto a = std::make_shared<HeadArguments>();
  HeadOptions& o = a->options;
  CLI::App* c = app.add_subcommand("heads",
                                   "Heads from water levels and measuring-point histories in one "
                                   "vertical reference, with QA before contouring");
  c->add_option("--wells", a->wells,
                "Wells table (well, x, y, ground, screen_top, screen_bottom, ...)")
      ->required();
  c->add_option("--measuring-points", a->mp,
                "Measuring-point history (well, valid_from, height, datum, sigma, ...)")
      ->required();
  c->add_option("--levels", a->levels, "Water-level readings (well, time, depth, ...)")->required();
  c->add_option("--target", o.target, "Target vertical reference of the heads")->required();
  c->add_option("--crs", o.crs, "CRS of the wells' x and y")->required();
  c->add_option("--out", a->out, "Output folder")->required();
  c->add_option("--adjusted", a->adjusted,
                "heights.csv of levelhead adjust, for measuring points that name a network point");
  c->add_option("--monitored", a->monitored,
                "heights_by_epoch.csv of levelhead epochs: measuring points that name a monitored "
                "point (point or moves_with) follow its movement");
  add_reference_options(*c, a->refs);
  c->add_option("--unit", a->unit, "Length unit of the tables: m, ft, us-ft")
      ->capture_default_str();
  c->add_option("--wells-columns", a->wells_columns,
                "Column map for the wells table, e.g. well=Well,x=East");
  c->add_option("--measuring-points-columns", a->mp_columns,
                "Column map for the measuring-point table");
  c->add_option("--levels-columns", a->levels_columns,
                "Column map for the readings, e.g. depth=DTW");
  c->add_flag("--interpolate", o.interpolate,
              "Interpolate the measuring point linearly between surveys (moving ground)");
  c->add_flag("--keep-going", o.keep_going,
              "Set a reading that cannot be read aside in rejects.csv and go on with the others "
              "(exit status 4 at the end); without it the first bad reading stops the stage");
  c->add_flag("--allow-before-first", o.allow_before_first,
              "Use the first survey for older readings (flagged) instead of failing");
  c->add_option("--event", a->event, "Centre of a synoptic measurement event (ISO 8601)");
  add_time_zone_options(*c, a->zones, {"levels", "measuring-points"});
  c->add_option("--synoptic-window", o.synoptic_window_hours, "Length of the event window (h)")
      ->capture_default_str();
  c->add_option("--depth-sigma", o.depth_sigma, "Sigma of a depth reading without one (m)")
      ->capture_default_str();
  c->add_option("--measuring-point-change-tolerance-m", o.mp_change_tolerance,
                "Flag a measuring point that changes more than this between surveys (m)")
      ->capture_default_str();
  c->add_option("--repeat-tolerance-m", o.repeat_tolerance,
                "Repeat readings must agree within this (m)")
      ->capture_default_str();
  c->add_option("--repeat-window", o.repeat_window_hours,
                "Readings of a well this close in time are repeats (h)")
      ->capture_default_str();
  c->add_option("--map-contour-interval", o.map_contour_interval,
                "Contour interval of maps measuring points were read from (m); sigma = half of it");
  c->add_option("--history-tolerance-m", o.history_tolerance,
                "Smallest departure of a head from its well's own trend that is flagged (m)")
      ->capture_default_str();
  c->add_option("--environmental-reference", o.environmental_reference,
                "Reference elevation z_r of environmental-water heads (m, target reference); wells "
                "need column_density");
  c->add_flag("--no-gpkg", a->no_geopackage, "Do not write heads.gpkg");
  c->add_flag("--compound-crs", a->options.compound_crs,
              "Write heads.gpkg in the compound CRS of --crs and the target (horizontal + "
              "vertical; the target must be a vertical CRS GDAL knows, e.g. EPSG:5703)");
  c->add_flag("--strict", a->strict,
              "Exit with status 3 when a reading carries a flag that needs a look (not merely "
              "information such as outside-synoptic-window)");
  c->add_flag("--quiet", a->quiet, "Print nothing on success");
  return [a](std::ostream& out, std::ostream& err, StageResults* chain) -> int {
    HeadOptions options = a->options;
    TimeReader times(a->zones.default_time_zone());
    if (!a->event.empty()) {
      if (!parse_iso8601(a->event))
        throw OptionError(fmt::format("--event '{}' is not an ISO 8601 time", a->event));
      options.event = times.read(a->event, CellLocation{"--event", 0, {}});
    }
    options.validate();
    const LengthUnit unit = parse_length_unit(a->unit);
    const TableOptions table_options{
        parse_column_map(a->levels_columns), unit, {}, {}, a->zones.table_time_zone("levels")};
    const TableOptions mp_options{parse_column_map(a->mp_columns),
                                  unit,
                                  {},
                                  {},
                                  a->zones.table_time_zone("measuring-points")};
    parse_column_map(a->wells_columns);
    if (options_check_only()) return exit_ok;
    const WellSet wells = read_wells(read_table(
        a->wells, TableOptions{parse_column_map(a->wells_columns), unit, {}, a->options.crs, {}}));
    const auto records = read_measuring_points(read_table(a->mp, mp_options), wells, &times);
    // In the chain, the adjustment's and the epochs' own results at full
    // precision; else the files.
    NetworkHeights network;
    const bool network_from_chain =
        chain && chain->adjust && names_file(a->adjusted, chain->adjust->written_to);
    if (network_from_chain) {
      network = chain->adjust->heights();
      // The adjustment's covariance between the points measuring points
      // name, for the event's checks across wells.
      std::vector<std::string> ids;
      for (const MeasuringPointRecord& m : records)
        if (!m.point.empty() && network.count(m.point)) ids.push_back(m.point);
      std::sort(ids.begin(), ids.end());
      ids.erase(std::unique(ids.begin(), ids.end()), ids.end());
      auto block = std::make_shared<std::vector<double>>(chain->adjust->covariance(ids));
      options.network_covariance = [ids, block](const std::string& a, const std::string& b) {
        const auto ia = std::lower_bound(ids.begin(), ids.end(), a);
        const auto ib = std::lower_bound(ids.begin(), ids.end(), b);
        if (ia == ids.end() || *ia != a || ib == ids.end() || *ib != b) return 0.0;
        return (*block)[static_cast<std::size_t>(ia - ids.begin()) * ids.size() +
                        static_cast<std::size_t>(ib - ids.begin())];
      };
    } else if (!a->adjusted.empty())
      network = read_network_heights(read_table(a->adjusted));
    MonitoredHeights monitored;
    if (chain && chain->epochs && names_file(a->monitored, chain->epochs->written_to))
      monitored = chain->epochs->monitored();
    else if (!a->monitored.empty())
      monitored = read_monitored_heights(read_table(a->monitored));
    const ReferenceSet references = a->refs.load();
    const ProjSettings settings = a->refs.settings();
    HeadSeriesSink series;
    std::vector<HeadSink*> more_sinks;
    if (chain) more_sinks.push_back(&series);
    HeadsResult result =
        compute_heads(wells, records, network, monitored, references, settings, options, times,
                      a->levels, table_options, a->out, !a->no_geopackage, more_sinks);
    const HeadsSummary& s = result.summary;
    if (!a->quiet) {
      std::vector<std::string> states;
      for (const auto& [state, count] : s.states_by_kind)
        states.push_back(fmt::format("{} {}", count, state));
      out << fmt::format("{} readings of {} wells: {} heads in {}, {} ready for contouring{}\n",
                         s.readings, wells.wells.size(), s.heads, options.target, s.contourable,
                         states.empty()
                             ? std::string()
                             : fmt::format("; states carried: {}", fmt::join(states, ", ")));
      for (const auto& [flag, count] : s.flags) out << fmt::format("  {}: {}\n", flag, count);
      if (const std::string line = zoneless_times_line(s.zoneless_times); !line.empty())
        out << line << '\n';
      if (options.event) {
        out << fmt::format(
            "event {} +- {:g} h: {} of {} readings inside the window (heads.csv `in_event`)\n",
            format_utc(*options.event), options.synoptic_window_hours / 2.0, s.in_event,
            s.readings);
        out << fmt::format("{} well(s) on the re-measure list (remeasure.csv)\n", s.remeasure);
      }
      out << fmt::format("Wrote heads.csv, qa.csv, measuring_points.csv, summary.json{} in {}\n",
                         a->no_geopackage ? "" : ", heads.gpkg", a->out);
    }
    // --strict fails on the flags that say something needs a look
    // (flags.hpp), not on information such as mp-interpolated.
    const bool failing = std::any_of(s.flags.begin(), s.flags.end(), [](const auto& flag) {
      return flag_info(flag.first).fails_strict;
    });
    const int status = s.rejected > 0 ? report_rejected(err, "heads", s.rejected, "reading(s)")
                                      : (a->strict && failing ? exit_checks_failed : exit_ok);
    if (chain) {
      chain->heads = HeadsStage{std::move(result), options.target, series.release(),
                                std::filesystem::path(a->out) / "event.csv", network_from_chain};
    }
    return status;
  };
}

}  // namespace levelhead::cli
