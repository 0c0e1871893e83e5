// `levelhead flow`: hydraulic gradient, flow direction and Darcy ranges.

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <map>
#include <memory>
#include <nlohmann/json.hpp>
#include <set>

#include "cli/app.hpp"
#include "cli/commands.hpp"
#include "levelhead/core/errors.hpp"
#include "levelhead/core/output_files.hpp"
#include "levelhead/core/table.hpp"
#include "levelhead/flow/flow.hpp"
#include "levelhead/heads/wells.hpp"
#include "levelhead/references/coordinate_check.hpp"
#include "levelhead/report/stage_results.hpp"
#include "levelhead/version.hpp"
#include "util/json_text.hpp"
#include "util/option_checks.hpp"

namespace levelhead::cli {

namespace {
struct FlowArguments {
  std::string heads, wells, wells_columns, aquifer, out, crs, unit = "m";
  std::vector<double> conductivity, porosity;
  std::optional<double> distance;
  bool quiet = false;
};

std::optional<Range> range_option(const std::vector<double>& values, const char* name, double min,
                                  double max) {
  if (values.empty()) return std::nullopt;
  if (values.size() != 2 || !(values[0] > min) || values[1] < values[0] || values[1] > max) {
    throw OptionError(fmt::format("{} takes LOW HIGH with {} < LOW <= HIGH <= {}", name, min, max));
  }
  return Range{values[0], values[1]};
}

nlohmann::json range_json(const std::optional<Range>& r) {
  return r ? nlohmann::json{{"low", r->low}, {"high", r->high}} : nlohmann::json(nullptr);
}
}  // namespace

CommandRunner add_flow_command(CLI::App& app) {
  auto a = std::make_shared<FlowArguments>();
  CLI::App* c = app.add_subcommand("flow",
                                   "Hydraulic gradient and flow direction from heads "
                                   "(one per well), with Darcy velocity ranges");
  c->add_option("--heads", a->heads, "Heads, one per well (event.csv of heads --event)")
      ->required();
  c->add_option("--wells", a->wells, "Wells table (well, x, y, aquifer)")->required();
  c->add_option("--wells-columns", a->wells_columns, "Column map for the wells table");
  c->add_option("--crs", a->crs,
                "Projected CRS of the wells' x and y (checked against a GIS layer's own)");
  c->add_option("--aquifer", a->aquifer, "Use only wells of this aquifer");
  c->add_option("--out", a->out, "Output folder")->required();
  c->add_option("--conductivity", a->conductivity, "Hydraulic conductivity range LOW HIGH (m/s)")
      ->expected(2);
  c->add_option("--porosity", a->porosity, "Effective porosity range LOW HIGH (0..1)")->expected(2);
  c->add_option("--distance", a->distance, "Distance for the travel time (m)");
  c->add_option("--unit", a->unit,
                "Unit of the heads table and of flow_wells.csv: m, ft, us-ft (in a run: the "
                "target reference's); the gradient is the same in any")
      ->capture_default_str();
  c->add_flag("--quiet", a->quiet, "Print nothing on success");
  return [a](std::ostream& out, std::ostream&, StageResults* chain) -> int {
    LengthUnit unit = parse_length_unit(a->unit);
    FlowOptions options;
    options.conductivity = range_option(a->conductivity, "--conductivity", 0.0, 1.0);
    options.porosity = range_option(a->porosity, "--porosity", 0.0, 1.0);
    if (a->distance) util::require_positive(*a->distance, "--distance", "m");
    if (!a->crs.empty()) require_metric_plane_crs(a->crs, "--crs");
    parse_column_map(a->wells_columns);
    if (options_check_only()) return exit_ok;
    options.distance = a->distance;
    const WellSet wells = read_wells(read_table(
        a->wells,
        TableOptions{parse_column_map(a->wells_columns), LengthUnit::metre, {}, a->crs, {}}));
    std::vector<FlowWell> used;
    // Whether a well enters the fit: of the aquifer asked for (the wells table says).
    const auto in_aquifer = [&](const Well& w) {
      return a->aquifer.empty() || w.aquifer == a->aquifer;
    };
    std::map<std::string, std::string> network_point_of;  // well -> adjusted point
    const bool used_event_heads = chain && chain->heads && chain->heads->result.event &&
                                  names_file(a->heads, chain->heads->written_to);
    if (used_event_heads) {
      unit = chain->heads->result.unit;
      // The event's own heads at full precision, one per well.
      for (const EventHead& h : chain->heads->result.event->heads) {
        const auto it = wells.index.find(h.well);
        if (it == wells.index.end()) {
          throw InputError(a->wells,
                           fmt::format("well '{}' of the event is not in the wells table", h.well));
        }
        if (!in_aquifer(wells.wells[it->second])) continue;
        used.push_back({h.well, wells.wells[it->second].x, wells.wells[it->second].y, h.head,
                        h.sigma, h.common});
        network_point_of[h.well] = h.network_point;
      }
    } else {
      const Table heads = read_table(a->heads, TableOptions{{}, unit, {}, {}, {}});
      const std::size_t well_col = heads.require_column("well"),
                        head_col = heads.require_column("head");
      const auto sigma_col = heads.find_column("sigma"), contour_col = heads.find_column("contour");
      const auto common_col = heads.find_column("common"),
                 relative_col = heads.find_column("sigma_relative");
      std::set<std::string> seen;
      for (std::size_t r = 0; r < heads.row_count(); ++r) {
        const auto h = heads.height(r, head_col);
        if (!h) continue;
        if (contour_col && heads.cell(r, *contour_col) == "no") continue;
        const std::string id(heads.cell(r, well_col));
        const auto it = wells.index.find(id);
        if (it == wells.index.end()) {
          throw InputError(heads.location(r, well_col), id, "this well is not in the wells table");
        }
        const Well& w = wells.wells[it->second];
        if (!in_aquifer(w)) continue;
        if (!seen.insert(id).second) {
          throw InputError(heads.location(r, well_col), id,
                           "a well appears twice: a gradient needs one head per well (use "
                           "event.csv of levelhead heads --event)");
        }
        const double sigma = sigma_col ? heads.sigma(r, *sigma_col).value_or(0.0) : 0.0;
        std::vector<CommonError> common;
        if (common_col) {
          const auto parsed =
              parse_common_errors(heads.cell(r, *common_col), metres_per_unit(unit));
          if (!parsed) {
            throw InputError(
                heads.location(r, *common_col), std::string(heads.cell(r, *common_col)),
                "expected the errors this head shares as SOURCE=SIGMA; SOURCE=SIGMA "
                "(sigma in the table's unit), as event.csv of levelhead heads writes them");
          }
          common = *parsed;
        }
        // The whole sigma from its parts where the table gives them: a
        // rounded total can hide a small own part under a large shared one.
        const std::optional<double> relative =
            relative_col ? heads.sigma(r, *relative_col) : std::nullopt;
        const double whole =
            relative ? std::sqrt(*relative * *relative + total_variance(common)) : sigma;
        if (total_variance(common) > whole * whole * (1.0 + 1e-6) + 1e-8) {
          throw InputError(heads.location(r, *common_col), std::string(heads.cell(r, *common_col)),
                           "the shared errors exceed the head's own sigma; the sigma is the "
                           "whole, the shared errors a part of it (or give sigma_relative)");
        }
        used.push_back({id, w.x, w.y, *h, whole, std::move(common)});
      }
    }
    // In the chain, wells whose measuring points are points of this chain's
    // adjustment carry its covariance (the heads' sigmas hold the variances).
    std::vector<HeadCovariance> covariances;
    if (used_event_heads && chain->heads->network_from_chain && chain->adjust) {
      std::vector<std::string> points;
      for (const FlowWell& w : used) points.push_back(network_point_of[w.id]);
      const std::vector<double> c = chain->adjust->covariance(points);
      for (std::size_t i = 0; i < used.size(); ++i) {
        for (std::size_t j = 0; j < i; ++j) {
          const double value = c[i * used.size() + j];
          if (std::abs(value) > 0.0) covariances.push_back({i, j, value});
        }
      }
    }
    FlowResult f = estimate_flow(used, options, covariances);

    const double per_metre = 1.0 / metres_per_unit(unit);
    OutputSet files(a->out);
    std::ostream& csv = files.open("flow_wells.csv");
    csv << "well,x,y,head,sigma,residual,tau,off_plane\n";
    for (std::size_t i = 0; i < used.size(); ++i) {
      const bool off = std::find(f.off_plane.begin(), f.off_plane.end(), i) != f.off_plane.end();
      csv << csv_cell(used[i].id)
          << fmt::format(",{:.3f},{:.3f},{:.4f},{:.4f},{:+.4f},", used[i].x, used[i].y,
                         used[i].head * per_metre, used[i].sigma * per_metre,
                         f.residuals[i] * per_metre)
          << (f.tau[i] ? fmt::format("{:+.3f}", *f.tau[i]) : "") << ',' << (off ? "yes" : "no")
          << '\n';
    }
    nlohmann::json j;
    j["levelhead_version"] = version_string();
    j["format_version"] = output_format_version;
    j["command"] = "flow";
    j["wells"] = used.size();
    j["units"] = to_string(unit);
    j["aquifer"] = a->aquifer;
    const auto sigmas_json = [](const std::optional<FlowSigmas>& s) {
      return s ? nlohmann::json{{"gradient", s->gradient}, {"azimuth_degrees", s->azimuth}}
               : nlohmann::json(nullptr);
    };
    // The gradient is a ratio (no unit); the azimuth is the direction of
    // flow, clockwise from grid north.
    j["gradient"] = {{"value", f.gradient}, {"sigma", f.gradient_sigma}};
    j["azimuth_degrees"] = {{"value", f.azimuth}, {"sigma", f.azimuth_sigma}};
    j["uncertainty"] = {
        {"from_heads", sigmas_json(f.from_heads)},
        {"from_misfit", sigmas_json(f.from_misfit)},
        {"dominant", f.misfit_dominates ? "misfit" : "heads"},
        {"shared_errors",
         "errors the wells share (common_error) enter the heads' covariance; "
         "one every well shares leaves the gradient untouched"},
        {"network_covariances", covariances.size()},
        {"misfit_global_test", f.misfit_passed ? nlohmann::json{{"vtpv", f.vtpv},
                                                                {"lower", *f.misfit_lower},
                                                                {"upper", *f.misfit_upper},
                                                                {"alpha", options.alpha},
                                                                {"passed", *f.misfit_passed}}
                                               : nlohmann::json(nullptr)}};
    j["plane"] = {{"dh_dx", f.dh_dx},
                  {"dh_dy", f.dh_dy},
                  {"head_at_centroid", f.intercept},
                  {"x0", f.x0},
                  {"y0", f.y0},
                  {"covariance", {{f.cov_xx, f.cov_xy}, {f.cov_xy, f.cov_yy}}}};
    j["dof"] = f.dof;
    j["sigma0"] = f.sigma0 ? nlohmann::json(*f.sigma0) : nlohmann::json(nullptr);
    j["nearly_collinear"] = f.nearly_collinear;
    nlohmann::json off_plane = nlohmann::json::array();
    for (std::size_t i : f.off_plane)
      off_plane.push_back({{"well", used[i].id}, {"tau", *f.tau[i]}});
    j["wells_off_plane"] = {
        {"test", "Pope's tau test"},
        {"alpha0", options.alpha0},
        {"critical",
         std::isfinite(f.tau_critical) ? nlohmann::json(f.tau_critical) : nlohmann::json(nullptr)},
        {"note", std::isfinite(f.tau_critical) ? "" : "fewer than 5 wells: no well can be tested"},
        {"wells", off_plane}};
    j["darcy"] = {{"conductivity_m_per_s", range_json(options.conductivity)},
                  {"porosity", range_json(options.porosity)},
                  {"specific_discharge_m_per_s", range_json(f.specific_discharge)},
                  {"velocity_m_per_s", range_json(f.velocity)},
                  {"distance_m",
                   options.distance ? nlohmann::json(*options.distance) : nlohmann::json(nullptr)},
                  {"travel_time_s", range_json(f.travel_time)}};
    files.open("flow.json") << util::json_text(j) << '\n';
    files.commit();
    if (!a->quiet) {
      out << fmt::format(
          "{} wells: gradient {:.2e} +- {:.1e} {}, flow towards {:.1f} +- {:.1f} "
          "degrees from grid north\n",
          used.size(), f.gradient, f.gradient_sigma, fmt::format("{0}/{0}", unit_label(unit)),
          f.azimuth, f.azimuth_sigma);
      out << "  " << describe_flow_uncertainty(f) << '\n';
      if (f.nearly_collinear)
        out << "Warning: the wells lie nearly on a line; the direction is weak\n";
      for (std::size_t i : f.off_plane) {
        out << fmt::format(
            "  {} departs from the plane: tau = {:+.2f} (Pope's tau test, |tau| > "
            "{:.2f} at alpha0 = {:g})\n",
            used[i].id, *f.tau[i], f.tau_critical, options.alpha0);
      }
      if (f.velocity) {
        out << fmt::format("  average linear velocity {}\n", describe_velocity(*f.velocity));
      }
      if (f.travel_time) {
        out << fmt::format("  travel time over {:g} m: {}\n", *options.distance,
                           describe_travel_time(*f.travel_time));
      }
      out << fmt::format("Wrote flow.json and flow_wells.csv in {}\n", a->out);
    }
    if (chain) {
      std::vector<std::string> ids;
      for (const FlowWell& w : used) ids.push_back(w.id);
      chain->flow = FlowStage{std::move(f),     used.size(),    a->aquifer,
                              options.distance, std::move(ids), options.alpha0};
    }
    return static_cast<int>(exit_ok);
  };
}

}  // namespace levelhead::cli
