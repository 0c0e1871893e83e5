#include "levelhead/levelling/fieldbook_report.hpp"

#include <fmt/format.h>

#include <nlohmann/json.hpp>

#include "levelhead/core/output_files.hpp"
#include "levelhead/version.hpp"
#include "util/json_text.hpp"

namespace levelhead {

namespace {

// 0.01 mm for heights and corrections; 0.001 m for distances.
std::string mm5(double value) { return fmt::format("{:.5f}", value); }
std::string mm5(const std::optional<double>& value) { return value ? mm5(*value) : ""; }
std::string m3(const std::optional<double>& value) {
  return value ? fmt::format("{:.3f}", *value) : "";
}
std::string joined(const std::vector<std::string>& items, const char* separator) {
  return fmt::format("{}", fmt::join(items, separator));
}
nlohmann::json optional_json(const std::optional<double>& value) {
  return value ? nlohmann::json(*value) : nlohmann::json(nullptr);
}

}  // namespace

bool field_book_has_failed_checks(const FieldBookResult& result) {
  bool closures_failed = false;
  for (const RunClosure& c : result.closures) closures_failed = closures_failed || !c.passed;
  return result.failed_setups > 0 || result.failed_sections > 0 || closures_failed;
}

void write_field_book_outputs(const FieldBook& book, const FieldBookResult& result,
                              const FieldBookOptions& options,
                              const std::filesystem::path& folder) {
  OutputSet out(folder);
  std::ostream& sections = out.open("sections.csv");
  sections << "from,to,dh,length,setups,runs,run,date,instrument,observer,kind,flags,spread,"
              "spread_tolerance,levelled_length,imbalance,rows\n";
  for (const ReducedSection& s : result.sections) {
    std::vector<std::string> rows;
    for (std::size_t r : s.rows) rows.push_back(std::to_string(r));
    sections << csv_cell(s.from) << ',' << csv_cell(s.to) << ',' << mm5(s.dh) << ',' << m3(s.length)
             << ',' << s.setups << ',' << s.runs << ',' << csv_cell(s.run) << ','
             << csv_cell(s.date) << ',' << csv_cell(s.instrument) << ',' << csv_cell(s.observer)
             << ',' << (s.side_shot ? "side-shot" : "section") << ','
             << csv_cell(joined(s.flags, " ")) << ',' << mm5(s.spread) << ','
             << mm5(s.spread_tolerance) << ',' << m3(s.levelled_length) << ',' << m3(s.imbalance)
             << ',' << joined(rows, " ") << '\n';
  }

  std::ostream& setups = out.open("setups.csv");
  setups << "run,setup,date,back,fore,back_reading,fore_reading,back_distance,fore_distance,"
            "dh_observed,double_difference,collimation,curvature_refraction,rod_scale,"
            "rod_expansion,dh,imbalance,failed_checks,row\n";
  for (const SetupReduction& s : result.setups) {
    setups << csv_cell(s.run) << ',' << s.setup << ',' << csv_cell(s.date) << ','
           << csv_cell(s.back) << ',' << csv_cell(s.fore) << ',' << mm5(s.back_reading) << ','
           << mm5(s.fore_reading) << ',' << m3(s.back_distance) << ',' << m3(s.fore_distance) << ','
           << mm5(s.dh_observed) << ',' << mm5(s.double_difference) << ',' << mm5(s.collimation)
           << ',' << mm5(s.curvature_refraction) << ',' << mm5(s.rod_scale) << ','
           << mm5(s.rod_expansion) << ',' << mm5(s.dh) << ',' << m3(s.imbalance) << ','
           << csv_cell(joined(s.failed_checks, " ")) << ',' << s.first_row << '\n';
  }

  nlohmann::json summary;
  summary["levelhead_version"] = version_string();
  summary["format_version"] = output_format_version;
  summary["command"] = "reduce";
  summary["inputs"] = {{"field_book", book.file}};
  summary["units"] = "m";
  summary["counts"] = {{"sights", book.sights.size()},
                       {"runs", result.run_count},
                       {"setups", result.setups.size()},
                       {"sections", result.sections.size()},
                       {"side_shots", result.side_shots},
                       {"failed_setups", result.failed_setups},
                       {"flagged_sections", result.failed_sections},
                       {"setups_without_distances", result.setups_without_distances}};
  summary["checks"] = {
      {"max_sight_length", options.max_sight_length},
      {"max_setup_imbalance", options.max_setup_imbalance},
      {"max_section_imbalance", options.max_section_imbalance},
      {"min_reading", options.min_reading},
      {"double_reading_tolerance", options.double_reading_tolerance},
      {"rod_length", options.rod_length},
      {"section_tolerance_mm_per_sqrt_km", options.section_tolerance_mm_per_sqrt_km},
      {"levelling_class", options.levelling_class.empty()
                              ? nlohmann::json(nullptr)
                              : nlohmann::json(options.levelling_class)},
      {"turning_point_prefix", options.turning_point_prefix}};
  summary["corrections"] = {
      {"collimation_slope", options.collimation_slope()},
      {"collimation_mm_per_m", optional_json(options.collimation_mm_per_m)},
      {"collimation_arcsec", optional_json(options.collimation_arcsec)},
      {"curvature_refraction", options.curvature_refraction},
      {"refraction_coefficient", options.refraction_coefficient},
      {"earth_radius", earth_radius_m},
      {"rod_scale_ppm", options.rod_scale_ppm},
      {"rod_expansion_ppm_per_c", optional_json(options.rod_expansion_ppm_per_c)},
      {"rod_reference_temperature_c", options.rod_reference_temperature_c}};
  nlohmann::json flagged = nlohmann::json::array();
  for (const ReducedSection& s : result.sections) {
    if (s.flags.empty()) continue;
    flagged.push_back(
        {{"from", s.from}, {"to", s.to}, {"run", s.run}, {"flags", s.flags}, {"rows", s.rows}});
  }
  summary["flagged_sections"] = flagged;
  nlohmann::json closures = nlohmann::json::array();
  for (const RunClosure& c : result.closures) {
    closures.push_back({{"run", c.run},
                        {"point", c.point},
                        {"misclosure", c.misclosure},
                        {"length", optional_json(c.length)},
                        {"tolerance", optional_json(c.tolerance)},
                        {"passed", c.passed},
                        {"row", c.row}});
  }
  summary["closures"] = closures;
  out.open("summary.json") << util::json_text(summary) << '\n';
  out.commit();
}

std::string field_book_summary_text(const FieldBookResult& result) {
  std::size_t merged = 0;
  for (const ReducedSection& s : result.sections) merged += s.runs > 1;
  std::string text = fmt::format(
      "Reduced {} run(s), {} setups into {} sections ({} side shots; {} sections levelled more "
      "than once)\n",
      result.run_count, result.setups.size(), result.sections.size(), result.side_shots, merged);
  if (result.setups_without_distances > 0) {
    text += fmt::format(
        "{} setup(s) have no sight distances: sight checks and the curvature "
        "correction were not applied to them\n",
        result.setups_without_distances);
  }
  text += fmt::format("{} setup(s) failed a field check\n", result.failed_setups);
  for (const ReducedSection& s : result.sections) {
    if (s.flags.empty()) continue;
    text += fmt::format("  {} -> {} ({}): {}\n", s.from, s.to, s.run, joined(s.flags, ", "));
  }
  for (const RunClosure& c : result.closures) {
    text += fmt::format("Run '{}' closes on {}: misclosure {:.2f} mm{}\n", c.run, c.point,
                        c.misclosure * 1e3,
                        c.tolerance ? fmt::format(", tolerance {:.2f} mm -> {}", *c.tolerance * 1e3,
                                                  c.passed ? "passed" : "FAILED")
                                    : std::string(" (no length: not judged)"));
  }
  return text;
}

}  // namespace levelhead
