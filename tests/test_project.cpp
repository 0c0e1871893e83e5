// `levelhead run` and `levelhead demo`: the project file, the chain, the
// report and the audit record.

#include <fmt/format.h>

#include <algorithm>
#include <catch2/catch.hpp>
#include <charconv>
#include <filesystem>
#include <fstream>
#include <map>
#include <nlohmann/json.hpp>
#include <regex>
#include <set>
#include <sstream>

#include "cli/app.hpp"
#include "levelhead/core/output_columns.hpp"
#include "levelhead/core/output_files.hpp"
#include "levelhead/core/table.hpp"
#include "levelhead/core/time.hpp"
#include "levelhead/core/units.hpp"
#include "report/report_document.hpp"
#include "report/report_figures.hpp"
#include "support/cli_run.hpp"
#include "support/temp_folder.hpp"

using Catch::Matchers::Contains;
namespace fs = std::filesystem;
using Run = levelhead::testing::CliRun;
const auto cli = levelhead::testing::run_cli;
using levelhead::testing::read_file;

namespace {

// The demo's inputs and project file, copied to `folder`.
fs::path demo_project(const fs::path& folder) {
  const Run demo = cli({"demo", "--out", (folder / "seed").string()});
  REQUIRE(demo.code == 0);
  fs::copy(folder / "seed" / "inputs", folder / "project");
  return folder / "project" / "project.toml";
}

void replace_in(const fs::path& file, const std::string& from, const std::string& to) {
  std::string text = read_file(file);
  const auto at = text.find(from);
  REQUIRE(at != std::string::npos);
  text.replace(at, from.size(), to);
  std::ofstream(file, std::ios::binary) << text;
}

}  // namespace

TEST_CASE("the demo runs every stage and writes the report and audit record", "[project][demo]") {
  levelhead::testing::TempFolder tmp;
  const Run run = cli({"demo", "--out", tmp.path().string()});
  INFO(run.err);
  REQUIRE(run.code == 0);
  for (const char* stage :
       {"reduce", "loops", "adjust", "gnss-check", "epochs", "transducer", "heads"}) {
    CHECK(fs::exists(tmp.path() / stage / "summary.json"));
  }
  CHECK(fs::exists(tmp.path() / "flow" / "flow.json"));
  // Every column of every table written is one of output_columns.hpp (one
  // type and unit, in docs/formats.md), with its CSVT beside it.
  for (const auto& entry : fs::recursive_directory_iterator(tmp.path())) {
    const fs::path& csv = entry.path();
    if (csv.extension() != ".csv" || csv.parent_path().filename() == "inputs") continue;
    INFO(csv.string());
    CHECK(fs::exists(fs::path(csv).replace_extension(".csvt")));
    std::ifstream in(csv);
    std::string header;
    std::getline(in, header);
    std::stringstream cells(header);
    for (std::string name; std::getline(cells, name, ',');) {
      INFO(name);
      CHECK(levelhead::find_output_column(name) != nullptr);
    }
  }
  const std::string html = read_file(tmp.path() / "report.html");
  for (const char* section :
       {"Findings", "Levelling network", "Loop misclosures", "Adjustment",
        "GNSS heights against the levelling", "Monitoring epochs", "Pressure transducers",
        "Measuring points", "Heads", "QA flags and re-measure list", "What went in", "Cautions"}) {
    CHECK_THAT(html, Contains(std::string(">") + section + "</h"));
  }
  for (const char* figure :
       {"fig-network", "fig-loops", "fig-displacements", "fig-heads", "fig-hydrographs"}) {
    CHECK_THAT(html, Contains(figure));
  }
  // Self-contained: no resource is fetched (the SVG namespace is a name, not a
  // request; the contents link within the page only).
  for (const char* request : {"src=", "url(", "@import", "<link", "<script"}) {
    CHECK_THAT(html, !Contains(request));
  }
  CHECK_FALSE(std::regex_search(html, std::regex(R"re(href="[^#])re")));
  CHECK_THAT(html, Contains("SBM-B -&gt; MW-04"));  // the planted blunder is a finding
  CHECK_THAT(html, Contains("95.250 m too low"));   // and the datum mix-ups it avoided
  CHECK_THAT(html, Contains("'gnss-2024'"));
  CHECK_THAT(html, Contains("Reference mark SBM-B is moving"));  // the sinking benchmark
  CHECK_THAT(html, Contains("transducer-drift-rejected"));       // the knocked logger
  CHECK_THAT(html, Contains("Unchecked levelling: the measuring point(s) of MW-07"));  // side shot
  CHECK_THAT(read_file(tmp.path() / "report.md"), Contains("![Levelling network"));
  // Markdown punctuation in the text is escaped, not read as markup.
  CHECK_THAT(read_file(tmp.path() / "report.md"), Contains("residual \\|w\\| of each"));
  // Regression: the console counted displacements since the first epoch, the
  // report every significant pair (twice as many); both now say the same.
  const std::string console_count = " significant displacement(s) since the first epoch";
  const std::size_t at = run.out.find(console_count);
  REQUIRE(at != std::string::npos);
  const std::size_t start = run.out.rfind('\n', at) + 1;
  const std::string count = run.out.substr(start, at - start);
  CHECK_THAT(read_file(tmp.path() / "report.md"),
             Contains("- \\[information\\] " + count + console_count));
  // The snooping verdict names its test and says "after the removals" only
  // when something was removed (the demo removes its planted misreading).
  CHECK_THAT(read_file(tmp.path() / "report.md"),
             Contains("No observation fails data snooping (Baarda's w-test, \\|w\\| \\> 3.29 at "
                      "alpha0 = 0.001; the global test accepts the a-priori precision) after the "
                      "removals."));
  // The planted misreading fails the first adjustment's global test, so it
  // was found with sigma0 estimated: the finding names Pope's tau test.
  CHECK_THAT(read_file(tmp.path() / "report.md"),
             Contains("Pope's tau test, \\|tau\\| \\> 2.45 at alpha0 = 0.001"));
  CHECK(fs::exists(tmp.path() / "figures" / "network.svg"));
  // The basis of the survey and the cautions come before the first section
  // of results: references by name, code and unit, the levelling standard
  // with what the adjustment says of it, the campaigns.
  const std::string md = read_file(tmp.path() / "report.md");
  const std::size_t results = md.find("## Levelling network");
  REQUIRE(results != std::string::npos);
  for (const char* up_front :
       {"## Basis of the survey", "Heights and heads in: NAVD88 height (EPSG:5703), metre.",
        "Horizontal coordinates: WGS 84 / UTM zone 13N (EPSG:32613), metre.",
        "site-1998: EPSG:5703 +95.250 m (sigma 5.0 mm)", "Levelling standard: fgcc-second-i",
        "sigma0 = 0.65: consistent with the precision assumed",
        "Field book: 6 runs from 2026-10-06 to 2026-10-09",
        "Monitoring epochs: 2024-10 (2024-10-08)", "## Cautions",
        "licensed surveyor, engineer or hydrogeologist"}) {
    INFO(up_front);
    const std::size_t at_text = md.find(up_front);
    CHECK(at_text < results);
  }
  // The contents link every section, each to its own heading.
  const std::string page = read_file(tmp.path() / "report.html");
  const std::regex link(R"re(<a href="#(sec-\d+)">([^<]*)</a>)re");
  std::size_t links = 0;
  for (auto it = std::sregex_iterator(page.begin(), page.end(), link); it != std::sregex_iterator();
       ++it, ++links) {
    INFO((*it)[2]);
    CHECK_THAT(page, Contains("<h2 id=\"" + (*it)[1].str() + "\">" + (*it)[2].str() + "</h2>"));
  }
  CHECK(links >= 10);
  // Console and report give the Darcy ranges and the barometric efficiency alike.
  for (const char* both : {"0.0041 to 0.83 m/day", "1.7 to 330 years", "-0.0001 +- 0.0011"}) {
    INFO(both);
    CHECK_THAT(run.out, Contains(both));
    CHECK_THAT(md, Contains(both));
  }

  std::ifstream record_file(tmp.path() / "run.json");
  const auto record = nlohmann::json::parse(record_file);
  CHECK(record["configuration_sha256"].get<std::string>().size() == 64);
  // Ten inputs: the nine tables and the references file.
  CHECK(record["inputs"].size() == 10);
  CHECK_THAT(record["proj_version"].get<std::string>(), Contains("PROJ"));
  CHECK(record["stages"] == nlohmann::json({"reduce", "loops", "adjust", "gnss-check", "epochs",
                                            "transducer", "heads", "flow"}));

  // Every finding once, the same on the console, in the report and in run.json.
  const std::string console = run.out.substr(run.out.find("== findings ==\n"));
  std::vector<std::string> console_lines;
  std::istringstream lines(console);
  for (std::string line; std::getline(lines, line);) {
    if (line.rfind("- ", 0) == 0) console_lines.push_back(line.substr(2));
  }
  REQUIRE(console_lines.size() == record["findings"].size());
  const std::string markdown = read_file(tmp.path() / "report.md");
  std::set<std::string> topics;
  for (std::size_t i = 0; i < console_lines.size(); ++i) {
    const auto& f = record["findings"][i];
    topics.insert(f["topic"].get<std::string>());
    CHECK(console_lines[i] ==
          "[" + f["level"].get<std::string>() + "] " + f["text"].get<std::string>());
    CHECK_THAT(markdown,
               Contains("- " + levelhead::report::markdown_text(console_lines[i]) + "\n"));
  }
  // The demo's planted events are named: the failed field check, the
  // casing cut, the dry reading, the knocked logger, the blunder, the
  // sinking benchmark, the unchecked side shot.
  for (const char* topic : {"field-check", "mp-change", "state", "transducer-rejected", "blunder",
                            "mark-moving", "mp-unchecked", "remeasure"}) {
    INFO(topic);
    CHECK(topics.count(topic) == 1);
  }
  CHECK_THAT(console, Contains("run R3 setup 4 (field-book row 85): setup-imbalance"));
  CHECK_THAT(console, Contains("Measuring point of MW-03 changed on 2026-03-10 (casing-cut)"));
  CHECK_THAT(console, Contains("1 reading(s) with the state dry (MW-05 at"));
  CHECK_THAT(console, Contains("124 transducer-drift-rejected"));
  CHECK_THAT(console, Contains("(sections row 10; field-book row(s) 64)"));
}

TEST_CASE("two runs of the demo agree apart from the report's run-time line", "[project][demo]") {
  levelhead::testing::TempFolder tmp;
  // Same output folder both times (stage summaries name their inputs' paths).
  REQUIRE(cli({"demo", "--out", (tmp.path() / "b").string()}).code == 0);
  fs::rename(tmp.path() / "b", tmp.path() / "a");
  REQUIRE(cli({"demo", "--out", (tmp.path() / "b").string()}).code == 0);
  const std::regex run_time("Computed with [^\n<]*");
  std::size_t compared = 0;
  for (const auto& entry : fs::recursive_directory_iterator(tmp.path() / "a")) {
    if (!entry.is_regular_file()) continue;
    const fs::path relative = fs::relative(entry.path(), tmp.path() / "a");
    std::string a = read_file(entry.path()), b = read_file(tmp.path() / "b" / relative);
    if (relative.filename().string().rfind("report.", 0) == 0) {
      a = std::regex_replace(a, run_time, "");
      b = std::regex_replace(b, run_time, "");
    }
    INFO(relative.string());
    CHECK(a == b);
    ++compared;
  }
  CHECK(compared > 20);
}

TEST_CASE("project files: unknown keys suggest the nearest, bad values name the section",
          "[project]") {
  levelhead::testing::TempFolder tmp;
  const fs::path project = demo_project(tmp.path());
  const fs::path out = tmp.path() / "out";

  SECTION("a misspelt key") {
    replace_in(project, "snoop = true", "snop = true");
    const Run run = cli({"run", project.string(), "--out", out.string()});
    CHECK(run.code == 1);
    CHECK_THAT(run.err, Contains("unknown key 'snop' in [adjustment] (did you mean 'snoop'?)"));
    CHECK_THAT(run.err, Contains("line"));
    CHECK_FALSE(fs::exists(out));
  }
  SECTION("a key under its former name") {
    replace_in(project, "synoptic_window = 72", "synoptic_window = 72\nrepeat_tolerance = 0.005");
    const Run run = cli({"run", project.string(), "--out", out.string()});
    CHECK(run.code == 1);
    CHECK_THAT(run.err, Contains("'repeat_tolerance' in [heads] is now 'repeat_tolerance_m'"));
  }
  SECTION("a misspelt section") {
    replace_in(project, "[heads]", "[head]");
    const Run run = cli({"run", project.string(), "--out", out.string()});
    CHECK(run.code == 1);
    CHECK_THAT(run.err, Contains("unknown section [head] (did you mean [heads]?)"));
  }
  SECTION("a value the command refuses") {
    replace_in(project, "synoptic_window = 72", "synoptic_window = \"three days\"");
    const Run run = cli({"run", project.string(), "--out", out.string()});
    CHECK(run.code == 2);
    CHECK_THAT(run.err, Contains("[heads]"));
    CHECK_FALSE(fs::exists(out));  // checked before any stage ran
  }
  SECTION("a missing input file") {
    replace_in(project, "levels = \"levels.csv\"", "levels = \"levels-2026.csv\"");
    const Run run = cli({"run", project.string(), "--out", out.string()});
    CHECK(run.code == 1);
    CHECK_THAT(run.err, Contains("levels-2026.csv"));
  }
}

TEST_CASE("a failing stage stops the chain and keeps nothing of that run", "[project][safety]") {
  levelhead::testing::TempFolder tmp;
  const fs::path project = demo_project(tmp.path());
  const fs::path out = tmp.path() / "out";
  std::ofstream(project.parent_path() / "levels.csv", std::ios::app)
      << "MW-01,2026-10-12T09:00-06:00,deep,\n";
  SECTION("into a new folder: the folder is not created") {
    const Run run = cli({"run", project.string(), "--out", out.string(), "--quiet"});
    CHECK(run.code == 1);
    CHECK(run.out.empty());
    // The bad cell is named in the user's own table, by the first stage
    // that reads it (not in the levels.csv the transducer stage writes).
    CHECK_THAT(run.err, Contains("stopped at stage 'transducer'"));
    CHECK_THAT(run.err, Contains((project.parent_path() / "levels.csv").string() + ", row 669"));
    CHECK_THAT(run.err, Contains("was not created"));
    CHECK_FALSE(fs::exists(out));
  }
  SECTION("over a complete run: that run stays as it was, with no file of the failed one") {
    const std::string good_levels = read_file(tmp.path() / "seed" / "inputs" / "levels.csv");
    const std::string bad_levels = read_file(project.parent_path() / "levels.csv");
    std::ofstream(project.parent_path() / "levels.csv", std::ios::binary) << good_levels;
    REQUIRE(cli({"run", project.string(), "--out", out.string(), "--quiet"}).code == 0);
    std::map<std::string, std::string> before;
    for (const auto& e : fs::recursive_directory_iterator(out))
      if (e.is_regular_file()) before[e.path().string()] = read_file(e.path());
    std::ofstream(project.parent_path() / "levels.csv", std::ios::binary) << bad_levels;
    const Run run = cli({"run", project.string(), "--out", out.string(), "--quiet"});
    CHECK(run.code == 1);
    CHECK_THAT(run.err, Contains("holds the previous complete run"));
    std::map<std::string, std::string> after;
    for (const auto& e : fs::recursive_directory_iterator(out))
      if (e.is_regular_file()) after[e.path().string()] = read_file(e.path());
    CHECK(after == before);
    // Nothing beside the folder either: no lock, no set-aside copy.
    std::vector<std::string> beside;
    for (const auto& e : fs::directory_iterator(tmp.path())) beside.push_back(e.path().filename());
    std::sort(beside.begin(), beside.end());
    CHECK(beside == std::vector<std::string>{"out", "project", "seed"});
  }
}

TEST_CASE("run --strict finishes the chain and exits 3 naming the stages that failed QA",
          "[project]") {
  levelhead::testing::TempFolder tmp;
  const fs::path project = demo_project(tmp.path());
  const fs::path out = tmp.path() / "out";
  const Run run = cli({"run", project.string(), "--out", out.string(), "--quiet", "--strict"});
  INFO(run.err);
  CHECK(run.code == 3);
  // The demo's knocked logger and its flagged readings are QA failures.
  CHECK_THAT(run.err, Contains("QA checks failed in"));
  CHECK_THAT(run.err, Contains("transducer"));
  CHECK_THAT(run.err, Contains("heads"));
  CHECK_THAT(run.err, !Contains("stopped at stage"));
  // Every stage ran and the report was written all the same.
  CHECK(fs::exists(out / "heads" / "heads.csv"));
  CHECK(fs::exists(out / "flow" / "flow.json"));
  CHECK(fs::exists(out / "report.html"));
  // Without --strict the same project exits 0.
  CHECK(
      cli({"run", project.string(), "--out", (tmp.path() / "lenient").string(), "--quiet"}).code ==
      0);
}

TEST_CASE("a project whose target is in feet gives the metre run's heads in those feet",
          "[project][units]") {
  // EPSG:6360 is NAVD88 height in US survey feet, EPSG:5703 the same datum
  // in metres (EPSG dataset); 1200/3937 m per US survey foot (US Federal
  // Register 1959).
  levelhead::testing::TempFolder tmp;
  const fs::path metres = demo_project(tmp.path());
  const fs::path feet_folder = tmp.path() / "feet";
  fs::copy(metres.parent_path(), feet_folder);
  const fs::path feet = feet_folder / metres.filename();
  replace_in(feet, "target = \"EPSG:5703\"", "target = \"EPSG:6360\"");
  for (const auto& [project, out] : {std::pair{metres, "m"}, {feet, "ft"}}) {
    const Run run = cli({"run", project.string(), "--out", (tmp.path() / out).string(), "--quiet"});
    INFO(run.err);
    REQUIRE(run.code == 0);
  }
  const double per_foot = 1200.0 / 3937.0;
  // Both tables round to 4 decimals: 0.5e-4 m and 0.5e-4 ft apart at most.
  const double tolerance = 0.5e-4 + 0.5e-4 * per_foot + 1e-9;
  for (const char* file : {"heads/heads.csv", "heads/event.csv", "heads/measuring_points.csv"}) {
    const levelhead::Table m = levelhead::read_table(tmp.path() / "m" / file),
                           f = levelhead::read_table(tmp.path() / "ft" / file);
    REQUIRE(m.row_count() == f.row_count());
    for (const char* column : {"head", "height", "sigma", "sigma_relative", "depth"}) {
      const auto cm = m.find_column(column), cf = f.find_column(column);
      if (!cm) continue;
      for (std::size_t r = 0; r < m.row_count(); ++r) {
        const auto a = m.number(r, *cm), b = f.number(r, *cf);
        REQUIRE(a.has_value() == b.has_value());
        INFO(file << " " << column << " row " << r);
        if (a) CHECK_THAT(*b * per_foot, Catch::Matchers::WithinAbs(*a, tolerance));
      }
    }
  }
  const auto flow_of = [&](const char* out) {
    return nlohmann::json::parse(read_file(tmp.path() / out / "flow" / "flow.json"));
  };
  CHECK_THAT(double(flow_of("ft")["gradient"]["value"]),
             Catch::Matchers::WithinAbs(double(flow_of("m")["gradient"]["value"]), 1e-12));
  CHECK(flow_of("ft")["units"] == "us-ft");
  const std::string report = read_file(tmp.path() / "ft" / "report.md");
  CHECK_THAT(report, Contains("height (US ft)") && !Contains("height (m)"));
  // diff compares the two in metres, as its tolerance: the target changed,
  // no head moved.
  const Run diff = cli({"diff", (tmp.path() / "m").string(), (tmp.path() / "ft").string()});
  CHECK(diff.code == 1);
  CHECK_THAT(diff.out, Contains("EPSG:6360") && !Contains("heads of"));
}

TEST_CASE(
    "a site surveyed in US survey feet gives the heights and heads of the same site in "
    "metres",
    "[project][units]") {
  // The demo's inputs with every length in US survey feet (1200/3937 m, US
  // Federal Register 1959) and [site] unit = "us-ft": the chain must read
  // each user table in feet and each table of its own stages in metres.
  levelhead::testing::TempFolder tmp;
  const fs::path metric = demo_project(tmp.path());
  const fs::path feet = tmp.path() / "feet";
  fs::copy(metric.parent_path(), feet);
  const std::map<std::string, std::vector<std::string>> lengths = {
      {"epochs.csv", {"dh", "length"}},
      {"fieldbook.csv", {"reading", "distance"}},
      {"gnss.csv", {"height", "sigma"}},
      {"levels.csv", {"depth"}},
      {"measuring_points.csv", {"height", "sigma"}},
      {"points.csv", {"height", "sigma"}},
      {"sensors.csv", {"hung_depth", "sigma", "elevation"}},
      {"wells.csv", {"ground", "screen_top", "screen_bottom"}}};
  for (const auto& [file, columns] : lengths) {
    const levelhead::Table t = levelhead::read_table(metric.parent_path() / file);
    std::ofstream out(feet / file, std::ios::binary);
    for (std::size_t c = 0; c < t.column_names().size(); ++c)
      out << (c ? "," : "") << t.column_names()[c];
    out << '\n';
    for (std::size_t r = 0; r < t.row_count(); ++r) {
      for (std::size_t c = 0; c < t.column_names().size(); ++c) {
        std::string cell(t.cell(r, c));
        const bool length =
            std::find(columns.begin(), columns.end(), t.column_names()[c]) != columns.end();
        double metres = 0.0;
        const auto [end, ec] = std::from_chars(cell.data(), cell.data() + cell.size(), metres);
        if (length && !cell.empty() && ec == std::errc() && end == cell.data() + cell.size())
          cell = fmt::format("{:.12g}", metres / levelhead::metres_per_us_survey_foot);
        out << (c ? "," : "") << levelhead::csv_cell(cell);
      }
      out << '\n';
    }
  }
  replace_in(feet / "project.toml", "unit = \"m\"", "unit = \"us-ft\"");
  REQUIRE(cli({"run", metric.string(), "--out", (tmp.path() / "m").string(), "--quiet"}).code == 0);
  const Run run = cli(
      {"run", (feet / "project.toml").string(), "--out", (tmp.path() / "ft").string(), "--quiet"});
  INFO(run.err);
  REQUIRE(run.code == 0);
  // Same numbers to their printed resolution: heights 0.01 mm, GNSS
  // differences 0.1 mm, event heads as their sigma allows (2 to 4 decimals,
  // a value on a rounding boundary may flip by one unit of 0.01 m).
  const auto compare = [&](const char* file, const char* key, const char* value, double tol) {
    const levelhead::Table a = levelhead::read_table(tmp.path() / "m" / file);
    const levelhead::Table b = levelhead::read_table(tmp.path() / "ft" / file);
    REQUIRE(a.row_count() == b.row_count());
    for (std::size_t r = 0; r < a.row_count(); ++r) {
      INFO(file << " " << a.cell(r, *a.find_column(key)));
      CHECK(a.cell(r, *a.find_column(key)) == b.cell(r, *b.find_column(key)));
      const auto x = a.number(r, *a.find_column(value)), y = b.number(r, *b.find_column(value));
      REQUIRE(x.has_value() == y.has_value());
      if (x) CHECK_THAT(*y, Catch::Matchers::WithinAbs(*x, tol));
    }
  };
  compare("adjust/heights.csv", "id", "height", 2e-5);
  compare("gnss-check/gnss_check.csv", "id", "difference", 2e-4);
  compare("heads/event.csv", "well", "head", 0.0101);
  const auto flow = [&](const char* run_name) {
    return nlohmann::json::parse(std::ifstream(tmp.path() / run_name / "flow" / "flow.json"));
  };
  CHECK_THAT(flow("ft")["azimuth_degrees"]["value"].get<double>(),
             Catch::Matchers::WithinAbs(flow("m")["azimuth_degrees"]["value"].get<double>(), 0.5));
  // The report's datum findings rest on the heights as given (in metres):
  // the same in both runs (they once re-read the user's table as metres).
  CHECK_THAT(read_file(tmp.path() / "ft" / "report.md"), Contains("95.250 m too low"));
}

TEST_CASE("the order of the input tables' rows does not change a result", "[project]") {
  // The demo's tables written with their rows reversed (the field book and
  // the tape readings keep theirs: their order is part of the record).
  levelhead::testing::TempFolder tmp;
  const fs::path original = demo_project(tmp.path());
  const fs::path reversed = tmp.path() / "reversed";
  fs::copy(original.parent_path(), reversed);
  for (const char* file : {"points.csv", "epochs.csv", "measuring_points.csv", "wells.csv",
                           "sensors.csv", "records.csv", "gnss.csv"}) {
    std::ifstream in(original.parent_path() / file);
    std::string header, line;
    std::getline(in, header);
    std::vector<std::string> lines;
    while (std::getline(in, line)) lines.push_back(line);
    std::ofstream out(reversed / file, std::ios::binary);
    out << header << '\n';
    for (auto it = lines.rbegin(); it != lines.rend(); ++it) out << *it << '\n';
  }
  REQUIRE(cli({"run", original.string(), "--out", (tmp.path() / "a").string(), "--quiet"}).code ==
          0);
  REQUIRE(cli({"run", (reversed / "project.toml").string(), "--out", (tmp.path() / "b").string(),
               "--quiet"})
              .code == 0);
  // The same rows, compared as sets (some tables follow their input's order).
  const auto rows = [&](const char* run_name, const char* file) {
    std::ifstream in(tmp.path() / run_name / file);
    std::vector<std::string> lines;
    for (std::string line; std::getline(in, line);) lines.push_back(line);
    std::sort(lines.begin(), lines.end());
    return lines;
  };
  for (const char* file : {"adjust/heights.csv", "epochs/heights_by_epoch.csv",
                           "epochs/displacements.csv", "epochs/reference_stability.csv",
                           "heads/heads.csv", "heads/event.csv", "gnss-check/gnss_check.csv"}) {
    INFO(file);
    CHECK(rows("a", file) == rows("b", file));
  }
}

TEST_CASE("diff names what moved between two runs and why", "[project][diff]") {
  levelhead::testing::TempFolder tmp;
  const fs::path project = demo_project(tmp.path());
  const fs::path before = tmp.path() / "before", after = tmp.path() / "after";
  REQUIRE(cli({"run", project.string(), "--out", before.string(), "--quiet"}).code == 0);

  SECTION("the same run twice") {
    const Run same = cli({"diff", before.string(), before.string()});
    CHECK(same.code == 0);
    CHECK_THAT(same.out, Contains("The runs agree"));
  }
  SECTION("a re-surveyed measuring point") {
    // MW-03's casing-cut survey raised by 0.100 m: the heads of MW-03 from
    // then until its next survey move by exactly that, no other well's do.
    const fs::path mp = project.parent_path() / "measuring_points.csv";
    std::string text = read_file(mp);
    const std::string old_row = "MW-03,2026-03-10,";
    const auto at = text.find(old_row);
    REQUIRE(at != std::string::npos);
    const auto end = text.find(',', at + old_row.size());
    const double height = std::stod(text.substr(at + old_row.size(), end - at - old_row.size()));
    text.replace(at + old_row.size(), end - at - old_row.size(),
                 fmt::format("{:.4f}", height + 0.100));
    std::ofstream(mp, std::ios::binary) << text;
    REQUIRE(cli({"run", project.string(), "--out", after.string(), "--quiet"}).code == 0);
    const fs::path json = tmp.path() / "diff.json";
    const Run diff = cli({"diff", before.string(), after.string(), "--json", json.string()});
    INFO(diff.out << diff.err);
    CHECK(diff.code == 1);  // as diff and cmp: the runs differ
    CHECK(diff.err.empty());
    CHECK_THAT(diff.out, Contains("input measuring_points"));
    std::ifstream json_file(json);
    const auto d = nlohmann::json::parse(json_file);
    REQUIRE(d["wells"].size() == 1);
    CHECK(d["wells"][0]["well"] == "MW-03");
    CHECK_THAT(d["wells"][0]["largest"].get<double>(),
               Catch::Matchers::WithinAbs(0.100, 0.0011));  // heads to 1 mm
    CHECK_THAT(d["wells"][0]["causes"][0].get<std::string>(), Contains("measuring-point surveys"));
    CHECK(d["heights"].empty());  // the levelling did not change
  }
  SECTION("a folder that is not a run") {
    const Run bad = cli({"diff", before.string(), tmp.path().string()});
    CHECK(bad.code == 1);
    CHECK_THAT(bad.err, Contains("no run.json"));
  }
}

TEST_CASE("one levelling class in the project sets the precision of every levelling stage",
          "[project][precision]") {
  levelhead::testing::TempFolder tmp;
  const fs::path project = demo_project(tmp.path());
  const fs::path out = tmp.path() / "out";

  SECTION("each stage states the class and uses its own number of it") {
    const Run run = cli({"run", project.string(), "--out", out.string(), "--quiet"});
    INFO(run.err);
    REQUIRE(run.code == 0);
    const auto summary = [&](const char* stage) {
      return nlohmann::json::parse(std::ifstream(out / stage / "summary.json"));
    };
    // The demo levels to second order class I (FGCC 1984, from memory:
    // standard error 1.0, section and loop closures 6 mm/sqrt(km)).
    CHECK(summary("reduce")["checks"]["levelling_class"] == "fgcc-second-i");
    CHECK(summary("reduce")["checks"]["section_tolerance_mm_per_sqrt_km"] == 6.0);
    CHECK(summary("loops")["levelling_class"] == "fgcc-second-i");
    CHECK(summary("loops")["tolerance_mm_per_sqrt_km"] == 6.0);
    CHECK(summary("adjust")["weights"]["levelling_class"] == "fgcc-second-i");
    CHECK(summary("adjust")["weights"]["mm_per_sqrt_km"] == 1.0);
    CHECK(summary("epochs")["settings"]["levelling_class"] == "fgcc-second-i");
    CHECK_THAT(read_file(out / "report.md"),
               Contains("1 mm/sqrt(km) (standard error of class fgcc-second-i)"));
  }
  SECTION("a class that does not exist is named with its line") {
    replace_in(project, "levelling_class = \"fgcc-second-i\"", "levelling_class = \"second\"");
    const Run run = cli({"run", project.string(), "--out", out.string()});
    CHECK(run.code == 1);
    CHECK_THAT(run.err, Contains("line") && Contains("unknown levelling class 'second'") &&
                            Contains("fgcc-third"));
    CHECK_FALSE(fs::exists(out));
  }
  SECTION("a stage's own number as well as the class is refused, naming the setting") {
    replace_in(project, "[adjustment]", "[adjustment]\nmm_per_sqrt_km = 1.5");
    const Run run = cli({"run", project.string(), "--out", out.string()});
    CHECK(run.code == 2);
    CHECK_THAT(run.err, Contains("[adjustment] mm_per_sqrt_km"));
    CHECK_FALSE(fs::exists(out));
  }
}

TEST_CASE("project column maps reach every stage that reads the table", "[project]") {
  // The wells table and the readings under the names of another program.
  levelhead::testing::TempFolder tmp;
  const fs::path project = demo_project(tmp.path());
  replace_in(project.parent_path() / "wells.csv", "well,x,y,", "Well,East,North,");
  replace_in(project.parent_path() / "levels.csv", "well,time,depth,", "Well,When,DTW,");
  replace_in(project, "[report]",
             "[columns]\nwells = \"well=Well,x=East,y=North\"\nlevels = "
             "\"well=Well,time=When,depth=DTW\"\n\n[report]");
  const fs::path out = tmp.path() / "out";
  const Run run = cli({"run", project.string(), "--out", out.string(), "--quiet"});
  INFO(run.err);
  REQUIRE(run.code == 0);
  CHECK_THAT(read_file(out / "transducer" / "levels.csv").substr(0, 16),
             Contains("well,time,depth"));
  CHECK_THAT(read_file(out / "report.html"), Contains("fig-heads"));
  CHECK(fs::exists(out / "flow" / "flow.json"));
}

TEST_CASE("project time zones: tape times without a zone need one declared", "[project][time]") {
  levelhead::testing::TempFolder tmp;
  const fs::path project = demo_project(tmp.path());
  const fs::path levels = project.parent_path() / "levels.csv";
  std::string text = read_file(levels);
  for (auto at = text.find("-06:00"); at != std::string::npos; at = text.find("-06:00"))
    text.erase(at, 6);
  std::ofstream(levels, std::ios::binary) << text;
  const fs::path out = tmp.path() / "out";

  // The logger's records are read in its -06:00 (sensors.csv): tape readings
  // read as UTC would check it 6 h off.
  const Run refused = cli({"run", project.string(), "--out", out.string(), "--quiet"});
  CHECK(refused.code == 1);
  CHECK_THAT(refused.err, Contains("levels.csv, row 2, column 'time'") && Contains("has no zone") &&
                              Contains("read in -06:00"));
  CHECK_FALSE(fs::exists(out));

  SECTION("declared for the table") {
    replace_in(project, "[report]", "[time_zones]\nlevels = \"-06:00\"\n\n[report]");
  }
  SECTION("declared for the site") {
    replace_in(project, "unit = \"m\"", "unit = \"m\"\ntime_zone = \"-06:00\"");
  }
  const Run run = cli({"run", project.string(), "--out", out.string(), "--quiet"});
  INFO(run.err);
  REQUIRE(run.code == 0);
  // The same heads as the demo's zoned tape times: levels.csv of the
  // transducer writes them back with their offset.
  CHECK(read_file(out / "heads" / "heads.csv") ==
        read_file(tmp.path() / "seed" / "heads" / "heads.csv"));
  const auto summary = nlohmann::json::parse(read_file(out / "transducer" / "summary.json"));
  CHECK(summary["times"]["zoneless_read_in"]["-06:00"].get<int>() > 3000);
}

TEST_CASE("the project file's names are the command line's", "[project][cli]") {
  // [site] and [inputs] keys, each the option of the same name (with '-'
  // for '_') of the command that takes it.
  const std::vector<std::pair<std::string, std::string>> keys = {
      {"target", "heads"},           {"crs", "heads"},          {"unit", "heads"},
      {"references", "heads"},       {"grid_path", "heads"},    {"time_zone", "heads"},
      {"levelling_class", "adjust"}, {"wells", "heads"},        {"measuring_points", "heads"},
      {"levels", "heads"},           {"sensors", "transducer"}, {"records", "transducer"},
      {"points", "adjust"},          {"sections", "adjust"},    {"gnss", "gnss-check"}};
  for (const auto& [key, command] : keys) {
    std::string flag = "--" + key;
    std::replace(flag.begin(), flag.end(), '_', '-');
    INFO(key << " -> " << command << " " << flag);
    bool found = false;
    for (const auto& o : levelhead::cli::command_options(command)) found = found || o.flag == flag;
    CHECK(found);
  }
}

TEST_CASE("a project's time zone that is no zone is named with its line", "[project][time]") {
  levelhead::testing::TempFolder tmp;
  const fs::path project = demo_project(tmp.path());
  replace_in(project, "[report]", "[time_zones]\nrecords = \"Central Time\"\n\n[report]");
  const Run run = cli({"run", project.string(), "--out", (tmp.path() / "out").string()});
  CHECK(run.code == 1);
  CHECK_THAT(run.err,
             Contains("line") && Contains("'records' = \"Central Time\" is not a time zone"));
}

TEST_CASE("keep_going in the project: the chain finishes, exits 4 and the report says why",
          "[project][rejects]") {
  levelhead::testing::TempFolder tmp;
  const fs::path project = demo_project(tmp.path());
  std::ofstream(project.parent_path() / "levels.csv", std::ios::app)
      << "MW-01,2026-10-12T09:00-06:00,deep,\n";
  std::ofstream(project, std::ios::app) << "\n[transducer]\nkeep_going = true\n";
  const fs::path out = tmp.path() / "out";
  const Run run = cli({"run", project.string(), "--out", out.string(), "--quiet"});
  CHECK(run.code == 4);
  CHECK_THAT(run.err, Contains("records were set aside in transducer"));
  CHECK_THAT(read_file(out / "transducer" / "rejects.csv"), Contains(",669,depth,"));
  CHECK_THAT(read_file(out / "report.md"),
             Contains("transducer: 1 record(s) or tape reading(s) could not be read"));
}

TEST_CASE("figure axes: round head ticks and month-start date ticks", "[report]") {
  using levelhead::report::month_ticks;
  using levelhead::report::round_ticks;
  const std::vector<double> heads = round_ticks(98.77, 99.46, 5);
  REQUIRE(heads.size() == 4);
  for (std::size_t i = 0; i < heads.size(); ++i)
    CHECK_THAT(heads[i], Catch::Matchers::WithinAbs(98.8 + 0.2 * static_cast<double>(i), 1e-9));
  CHECK(round_ticks(0.0, 1.0, 5) == std::vector<double>{0.0, 0.5, 1.0});
  CHECK(round_ticks(1.0, 1.0, 5).empty());
  // 2025-01-10 to 2026-10-11: 22 months, so every 6 months (at most 4 ticks).
  const auto at = [](const char* text) { return levelhead::parse_iso8601(text)->seconds; };
  const std::vector<double> dates =
      month_ticks(at("2025-01-10T00:00Z"), at("2026-10-11T00:00Z"), 4);
  REQUIRE(dates.size() == 3);
  CHECK(levelhead::format_utc(dates[0]) == "2025-07-01T00:00:00Z");
  CHECK(levelhead::format_utc(dates[2]) == "2026-07-01T00:00:00Z");
}

TEST_CASE("the demo's figures have no text over another, and print at 7 pt or more",
          "[report][demo]") {
  // Boxes as report::text_box estimates them from each <text> of the SVG.
  levelhead::testing::TempFolder tmp;
  REQUIRE(cli({"demo", "--out", tmp.path().string()}).code == 0);
  const std::regex text_element(
      R"re(<text x="([-0-9.]+)" y="([-0-9.]+)" font-size="([0-9.]+)" text-anchor="(\w+)"[^>]*>([^<]*)</text>)re");
  std::size_t figures = 0;
  for (const auto& entry : fs::directory_iterator(tmp.path() / "figures")) {
    const std::string svg = read_file(entry.path());
    std::smatch size;
    REQUIRE(std::regex_search(svg, size, std::regex(R"re(<svg [^>]*width="([0-9.]+)")re")));
    // Scaled to an A4 page's text width: 7 pt = 9.33 px (1 pt = 4/3 px).
    const double print_scale = std::min(1.0, 688.0 / std::stod(size[1]));
    std::vector<std::pair<levelhead::report::Box, std::string>> boxes;
    for (auto it = std::sregex_iterator(svg.begin(), svg.end(), text_element);
         it != std::sregex_iterator(); ++it) {
      const std::smatch& m = *it;
      INFO(entry.path().filename().string() << ": '" << m[5] << "' at " << m[3] << " px");
      CHECK(std::stod(m[3]) * print_scale >= 9.33);
      boxes.push_back({levelhead::report::text_box(std::stod(m[1]), std::stod(m[2]), m[5],
                                                   std::stod(m[3]), m[4]),
                       m[5]});
    }
    ++figures;
    for (std::size_t i = 0; i < boxes.size(); ++i) {
      for (std::size_t j = i + 1; j < boxes.size(); ++j) {
        INFO(entry.path().filename().string()
             << ": '" << boxes[i].second << "' and '" << boxes[j].second << "'");
        CHECK_FALSE(boxes[i].first.overlaps(boxes[j].first));
      }
    }
  }
  CHECK(figures == 5);
  // The check itself can fire: two labels 10 px apart on one line collide.
  CHECK(levelhead::report::text_box(10, 10, "MW-01", 11, "start")
            .overlaps(levelhead::report::text_box(20, 12, "PW-1", 11, "start")));
}

TEST_CASE("run --pdf prints the report with the browser's own print engine", "[project][pdf]") {
  if (std::system("command -v chromium > /dev/null 2>&1") != 0) {
    WARN("chromium is not installed (scripts/install-deps.sh --browser): not checked");
    return;
  }
  levelhead::testing::TempFolder tmp;
  const fs::path project = demo_project(tmp.path());
  const fs::path out = tmp.path() / "out";
  const Run run = cli({"run", project.string(), "--out", out.string(), "--pdf"});
  INFO(run.err);
  REQUIRE(run.code == 0);
  CHECK_THAT(run.out, Contains("report.pdf"));
  const std::string pdf = read_file(out / "report.pdf");
  CHECK(pdf.rfind("%PDF-", 0) == 0);
  // A4 pages (595 x 842 points, ISO 216), several of them.
  CHECK_THAT(
      pdf, Contains("/MediaBox [0 0 594.95996 841.91998]") || Contains("/MediaBox [0 0 595 842]"));
  const std::regex page("/Type\\s*/Page[^s]");
  CHECK(std::distance(std::sregex_iterator(pdf.begin(), pdf.end(), page), std::sregex_iterator()) >=
        5);
}
