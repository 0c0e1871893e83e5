// The user's files are never harmed: no output replaces an input, whatever
// folder or file name the user gives, and a refused command leaves nothing.

#include <fcntl.h>
#include <signal.h>
#include <sys/file.h>
#include <sys/wait.h>
#include <unistd.h>

#include <catch2/catch.hpp>
#include <filesystem>
#include <fstream>
#include <map>
#include <nlohmann/json.hpp>
#include <sstream>

#include "cli/app.hpp"
#include "support/cli_run.hpp"
#include "support/temp_folder.hpp"

using Catch::Matchers::Contains;
namespace fs = std::filesystem;
using levelhead::testing::CliRun;
using levelhead::testing::read_file;
using levelhead::testing::run_cli;

namespace {

// Every file of a folder (recursively) with its contents.
std::map<std::string, std::string> snapshot(const fs::path& folder) {
  std::map<std::string, std::string> files;
  for (const auto& entry : fs::recursive_directory_iterator(folder)) {
    if (entry.is_regular_file()) {
      files[entry.path().lexically_relative(folder).string()] = read_file(entry.path());
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
       {"heads", "--wells", demo.at("wells.csv"), "--measuring-points",
        demo.at("measuring_points.csv"), "--levels", demo.at("levels.csv"), "--target", "EPSG:5703",
        "--crs", "EPSG:32613", "--references", demo.at("references.toml"), "--adjusted",
        demo.at("heights.csv"), "--out", here}},
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
  const std::string before = read_file(record);
  const CliRun r = run_cli({"diff", demo.run.string(), demo.run.string(), "--json", record});
  CHECK(r.code == 1);
  CHECK_THAT(r.err, Contains("refusing to write") && Contains("run.json"));
  CHECK(read_file(record) == before);
}

TEST_CASE("an output reached through a hard link to an input is refused", "[safety]") {
  DemoFolder demo;
  const fs::path out = demo.tmp.path() / "linked";
  fs::create_directories(out);
  fs::create_hard_link(demo.inputs / "points.csv", out / "heights.csv");
  const std::string before = read_file(demo.inputs / "points.csv");
  const CliRun r = run_cli({"adjust", "--points", demo.at("points.csv"), "--sections",
                            demo.at("sections.csv"), "--out", out.string()});
  CHECK(r.code == 1);
  CHECK_THAT(r.err, Contains("refusing to write"));
  CHECK(read_file(demo.inputs / "points.csv") == before);
}

TEST_CASE("a run replaces only its own kind of folder", "[safety][project]") {
  DemoFolder demo;
  const std::string project = demo.at("project.toml");
  const fs::path out = demo.tmp.path() / "out";

  SECTION("the demo's folder belongs to the demo: another project needs --replace") {
    const CliRun r = run_cli({"run", project, "--out", demo.run.string(), "--quiet"});
    CHECK(r.code == 1);
    CHECK_THAT(r.err, Contains("holds the run of another project") && Contains("--replace"));
    CHECK(fs::exists(demo.run / "inputs" / "project.toml"));
    CHECK(run_cli({"run", project, "--out", demo.run.string(), "--quiet", "--replace"}).code == 0);
    CHECK_FALSE(fs::exists(demo.run / "inputs"));
  }
  SECTION("the same project's earlier run is replaced without asking") {
    REQUIRE(run_cli({"run", project, "--out", out.string(), "--quiet"}).code == 0);
    fs::remove(out / "flow" / "flow.json");
    CHECK(run_cli({"run", project, "--out", out.string(), "--quiet"}).code == 0);
    CHECK(fs::exists(out / "flow" / "flow.json"));
  }
  SECTION("a folder of the user's own files is never replaced") {
    fs::create_directories(out);
    std::ofstream(out / "notes.txt") << "field notes\n";
    for (const bool replace : {false, true}) {
      std::vector<std::string> args = {"run", project, "--out", out.string(), "--quiet"};
      if (replace) args.push_back("--replace");
      const CliRun r = run_cli(args);
      CHECK(r.code == 1);
      CHECK_THAT(r.err, Contains("not the output of a levelhead run") && Contains("notes.txt"));
      CHECK(read_file(out / "notes.txt") == "field notes\n");
    }
  }
  SECTION("a folder holding the run's inputs is refused") {
    const CliRun r = run_cli({"run", project, "--out", demo.inputs.string(), "--quiet"});
    CHECK(r.code == 1);
    CHECK_THAT(r.err, Contains("holds the input"));
    CHECK(fs::exists(demo.inputs / "project.toml"));
  }
  SECTION("'.' is refused: a run needs a folder of its own") {
    const CliRun r = run_cli({"run", project, "--out", ".", "--quiet"});
    CHECK(r.code == 1);
    CHECK_THAT(r.err, Contains("cannot be a run's output folder"));
  }
}

TEST_CASE("a second run into a folder being written is refused", "[safety][project]") {
  DemoFolder demo;
  const fs::path out = demo.tmp.path() / "out";
  // Another process's lock, as a run holds it (flock on the lock file beside the folder).
  const fs::path lock = demo.tmp.path() / ".out.lock";
  const int fd = ::open(lock.c_str(), O_RDWR | O_CREAT, 0644);
  REQUIRE(fd >= 0);
  REQUIRE(::write(fd, "4242", 4) == 4);
  const pid_t child = ::fork();
  if (child == 0) {
    // flock is held per open file: the child takes it and waits to be killed.
    ::flock(fd, LOCK_EX);
    ::pause();
    ::_exit(0);
  }
  // Wait until the child holds the lock.
  const int probe = ::open(lock.c_str(), O_RDWR);
  while (::flock(probe, LOCK_EX | LOCK_NB) == 0) {
    ::flock(probe, LOCK_UN);
    ::usleep(1000);
  }
  ::close(probe);
  const CliRun r = run_cli({"run", demo.at("project.toml"), "--out", out.string(), "--quiet"});
  ::kill(child, SIGKILL);
  ::waitpid(child, nullptr, 0);
  ::close(fd);
  CHECK(r.code == 1);
  CHECK_THAT(r.err, Contains("another levelhead run (process 4242) is writing"));
  CHECK_FALSE(fs::exists(out));
}

TEST_CASE("a run killed midway is undone by the next run into the folder", "[safety][project]") {
  DemoFolder demo;
  const std::string project = demo.at("project.toml");
  const fs::path out = demo.tmp.path() / "out";
  const fs::path set_aside = demo.tmp.path() / ".out.previous";
  REQUIRE(run_cli({"run", project, "--out", out.string(), "--quiet"}).code == 0);
  const auto complete = snapshot(out);
  // What a kill leaves: the complete run set aside, a partial one in its place.
  const auto kill_midway = [&] {
    fs::rename(out, set_aside);
    fs::create_directories(out / "adjust");
    std::ofstream(out / ".levelhead-run") << R"({"project":"x","state":"running"})" << '\n';
    std::ofstream(out / "adjust" / "heights.csv") << "id,height,sigma\n";
  };
  SECTION("a run that then fails leaves the complete run as it was") {
    kill_midway();
    std::ofstream(demo.inputs / "levels.csv", std::ios::app) << "MW-01,2026-10-12T09:00,deep,\n";
    const CliRun r = run_cli({"run", project, "--out", out.string(), "--quiet"});
    CHECK(r.code == 1);
    CHECK(snapshot(out) == complete);
    CHECK_FALSE(fs::exists(set_aside));
  }
  SECTION("a run that completes replaces it") {
    kill_midway();
    CHECK(run_cli({"run", project, "--out", out.string(), "--quiet"}).code == 0);
    CHECK_FALSE(fs::exists(set_aside));
    CHECK(read_file(out / "adjust" / "heights.csv") == complete.at("adjust/heights.csv"));
  }
}

TEST_CASE("diff says what it could not compare instead of 'the runs agree'", "[safety][diff]") {
  DemoFolder demo;
  const fs::path before = demo.tmp.path() / "before", after = demo.tmp.path() / "after";
  REQUIRE(run_cli({"run", demo.at("project.toml"), "--out", before.string(), "--quiet"}).code == 0);
  fs::copy(before, after, fs::copy_options::recursive);
  REQUIRE_THAT(run_cli({"diff", before.string(), after.string()}).out, Contains("The runs agree"));
  // The same edit of a file, with and without the run's checksums in run.json.
  const auto drop_row = [&](const fs::path& file, const std::string& start) {
    std::string text = read_file(file);
    const auto at = text.find("\n" + start);
    REQUIRE(at != std::string::npos);
    text.erase(at + 1, text.find('\n', at + 1) - at);
    std::ofstream(file, std::ios::binary) << text;
  };
  SECTION("a point dropped from heights.csv") {
    drop_row(after / "adjust" / "heights.csv", "MW-05,");
    const CliRun r = run_cli({"diff", before.string(), after.string()});
    CHECK_THAT(r.out, !Contains("The runs agree"));
    CHECK_THAT(r.out, Contains("NEW adjust/heights.csv: changed since the run"));
  }
  SECTION("a point missing from a run without output checksums") {
    for (const fs::path& run : {before, after}) {
      auto record = nlohmann::json::parse(read_file(run / "run.json"));
      record.erase("outputs");
      std::ofstream(run / "run.json") << record.dump(2);
    }
    drop_row(after / "adjust" / "heights.csv", "MW-05,");
    const CliRun r = run_cli({"diff", before.string(), after.string()});
    CHECK_THAT(r.out, Contains("Adjusted heights only in OLD: MW-05"));
    CHECK_THAT(r.out, Contains("no output checksums"));
  }
  SECTION("a file cut short") {
    fs::resize_file(after / "heads" / "heads.csv",
                    fs::file_size(after / "heads" / "heads.csv") / 2);
    const CliRun r = run_cli({"diff", before.string(), after.string()});
    CHECK_THAT(r.out, Contains("NEW heads/heads.csv: changed since the run"));
  }
  SECTION("a file removed") {
    fs::remove(before / "heads" / "measuring_points.csv");
    const CliRun r = run_cli({"diff", before.string(), after.string()});
    CHECK_THAT(r.out, Contains("OLD heads/measuring_points.csv: missing"));
  }
  SECTION("a run.json without a part it needs is named, not a crash") {
    auto record = nlohmann::json::parse(read_file(after / "run.json"));
    record.erase("settings_changed");
    std::ofstream(after / "run.json") << record.dump(2);
    const CliRun r = run_cli({"diff", before.string(), after.string()});
    CHECK(r.code == 1);
    CHECK_THAT(r.err, Contains("'settings_changed' is missing"));
    CHECK_THAT(r.err, !Contains("internal error"));
  }
}

TEST_CASE("text that is not UTF-8 is refused at the edge, naming its place", "[safety][table]") {
  levelhead::testing::TempFolder tmp;
  const fs::path sections = fs::path(LEVELHEAD_FIXTURES_DIR) / "bad" / "sections.csv";
  const auto adjust = [&](const fs::path& points) {
    return run_cli({"adjust", "--points", points.string(), "--sections", sections.string(), "--out",
                    (tmp.path() / "out").string()});
  };
  SECTION("Latin-1 in a point id") {
    const fs::path points = tmp.path() / "latin1.csv";
    std::ofstream(points, std::ios::binary) << "id,height,sigma\nA,10.0,\nSt\xE9phane,11.0,0.01\n";
    const CliRun r = adjust(points);
    CHECK(r.code == 1);
    CHECK_THAT(r.err, Contains("line 3") && Contains("0xE9") && Contains("UTF-8"));
    CHECK_FALSE(fs::exists(tmp.path() / "out" / "summary.json"));
  }
  SECTION("UTF-16 is named as such") {
    const fs::path points = tmp.path() / "utf16.csv";
    std::ofstream(points, std::ios::binary) << std::string("\xFF\xFEi\0d\0\n\0", 8);
    const CliRun r = adjust(points);
    CHECK(r.code == 1);
    CHECK_THAT(r.err, Contains("UTF-16"));
  }
  SECTION("a Latin-1 folder name reaches the JSON summary without a crash") {
    const fs::path folder = tmp.path() / "d\xE9p\xF4t";
    fs::create_directories(folder);
    fs::copy_file(fs::path(LEVELHEAD_FIXTURES_DIR) / "bad" / "points.csv", folder / "points.csv");
    const CliRun r = adjust(folder / "points.csv");
    INFO(r.err);
    CHECK(r.code == 0);
    CHECK(nlohmann::json::parse(read_file(tmp.path() / "out" / "summary.json")).is_object());
  }
}

TEST_CASE("malformed numbers and absurd tables are refused", "[safety][table]") {
  levelhead::testing::TempFolder tmp;
  const fs::path sections = fs::path(LEVELHEAD_FIXTURES_DIR) / "bad" / "sections.csv";
  const fs::path points = tmp.path() / "points.csv";
  const auto adjust = [&] {
    return run_cli({"adjust", "--points", points.string(), "--sections", sections.string(), "--out",
                    (tmp.path() / "out").string()});
  };
  SECTION("a plus before a minus") {
    std::ofstream(points) << "id,height,sigma\nA,+-0.4499,\n";
    const CliRun r = adjust();
    CHECK(r.code == 1);
    CHECK_THAT(r.err, Contains("'+-0.4499'") && Contains("expected a number"));
  }
  SECTION("a header of 100,000 columns") {
    std::string header = "id";
    for (int i = 0; i < 100000; ++i) header += ",c" + std::to_string(i);
    std::ofstream(points) << header << "\nA,1\n";
    const CliRun r = adjust();
    CHECK(r.code == 1);
    CHECK_THAT(r.err, Contains("100001 columns"));
  }
  SECTION("a 10 MB value is not echoed whole") {
    std::ofstream(points) << "id,height,sigma\nA," << std::string(10'000'000, 'x') << ",\n";
    const CliRun r = adjust();
    CHECK(r.code == 1);
    CHECK(r.err.size() < 2000);
    CHECK_THAT(r.err, Contains("(10000000 bytes in all)") && Contains("column 'height'"));
  }
}
