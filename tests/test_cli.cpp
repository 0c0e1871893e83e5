// The CLI driven in process: exit codes, messages, and all-or-nothing output.

#include <fmt/format.h>

#include <algorithm>
#include <catch2/catch.hpp>
#include <cmath>
#include <filesystem>
#include <fstream>
#include <nlohmann/json.hpp>
#include <sstream>
#include <thread>
#include <vector>

#include "cli/app.hpp"
#include "cli/terminal_progress.hpp"
#include "support/cli_run.hpp"
#include "support/temp_folder.hpp"

using Catch::Matchers::Contains;
namespace fs = std::filesystem;
using levelhead::testing::CliRun;
using levelhead::testing::run_cli;

namespace {

const fs::path bad = fs::path(LEVELHEAD_FIXTURES_DIR) / "bad";

std::vector<std::string> files_in(const fs::path& folder) {
  std::vector<std::string> names;
  if (!fs::exists(folder)) return names;
  for (const auto& entry : fs::directory_iterator(folder)) names.push_back(entry.path().filename());
  return names;
}

CliRun adjust_bad(const std::string& points, const std::string& sections, const fs::path& out) {
  return run_cli({"adjust", "--points", (bad / points).string(), "--sections",
                  (bad / sections).string(), "--out", out.string()});
}

}  // namespace

// The points and sections tables are read at once on two threads; with both
// bad, the points' error is reported, as when they were read in turn, and
// each alone is still named.
TEST_CASE("adjust with both tables bad names the points table's problem", "[cli]") {
  levelhead::testing::TempFolder tmp;
  const CliRun both =
      adjust_bad("points_height_nan.csv", "sections_bad_date.csv", tmp.path() / "a");
  CHECK(both.code == 1);
  CHECK_THAT(both.err, Contains("points_height_nan.csv"));
  const CliRun sections = adjust_bad("points.csv", "sections_bad_date.csv", tmp.path() / "b");
  CHECK(sections.code == 1);
  CHECK_THAT(sections.err, Contains("sections_bad_date.csv"));
  CHECK(files_in(tmp.path()).empty());
}

TEST_CASE("adjust writes the three outputs for a good network", "[cli]") {
  levelhead::testing::TempFolder tmp;
  const CliRun r = adjust_bad("points.csv", "sections.csv", tmp.path() / "out");
  INFO(r.err);
  REQUIRE(r.code == 0);
  CHECK_THAT(r.out, Contains("sigma0") && Contains("global test"));
  std::ifstream heights(tmp.path() / "out" / "heights.csv");
  std::string header;
  std::getline(heights, header);
  CHECK(header.rfind("id,height,sigma,", 0) == 0);
  std::ifstream residuals(tmp.path() / "out" / "residuals.csv");
  std::getline(residuals, header);
  CHECK(header.rfind("from,to,dh,residual,w,", 0) == 0);
  const auto summary = nlohmann::json::parse(std::ifstream(tmp.path() / "out" / "summary.json"));
  for (const char* key : {"sigma0", "dof", "global_test", "suspects"}) CHECK(summary.contains(key));
  for (const char* key : {"statistic", "lower", "upper", "passed"}) {
    CHECK(summary["global_test"].contains(key));
  }
  CHECK(files_in(tmp.path() / "out").size() ==
        5);  // two tables with their CSVT, the summary; no temporary file
}

TEST_CASE("usage errors exit 2", "[cli]") {
  CHECK(run_cli({}).code == 2);
  CHECK(run_cli({"adjust", "--points", "p.csv"}).code == 2);
  CHECK(
      run_cli({"adjust", "--points", "p", "--sections", "s", "--out", "o", "--alpha", "x"}).code ==
      2);
  const CliRun unit =
      run_cli({"adjust", "--points", "p", "--sections", "s", "--out", "o", "--unit", "yard"});
  CHECK(unit.code == 2);
  CHECK_THAT(unit.err, Contains("yard"));
  CHECK(run_cli({"--help"}).code == 0);
}

TEST_CASE("a mistyped command or option is named, with the nearest one", "[cli]") {
  const CliRun command = run_cli({"ajust", "--points", "p.csv"});
  CHECK(command.code == 2);
  CHECK_THAT(command.err, Contains("unknown command 'ajust'") && Contains("did you mean 'adjust'"));
  const CliRun option = run_cli({"adjust", "--pionts", "p.csv", "--sections", "s", "--out", "o"});
  CHECK(option.code == 2);
  CHECK_THAT(option.err,
             Contains("unknown option '--pionts' for 'adjust'") && Contains("'--points'"));
  CHECK_THAT(option.err, !Contains("required"));
  // Far from every name: no guess.
  const CliRun far = run_cli({"flow", "--zzzzzzzz", "1"});
  CHECK(far.code == 2);
  CHECK_THAT(far.err, Contains("unknown option '--zzzzzzzz'") && !Contains("did you mean"));
  // --name=value is the same option.
  CHECK_THAT(run_cli({"adjust", "--alpah=0.05"}).err, Contains("'--alpha'"));
}

TEST_CASE("one name per concept: renamed options say their new name", "[cli]") {
  const CliRun to = run_cli({"heads", "--to", "EPSG:5703"});
  CHECK(to.code == 2);
  CHECK_THAT(to.err, Contains("'--to' of 'heads' is now '--target'"));
  CHECK_THAT(run_cli({"loops", "--tolerance", "12"}).err,
             Contains("is now '--tolerance-mm-per-sqrt-km'"));
  // Every new name exists, and no old one is still an option.
  for (const auto& [was, now] : levelhead::cli::renamed_options()) {
    INFO(was.first << " " << was.second << " -> " << now);
    std::vector<std::string> flags;
    for (const auto& o : levelhead::cli::command_options(was.first)) flags.push_back(o.flag);
    CHECK(std::count(flags.begin(), flags.end(), now) == 1);
    CHECK(std::count(flags.begin(), flags.end(), was.second) == 0);
  }
}

TEST_CASE("every tolerance option carries its unit in its name", "[cli]") {
  for (const char* command : {"reduce", "loops", "adjust", "epochs", "convert", "tie", "gnss-check",
                              "transducer", "heads", "flow", "run", "diff"}) {
    for (const auto& o : levelhead::cli::command_options(command)) {
      if (o.flag.find("tolerance") == std::string::npos) continue;
      INFO(command << " " << o.flag);
      const auto ends = [&](const std::string& suffix) {
        return o.flag.size() > suffix.size() &&
               o.flag.compare(o.flag.size() - suffix.size(), suffix.size(), suffix) == 0;
      };
      CHECK((ends("-m") || ends("-mm") || ends("-mm-per-sqrt-km")));
    }
  }
}

TEST_CASE("PROJ's and GDAL's own messages are quoted in levelhead's, never printed raw",
          "[cli][proj]") {
  levelhead::testing::TempFolder tmp;
  const fs::path in = tmp.path() / "p.csv";
  std::ofstream(in) << "id,x,y,height\nA,512450,4409480,100.000\n";
  const CliRun unknown =
      run_cli({"convert", "--from", "EPSG:99999", "--to", "EPSG:5703", "--crs", "EPSG:32613",
               "--in", in.string(), "--out", (tmp.path() / "o.csv").string()});
  CHECK(unknown.code == 1);
  CHECK_THAT(unknown.err, Contains("'EPSG:99999'") && Contains("crs not found"));
  CHECK_THAT(unknown.err, !Contains("ERROR 1"));
}

TEST_CASE("strict mode exits 3 when a check fails, 0 otherwise", "[cli]") {
  levelhead::testing::TempFolder tmp;
  // The good corpus misclosure is 1 mm in 530 m of levelling; at 0.1 mm/sqrt(km)
  // that is far beyond expectation, so the global test fails.
  const std::vector<std::string> base = {"adjust",
                                         "--points",
                                         (bad / "points.csv").string(),
                                         "--sections",
                                         (bad / "sections.csv").string(),
                                         "--out",
                                         (tmp.path() / "o").string(),
                                         "--strict"};
  std::vector<std::string> tight = base;
  tight.insert(tight.end(), {"--mm-per-sqrt-km", "0.1"});
  CHECK(run_cli(tight).code == 3);
  CHECK(run_cli(base).code == 0);
}

TEST_CASE("demo runs on the built-in site", "[cli][demo]") {
  levelhead::testing::TempFolder tmp;
  const CliRun r = run_cli({"demo", "--out", tmp.path().string()});
  INFO(r.err);
  REQUIRE(r.code == 0);
  CHECK(fs::exists(tmp.path() / "inputs" / "points.csv"));
  CHECK(fs::exists(tmp.path() / "adjust" / "heights.csv"));
  CHECK(fs::exists(tmp.path() / "loops" / "loops.csv"));
  CHECK(fs::exists(tmp.path() / "reduce" / "setups.csv"));
  CHECK(fs::exists(tmp.path() / "heads" / "heads.gpkg"));
  CHECK(fs::exists(tmp.path() / "heads" / "event.csv"));
  const auto flow = nlohmann::json::parse(std::ifstream(tmp.path() / "flow" / "flow.json"));
  // The invented water table falls 1.2 mm/m east and 0.8 mm/m north: 1.44e-3
  // towards atan2(1.2, 0.8) = 56.3 degrees; 3 mm noise on 7 wells allows a degree.
  CHECK_THAT(flow["gradient"]["value"].get<double>(),
             Catch::Matchers::WithinAbs(1.442e-3, 0.05e-3));
  CHECK_THAT(flow["azimuth_degrees"]["value"].get<double>(), Catch::Matchers::WithinAbs(56.3, 1.5));
  // The demo field book holds a 20 mm misreading on SBM-B -> MW-04: the loops
  // through it fail, and data snooping removes it before the final adjustment.
  CHECK_THAT(r.out, Contains("FAILED") && Contains("Removed (step 1): section SBM-B -> MW-04"));
  CHECK_THAT(r.out, Contains("-> passed"));
  // Every JSON of the run says which layout it follows.
  std::size_t summaries = 0;
  for (const auto& entry : fs::recursive_directory_iterator(tmp.path())) {
    const std::string name = entry.path().filename().string();
    if (name != "summary.json" && name != "run.json" && name != "flow.json") continue;
    INFO(entry.path());
    const auto json = nlohmann::json::parse(std::ifstream(entry.path()));
    CHECK(json.value("format_version", 0) == 2);
    ++summaries;
  }
  CHECK(summaries >= 9);
}

TEST_CASE("loops writes loops.csv and exits 3 under strict when a loop fails", "[cli][loops]") {
  levelhead::testing::TempFolder tmp;
  const std::vector<std::string> base = {"loops",
                                         "--points",
                                         (bad / "points.csv").string(),
                                         "--sections",
                                         (bad / "sections.csv").string(),
                                         "--out",
                                         (tmp.path() / "o").string(),
                                         "--strict"};
  const CliRun ok = run_cli(base);
  INFO(ok.err);
  REQUIRE(ok.code == 0);
  std::ifstream loops(tmp.path() / "o" / "loops.csv");
  std::string header, row;
  std::getline(loops, header);
  std::getline(loops, row);
  CHECK(header.rfind("loop,points,length,misclosure,tolerance,passed", 0) == 0);
  CHECK_THAT(row, Contains("BM1>A>B>BM1") || Contains("A>B>BM1>A") || Contains("B>BM1>A>B"));
  // Sections no loop or repeat checks are listed in a table, the summary
  // keeping their counts.
  const std::string weak =
      levelhead::testing::read_file(tmp.path() / "o" / "unchecked_sections.csv");
  CHECK(weak.rfind("from,to,row,in_loop,observed_once\n", 0) == 0);
  const auto summary = nlohmann::json::parse(std::ifstream(tmp.path() / "o" / "summary.json"));
  CHECK(std::count(weak.begin(), weak.end(), '\n') - 1 >=
        summary["counts"]["single_observations"].get<long>());
  CHECK_FALSE(summary.contains("single_observations"));
  // The corpus loop misses by 1 mm over 530 m; 1 mm/sqrt(km) allows 0.73 mm.
  std::vector<std::string> tight = base;
  tight.insert(tight.end(), {"--tolerance-mm-per-sqrt-km", "1"});
  CHECK(run_cli(tight).code == 3);
  std::vector<std::string> both = base;
  both.insert(both.end(), {"--tolerance-mm-per-sqrt-km", "1", "--levelling-class", "fgcc-third"});
  CHECK(run_cli(both).code == 2);
  std::vector<std::string> unknown = base;
  unknown.insert(unknown.end(), {"--levelling-class", "best"});
  const CliRun r = run_cli(unknown);
  CHECK(r.code == 2);
  CHECK_THAT(r.err, Contains("fgcc-second-ii"));
}

TEST_CASE("reduce writes sections ready for adjust, and bad field books exit 1",
          "[cli][fieldbook]") {
  levelhead::testing::TempFolder tmp;
  const fs::path book = fs::path(LEVELHEAD_FIXTURES_DIR) / "fieldbook" / "hand_worked.csv";
  const CliRun ok = run_cli({"reduce", book.string(), "--out", (tmp.path() / "r").string()});
  INFO(ok.err);
  REQUIRE(ok.code == 0);
  CHECK(files_in(tmp.path() / "r").size() == 5);  // sections, setups, their CSVT, summary
  std::ifstream sections(tmp.path() / "r" / "sections.csv");
  std::string header;
  std::getline(sections, header);
  CHECK(header.rfind("from,to,dh,length,setups,runs,", 0) == 0);

  struct Case {
    const char* file;
    std::vector<const char*> names;
  };
  for (const Case& c :
       std::vector<Case>{{"fieldbook_missing_fore.csv", {"setup 1", "row 2", "no fore sight"}},
                         {"fieldbook_text_reading.csv", {"row 3", "column 'reading'", "'1.6OO0'"}},
                         {"fieldbook_open_run.csv", {"row 5", "must close on a named point"}}}) {
    const fs::path out = tmp.path() / c.file;
    const CliRun r = run_cli({"reduce", (bad / c.file).string(), "--out", out.string()});
    INFO(c.file << ": " << r.err);
    CHECK(r.code == 1);
    for (const char* name : c.names) CHECK_THAT(r.err, Contains(name));
    CHECK(files_in(out).empty());
  }
  CHECK(run_cli({"reduce", book.string(), "--out", "x", "--collimation-mm-per-m", "0.1",
                 "--collimation-arcsec", "2"})
            .code == 2);
}

TEST_CASE("convert refuses a missing grid and writes nothing", "[cli][proj]") {
  levelhead::testing::TempFolder tmp;
  const fs::path in = tmp.path() / "gnss.csv";
  std::ofstream(in) << "id,x,y,height,sigma\nG1,10.0,45.0,100.000,0.020\nG2,11.0,45.5,120.000,\n";
  const fs::path out = tmp.path() / "out" / "converted.csv";
  const CliRun refused = run_cli({"convert", "--from", "EPSG:4979", "--to", "EPSG:4326+3855",
                                  "--in", in.string(), "--out", out.string()});
  CHECK(refused.code == 1);
  CHECK_THAT(refused.err, Contains("us_nga_egm08_25.tif") && Contains("ballpark"));
  CHECK(files_in(out.parent_path()).empty());

  const CliRun ok = run_cli({"convert", "--from", "EPSG:4979", "--to", "EPSG:4326+5773", "--in",
                             in.string(), "--out", out.string()});
  INFO(ok.err);
  REQUIRE(ok.code == 0);
  std::ifstream table(out);
  std::string header, first;
  std::getline(table, header);
  std::getline(table, first);
  CHECK(header == "id,x,y,height,sigma,sigma_relative,common,reference,transform,flags");
  CHECK_THAT(first, Contains("EPSG:4326+5773") && Contains("EGM96"));
  const auto summary =
      nlohmann::json::parse(std::ifstream(tmp.path() / "out" / "converted.summary.json"));
  CHECK(summary["operations"][0]["grids"][0]["sha256"].get<std::string>().size() == 64);
  CHECK(summary["counts"]["converted"] == 2);
}

TEST_CASE("convert --out - writes the table on standard output, the messages on stderr",
          "[cli][proj]") {
  // NAVD88 metres to NAVD88 US survey feet: 100 m = 328.08333 ftUS (US survey
  // foot 1200/3937 m, US Federal Register, 1959).
  levelhead::testing::TempFolder tmp;
  const fs::path in = tmp.path() / "p.csv";
  std::ofstream(in) << "id,x,y,height,sigma\nA,-100.0,40.0,100.000,0.003048\n";
  const std::vector<std::string> base = {"convert",   "--from", "EPSG:5703", "--to",
                                         "EPSG:6360", "--crs",  "EPSG:4326", "--in",
                                         in.string(), "--out",  "-"};
  const CliRun piped = run_cli(base);
  INFO(piped.err);
  REQUIRE(piped.code == 0);
  CHECK_THAT(piped.out, Contains("id,x,y,height,") && Contains("A,-100.0,40.0,328.08333,"));
  CHECK_THAT(piped.err, Contains("Converted 1 of 1") && Contains("standard output"));
  CHECK(files_in(tmp.path()).size() == 1);  // no summary unless asked for

  std::vector<std::string> with_summary = base;
  with_summary.insert(with_summary.end(), {"--summary", (tmp.path() / "s.json").string()});
  REQUIRE(run_cli(with_summary).code == 0);
  const auto summary = nlohmann::json::parse(std::ifstream(tmp.path() / "s.json"));
  CHECK(summary["counts"]["converted"] == 1);

  SECTION("a failure writes nothing to standard output") {
    std::ofstream(in) << "id,x,y,height,sigma\nA,-100.0,40.0,100.000,-1\n";
    const CliRun bad_sigma = run_cli(base);
    CHECK(bad_sigma.code == 1);
    CHECK(bad_sigma.out.empty());
    CHECK_THAT(bad_sigma.err, Contains("row 2, column 'sigma'"));
  }
}

TEST_CASE("convert writes heights in the unit of the target reference", "[cli][proj][units]") {
  // 100 m in NAVD88 (EPSG:5703) is 100 * 3937 / 1200 = 328.08333 US survey
  // feet in NAVD88 height (ftUS), EPSG:6360 (US survey foot: 1200/3937 m,
  // US Federal Register, 1959); the datum is the same, only the unit changes.
  levelhead::testing::TempFolder tmp;
  const fs::path in = tmp.path() / "p.csv";
  std::ofstream(in) << "id,x,y,height,sigma\nA,-100.0,40.0,100.000,0.003048\n";
  const fs::path feet = tmp.path() / "feet.csv";
  const CliRun to_feet = run_cli({"convert", "--from", "EPSG:5703", "--to", "EPSG:6360", "--crs",
                                  "EPSG:4326", "--in", in.string(), "--out", feet.string()});
  INFO(to_feet.err);
  REQUIRE(to_feet.code == 0);
  CHECK_THAT(to_feet.out, Contains("written in us-ft"));
  std::string header, row;
  std::ifstream feet_table(feet);
  std::getline(feet_table, header);
  std::getline(feet_table, row);
  CHECK_THAT(row, Contains("A,-100.0,40.0,328.08333,0.01000,0.01000,,EPSG:6360"));
  const auto summary = nlohmann::json::parse(std::ifstream(tmp.path() / "feet.summary.json"));
  CHECK(summary["units"] == "us-ft");

  // Back again: read in the source's feet, written in metres; the columns
  // the first conversion added are replaced, not repeated.
  const fs::path back = tmp.path() / "back.csv";
  const CliRun to_metres = run_cli({"convert", "--from", "EPSG:6360", "--to", "EPSG:5703", "--crs",
                                    "EPSG:4326", "--in", feet.string(), "--out", back.string()});
  REQUIRE(to_metres.code == 0);
  std::ifstream back_table(back);
  std::getline(back_table, header);
  std::getline(back_table, row);
  CHECK(header == "id,x,y,height,sigma,sigma_relative,common,reference,transform,flags");
  CHECK_THAT(row, Contains("A,-100.0,40.0,100.00000,0.00305,0.00305,,EPSG:5703"));

  // --out-unit overrides the target's unit.
  const CliRun metres =
      run_cli({"convert", "--from", "EPSG:5703", "--to", "EPSG:6360", "--crs", "EPSG:4326", "--in",
               in.string(), "--out", feet.string(), "--out-unit", "m"});
  REQUIRE(metres.code == 0);
  CHECK_THAT(metres.out, Contains("written in m"));
}

TEST_CASE("known heights labelled in a foot reference must come from a table in feet",
          "[cli][units]") {
  // EPSG:6360 is NAVD88 in US survey feet (EPSG dataset): 328.08333 in a
  // table read in metres would be 328 m, a factor 3.28 off.
  levelhead::testing::TempFolder tmp;
  const fs::path points = tmp.path() / "points.csv", sections = tmp.path() / "sections.csv";
  std::ofstream(points) << "id,height,sigma,datum\nA,328.08333,,EPSG:6360\nB,,,\n";
  std::ofstream(sections) << "from,to,dh,length\nA,B,3.28083,500\n";
  const CliRun metres = run_cli({"adjust", "--points", points.string(), "--sections",
                                 sections.string(), "--out", (tmp.path() / "m").string()});
  CHECK(metres.code == 1);
  CHECK_THAT(metres.err, Contains("points.csv, row 2, column 'datum'") &&
                             Contains("--unit us-ft") && Contains("EPSG:5703"));
  CHECK_FALSE(fs::exists(tmp.path() / "m"));
  const CliRun feet =
      run_cli({"adjust", "--points", points.string(), "--sections", sections.string(), "--unit",
               "us-ft", "--out", (tmp.path() / "ft").string()});
  INFO(feet.err);
  CHECK(feet.code == 0);

  // gnss-check: a levelled reference in feet over a table read in metres.
  const fs::path gnss_table = tmp.path() / "gnss.csv";
  std::ofstream(gnss_table) << "id,x,y,height,sigma\nA,-100.0,40.0,70.0,0.02\n";
  const CliRun gnss =
      run_cli({"gnss-check", "--levelled", points.string(), "--levelled-ref", "EPSG:6360", "--gnss",
               gnss_table.string(), "--crs", "EPSG:4326", "--out", (tmp.path() / "g").string()});
  CHECK(gnss.code != 0);
  CHECK_THAT(gnss.err, Contains("--levelled-ref") && Contains("US survey foot"));
}

TEST_CASE("tie writes a reference that convert then uses", "[cli][tie]") {
  levelhead::testing::TempFolder tmp;
  std::ofstream(tmp.path() / "site.csv") << "id,x,y,height,sigma\nA,0,0,10.000,0.001\n"
                                            "B,100,0,11.000,0.001\nC,0,100,12.000,0.001\n"
                                            "D,100,100,13.000,0.001\nW,50,50,9.000,0.002\n";
  std::ofstream(tmp.path() / "base.csv") << "id,height,sigma\nA,105.2500,0.001\nB,106.2512,0.001\n"
                                            "C,107.2489,0.001\nD,108.2502,0.001\n";
  const fs::path refs = tmp.path() / "refs" / "references.toml";
  const CliRun tie = run_cli({"tie", "--site", (tmp.path() / "site.csv").string(), "--base",
                              (tmp.path() / "base.csv").string(), "--name", "site-1998",
                              "--base-ref", "EPSG:5703", "--out", refs.string()});
  INFO(tie.err);
  REQUIRE(tie.code == 0);
  CHECK(fs::exists(tmp.path() / "refs" / "site-1998.ties.csv"));
  const CliRun conv = run_cli(
      {"convert", "--from", "site-1998", "--to", "EPSG:5703", "--references", refs.string(), "--in",
       (tmp.path() / "site.csv").string(), "--out", (tmp.path() / "converted.csv").string()});
  INFO(conv.err);
  REQUIRE(conv.code == 0);
  std::ifstream table(tmp.path() / "converted.csv");
  std::string line, last;
  while (std::getline(table, line)) last = line;
  // W: 9.000 + mean offset (95.25 + 95.2512 + 95.2489 + 95.2502) / 4 = 104.250075
  // (its last digit rounds either way in print: compare to 0.1 mm).
  CHECK_THAT(last, Contains("W,50,50,104.2500"));
}

TEST_CASE("epochs: one sections table with an epoch column, outputs and --strict",
          "[cli][epochs]") {
  levelhead::testing::TempFolder tmp;
  std::ofstream(tmp.path() / "points.csv") << "id,height,datum,kind\nA,50.000,EPSG:5703,"
                                              "benchmark\nB,,,benchmark\nC,,,benchmark\nP,,,well\n";
  // Invented: C rises 6 mm between the epochs, P sinks 5 mm; 1 mm sections.
  std::ofstream(tmp.path() / "sections.csv")
      << "epoch,from,to,dh,sigma,date\n"
         "2025,A,B,1.0002,0.001,2025-05-02\n2025,B,C,-0.4003,0.001,2025-05-02\n"
         "2025,C,A,-0.6001,0.001,2025-05-03\n2025,B,P,0.2001,0.001,2025-05-03\n"
         "2025,P,C,-0.6002,0.001,2025-05-03\n"
         "2026,A,B,1.0001,0.001,2026-05-04\n2026,B,C,-0.3941,0.001,2026-05-04\n"
         "2026,C,A,-0.6063,0.001,2026-05-04\n2026,B,P,0.1950,0.001,2026-05-05\n"
         "2026,P,C,-0.5889,0.001,2026-05-05\n";
  const fs::path out = tmp.path() / "out";
  const auto args = [&](bool strict) {
    std::vector<std::string> a = {"epochs",
                                  "--points",
                                  (tmp.path() / "points.csv").string(),
                                  "--sections",
                                  (tmp.path() / "sections.csv").string(),
                                  "--out",
                                  out.string()};
    if (strict) a.push_back("--strict");
    return a;
  };
  const CliRun run = run_cli(args(false));
  INFO(run.out << run.err);
  REQUIRE(run.code == 0);
  CHECK_THAT(run.out, Contains("C            moving (step 1: Omega "));
  for (const char* name : {"epochs.csv", "reference_stability.csv", "displacements.csv",
                           "rates.csv", "heights_by_epoch.csv", "summary.json"}) {
    CHECK(fs::exists(out / name));
  }
  std::ifstream summary_file(out / "summary.json");
  const auto summary = nlohmann::json::parse(summary_file);
  CHECK(summary["held_mark"] == "A");
  // The moving mark names the runner-up of its step, on the console and in
  // the JSON alike; the stable ones have none.
  for (const auto& mark : summary["marks"]) {
    CAPTURE(mark.dump());
    if (mark["mark"] == "C") {
      CHECK(mark["next_best"].is_string());
      CHECK(mark["next_best_omega"].is_number());
      CHECK_THAT(run.out, Contains(fmt::format("leaving out {} instead",
                                               mark["next_best"].get<std::string>())));
    } else {
      CHECK(mark["next_best"].is_null());
      CHECK(mark["next_best_omega"].is_null());
    }
  }
  CHECK(summary["congruence_tests"][0]["passed"] == false);
  CHECK(summary["congruence_tests"].back()["passed"] == true);
  CHECK(run_cli(args(true)).code == 3);
}

TEST_CASE("epochs: a mark missing from the points table is a clear error", "[cli][epochs]") {
  levelhead::testing::TempFolder tmp;
  std::ofstream(tmp.path() / "points.csv") << "id\nA\nB\n";
  std::ofstream(tmp.path() / "e1.csv") << "from,to,dh,sigma,date\nA,B,1.0,0.001,2025-05-02\n";
  std::ofstream(tmp.path() / "e2.csv") << "from,to,dh,sigma,date\nA,B,1.0,0.001,2026-05-02\n";
  const CliRun run =
      run_cli({"epochs", "--points", (tmp.path() / "points.csv").string(), "--sections",
               (tmp.path() / "e1.csv").string(), "--sections", (tmp.path() / "e2.csv").string(),
               "--marks", "A,X", "--out", (tmp.path() / "out").string()});
  CHECK(run.code == 1);
  CHECK_THAT(run.err, Contains("'X' is not in the points table"));
  CHECK_FALSE(fs::exists(tmp.path() / "out" / "summary.json"));
}

TEST_CASE("the progress line of a long stage, and its estimate", "[cli][progress]") {
  using levelhead::cli::progress_line;
  CHECK(progress_line("reading records.csv", 0.4, 10.0) ==
        "reading records.csv: 40 % (about 15 s left)");
  CHECK(progress_line("t", 0.1, 30.0) == "t: 10 % (about 5 min left)");
  CHECK(progress_line("t", 0.005, 30.0) == "t: 0 %");  // too early to say
  CHECK(progress_line("t", 0.5, 0.5) == "t: 50 %");    // the first second
  CHECK(progress_line("t", 1.0, 30.0) == "t: 100 %");

  // Shown only once a task has run a second, then erased when done.
  std::ostringstream terminal;
  levelhead::cli::TerminalProgress progress(terminal);
  progress.report("t", 0.0);
  progress.report("t", 0.2);
  CHECK(terminal.str().empty());
  std::this_thread::sleep_for(std::chrono::milliseconds(1050));
  progress.report("t", 0.5);
  // About the second it took so far (a loaded machine may take longer).
  CHECK_THAT(terminal.str(), Contains("\rt: 50 % (about ") && Contains(" s left)"));
  progress.done("t");
  CHECK(terminal.str().back() == '\r');
}

namespace {
// NAVD88 heights in metres (EPSG:5703) to US survey feet (EPSG:6360), x and y
// in EPSG:4326; the run must succeed.
void convert_navd88_metres_to_feet(const fs::path& in, const fs::path& out) {
  const CliRun run = run_cli({"convert", "--from", "EPSG:5703", "--to", "EPSG:6360", "--crs",
                              "EPSG:4326", "--in", in.string(), "--out", out.string(), "--quiet"});
  INFO(run.err);
  REQUIRE(run.code == 0);
}
}  // namespace

TEST_CASE("convert writes a table longer than one chunk row for row", "[cli][proj][units]") {
  // 70 000 rows: converted and written in two chunks of 65 536 and the rest.
  // Every 997th row has no height and is copied as it is. US survey foot:
  // 1200/3937 m (US Federal Register, 1959), as in the test above.
  levelhead::testing::TempFolder tmp;
  const fs::path in = tmp.path() / "many.csv";
  {
    std::ofstream table(in);
    table << "id,x,y,height\n";
    for (int i = 0; i < 70000; ++i) {
      table << 'P' << i << ",-100.0,40.0,";
      if (i % 997 != 0) table << fmt::format("{:.3f}", 100.0 + 0.001 * i);
      table << '\n';
    }
  }
  const fs::path out = tmp.path() / "feet.csv";
  convert_navd88_metres_to_feet(in, out);
  std::ifstream table(out);
  std::string line;
  std::getline(table, line);
  CHECK(line == "id,x,y,height,sigma,sigma_relative,common,reference,transform,flags");
  int rows = 0, mismatches = 0;
  while (std::getline(table, line)) {
    const int i = rows++;
    std::vector<std::string> cells;
    std::stringstream fields(line);
    for (std::string cell; std::getline(fields, cell, ',');) cells.push_back(cell);
    bool ok = cells.size() >= 8 && cells[0] == fmt::format("P{}", i);
    if (ok && i % 997 == 0) {
      ok = cells[3].empty() && cells[7].empty();  // copied, nothing added
    } else if (ok) {
      // Written to 5 decimals: within half a unit of the last decimal, and
      // a hair for the two ways of computing it.
      const double expected = (100.0 + 0.001 * i) * 3937.0 / 1200.0;
      ok = std::abs(std::stod(cells[3]) - expected) < 0.51e-5 && cells[7] == "EPSG:6360";
    }
    mismatches += !ok;
  }
  CHECK(rows == 70000);
  CHECK(mismatches == 0);
  const auto summary = nlohmann::json::parse(std::ifstream(tmp.path() / "feet.summary.json"));
  CHECK(summary["counts"]["points_with_height"] == 70000 - 71);  // 0, 997, ..., 69790
  CHECK(summary["counts"]["converted"] == 70000 - 71);
}

TEST_CASE("convert of a table with a header alone writes the header", "[cli][proj]") {
  levelhead::testing::TempFolder tmp;
  const fs::path in = tmp.path() / "empty.csv";
  std::ofstream(in) << "id,x,y,height\n";
  const fs::path out = tmp.path() / "out.csv";
  convert_navd88_metres_to_feet(in, out);
  std::ifstream table(out);
  std::string header, row;
  std::getline(table, header);
  CHECK(header == "id,x,y,height,sigma,sigma_relative,common,reference,transform,flags");
  CHECK_FALSE(std::getline(table, row));
}
