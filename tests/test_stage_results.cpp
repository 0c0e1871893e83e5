// The chain's stages hand their results on in memory (stage_results.hpp):
// the results against the files written from them, the guard that uses a
// result only for the very file written from it, and the report built from
// the results alone.

#include <fmt/format.h>

#include <algorithm>
#include <catch2/catch.hpp>
#include <cmath>
#include <filesystem>
#include <fstream>
#include <map>
#include <sstream>
#include <string>
#include <vector>

#include "cli/app.hpp"
#include "cli/project.hpp"
#include "levelhead/core/table.hpp"
#include "levelhead/flow/flow.hpp"
#include "levelhead/heads/heads.hpp"
#include "levelhead/levelling/adjustment.hpp"
#include "levelhead/levelling/network.hpp"
#include "levelhead/report/findings.hpp"
#include "levelhead/report/report.hpp"
#include "levelhead/report/stage_results.hpp"
#include "support/cli_run.hpp"
#include "support/network_builders.hpp"
#include "support/temp_folder.hpp"

namespace fs = std::filesystem;
using namespace levelhead;

namespace {

// The demo's inputs, written into `folder`/inputs; returns the project file.
fs::path demo_inputs(const fs::path& folder) {
  REQUIRE(testing::run_cli({"demo", "--out", (folder / "demo").string()}).code == 0);
  fs::copy(folder / "demo" / "inputs", folder / "inputs");
  return folder / "inputs" / "project.toml";
}

std::vector<std::string> command_line(const cli::Stage& stage) {
  std::vector<std::string> args = {"levelhead"};
  args.insert(args.end(), stage.args.begin(), stage.args.end());
  return args;
}

// Every stage of the project, as `levelhead run` plans it, run into `out`
// with its result kept in `results`.
std::vector<cli::Stage> run_stages(const fs::path& project_file, const fs::path& out,
                                   StageResults& results) {
  const std::vector<cli::Stage> stages = cli::plan_stages(cli::load_project(project_file), out);
  for (const cli::Stage& stage : stages) {
    std::ostringstream text, err;
    INFO(stage.name << ": " << err.str());
    REQUIRE(cli::run(command_line(stage), text, err, &results) == cli::exit_ok);
  }
  return stages;
}

// heights.csv and heights_by_epoch.csv print metres to 5 decimals.
constexpr double printed_metres = 0.5e-5 + 1e-12;

}  // namespace

TEST_CASE("the adjusted heights in memory are heights.csv at full precision", "[stage-results]") {
  testing::TempFolder tmp;
  StageResults results;
  run_stages(demo_inputs(tmp.path()), tmp.path() / "run", results);
  REQUIRE(results.adjust);
  const NetworkHeights in_memory = results.adjust->heights();
  const NetworkHeights from_file =
      read_network_heights(read_table(tmp.path() / "run" / "adjust" / "heights.csv"));
  REQUIRE(in_memory.size() == from_file.size());
  bool any_digit_beyond_the_file = false;
  for (const auto& [id, file] : from_file) {
    INFO(id);
    const NetworkHeight& memory = in_memory.at(id);
    CHECK(std::abs(memory.height - file.height) <= printed_metres);
    any_digit_beyond_the_file =
        any_digit_beyond_the_file || std::abs(memory.height - file.height) > 1e-9;
    REQUIRE(memory.sigma.has_value() == file.sigma.has_value());
    if (memory.sigma) CHECK(std::abs(*memory.sigma - *file.sigma) <= printed_metres);
    CHECK(memory.reference == file.reference);
    CHECK(memory.checked == file.checked);
  }
  CHECK(any_digit_beyond_the_file);

  // gnss-check took the same heights from memory.
  REQUIRE(results.gnss);
  for (const GnssMark& mark : results.gnss->marks) {
    INFO(mark.id);
    CHECK(std::abs(mark.levelled - in_memory.at(mark.id).height) < 1e-12);
  }
}

TEST_CASE("the epochs' heights in memory are heights_by_epoch.csv at full precision",
          "[stage-results]") {
  testing::TempFolder tmp;
  StageResults results;
  run_stages(demo_inputs(tmp.path()), tmp.path() / "run", results);
  REQUIRE(results.epochs);
  const MonitoredHeights in_memory = results.epochs->monitored();
  const MonitoredHeights from_file =
      read_monitored_heights(read_table(tmp.path() / "run" / "epochs" / "heights_by_epoch.csv"));
  REQUIRE(in_memory.size() == from_file.size());
  for (const auto& [id, file] : from_file) {
    INFO(id);
    const MonitoredSeries& memory = in_memory.at(id);
    CHECK(memory.reference == file.reference);
    REQUIRE(memory.epochs.size() == file.epochs.size());
    for (std::size_t e = 0; e < file.epochs.size(); ++e) {
      CHECK(std::abs(memory.epochs[e].time - file.epochs[e].time) <= 0.5);  // printed to 1 s
      CHECK(std::abs(memory.epochs[e].height - file.epochs[e].height) <= printed_metres);
      CHECK(std::abs(memory.epochs[e].sigma - file.epochs[e].sigma) <= printed_metres);
      CHECK(memory.epochs[e].checked == file.epochs[e].checked);
    }
  }
}

TEST_CASE("flow in the chain fits the event's heads at full precision, not event.csv's rounding",
          "[stage-results]") {
  testing::TempFolder tmp;
  StageResults results;
  run_stages(demo_inputs(tmp.path()), tmp.path() / "run", results);
  REQUIRE(results.heads);
  REQUIRE(results.heads->result.event);
  REQUIRE(results.flow);
  // The same fit over the event's heads as computed, with the errors they
  // share; event.csv rounds each head to 0.1 mm.
  std::vector<FlowWell> wells;
  for (const EventHead& h : results.heads->result.event->heads) {
    if (results.flow->aquifer.empty() || h.aquifer == results.flow->aquifer)
      wells.push_back({h.well, h.x, h.y, h.head, h.sigma, h.common});
  }
  REQUIRE(wells.size() == results.flow->wells);
  const FlowResult expected = estimate_flow(wells, FlowOptions{});
  CHECK(std::abs(results.flow->result.gradient - expected.gradient) <=
        1e-12 * std::abs(expected.gradient));
  CHECK(std::abs(results.flow->result.azimuth - expected.azimuth) <= 1e-9);
}

TEST_CASE("a stage reads the file its option names when that file is not the chain's own",
          "[stage-results]") {
  testing::TempFolder tmp;
  StageResults results;
  const fs::path run = tmp.path() / "run";
  const std::vector<cli::Stage> stages = run_stages(demo_inputs(tmp.path()), run, results);
  const HeadsResult chain_heads = results.heads->result;

  // A copy of heights.csv with every height 1 m higher, named to heads.
  const Table original = read_table(run / "adjust" / "heights.csv");
  const std::size_t height = *original.find_column("height");
  std::ofstream copy(tmp.path() / "raised_heights.csv");
  const std::size_t columns = original.column_names().size();
  for (std::size_t c = 0; c < columns; ++c) copy << (c ? "," : "") << original.column_names()[c];
  copy << '\n';
  for (std::size_t r = 0; r < original.row_count(); ++r) {
    for (std::size_t c = 0; c < columns; ++c) {
      copy << (c ? "," : "");
      if (c == height && original.number(r, c))
        copy << fmt::format("{:.5f}", *original.number(r, c) + 1.0);
      else
        copy << original.cell(r, c);
    }
    copy << '\n';
  }
  copy.close();
  cli::Stage heads = *std::find_if(stages.begin(), stages.end(),
                                   [](const cli::Stage& s) { return s.name == "heads"; });
  const auto adjusted = std::find(heads.args.begin(), heads.args.end(), "--adjusted");
  REQUIRE(adjusted != heads.args.end());
  *(adjusted + 1) = (tmp.path() / "raised_heights.csv").string();
  std::ostringstream text, err;
  REQUIRE(cli::run(command_line(heads), text, err, &results) == cli::exit_ok);

  std::size_t on_network = 0;
  for (std::size_t k = 0; k < chain_heads.measuring_points.size(); ++k) {
    const MeasuringPointSurvey& before = chain_heads.measuring_points[k];
    const MeasuringPointSurvey& after = results.heads->result.measuring_points[k];
    if (before.source.rfind("network:", 0) != 0) continue;
    ++on_network;
    INFO(before.record.well << " " << before.record.valid_from_text);
    CHECK(std::abs(after.height - before.height - 1.0) <= printed_metres);
  }
  CHECK(on_network > 0);
}

TEST_CASE("names_file: the same file however spelt, never a missing one", "[stage-results]") {
  testing::TempFolder tmp;
  std::ofstream(tmp.path() / "heights.csv") << "id\n";
  std::ofstream(tmp.path() / "other.csv") << "id\n";
  const fs::path written = tmp.path() / "heights.csv";
  CHECK(names_file(written.string(), written));
  CHECK(names_file((tmp.path() / "." / "heights.csv").string(), written));
  CHECK_FALSE(names_file((tmp.path() / "other.csv").string(), written));
  CHECK_FALSE(names_file((tmp.path() / "missing.csv").string(), tmp.path() / "missing.csv"));
  CHECK_FALSE(names_file("", written));
}

TEST_CASE("the report is built from the stages' results alone, with no stage output left to read",
          "[stage-results][report]") {
  testing::TempFolder tmp;
  StageResults results;
  const fs::path run = tmp.path() / "run";
  const std::vector<cli::Stage> stages = run_stages(demo_inputs(tmp.path()), run, results);
  ReportContext context;
  context.title = "Stage results";
  context.crs = "EPSG:32613";
  context.target = "EPSG:5703";
  for (const cli::Stage& stage : stages) {
    context.stages.push_back(stage.name);
    fs::remove_all(run / stage.name);  // anything the report read back would now be missing
  }
  write_report(context, results, chain_findings(results), run);

  const std::string report = testing::read_file(run / "report.md");
  for (const char* part : {"## Levelling network", "### Loop misclosures", "### Adjustment",
                           "Adjusted heights (m):", "## GNSS heights against the levelling",
                           "## Monitoring epochs", "## Pressure transducers", "## Measuring points",
                           "## Heads", "hydraulic gradient (m/m, dimensionless)",
                           "## QA flags and re-measure list", "Blunder: the section"}) {
    INFO(part);
    CHECK(report.find(part) != std::string::npos);
  }
  for (const char* figure : {"network", "loops", "displacements", "heads", "hydrographs"}) {
    INFO(figure);
    CHECK(fs::exists(run / "figures" / (std::string(figure) + ".svg")));
  }
  CHECK(fs::exists(run / "contours.gpkg"));
}

TEST_CASE("findings: none without stages; an unchecked point under a well is named once, by heads",
          "[stage-results][findings]") {
  CHECK(chain_findings(StageResults{}).empty());

  // A loop A-B-C with a spur to D (a side shot: nothing checks D) and one
  // to E; the well W's measuring point is levelled on D.
  using testing::point;
  using testing::section;
  Network net =
      make_network({point("A", 100.0), point("B"), point("C"), point("D"), point("E")},
                   {section("A", "B", 1.0), section("B", "C", 1.0), section("C", "A", -2.001),
                    section("C", "D", 0.5), section("C", "E", 0.7)});
  AdjustmentOptions options;
  AdjustmentResult adjusted = adjust(net, options);
  StageResults results;
  results.adjust = AdjustStage{std::move(net), std::move(adjusted), options, {}};

  std::vector<Finding> findings = chain_findings(results);
  const auto text_of = [&](const std::string& topic) {
    for (const Finding& f : findings) {
      if (f.topic == topic) return f.text;
    }
    return std::string();
  };
  CHECK_THAT(text_of("unchecked-point"), Catch::Matchers::Contains("2 point(s)"));
  CHECK_THAT(text_of("unchecked-point"), Catch::Matchers::Contains(": D; E."));

  HeadsStage heads;
  heads.target = "EPSG:5703";
  MeasuringPointSurvey survey;
  survey.record.well = "W";
  survey.record.point = "D";
  survey.record.valid_from_text = "2026-01-01";
  heads.result.measuring_points.push_back(survey);
  heads.result.measuring_point_qa.push_back(
      {"W", "2026-01-01", "mp-unchecked", "", 2, "measuring-points"});
  results.heads = std::move(heads);
  findings = chain_findings(results);
  CHECK_THAT(text_of("unchecked-point"), Catch::Matchers::Contains("1 point(s)"));
  CHECK_THAT(text_of("unchecked-point"), !Catch::Matchers::Contains("D"));
  CHECK_THAT(text_of("mp-unchecked"), Catch::Matchers::Contains("measuring point(s) of W"));
}

TEST_CASE("findings: each GNSS mark once, by its own mistake, an offset or a scatter",
          "[stage-results][findings][gnss]") {
  // Invented marks without sigmas where N = -31.6 m: four share +0.30 m,
  // one is off by 2 m more, one carries the geoid twice.
  GnssStage g;
  const double offsets[6] = {0.301, 0.298, 0.303, 0.299, 2.30, -31.6};
  for (std::size_t i = 0; i < 6; ++i) {
    GnssMark m;
    m.id = fmt::format("G{}", i + 1);
    m.gnss = 68.4;
    m.gnss_converted = 100.0;
    m.levelled = 100.0 + offsets[i];
    g.marks.push_back(m);
  }
  g.result = check_gnss_marks(g.marks, GnssCheckOptions{});
  StageResults results;
  results.gnss = std::move(g);
  std::map<std::string, std::string> by_topic;
  for (const Finding& f : chain_findings(results)) by_topic[f.topic] += f.text;
  CHECK_THAT(by_topic["gnss-disagrees"],
             Catch::Matchers::Contains("2 of 6 marks") && Catch::Matchers::Contains("G5") &&
                 Catch::Matchers::Contains("G6") && !Catch::Matchers::Contains("G1"));
  CHECK_THAT(by_topic["gnss-offset"], Catch::Matchers::StartsWith("4 of 6 GNSS marks share an "
                                                                  "offset of +0.300"));
  CHECK(by_topic.count("gnss-scatter") == 0);
}
