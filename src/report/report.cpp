#include "levelhead/report/report.hpp"

#include <fmt/format.h>
#include <gdal.h>
#include <proj.h>

#include <algorithm>
#include <cmath>
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
#include "levelhead/references/vertical_reference.hpp"
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

struct Findings {
  std::vector<std::string> items;
};

std::map<std::string, PlacedPoint> read_points(const ReportContext& c) {
  std::map<std::string, PlacedPoint> points;
  for (const ReportInput& i : c.inputs) {
    if (i.role != "points") continue;
    const Csv t(i);
    for (std::size_t r = 0; r < t.rows(); ++r) {
      const auto x = t.number(r, "x"), y = t.number(r, "y");
      if (x && y) points[t.get(r, "id")] = {*x, *y};
    }
  }
  return points;
}

const ReportInput* input(const ReportContext& c, const std::string& role) {
  for (const ReportInput& i : c.inputs) {
    if (i.role == role) return &i;
  }
  return nullptr;
}

void levelling_section(Document& doc, Findings& findings, const ReportContext& c,
                       const fs::path& run) {
  if (!fs::exists(run / "adjust")) return;
  doc.heading(2, "Levelling network");
  if (fs::exists(run / "reduce" / "summary.json")) {
    const nlohmann::json r = read_json(run / "reduce" / "summary.json");
    const auto& n = r["counts"];
    doc.paragraph(fmt::format(
        "Field book: {} runs, {} setups and {} sights reduced to {} sections; {} setup(s) "
        "and {} section(s) failed a field check (reduce/setups.csv, reduce/sections.csv).",
        n.value("runs", 0), n.value("setups", 0), n.value("sights", 0), n.value("sections", 0),
        n.value("failed_setups", 0), n.value("flagged_sections", 0)));
  }
  if (auto map = network_map(read_points(c), run)) {
    doc.figure("network", *map,
               "Levelling network. Line colour and dash give the normalised residual |w| of each "
               "section after adjustment; failed loops are outlined.");
  }
  if (fs::exists(run / "loops" / "loops.csv")) {
    const Csv loops(run / "loops" / "loops.csv");
    doc.heading(3, "Loop misclosures");
    std::vector<std::vector<std::string>> rows;
    std::size_t failed = 0;
    for (std::size_t r = 0; r < loops.rows(); ++r) {
      failed += loops.get(r, "passed") != "yes";
      rows.push_back({loops.get(r, "loop"), loops.get(r, "points"), loops.get(r, "length"),
                      fixed(1000 * loops.number(r, "misclosure").value_or(0), 2),
                      fixed(1000 * loops.number(r, "tolerance").value_or(0), 2),
                      loops.get(r, "passed")});
    }
    doc.table({"loop", "points", "length (m)", "misclosure (mm)", "tolerance (mm)", "passed"},
              rows);
    if (loops.rows() > 0)
      doc.figure("loops", loop_chart(loops), "Loop misclosures as a fraction of their tolerance.");
    if (failed > 0) {
      findings.items.push_back(fmt::format(
          "{} of {} levelling loops failed their closure tolerance.", failed, loops.rows()));
    }
  }
  const nlohmann::json s = read_json(run / "adjust" / "summary.json");
  doc.heading(3, "Adjustment");
  std::vector<std::vector<std::string>> stats = {
      {"redundancy (dof)", std::to_string(s["dof"].get<long>())},
      {"sigma0 (a posteriori)", s["sigma0"].is_null() ? "-" : fixed(s["sigma0"].get<double>(), 3)},
      {"reference of the heights", s.value("reference", std::string())}};
  if (!s["global_test"].is_null()) {
    const auto& g = s["global_test"];
    stats.push_back({"global test (chi-square)",
                     fmt::format("{:.2f} in [{:.2f}, {:.2f}]: {}", g["statistic"].get<double>(),
                                 g["lower"].get<double>(), g["upper"].get<double>(),
                                 g["passed"].get<bool>() ? "passed" : "failed")});
  }
  doc.table({"quantity", "value"}, stats);
  std::vector<std::vector<std::string>> removed;
  for (const auto& r : s["removals"]) {
    removed.push_back({std::to_string(r["step"].get<long>()), r["from"].get<std::string>(),
                       r["to"].get<std::string>(), fixed(r["w"].get<double>(), 1),
                       std::to_string(r["row"].get<long>())});
    findings.items.push_back(
        fmt::format("Blunder: the section {} -> {} (sections row {}) failed data snooping with w = "
                    "{:.1f} and was "
                    "removed; re-level it.",
                    r["from"].get<std::string>(), r["to"].get<std::string>(), r["row"].get<long>(),
                    r["w"].get<double>()));
  }
  if (!removed.empty()) {
    doc.paragraph("Sections removed by iterative data snooping (Baarda's w-test), in order:");
    doc.table({"step", "from", "to", "w", "row"}, removed);
  }
  std::vector<std::vector<std::string>> suspects;
  for (const auto& r : s["suspects"]) {
    suspects.push_back(
        {r["from"].get<std::string>(), r["to"].get<std::string>(), fixed(r["w"].get<double>(), 2)});
  }
  // The test as the summary states it: Baarda's w against the normal
  // critical value at alpha0 per observation.
  const auto& snooping = s["data_snooping"];
  const std::string test =
      fmt::format("Baarda's w-test, |w| > {:.2f} at alpha0 = {:g}",
                  snooping["w_critical"].get<double>(), snooping["alpha0"].get<double>());
  if (suspects.empty()) {
    doc.paragraph(
        removed.empty()
            ? fmt::format("No observation fails data snooping ({}).", test)
            : fmt::format("No observation fails data snooping ({}) after the removals.", test));
  } else {
    doc.paragraph(fmt::format("Observations failing data snooping ({}):", test));
  }
  if (!suspects.empty()) doc.table({"from", "to", "w"}, suspects);
  const Csv heights(run / "adjust" / "heights.csv");
  std::vector<std::vector<std::string>> rows;
  for (std::size_t r = 0; r < heights.rows(); ++r) {
    rows.push_back({heights.get(r, "id"), heights.get(r, "height"), heights.get(r, "sigma"),
                    heights.get(r, "control")});
  }
  doc.paragraph("Adjusted heights (m):");
  doc.table({"point", "height", "sigma", "control"}, rows);
}

void gnss_section(Document& doc, Findings& findings, const fs::path& run) {
  if (!fs::exists(run / "gnss-check" / "gnss_check.csv")) return;
  const nlohmann::json s = read_json(run / "gnss-check" / "summary.json");
  const Csv marks(run / "gnss-check" / "gnss_check.csv");
  doc.heading(2, "GNSS heights against the levelling");
  doc.paragraph(fmt::format(
      "GNSS heights ({}) brought into {} through the references, against the adjusted "
      "heights of the same marks; the differences are the residuals of the tie.",
      s["gnss_reference"].get<std::string>(), s["levelled_reference"].get<std::string>()));
  std::vector<std::vector<std::string>> rows;
  std::size_t failing = 0;
  for (std::size_t r = 0; r < marks.rows(); ++r) {
    const std::string verdict = marks.get(r, "verdict");
    failing += verdict != "consistent";
    rows.push_back({marks.get(r, "id"), marks.get(r, "levelled"), marks.get(r, "gnss_converted"),
                    fixed(1000 * marks.number(r, "difference").value_or(0), 1),
                    fixed(1000 * marks.number(r, "sigma").value_or(0), 1), verdict});
  }
  doc.table(
      {"mark", "levelled (m)", "GNSS converted (m)", "difference (mm)", "sigma (mm)", "verdict"},
      rows);
  if (failing > 0) {
    findings.items.push_back(fmt::format(
        "{} of {} marks disagree between GNSS and levelling (gnss-check).", failing, marks.rows()));
  }
}

void monitoring_section(Document& doc, Findings& findings, const fs::path& run) {
  if (!fs::exists(run / "epochs" / "summary.json")) return;
  const nlohmann::json s = read_json(run / "epochs" / "summary.json");
  doc.heading(2, "Monitoring epochs");
  std::vector<std::vector<std::string>> rows;
  for (const auto& e : s["epochs"]) {
    rows.push_back({e["name"].get<std::string>(), e["first_date"].get<std::string>(),
                    e["last_date"].get<std::string>(), std::to_string(e["sections"].get<long>()),
                    e["sigma0"].is_null() ? "-" : fixed(e["sigma0"].get<double>(), 2),
                    e["global_test"].is_null()               ? "none"
                    : e["global_test"]["passed"].get<bool>() ? "passed"
                                                             : "failed"});
  }
  doc.table({"epoch", "from", "to", "sections", "sigma0", "global test"}, rows);
  const auto& first = s["congruence_tests"][0];
  doc.paragraph(fmt::format(
      "Global congruence test of the candidate reference marks: {} = {:.3f} against {:.3f}: {}.",
      first["distribution"].get<std::string>(), first["statistic"].get<double>(),
      first["critical"].get<double>(), first["passed"].get<bool>() ? "passed" : "failed"));
  rows.clear();
  for (const auto& m : s["marks"]) {
    rows.push_back({m["mark"].get<std::string>(), m["verdict"].get<std::string>(),
                    m["reason"].get<std::string>()});
    if (m["verdict"] != "stable") {
      findings.items.push_back(
          fmt::format("Reference mark {} is {}: {}", m["mark"].get<std::string>(),
                      m["verdict"].get<std::string>(), m["reason"].get<std::string>()));
    }
  }
  doc.table({"mark", "verdict", "reason"}, rows);
  const Csv moves(run / "epochs" / "displacements.csv");
  const std::string last = s["epochs"].back()["name"].get<std::string>();
  doc.figure("displacements", displacement_chart(moves, last),
             fmt::format("Displacement of every point from the first epoch to {} (mm); solid red: "
                         "significant, grey: stable reference mark.",
                         last));
  const Csv rates(run / "epochs" / "rates.csv");
  rows.clear();
  for (std::size_t r = 0; r < rates.rows(); ++r) {
    rows.push_back({rates.get(r, "point"), rates.get(r, "epochs"), rates.get(r, "rate_mm_per_year"),
                    rates.get(r, "sigma_mm_per_year"), rates.get(r, "significant")});
  }
  if (!rows.empty()) {
    doc.paragraph("Rates (mm per year, weighted least squares over the epochs):");
    doc.table({"point", "epochs", "rate", "sigma", "significant"}, rows);
  }
  // The console's count: displacements since the first epoch, one per point
  // and later epoch (the same pairs against the previous epoch are not
  // counted again).
  const long significant = s["significant_displacements"]["since_first_epoch"].get<long>();
  if (significant > 0) {
    findings.items.push_back(
        fmt::format("{} significant displacement(s) since the first epoch (a point in a later "
                    "epoch against the first; epochs/displacements.csv); measuring points on "
                    "monitored points follow them.",
                    significant));
  }
  for (const auto& w : s["warnings"])
    findings.items.push_back("Monitoring: " + w.get<std::string>());
}

// Rows a stage set aside with --keep-going: its results rest on the others.
void set_aside_finding(Findings& findings, const nlohmann::json& summary, const std::string& stage,
                       const std::string& what) {
  const nlohmann::json* counted = &summary;
  if (summary.contains("counts")) counted = &summary["counts"];
  const std::size_t rejected = counted->value("rejected", std::size_t{0});
  if (rejected == 0) return;
  findings.items.push_back(
      fmt::format("{}: {} {} could not be read and were set aside ({}/rejects.csv, each with its "
                  "row and problem); the results rest on the others. Correct them and run again.",
                  stage, rejected, what, stage));
}

void transducer_section(Document& doc, Findings& findings, const fs::path& run) {
  if (!fs::exists(run / "transducer" / "summary.json")) return;
  const nlohmann::json s = read_json(run / "transducer" / "summary.json");
  doc.heading(2, "Pressure transducers");
  doc.paragraph(
      fmt::format("Depth to water = hung depth - water pressure / (rho g) + offset from the tape "
                  "checks, linear in time between checks; g = {} m/s^2.",
                  s["options"]["gravity_m_s2"].get<double>()));
  std::vector<std::vector<std::string>> rows;
  for (const auto& sensor : s["sensors"]) {
    std::size_t rejected = 0;
    std::vector<std::string> flags;
    for (const auto& [flag, count] : sensor["flags"].items()) {
      flags.push_back(fmt::format("{} {}", flag, count.get<long>()));
      if (flag.find("-rejected") != std::string::npos || flag == "baro-gap")
        rejected += count.get<std::size_t>();
    }
    const auto& be = sensor["barometric_efficiency"];
    rows.push_back({sensor["sensor"].get<std::string>(), sensor["well"].get<std::string>(),
                    sensor["kind"].get<std::string>(),
                    std::to_string(sensor["written"].get<long>()),
                    std::to_string(sensor["checks"].get<long>()),
                    fixed(1000 * sensor["largest_drift_m"].get<double>(), 1),
                    be.is_null() ? "-"
                                 : fmt::format("{:.2f} +- {:.2f}", be["value"].get<double>(),
                                               be["sigma"].get<double>()),
                    fmt::format("{:g}", sensor["density_kg_m3"].get<double>()),
                    fmt::format("{}", fmt::join(flags, ", "))});
    if (rejected > 0) {
      findings.items.push_back(fmt::format(
          "Transducer {} in {}: {} reading(s) rejected or left uncomputed "
          "(transducer/qa.csv).",
          sensor["sensor"].get<std::string>(), sensor["well"].get<std::string>(), rejected));
    }
  }
  doc.table({"sensor", "well", "kind", "readings", "checks", "largest drift (mm)",
             "barometric efficiency", "rho (kg/m^3)", "flags"},
            rows);
  set_aside_finding(findings, s, "transducer", "record(s) or tape reading(s)");
}

void heads_section(Document& doc, Findings& findings, const ReportContext& c, const fs::path& run,
                   std::optional<QuickContours>& contours) {
  if (!fs::exists(run / "heads" / "summary.json")) return;
  const nlohmann::json s = read_json(run / "heads" / "summary.json");
  set_aside_finding(findings, s, "heads", "reading(s)");
  const Csv mps(run / "heads" / "measuring_points.csv");
  doc.heading(2, "Measuring points");
  doc.paragraph(fmt::format("Every measuring-point survey brought into {}:", c.target));
  std::vector<std::vector<std::string>> rows;
  for (std::size_t r = 0; r < mps.rows(); ++r) {
    rows.push_back({mps.get(r, "well"), mps.get(r, "valid_from"), mps.get(r, "height"),
                    mps.get(r, "sigma"), mps.get(r, "source"), mps.get(r, "reason"),
                    mps.get(r, "flags")});
  }
  doc.table({"well", "valid from", "height (m)", "sigma (m)", "source", "reason", "flags"}, rows,
            200);

  // The datum mix-up a naive merge would have made: each record's height
  // as given (in metres, as heads read it) against its converted height.
  {
    std::map<std::string, std::pair<double, std::set<std::string>>> shift_by_datum;
    for (std::size_t r = 0; r < mps.rows(); ++r) {
      const auto converted = mps.number(r, "height");
      const auto height = mps.number(r, "given_height");
      const std::string datum = mps.get(r, "given_datum");
      if (!converted || !height || datum.empty() || datum == c.target) continue;
      auto& entry = shift_by_datum[datum];
      entry.first = *converted - *height;
      entry.second.insert(mps.get(r, "well"));
    }
    for (const auto& [datum, entry] : shift_by_datum) {
      if (std::abs(entry.first) < 0.01) continue;
      findings.items.push_back(
          fmt::format("Datum mix-up avoided: the measuring points of {} well(s) were surveyed on "
                      "'{}'; merged with "
                      "heights in {} as if in one reference, their heads would be {:.3f} m too {}.",
                      entry.second.size(), datum, c.target, std::abs(entry.first),
                      entry.first > 0 ? "low" : "high"));
    }
  }

  // Measuring points on levelling that no redundant observation checks.
  if (fs::exists(run / "heads" / "qa.csv")) {
    const Csv qa(run / "heads" / "qa.csv");
    std::set<std::string> wells;
    for (std::size_t r = 0; r < qa.rows(); ++r) {
      if (qa.get(r, "flag") == "mp-unchecked") wells.insert(qa.get(r, "well"));
    }
    if (!wells.empty()) {
      findings.items.push_back(fmt::format(
          "Unchecked levelling: the measuring point(s) of {} rest on a side shot or spur that no "
          "loop checks, so a blunder there would not show (heads/qa.csv); level a loop through "
          "them.",
          fmt::join(wells, ", ")));
    }
  }

  doc.heading(2, "Heads");
  const auto& counts = s["counts"];
  doc.paragraph(fmt::format("{} readings, {} heads in {}, {} ready for contouring.",
                            counts.value("readings", 0), counts.value("heads", 0), c.target,
                            counts.value("contourable", 0)));
  if (fs::exists(run / "heads" / "event.csv")) {
    const Csv event(run / "heads" / "event.csv");
    if (const ReportInput* w = input(c, "wells")) {
      const Csv wells(*w);
      if (auto map =
              head_map(event, wells, run / "flow" / "flow.json", c.contour_interval, contours)) {
        doc.figure(
            "heads", *map,
            "Heads of the synoptic round, one per well (colour) of the aquifer the flow fit "
            "used, quick-look contours (dashed; linear between wells, also in contours.gpkg) and "
            "the flow direction from the planar fit (arrow); squares: wells of other aquifers, "
            "not contoured. A quick look, not a contour map for decisions.");
      }
    }
  }
  if (fs::exists(run / "flow" / "flow.json")) {
    const nlohmann::json f = read_json(run / "flow" / "flow.json");
    std::vector<std::vector<std::string>> flow = {
        {"hydraulic gradient (m/m)",
         fmt::format("{:.2e} +- {:.1e}", f["gradient"]["value"].get<double>(),
                     f["gradient"]["sigma"].get<double>())},
        {"flow direction (degrees from grid north)",
         fmt::format("{:.1f} +- {:.1f}", f["azimuth"]["value"].get<double>(),
                     f["azimuth"]["sigma"].get<double>())},
        {"wells in the fit", std::to_string(f["wells"].get<long>())}};
    if (f.contains("darcy")) {
      const auto& d = f["darcy"];
      flow.push_back(
          {"average linear velocity (m/day)",
           fmt::format("{:.2g} to {:.2g}", 86400 * d["velocity_m_per_s"]["low"].get<double>(),
                       86400 * d["velocity_m_per_s"]["high"].get<double>())});
      flow.push_back(
          {fmt::format("travel time over {:g} m (years)", d["distance_m"].get<double>()),
           fmt::format("{:.2g} to {:.2g}", d["travel_time_s"]["low"].get<double>() / 3.15576e7,
                       d["travel_time_s"]["high"].get<double>() / 3.15576e7)});
    }
    doc.table({"flow", "value"}, flow);
    findings.items.push_back(
        fmt::format("Groundwater flows towards {:.0f} degrees (grid) with a gradient of {:.1e}.",
                    f["azimuth"]["value"].get<double>(), f["gradient"]["value"].get<double>()));
  }
  const Csv heads(run / "heads" / "heads.csv");
  if (auto figure = hydrographs(heads, mps)) {
    doc.figure("hydrographs", *figure,
               "Heads over time per well; dashed red lines mark measuring-point changes.");
  }
  doc.heading(2, "QA flags and re-measure list");
  rows.clear();
  for (const auto& [flag, count] : s["flags"].items())
    rows.push_back({flag, std::to_string(count.get<long>())});
  if (rows.empty()) {
    doc.paragraph("No reading was flagged.");
  } else {
    doc.table({"flag", "readings"}, rows);
  }
  if (fs::exists(run / "heads" / "remeasure.csv")) {
    const Csv re(run / "heads" / "remeasure.csv");
    rows.clear();
    for (std::size_t r = 0; r < re.rows(); ++r)
      rows.push_back({re.get(r, "well"), re.get(r, "reasons")});
    doc.paragraph(rows.empty() ? "No well needs re-measuring."
                               : "Wells to re-measure before contouring:");
    if (!rows.empty()) {
      doc.table({"well", "reasons"}, rows);
      findings.items.push_back(fmt::format("{} well(s) on the re-measure list.", rows.size()));
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

void write_report(const ReportContext& c, const fs::path& folder) {
  const std::string hash = configuration_hash(c);
  Document body;
  Findings findings;
  levelling_section(body, findings, c, folder);
  gnss_section(body, findings, folder);
  monitoring_section(body, findings, folder);
  transducer_section(body, findings, folder);
  std::optional<QuickContours> contours;
  heads_section(body, findings, c, folder, contours);
  inputs_section(body, c, hash);
  body.heading(2, "Cautions");
  body.bullets(cautions());
  body.heading(2, "Stages run");
  body.paragraph(
      fmt::format("{} (each in its own folder beside this report).", fmt::join(c.stages, ", ")));

  Document head;
  head.heading(1, c.title);
  std::vector<std::string> facts;
  if (!c.site.empty()) facts.push_back("Site: " + c.site);
  if (!c.prepared_for.empty()) facts.push_back("Prepared for: " + c.prepared_for);
  if (!c.prepared_by.empty()) facts.push_back("Prepared by: " + c.prepared_by);
  if (!c.target.empty()) facts.push_back("Heights and heads in: " + c.target);
  if (!c.crs.empty()) facts.push_back("Horizontal coordinates: " + c.crs);
  facts.push_back("Computed with " + version_string() + " on " + c.run_time);
  head.bullets(facts);
  head.heading(2, "Findings");
  if (findings.items.empty()) findings.items.push_back("No check failed.");
  head.bullets(findings.items);

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
  out.open("run.json") << util::json_text(run_record(c, hash, folder)) << '\n';
  if (contours && !c.crs.empty())
    write_contours_geopackage(*contours, c.crs, c.target, out.reserve("contours.gpkg"));
  out.commit();
}

}  // namespace levelhead
