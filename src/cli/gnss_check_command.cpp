// `levelhead gnss-check`: levelled against GNSS heights at common marks.

#include <fmt/format.h>

#include <cmath>
#include <map>
#include <memory>
#include <nlohmann/json.hpp>
#include <tuple>
#include <unordered_map>

#include "cli/app.hpp"
#include "cli/commands.hpp"
#include "cli/reference_inputs.hpp"
#include "levelhead/core/errors.hpp"
#include "levelhead/core/output_files.hpp"
#include "levelhead/core/table.hpp"
#include "levelhead/references/gnss_check.hpp"
#include "levelhead/references/height_converter.hpp"
#include "levelhead/report/stage_results.hpp"
#include "levelhead/version.hpp"
#include "util/json_text.hpp"

namespace levelhead::cli {

namespace {
struct GnssArguments {
  std::string levelled, levelled_ref, gnss, gnss_ref = "EPSG:4979", crs, out, unit = "m";
  std::string levelled_unit;  // empty: as unit
  ReferenceInputs refs;
  GnssCheckOptions options;
  bool strict = false, quiet = false;
};
nlohmann::json outlier_test_json(const GnssOffsetFit& fit, double alpha0) {
  if (fit.test.empty()) return {{"test", "none (fewer than 3 marks)"}, {"alpha0", alpha0}};
  nlohmann::json j = {{"test", fit.test},
                      {"critical", fit.critical},
                      {"alpha0", alpha0},
                      {"marks_in_fit", fit.marks},
                      {"redundancy", fit.redundancy}};
  if (fit.marks > 0) {
    j["offset"] = fit.offset;
    j["offset_sigma"] = fit.offset_sigma;
    j["sigma0"] = fit.sigma0 ? nlohmann::json(*fit.sigma0) : nlohmann::json(nullptr);
  }
  return j;
}

}  // namespace

CommandRunner add_gnss_check_command(CLI::App& app) {
  auto a = std::make_shared<GnssArguments>();
  CLI::App* c = app.add_subcommand("gnss-check",
                                   "Compare levelled and GNSS heights at common marks "
                                   "and name the classic geoid mistakes");
  c->add_option("--levelled", a->levelled, "Levelled heights (id, height, sigma)")->required();
  c->add_option("--levelled-ref", a->levelled_ref, "Reference of the levelled heights")->required();
  c->add_option("--gnss", a->gnss, "GNSS heights (id, x, y, height, sigma)")->required();
  c->add_option("--gnss-ref", a->gnss_ref, "Reference the GNSS heights are labelled in")
      ->capture_default_str();
  c->add_option("--crs", a->crs, "CRS of the GNSS table's x and y")->required();
  c->add_option("--out", a->out, "Output folder")->required();
  add_reference_options(*c, a->refs);
  c->add_option("--unit", a->unit, "Length unit of both tables")->capture_default_str();
  c->add_option("--levelled-unit", a->levelled_unit,
                "Length unit of the levelled table when it differs from --unit (the heights.csv "
                "of levelhead adjust is in m)");
  c->add_option("--tolerance-m", a->options.tolerance,
                "Largest difference accepted as consistent (m); 3 sigma is used when larger")
      ->capture_default_str();
  c->add_option("--alpha0", a->options.alpha0,
                "Significance of the outlier test per mark against the common offset (Baarda's "
                "w-test with sigmas, Pope's tau test without)")
      ->capture_default_str();
  c->add_flag("--strict", a->strict, "Exit with status 3 when a mark is not consistent");
  c->add_flag("--quiet", a->quiet, "Print nothing on success");
  return [a](std::ostream& out, std::ostream&, StageResults* chain) -> int {
    const LengthUnit unit = parse_length_unit(a->unit);
    const LengthUnit levelled_unit =
        a->levelled_unit.empty() ? unit : parse_length_unit(a->levelled_unit);
    if (options_check_only()) return exit_ok;
    // id -> levelled height and sigma (m): the adjustment's own result in
    // the chain, else the table.
    std::unordered_map<std::string, std::pair<double, double>> levelled;
    // The adjusted heights are in the adjustment's own reference, whatever
    // reference the heads of the run are written in.
    std::string levelled_ref = a->levelled_ref;
    if (chain && chain->adjust && names_file(a->levelled, chain->adjust->written_to)) {
      if (!chain->adjust->result.reference.empty() &&
          chain->adjust->result.reference.rfind("free adjustment", 0) != 0)
        levelled_ref = chain->adjust->result.reference;
      for (const auto& [id, h] : chain->adjust->heights())
        levelled.emplace(id, std::pair{h.height, h.sigma.value_or(0.0)});
    } else {
      const Table table = read_table(a->levelled, TableOptions{{}, levelled_unit, {}, {}, {}});
      const std::size_t lid = table.require_column("id"), lh = table.require_column("height");
      const auto ls = table.find_column("sigma");
      for (std::size_t r = 0; r < table.row_count(); ++r) {
        if (const auto h = table.height(r, lh)) {
          levelled.emplace(std::string(table.cell(r, lid)),
                           std::pair{*h, ls ? table.length(r, *ls).value_or(0.0) : 0.0});
        }
      }
    }
    const Table gnss = read_table(a->gnss, TableOptions{{}, unit, {}, a->crs, {}});
    const std::size_t gid = gnss.require_column("id"), gh = gnss.require_column("height");
    const std::size_t gx = gnss.require_column("x"), gy = gnss.require_column("y");
    const auto gs = gnss.find_column("sigma");
    std::vector<GnssMark> marks;
    std::vector<PlanePoint> points;
    std::vector<double> heights, level_sigma, gnss_sigma;
    for (std::size_t r = 0; r < gnss.row_count(); ++r) {
      const auto it = levelled.find(std::string(gnss.cell(r, gid)));
      const auto h = gnss.height(r, gh);
      if (it == levelled.end() || !h) continue;
      const auto x = gnss.number(r, gx), y = gnss.number(r, gy);
      if (!x || !y)
        throw InputError(gnss.location(r, x ? gy : gx), "", "a GNSS mark needs x and y");
      GnssMark m;
      m.id = std::string(gnss.cell(r, gid));
      m.levelled = it->second.first;
      m.gnss = *h;
      marks.push_back(m);
      points.push_back({*x, *y});
      heights.push_back(*h);
      level_sigma.push_back(it->second.second);
      gnss_sigma.push_back(gs ? gnss.sigma(r, *gs).value_or(0.0) : 0.0);
    }
    if (marks.empty()) {
      throw InputError(a->gnss, fmt::format("no mark has a height in both {} and {}; the ids must "
                                            "match",
                                            a->gnss, a->levelled));
    }
    const ProjSettings settings = a->refs.settings();
    const ReferenceSet references = a->refs.load();
    // Heights labelled with a reference in feet must come from a table in feet.
    for (const auto& [option, reference, table_unit] :
         {std::tuple{"--levelled-ref", levelled_ref, levelled_unit},
          std::tuple{"--gnss-ref", a->gnss_ref, unit}}) {
      const HeightUnit own = reference_height_unit(reference, references);
      if (const auto problem = table_unit_mismatch(own, reference, table_unit))
        throw OptionError(fmt::format("{}: {}", option, *problem));
    }
    HeightConverter converter(a->gnss_ref, levelled_ref, a->crs, references, settings);
    const std::vector<ConvertedHeight> converted = converter.convert(points, heights);
    for (std::size_t i = 0; i < marks.size(); ++i) {
      if (!converted[i].height) {
        throw ReferenceError(fmt::format("mark '{}': {}", marks[i].id, converted[i].failure));
      }
      marks[i].gnss_converted = *converted[i].height;
      marks[i].sigma = std::sqrt(level_sigma[i] * level_sigma[i] + gnss_sigma[i] * gnss_sigma[i] +
                                 converted[i].variance_added);
    }
    GnssCheckResult result = check_gnss_marks(marks, a->options);

    OutputSet files(a->out);
    std::ostream& csv = files.open("gnss_check.csv");
    csv << "id,levelled,gnss,gnss_converted,separation,difference,sigma,from_offset,statistic,"
           "verdict,transform\n";
    std::map<std::string, std::size_t> counts;
    for (std::size_t i = 0; i < marks.size(); ++i) {
      const GnssCheck& ch = result.marks[i];
      ++counts[to_string(ch.verdict)];
      csv << csv_cell(marks[i].id)
          << fmt::format(",{:.4f},{:.4f},{:.4f},{:.4f},{:.4f},{:.4f},", marks[i].levelled,
                         marks[i].gnss, marks[i].gnss_converted, ch.separation, ch.difference,
                         marks[i].sigma);
      if (ch.from_offset) csv << fmt::format("{:.4f}", *ch.from_offset);
      csv << ',';
      if (ch.statistic) csv << fmt::format("{:.3f}", *ch.statistic);
      csv << ',' << to_string(ch.verdict) << ',' << csv_cell(converted[i].transform) << '\n';
    }
    nlohmann::json summary;
    summary["levelhead_version"] = version_string();
    summary["format_version"] = output_format_version;
    summary["command"] = "gnss-check";
    summary["units"] = "m";
    summary["levelled_reference"] = levelled_ref;
    summary["gnss_reference"] = a->gnss_ref;
    summary["tolerance"] = a->options.tolerance;
    summary["outlier_test"] = outlier_test_json(result.fit, result.alpha0);
    summary["marks"] = marks.size();
    summary["verdicts"] = counts;
    summary["common_offset"] =
        result.common_offset ? nlohmann::json(*result.common_offset) : nlohmann::json(nullptr);
    files.open("summary.json") << util::json_text(summary) << '\n';
    files.commit();
    if (!a->quiet) {
      out << fmt::format("{} mark(s) with levelled and GNSS heights\n", marks.size());
      for (std::size_t i = 0; i < marks.size(); ++i) {
        const GnssCheck& ch = result.marks[i];
        if (ch.verdict == GnssVerdict::consistent) continue;
        out << fmt::format("  {}: levelled - GNSS = {:+.3f} m (N = {:.3f} m): {}\n", marks[i].id,
                           ch.difference, ch.separation, explain(ch.verdict));
      }
      if (result.common_offset) {
        out << fmt::format("Most marks share an offset of {:+.3f} +- {:.3f} m\n",
                           *result.common_offset, result.fit.offset_sigma);
      }
      out << describe_outlier_test(result) << '\n';
      out << fmt::format("{} consistent. Wrote gnss_check.csv and summary.json in {}\n",
                         counts["consistent"], a->out);
    }
    const bool all_consistent = counts["consistent"] == marks.size();
    if (chain) {
      chain->gnss = GnssStage{std::move(marks), std::move(result), a->gnss_ref, levelled_ref};
    }
    return a->strict && !all_consistent ? exit_checks_failed : exit_ok;
  };
}

}  // namespace levelhead::cli
