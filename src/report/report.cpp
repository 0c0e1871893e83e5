#include "levelhead/report/report.hpp"

#include <fcntl.h>
#include <fmt/format.h>
#include <gdal.h>
#include <proj.h>
#include <sys/wait.h>
#include <unistd.h>

#include <algorithm>
#include <cmath>
#include <cstdlib>
#include <fstream>
#include <map>
#include <nlohmann/json.hpp>
#include <set>

#include "levelhead/core/checksums.hpp"
#include "levelhead/core/errors.hpp"
#include "levelhead/core/output_files.hpp"
#include "levelhead/core/table.hpp"
#include "levelhead/core/time.hpp"
#include "levelhead/flow/contours.hpp"
#include "levelhead/levelling/precision.hpp"
#include "levelhead/references/vertical_reference.hpp"
#include "levelhead/report/findings.hpp"
#include "levelhead/version.hpp"
#include "report/report_document.hpp"
#include "report/report_figures.hpp"
#include "report/svg.hpp"
#include "util/json_text.hpp"

namespace levelhead {

namespace fs = std::filesystem;
using namespace report;

namespace {

// ---------------------------------------------------------------- sections

std::string yes_no(bool value) { return value ? "yes" : "no"; }

std::string symbol(const OutlierTest& test) {
  return test.kind == OutlierTest::Kind::w_test ? "w" : "tau";
}

void levelling_section(Document& doc, const StageResults& results) {
  if (!results.adjust) return;
  const AdjustStage& adjust = *results.adjust;
  const Network& net = adjust.network;
  const AdjustmentResult& a = adjust.result;
  doc.heading(2, "Levelling network");
  if (results.reduce) {
    const FieldBookResult& r = results.reduce->result;
    doc.paragraph(fmt::format(
        "Field book: {} runs, {} setups and {} sights reduced to {} sections; {} setup(s) "
        "and {} section(s) failed a field check (reduce/setups.csv, reduce/sections.csv).",
        r.run_count, r.setups.size(), results.reduce->sights, r.sections.size(), r.failed_setups,
        r.failed_sections));
  }
  if (auto map = network_map(adjust, results.loops ? &*results.loops : nullptr)) {
    doc.figure("network", *map,
               "Levelling network. Line colour and dash give the normalised residual |w| of each "
               "section after adjustment; failed loops are outlined.");
  }
  if (results.loops) {
    const LoopsStage& loops = *results.loops;
    doc.heading(3, "Loop misclosures");
    std::vector<std::vector<std::string>> rows;
    for (std::size_t k = 0; k < loops.result.loops.size(); ++k) {
      const Loop& loop = loops.result.loops[k];
      rows.push_back({std::to_string(k + 1),
                      fmt::format("{}", fmt::join(loops.loop_points[k], ">")),
                      fixed(loop.length, 3), fixed(1000 * loop.misclosure, 2),
                      fixed(1000 * loop.tolerance, 2), yes_no(loop.passed)});
    }
    doc.table({"loop", "points", "length (m)", "misclosure (mm)", "tolerance (mm)", "passed"},
              rows);
    if (!loops.result.loops.empty())
      doc.figure("loops", loop_chart(loops.result),
                 "Loop misclosures as a fraction of their tolerance.");
  }
  doc.heading(3, "Adjustment");
  std::vector<std::vector<std::string>> stats = {
      {"redundancy (dof)", std::to_string(a.dof)},
      {"sigma0 (a posteriori)", a.sigma0 ? fixed(*a.sigma0, 3) : "-"},
      {"reference of the heights", a.reference},
      {"a-priori precision of sections by length", a.precision}};
  if (a.global_test) {
    const GlobalTest& g = *a.global_test;
    stats.push_back({"global test (chi-square)",
                     fmt::format("{:.2f} in [{:.2f}, {:.2f}]: {}", g.statistic, g.lower, g.upper,
                                 g.passed ? "passed" : "failed")});
  }
  doc.table({"quantity", "value"}, stats);
  if (!a.variance_components.empty()) {
    std::vector<std::vector<std::string>> factors;
    for (const VarianceComponent& c : a.variance_components) {
      factors.push_back({c.group, std::to_string(c.sections), fixed(c.redundancy, 1),
                         c.factor ? fixed(*c.factor, 2) : "not estimated (redundancy below 2)",
                         c.factor ? fmt::format("{:.2f} to {:.2f}", c.low, c.high) : "-"});
    }
    doc.paragraph(
        fmt::format("Variance factors estimated per {} (sigma estimated / a priori, with "
                    "its {:g} % interval):",
                    adjust.options.variance_groups, 100 * (1 - adjust.options.alpha)));
    doc.table({"group", "sections", "redundancy", "factor", "interval"}, factors);
  }
  std::vector<std::vector<std::string>> removed;
  for (std::size_t k = 0; k < a.removals.size(); ++k) {
    const Removal& r = a.removals[k];
    const Section& section = net.sections[r.section];
    removed.push_back({std::to_string(k + 1), section.from, section.to,
                       fmt::format("{} = {:.1f}", symbol(r.test), r.statistic), r.test.statement(),
                       std::to_string(section.row)});
  }
  if (!removed.empty()) {
    doc.paragraph("Sections removed by iterative data snooping, in order:");
    doc.table({"step", "from", "to", "statistic", "test", "row"}, removed);
  }
  std::vector<std::vector<std::string>> suspects;
  for (const Suspect& s : a.suspects) {
    if (s.kind == Suspect::Kind::section) {
      suspects.push_back(
          {net.sections[s.index].from, net.sections[s.index].to, fixed(s.statistic, 2)});
    } else {
      suspects.push_back({"", net.points[s.index].id, fixed(s.statistic, 2)});
    }
  }
  // The test as the summary states it, and why that test.
  const std::string test = fmt::format("{}; {}", a.test.statement(), a.test.basis);
  if (suspects.empty()) {
    doc.paragraph(
        removed.empty()
            ? fmt::format("No observation fails data snooping ({}).", test)
            : fmt::format("No observation fails data snooping ({}) after the removals.", test));
  } else {
    doc.paragraph(fmt::format("Observations failing data snooping ({}):", test));
    doc.table({"from", "to", symbol(a.test)}, suspects);
  }
  std::vector<std::vector<std::string>> rows;
  for (const AdjustedPoint& p : a.points) {
    rows.push_back({net.points[p.point].id, fixed(p.height, 5), p.sigma ? fixed(*p.sigma, 5) : "",
                    to_string(p.control)});
  }
  doc.paragraph("Adjusted heights (m):");
  doc.table({"point", "height", "sigma", "control"}, rows);
}

void gnss_section(Document& doc, const StageResults& results) {
  if (!results.gnss) return;
  const GnssStage& g = *results.gnss;
  doc.heading(2, "GNSS heights against the levelling");
  doc.paragraph(
      fmt::format("GNSS heights ({}) brought into {} through the references, against the adjusted "
                  "heights of the same marks; the differences are the residuals of the tie.",
                  g.gnss_reference, g.levelled_reference));
  doc.paragraph(describe_outlier_test(g.result) + ".");
  std::vector<std::vector<std::string>> rows;
  for (std::size_t i = 0; i < g.marks.size(); ++i) {
    const GnssCheck& check = g.result.marks[i];
    rows.push_back({g.marks[i].id, fixed(g.marks[i].levelled, 4),
                    fixed(g.marks[i].gnss_converted, 4), fixed(1000 * check.difference, 1),
                    fixed(1000 * g.marks[i].sigma, 1),
                    check.statistic ? fixed(*check.statistic, 2) : std::string("-"),
                    to_string(check.verdict)});
  }
  doc.table({"mark", "levelled (m)", "GNSS converted (m)", "difference (mm)", "sigma (mm)",
             "statistic", "verdict"},
            rows);
}

void monitoring_section(Document& doc, const StageResults& results) {
  if (!results.epochs) return;
  const EpochAnalysis& e = results.epochs->analysis;
  doc.heading(2, "Monitoring epochs");
  std::vector<std::vector<std::string>> rows;
  for (const EpochQuality& q : e.epochs) {
    rows.push_back({q.name, q.first_date, q.last_date, std::to_string(q.sections),
                    q.sigma0 ? fixed(*q.sigma0, 2) : "-",
                    !q.global_test          ? "none"
                    : q.global_test->passed ? "passed"
                                            : "failed"});
  }
  doc.table({"epoch", "from", "to", "sections", "sigma0", "global test"}, rows);
  if (!e.tests.empty()) {
    const CongruenceTest& first = e.tests.front();
    doc.paragraph(fmt::format(
        "Global congruence test of the candidate reference marks: {} = {:.3f} against {:.3f}: {}.",
        first.distribution, first.statistic, first.critical, first.passed ? "passed" : "failed"));
  }
  rows.clear();
  for (const MarkVerdict& m : e.marks) {
    rows.push_back({m.mark, to_string(m.kind), m.reason});
    if (m.kind != MarkVerdict::Kind::stable) {
    }
  }
  doc.table({"mark", "verdict", "reason"}, rows);
  if (!e.epochs.empty()) {
    const std::string& last = e.epochs.back().name;
    doc.figure("displacements", displacement_chart(e),
               fmt::format("Displacement of every point from the first epoch to {} (mm); solid "
                           "red: significant, grey: stable reference mark.",
                           last));
  }
  rows.clear();
  for (const Rate& r : e.rates) {
    rows.push_back({r.point, std::to_string(r.epochs), fixed(1000 * r.rate, 3),
                    fixed(1000 * r.sigma, 3), yes_no(r.significant)});
  }
  if (!rows.empty()) {
    doc.paragraph("Rates (mm per year, weighted least squares over the epochs):");
    doc.table({"point", "epochs", "rate", "sigma", "significant"}, rows);
  }
}

void transducer_section(Document& doc, const StageResults& results) {
  if (!results.transducer) return;
  const TransducerStage& t = *results.transducer;
  doc.heading(2, "Pressure transducers");
  doc.paragraph(
      fmt::format("Depth to water = hung depth - water pressure / (rho g) + offset from the tape "
                  "checks, linear in time between checks; g = {} m/s^2.",
                  t.gravity));
  std::vector<std::vector<std::string>> rows;
  for (const SensorSummary& sensor : t.summary.sensors) {
    std::vector<std::string> flags;
    for (const auto& [flag, count] : sensor.flags)
      flags.push_back(fmt::format("{} {}", flag, count));
    const auto& be = sensor.efficiency;
    rows.push_back({sensor.sensor, sensor.well, sensor.kind, std::to_string(sensor.written),
                    std::to_string(sensor.checks), fixed(1000 * sensor.largest_drift, 1),
                    be ? be->text() : "-", fmt::format("{:g}", sensor.density),
                    fmt::format("{}", fmt::join(flags, ", "))});
  }
  doc.table({"sensor", "well", "kind", "readings", "checks", "largest drift (mm)",
             "barometric efficiency", "rho (kg/m^3)", "flags"},
            rows);
}

void flow_table(Document& doc, const FlowStage& flow, const HeightDisplay& display) {
  const FlowResult& f = flow.result;
  std::vector<std::vector<std::string>> rows = {
      {fmt::format("hydraulic gradient ({0}/{0}, dimensionless)", display.unit),
       fmt::format("{:.2e} +- {:.1e}", f.gradient, f.gradient_sigma)},
      {"flow direction (degrees from grid north)",
       fmt::format("{:.1f} +- {:.1f}", f.azimuth, f.azimuth_sigma)},
      {"wells in the fit", std::to_string(flow.wells)},
      {"uncertainty", describe_flow_uncertainty(f)}};
  if (std::isfinite(f.tau_critical)) {
    std::vector<std::string> off;
    for (std::size_t i : f.off_plane) off.push_back(flow.well_ids[i]);
    rows.push_back({fmt::format("wells off the plane (Pope's tau test, |tau| > {:.2f} at alpha0 "
                                "= {:g})",
                                f.tau_critical, flow.alpha0),
                    off.empty() ? "none" : fmt::format("{}", fmt::join(off, ", "))});
  }
  if (f.velocity) {
    rows.push_back({"average linear velocity", describe_velocity(*f.velocity)});
  }
  if (f.travel_time && flow.distance) {
    rows.push_back({fmt::format("travel time over {:g} m", *flow.distance),
                    describe_travel_time(*f.travel_time)});
  }
  doc.table({"flow", "value"}, rows);
}

void heads_section(Document& doc, const ReportContext& c, const StageResults& results,
                   std::optional<QuickContours>& contours) {
  if (!results.heads) return;
  const HeadsStage& heads = *results.heads;
  const HeadsSummary& s = heads.result.summary;
  const HeightDisplay display = height_display(heads.result.unit);
  doc.heading(2, "Measuring points");
  doc.paragraph(fmt::format("Every measuring-point survey brought into {}:", heads.target));
  std::vector<std::vector<std::string>> rows;
  for (const MeasuringPointSurvey& m : heads.result.measuring_points) {
    rows.push_back({m.record.well, m.record.valid_from_text, fixed(m.height * display.per_metre, 4),
                    fixed(m.sigma * display.per_metre, 4), m.source, m.record.reason,
                    fmt::format("{}", fmt::join(m.flags, " "))});
  }
  doc.table({"well", "valid from", fmt::format("height ({})", display.unit),
             fmt::format("sigma ({})", display.unit), "source", "reason", "flags"},
            rows, 200);

  doc.heading(2, "Heads");
  doc.paragraph(fmt::format("{} readings, {} heads in {}, {} ready for contouring.", s.readings,
                            s.heads, heads.target, s.contourable));
  const FlowStage* flow = results.flow ? &*results.flow : nullptr;
  if (heads.result.event) {
    if (auto map = head_map(*heads.result.event, flow, c.contour_interval, contours, display)) {
      doc.figure(
          "heads", *map,
          "Heads of the synoptic round, one per well (colour) of the aquifer the flow fit "
          "used, quick-look contours (dashed; linear between wells, also in contours.gpkg) and "
          "the flow direction from the planar fit (arrow); squares: wells of other aquifers, "
          "not contoured. A quick look, not a contour map for decisions.");
    }
  }
  if (flow) flow_table(doc, *flow, display);
  if (auto figure = hydrographs(heads.series, heads.result.measuring_points, display)) {
    doc.figure("hydrographs", *figure,
               "Heads over time per well; dashed red lines mark measuring-point changes.");
  }
  doc.heading(2, "QA flags and re-measure list");
  rows.clear();
  for (const auto& [flag, count] : s.flags) rows.push_back({flag, std::to_string(count)});
  if (rows.empty()) {
    doc.paragraph("No reading was flagged.");
  } else {
    doc.table({"flag", "readings"}, rows);
  }
  if (heads.result.event) {
    rows.clear();
    for (const auto& [well, reasons] : heads.result.event->remeasure)
      rows.push_back({well, fmt::format("{}", fmt::join(reasons, "; "))});
    doc.paragraph(rows.empty() ? "No well needs re-measuring."
                               : "Wells to re-measure before contouring:");
    if (!rows.empty()) {
      doc.table({"well", "reasons"}, rows);
    }
  }
}

void inputs_section(Document& doc, const ReportContext& c, const std::string& config_hash) {
  doc.heading(2, "What went in");
  std::vector<std::vector<std::string>> rows;
  for (const ReportInput& i : c.inputs) {
    rows.push_back({i.role, i.path, file_sha256(i.resolved)});
  }
  doc.table({"input", "file", "SHA-256"}, rows, 200);
  rows.clear();
  for (const fs::path& g : c.grids) rows.push_back({g.filename().string(), file_sha256(g)});
  if (!rows.empty()) doc.table({"grid", "SHA-256"}, rows);
  doc.table({"software", "version"}, {{"levelhead", version_string()},
                                      {"PROJ", proj_version_text()},
                                      {"GDAL", gdal_version()},
                                      {"EPSG database", epsg_version()}});
  rows.clear();
  for (const ReportSetting& s : c.settings) {
    rows.push_back({s.name, s.value, s.default_value.empty() ? "(none)" : s.default_value,
                    s.chain_default ? "chain default" : "project file"});
  }
  doc.paragraph(rows.empty() ? "Every setting is at its default."
                             : "Settings that differ from the command defaults:");
  if (!rows.empty()) doc.table({"setting", "value", "default", "set by"}, rows);
  doc.paragraph("Configuration hash (SHA-256 of the settings and the inputs' checksums): " +
                config_hash);
}

const std::vector<std::string>& cautions() {
  static const std::vector<std::string> text = {
      "Heights, heads and flow directions here are computed from the data given; their quality is "
      "that of the surveys and readings, within the stated uncertainties.",
      "The head map and flow arrow are quick looks from a planar fit: they are not a substitute "
      "for "
      "contouring by a qualified person or for a groundwater model.",
      "Decisions on construction, flood defence or water supply must follow local codes and "
      "standards and rest on the judgement of a licensed surveyor, engineer or hydrogeologist.",
      "Check every flagged reading and every removed observation in the field before relying on "
      "the results."};
  return text;
}

// The basis of the survey, up front: what every number is in, the standard
// the levelling was run to and what the data say of it, and when and by
// whom it was measured.
std::vector<std::string> survey_basis(const ReportContext& c, const StageResults& r) {
  std::vector<std::string> lines;
  const auto crs = [](const std::string& definition) {
    return describe_crs(definition).value_or(definition);
  };
  if (!c.target.empty()) lines.push_back("Heights and heads in: " + crs(c.target) + ".");
  if (!c.crs.empty()) lines.push_back("Horizontal coordinates: " + crs(c.crs) + ".");
  for (const std::string& reference : c.references)
    lines.push_back("Reference of the references file: " + reference + ".");
  if (r.adjust) {
    const AdjustmentOptions& o = r.adjust->options;
    std::string standard =
        o.levelling_class.empty()
            ? fmt::format("Levelling precision assumed: {:g} mm per sqrt(km) (given)",
                          o.mm_per_sqrt_km)
            : [&] {
                const LevellingClass& k = find_levelling_class(o.levelling_class);
                return fmt::format(
                    "Levelling standard: {}, {}: {:g} mm per sqrt(km) assumed for sections "
                    "without a sigma; section closure {:g} and loop closure {:g} mm * sqrt(km)",
                    k.name, k.source, k.sigma_mm_per_sqrt_km, k.section_closure_mm_per_sqrt_km,
                    k.loop_closure_mm_per_sqrt_km);
              }();
    const AdjustmentResult& a = r.adjust->result;
    if (a.sigma0 && a.global_test) {
      const GlobalTest& t = *a.global_test;
      const char* verdict = t.passed                ? "consistent with the precision assumed"
                            : t.statistic < t.lower ? "better than assumed (the assumed precision "
                                                      "is pessimistic)"
                                                    : "poorer than assumed";
      standard += fmt::format(
          ". The adjustment estimates sigma0 = {:.2f}: {} (chi-square global test, alpha = {:g})",
          *a.sigma0, verdict, t.alpha);
    }
    lines.push_back(standard + ".");
  }
  if (r.reduce && !r.reduce->result.setups.empty()) {
    std::set<std::string> dates, instruments, observers;
    for (const SetupReduction& s : r.reduce->result.setups)
      if (!s.date.empty()) dates.insert(s.date);
    // Merged runs join distinct instruments and observers with '+'.
    const auto add_joined = [](const std::string& joined, std::set<std::string>& to) {
      std::size_t start = 0;
      while (start < joined.size()) {
        const std::size_t plus = std::min(joined.find('+', start), joined.size());
        if (plus > start) to.insert(joined.substr(start, plus - start));
        start = plus + 1;
      }
    };
    for (const ReducedSection& s : r.reduce->result.sections) {
      add_joined(s.instrument, instruments);
      add_joined(s.observer, observers);
    }
    std::string line = fmt::format("Field book: {} runs", r.reduce->result.run_count);
    if (!dates.empty())
      line += dates.size() == 1 ? " on " + *dates.begin()
                                : fmt::format(" from {} to {}", *dates.begin(), *dates.rbegin());
    line += instruments.empty() ? "; instruments not recorded"
                                : fmt::format("; instruments {}", fmt::join(instruments, ", "));
    line += observers.empty() ? "; observers not recorded"
                              : fmt::format("; observers {}", fmt::join(observers, ", "));
    lines.push_back(line + ".");
  }
  if (r.epochs && !r.epochs->analysis.epochs.empty()) {
    std::vector<std::string> epochs;
    for (const EpochQuality& e : r.epochs->analysis.epochs) {
      epochs.push_back(e.first_date == e.last_date
                           ? fmt::format("{} ({})", e.name, e.first_date)
                           : fmt::format("{} ({} to {})", e.name, e.first_date, e.last_date));
    }
    lines.push_back(fmt::format("Monitoring epochs: {}.", fmt::join(epochs, ", ")));
  }
  if (r.gnss)
    lines.push_back(fmt::format("GNSS heights in {}, checked against the levelling in {}.",
                                r.gnss->gnss_reference, r.gnss->levelled_reference));
  for (const std::string& zone : c.time_zones) lines.push_back("Times: " + zone + ".");
  return lines;
}

// Every file the stages wrote, with its checksum, so that `diff` (or anyone)
// can tell a file changed or cut short after the run from the run's own.
nlohmann::json stage_outputs(const ReportContext& c, const fs::path& folder) {
  std::vector<std::string> names;
  for (const std::string& stage : c.stages) {
    if (!fs::is_directory(folder / stage)) continue;
    for (const auto& entry : fs::directory_iterator(folder / stage)) {
      if (entry.is_regular_file() && entry.path().filename().string().front() != '.')
        names.push_back((fs::path(stage) / entry.path().filename()).generic_string());
    }
  }
  std::sort(names.begin(), names.end());
  nlohmann::json outputs = nlohmann::json::array();
  for (const std::string& name : names) {
    outputs.push_back({{"path", name},
                       {"sha256", file_sha256(folder / name)},
                       {"bytes", fs::file_size(folder / name)}});
  }
  return outputs;
}

nlohmann::json run_record(const ReportContext& c, const std::string& config_hash,
                          const fs::path& folder) {
  nlohmann::json record;
  record["levelhead_version"] = version_string();
  record["format_version"] = output_format_version;
  record["command"] = "run";
  record["proj_version"] = proj_version_text();
  record["gdal_version"] = gdal_version();
  record["epsg_version"] = epsg_version();
  record["site"] = c.site;
  record["crs"] = c.crs;
  record["target"] = c.target;
  nlohmann::json inputs = nlohmann::json::array();
  for (const ReportInput& i : c.inputs) {
    inputs.push_back({{"role", i.role},
                      {"path", i.path},
                      {"sha256", file_sha256(i.resolved)},
                      {"bytes", fs::file_size(i.resolved)}});
  }
  record["inputs"] = std::move(inputs);
  nlohmann::json grids = nlohmann::json::array();
  for (const fs::path& g : c.grids)
    grids.push_back({{"file", g.filename().string()}, {"sha256", file_sha256(g)}});
  record["grids"] = std::move(grids);
  nlohmann::json settings = nlohmann::json::array();
  for (const ReportSetting& s : c.settings) {
    settings.push_back({{"setting", s.name},
                        {"value", s.value},
                        {"default", s.default_value},
                        {"chain_default", s.chain_default}});
  }
  record["settings_changed"] = std::move(settings);
  record["configuration_sha256"] = config_hash;
  record["stages"] = c.stages;
  record["outputs"] = stage_outputs(c, folder);
  return record;
}

}  // namespace

std::string configuration_hash(const ReportContext& c) {
  std::string text;
  for (const ReportSetting& s : c.settings) text += fmt::format("setting {}={}\n", s.name, s.value);
  for (const ReportInput& i : c.inputs)
    text += fmt::format("input {}={}\n", i.role, file_sha256(i.resolved));
  for (const fs::path& g : c.grids) text += fmt::format("grid {}\n", file_sha256(g));
  text += fmt::format("site crs={} target={}\n", c.crs, c.target);
  return text_sha256(text);
}

void write_report(const ReportContext& c, const StageResults& results,
                  const std::vector<Finding>& findings, const fs::path& folder) {
  const std::string hash = configuration_hash(c);
  // The title block, then the contents, the front matter (what every
  // number rests on, the findings, the cautions) and the results.
  Document title;
  title.heading(1, c.title);
  std::vector<std::string> facts;
  if (!c.site.empty()) facts.push_back("Site: " + c.site);
  if (!c.prepared_for.empty()) facts.push_back("Prepared for: " + c.prepared_for);
  if (!c.prepared_by.empty()) facts.push_back("Prepared by: " + c.prepared_by);
  facts.push_back("Computed with " + version_string() + " on " + c.run_time);
  title.bullets(facts);

  Document front;
  front.heading(2, "Basis of the survey");
  front.bullets(survey_basis(c, results));
  front.heading(2, "Findings");
  std::vector<std::string> texts;
  for (const Finding& f : findings) texts.push_back(finding_line(f));
  if (texts.empty()) texts.push_back("Nothing to report: every check passed.");
  front.bullets(texts);
  // With the findings, not after the tables: whoever acts on a finding reads these.
  front.heading(2, "Cautions");
  front.bullets(cautions());

  Document body;
  body.number_sections_from(front.sections().size());
  levelling_section(body, results);
  gnss_section(body, results);
  monitoring_section(body, results);
  transducer_section(body, results);
  std::optional<QuickContours> contours;
  heads_section(body, c, results, contours);
  inputs_section(body, c, hash);
  body.heading(2, "Stages run");
  body.paragraph(
      fmt::format("{} (each in its own folder beside this report).", fmt::join(c.stages, ", ")));

  std::vector<std::string> sections = front.sections();
  sections.insert(sections.end(), body.sections().begin(), body.sections().end());
  Document contents;
  contents.contents(sections);
  Document head;  // what comes before the results, in order
  for (const Document* part : {&title, &contents, &front}) head.append(*part);

  // Figures first: the report is the last file to appear.
  OutputSet figures(folder / "figures");
  for (const auto& [name, svg] : body.figures())
    figures.open(fs::path(name).filename().string()) << svg;
  figures.commit();
  OutputSet out(folder);
  out.open("report.md") << head.markdown() << body.markdown();
  out.open("report.html")
      << "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n<title>"
      << report::escape_xml(c.title) << "</title>\n<style>\n"
      << css << "</style>\n</head>\n<body>\n"
      << head.html() << body.html() << "</body>\n</html>\n";
  nlohmann::json record = run_record(c, hash, folder);
  record["findings"] = nlohmann::json::array();
  for (const Finding& f : findings) {
    record["findings"].push_back(
        {{"stage", f.stage}, {"topic", f.topic}, {"level", to_string(f.level)}, {"text", f.text}});
  }
  out.open("run.json") << util::json_text(record) << '\n';
  if (contours && !c.crs.empty())
    write_contours_geopackage(*contours, c.crs, c.target,
                              results.heads ? to_string(results.heads->result.unit) : "m",
                              out.reserve("contours.gpkg"));
  out.commit();
}

namespace {

// The first of `names` on the PATH, or empty.
std::string find_program(const std::vector<std::string>& names) {
  const char* path = std::getenv("PATH");
  if (!path) return {};
  const std::string dirs(path);
  for (const std::string& name : names) {
    std::size_t start = 0;
    while (start <= dirs.size()) {
      const std::size_t colon = std::min(dirs.find(':', start), dirs.size());
      const fs::path candidate = fs::path(dirs.substr(start, colon - start)) / name;
      if (colon > start && ::access(candidate.c_str(), X_OK) == 0) return candidate.string();
      start = colon + 1;
    }
  }
  return {};
}

// Runs `args` (no shell), its output discarded; returns its exit status.
int run_quietly(const std::vector<std::string>& args) {
  std::vector<char*> argv;
  for (const std::string& a : args) argv.push_back(const_cast<char*>(a.c_str()));
  argv.push_back(nullptr);
  const pid_t child = ::fork();
  if (child < 0) return -1;
  if (child == 0) {
    const int null = ::open("/dev/null", O_WRONLY);
    if (null >= 0) {
      ::dup2(null, STDOUT_FILENO);
      ::dup2(null, STDERR_FILENO);
    }
    ::execv(argv[0], argv.data());
    ::_exit(127);
  }
  int status = 0;
  if (::waitpid(child, &status, 0) < 0) return -1;
  return WIFEXITED(status) ? WEXITSTATUS(status) : -1;
}

}  // namespace

void print_report_pdf(const fs::path& folder) {
  const std::string browser = find_program({"chromium", "chromium-browser"});
  if (browser.empty()) {
    throw OutputError(
        "--pdf prints the report with headless Chromium, which is not installed (Debian: apt-get "
        "install chromium; scripts/install-deps.sh --browser); report.html is complete, print it "
        "from any browser");
  }
  OutputSet out(folder);
  const fs::path pdf = out.reserve("report.pdf");
  const fs::path html = fs::absolute(folder / "report.html");
  const int status =
      run_quietly({browser, "--headless", "--no-sandbox", "--disable-gpu", "--no-pdf-header-footer",
                   "--allow-file-access-from-files", "--print-to-pdf=" + fs::absolute(pdf).string(),
                   "file://" + html.string()});
  std::error_code ec;
  if (status != 0 || !fs::exists(pdf) || fs::file_size(pdf, ec) == 0) {
    throw OutputError(fmt::format(
        "printing the report to PDF with {} failed (exit status {}); report.html is complete, "
        "print it from any browser",
        browser, status));
  }
  out.commit();
}

}  // namespace levelhead
