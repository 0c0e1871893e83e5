#pragma once
// The report of a chain run and its audit record.
//
// In:  the typed results of the stages that ran (stage_results.hpp), and
//      what the run knows: the site, the inputs with their checksums, the
//      settings that differ from their defaults. No stage output is read
//      back; the stage folders in the output folder are only listed with
//      their checksums in run.json.
// Out: report.html (self-contained: inline SVG and CSS, no external
//      request), report.md (figures as SVG files in figures/), contours.gpkg
//      (quick-look contours of the synoptic heads, contours.hpp), and run.json
//      (audit: inputs with SHA-256, settings, configuration hash, PROJ, GDAL
//      and EPSG database versions, grids with checksums, every stage output
//      with its checksum, the findings with stage, topic and level). Only the report's one run-time
//      line differs between two runs on the same inputs.
// Errors: InputError when an input cannot be hashed; OutputError when a file
//      cannot be written (nothing half-written is left).

#include <filesystem>
#include <optional>
#include <string>
#include <vector>

#include "levelhead/report/findings.hpp"
#include "levelhead/report/stage_results.hpp"

namespace levelhead {

struct ReportInput {
  std::string role;  // points, levels, ...
  std::string path;  // as written in the project
  std::filesystem::path resolved;
  std::string columns;  // its column map, as in the project ("height=Elev,...")
};

struct ReportSetting {
  std::string name;  // "adjustment.alpha"
  std::string value, default_value;
  bool chain_default = false;
};

struct ReportContext {
  std::string title, site, prepared_for, prepared_by;
  std::string crs, target;
  std::vector<ReportInput> inputs;
  std::vector<ReportSetting> settings;       // differing from the commands' defaults
  std::vector<std::string> stages;           // that ran, in order
  std::vector<std::filesystem::path> grids;  // grid files named by the references
  std::optional<double> contour_interval;    // in the heads' unit; default: about eight levels
  std::string run_time;                      // the one line that changes run to run
  // The references of the references file, one line each, and the zones
  // declared for times without one: the report's basis of the survey.
  std::vector<std::string> references;
  std::vector<std::string> time_zones;
};

// SHA-256 of the configuration: the settings and the inputs' checksums, in
// a fixed order, so two runs agree exactly when their configuration does.
std::string configuration_hash(const ReportContext& context);

// `findings`: chain_findings(results), computed once by the caller, which
// shows the same list on the console.
void write_report(const ReportContext& context, const StageResults& results,
                  const std::vector<Finding>& findings, const std::filesystem::path& folder);

// report.html of `folder` printed to report.pdf (A4, page numbers, figures
// and small tables kept whole: the report's print style) by headless
// Chromium's own print engine, found on the PATH (chromium or
// chromium-browser). All-or-nothing: a failed print leaves no report.pdf.
// Errors: OutputError when no Chromium is installed or the print fails.
void print_report_pdf(const std::filesystem::path& folder);

}  // namespace levelhead
