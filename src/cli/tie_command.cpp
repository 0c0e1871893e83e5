// `levelhead tie`: a site reference estimated from common points.

#include <fmt/format.h>

#include <memory>

#include "cli/app.hpp"
#include "cli/commands.hpp"
#include "levelhead/core/errors.hpp"
#include "levelhead/core/output_files.hpp"
#include "levelhead/core/table.hpp"
#include "levelhead/core/units.hpp"
#include "levelhead/references/references_file.hpp"
#include "levelhead/references/site_tie.hpp"
#include "levelhead/references/vertical_reference.hpp"

namespace levelhead::cli {

namespace {
struct TieArguments {
  std::string site, base, name, base_reference, output, crs, unit = "m", model = "offset";
  std::string site_columns, base_columns;
  std::size_t min_ties = 3;
  bool strict = false, quiet = false;
};
}  // namespace

CommandRunner add_tie_command(CLI::App& app) {
  auto a = std::make_shared<TieArguments>();
  CLI::App* c = app.add_subcommand(
      "tie", "Estimate a site reference from points with heights in it and in a base reference");
  c->add_option("--site", a->site,
                "Points with heights in the site reference (id, x, y, height, sigma)")
      ->required();
  c->add_option("--base", a->base, "The same points with heights in the base reference")
      ->required();
  c->add_option("--name", a->name, "Name of the site reference to define")->required();
  c->add_option("--base-ref", a->base_reference, "The base reference (PROJ CRS or a defined name)")
      ->required();
  c->add_option("--out", a->output,
                "References file (TOML) to write; ties go to NAME.ties.csv beside it")
      ->required();
  c->add_option("--model", a->model, "offset, or plane (offset and slope)")->capture_default_str();
  c->add_option("--crs", a->crs, "CRS of x and y, recorded with the slopes");
  c->add_option("--unit", a->unit, "Length unit of both tables")->capture_default_str();
  c->add_option("--min-ties", a->min_ties, "Fewest common points accepted")->capture_default_str();
  c->add_option("--site-columns", a->site_columns, "Column map of the site table");
  c->add_option("--base-columns", a->base_columns, "Column map of the base table");
  c->add_flag("--strict", a->strict, "Exit with status 3 when a tie is a suspect");
  c->add_flag("--quiet", a->quiet, "Print nothing on success");
  return [a](std::ostream& out, std::ostream&, StageResults*) {
    require_reference_name(a->name, "--name");
    try {
      height_unit_of(a->base_reference);
    } catch (const ReferenceError& e) {
      throw OptionError(fmt::format("--base-ref: {}", e.what()));
    }
    TieOptions options;
    options.model = parse_tie_model(a->model);
    options.min_ties = a->min_ties;
    const LengthUnit unit = parse_length_unit(a->unit);
    const Table site =
        read_table(a->site, TableOptions{parse_column_map(a->site_columns), unit, {}, {}, {}});
    const Table base =
        read_table(a->base, TableOptions{parse_column_map(a->base_columns), unit, {}, {}, {}});
    const std::vector<TiePoint> ties = match_tie_points(site, base);
    const TieResult result = estimate_tie(ties, options);

    ReferenceDefinition d;
    d.name = a->name;
    d.kind = ReferenceDefinition::Kind::offset;
    d.base = a->base_reference;
    d.relation = result.relation;
    d.relation.crs = a->crs;
    d.source = fmt::format("levelhead tie, {} model, {} ties, sigma0 {:.3f}",
                           to_string(options.model), ties.size(), result.sigma0.value_or(0.0));

    const std::filesystem::path path(a->output);
    OutputSet files(path.parent_path().empty() ? "." : path.parent_path());
    files.open(path.filename().string())
        << "# Written by levelhead tie: H(" << a->base_reference << ") = H(" << a->name
        << ") + offset + slope_x (x - x0) + slope_y (y - y0)\n"
        << to_toml(d);
    std::ostream& csv = files.open(a->name + ".ties.csv");
    csv << "id,x,y,site_height,base_height,difference,residual,redundancy,w,suspect\n";
    for (std::size_t i = 0; i < ties.size(); ++i) {
      const TieResidual& r = result.residuals[i];
      const bool suspect = r.w && std::abs(*r.w) > result.w_critical;
      csv << csv_cell(ties[i].id) << ',' << fmt::format("{:.3f},{:.3f}", ties[i].x, ties[i].y)
          << ','
          << fmt::format("{:.5f},{:.5f},{:.5f},{:.5f},{:.4f}", ties[i].site_height,
                         ties[i].base_height, r.difference, r.residual, r.redundancy)
          << ',' << (r.w ? fmt::format("{:.3f}", *r.w) : "") << ',' << (suspect ? "yes" : "")
          << '\n';
    }
    files.commit();
    if (!a->quiet) {
      const auto& cov = *result.relation.covariance;
      out << fmt::format("Tie {} -> {}: {} ties, {} model{}\n", a->name, a->base_reference,
                         ties.size(), to_string(options.model),
                         result.weighted ? "" : " (no sigmas: equal weights)");
      out << fmt::format("  offset {:.4f} m +- {:.4f} m", result.relation.offset,
                         std::sqrt(cov[0][0]));
      if (options.model == TieModel::plane) {
        out << fmt::format(", slope x {:.2f} +- {:.2f} mm/km, slope y {:.2f} +- {:.2f} mm/km",
                           result.relation.slope_x * 1e6, std::sqrt(cov[1][1]) * 1e6,
                           result.relation.slope_y * 1e6, std::sqrt(cov[2][2]) * 1e6);
      }
      out << fmt::format("\n  sigma0 {:.3f}, redundancy {}\n", result.sigma0.value_or(0.0),
                         result.dof);
      const std::string statistic = result.weighted ? "w" : "tau";
      if (result.w_critical > 0.0) {
        out << fmt::format("  outlier test: {}, |{}| > {:.2f} at alpha0 = {:g} per tie\n",
                           result.test, statistic, result.w_critical, options.alpha0);
      } else {
        out << fmt::format("  outlier test: {}: no tie can be tested; add ties\n", result.test);
      }
      for (std::size_t k : result.suspects) {
        out << fmt::format("  SUSPECT tie {}: residual {:.1f} mm, {} = {:.2f}\n", ties[k].id,
                           result.residuals[k].residual * 1e3, statistic, *result.residuals[k].w);
      }
      out << fmt::format("Wrote {} and {}\n", path.string(),
                         (path.parent_path() / (a->name + ".ties.csv")).string());
    }
    return a->strict && !result.suspects.empty() ? exit_checks_failed : exit_ok;
  };
}

}  // namespace levelhead::cli
