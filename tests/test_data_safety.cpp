// The user's files are never harmed: no output replaces an input, whatever
// folder or file name the user gives, and a refused command leaves nothing.

#include <catch2/catch.hpp>
#include <filesystem>
#include <fstream>
#include <map>
#include <sstream>

#include "cli/app.hpp"
#include "support/temp_folder.hpp"

using Catch::Matchers::Contains;
namespace fs = std::filesystem;

namespace {

struct CliRun {
  int code;
  std::string out, err;
};

CliRun run_cli(std::vector<std::string> args) {
  args.insert(args.begin(), "levelhead");
  std::ostringstream out, err;
  const int code = levelhead::cli::run(args, out, err);
  return {code, out.str(), err.str()};
}

std::string read(const fs::path& path) {
  std::ifstream in(path, std::ios::binary);
  std::ostringstream s;
  s << in.rdbuf();
  return s.str();
}

// Every file of a folder (recursively) with its contents.
std::map<std::string, std::string> snapshot(const fs::path& folder) {
  std::map<std::string, std::string> files;
  for (const auto& entry : fs::recursive_directory_iterator(folder)) {
    if (entry.is_regular_file()) {
      files[entry.path().lexically_relative(folder).string()] = read(entry.path());
    }
  }
  return files;
}

// The demo's inputs in a folder of their own, plus the demo's run next to it.
struct DemoFolder {
  levelhead::testing::TempFolder tmp;
  fs::path inputs, run;
  DemoFolder() {
    run = tmp.path() / "run";
    const CliRun demo = run_cli({"demo", "--out", run.string()});
    REQUIRE(demo.code == 0);
    inputs = tmp.path() / "work";
    fs::copy(run / "inputs", inputs);
    fs::copy_file(run / "reduce" / "sections.csv", inputs / "sections.csv");
  }
  std::string at(const char* name) const { return (inputs / name).string(); }
};

}  // namespace

TEST_CASE("no command replaces one of its inputs, whatever --out says", "[safety]") {
  DemoFolder demo;
  const std::string here = demo.inputs.string();
  // heights.csv as the points table of a second adjustment: the first one's output.
  REQUIRE(run_cli({"adjust", "--points", demo.at("points.csv"), "--sections",
                   demo.at("sections.csv"), "--out", (demo.tmp.path() / "a").string()})
              .code == 0);
  fs::copy_file(demo.tmp.path() / "a" / "heights.csv", demo.inputs / "heights.csv");
  // A field book saved under the name reduce gives its output.
  const fs::path book = demo.inputs / "book";
  fs::create_directories(book);
  fs::copy_file(demo.inputs / "fieldbook.csv", book / "sections.csv");
  // The file the command would destroy, then its command line.
  const std::vector<std::pair<std::string, std::vector<std::string>>> cases = {
      {"epochs.csv",
       {"epochs", "--points", demo.at("points.csv"), "--sections", demo.at("epochs.csv"), "--out",
        here}},
      {"measuring_points.csv",
       {"heads", "--wells", demo.at("wells.csv"), "--mp", demo.at("measuring_points.csv"),
        "--levels", demo.at("levels.csv"), "--to", "EPSG:5703", "--crs", "EPSG:32613",
        "--references", demo.at("references.toml"), "--adjusted", demo.at("heights.csv"), "--out",
        here}},
      {"levels.csv",
       {"transducer", "--wells", demo.at("wells.csv"), "--sensors", demo.at("sensors.csv"),
        "--records", demo.at("records.csv"), "--levels", demo.at("levels.csv"), "--crs",
        "EPSG:32613", "--out", here}},
      {"heights.csv",
       {"adjust", "--points", demo.at("heights.csv"), "--sections", demo.at("sections.csv"),
        "--out", here}},
      {"sections.csv", {"reduce", (book / "sections.csv").string(), "--out", book.string()}},
      {"points.csv",
       {"convert", "--from", "EPSG:5703", "--to", "EPSG:5703", "--crs", "EPSG:32613", "--in",
        demo.at("points.csv"), "--out", demo.at("points.csv")}},
      {"gnss.csv",
       {"tie", "--site", demo.at("gnss.csv"), "--base", demo.at("points.csv"), "--name", "s",
        "--base-ref", "EPSG:5703", "--min-ties", "1", "--out", demo.at("gnss.csv")}},
  };
  for (const auto& [victim, args] : cases) {
    INFO(args.front() << " over " << victim);
    const auto before = snapshot(demo.inputs);
    const CliRun r = run_cli(args);
    INFO(r.out << r.err);
    CHECK(r.code == 1);
    CHECK_THAT(r.err, Contains("refusing to write") && Contains(victim));
    // Nothing changed and nothing was left (no partial or hidden file).
    CHECK(snapshot(demo.inputs) == before);
  }
}

TEST_CASE("diff does not write its JSON over a run's audit record", "[safety][diff]") {
  DemoFolder demo;
  const std::string record = (demo.run / "run.json").string();
  const std::string before = read(record);
  const CliRun r = run_cli({"diff", demo.run.string(), demo.run.string(), "--json", record});
  CHECK(r.code == 1);
  CHECK_THAT(r.err, Contains("refusing to write") && Contains("run.json"));
  CHECK(read(record) == before);
}

TEST_CASE("an output reached through a hard link to an input is refused", "[safety]") {
  DemoFolder demo;
  const fs::path out = demo.tmp.path() / "linked";
  fs::create_directories(out);
  fs::create_hard_link(demo.inputs / "points.csv", out / "heights.csv");
  const std::string before = read(demo.inputs / "points.csv");
  const CliRun r = run_cli({"adjust", "--points", demo.at("points.csv"), "--sections",
                            demo.at("sections.csv"), "--out", out.string()});
  CHECK(r.code == 1);
  CHECK_THAT(r.err, Contains("refusing to write"));
  CHECK(read(demo.inputs / "points.csv") == before);
}
