// The bad-input corpus (fixtures/bad/cases.tsv): every case exits with its
// status, names the problem where the user can find it, leaves nothing in
// its output folder and changes no input. {copy} and {demo} are fresh copies
// of fixtures/bad and fixtures/demo, for cases that aim an output at the
// inputs: each must hold exactly what it held before.

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

const fs::path bad = fs::path(LEVELHEAD_FIXTURES_DIR) / "bad";

struct BadCase {
  std::string name, defect;
  int exit = 1;
  std::string command;
  std::vector<std::string> expected;
};

std::vector<std::string> split(const std::string& text, const std::string& separator) {
  std::vector<std::string> parts;
  std::size_t start = 0;
  while (true) {
    const std::size_t end = text.find(separator, start);
    parts.push_back(text.substr(start, end - start));
    if (end == std::string::npos) return parts;
    start = end + separator.size();
  }
}

std::vector<BadCase> load_cases() {
  std::ifstream in(bad / "cases.tsv");
  std::vector<BadCase> cases;
  for (std::string line; std::getline(in, line);) {
    if (line.empty() || line.front() == '#') continue;
    const std::vector<std::string> f = split(line, "\t");
    REQUIRE(f.size() == 5);
    cases.push_back({f[0], f[2], std::stoi(f[1]), f[3], split(f[4], " | ")});
  }
  return cases;
}

std::string replaced(std::string text, const std::string& from, const std::string& to) {
  for (std::size_t at = text.find(from); at != std::string::npos;
       at = text.find(from, at + to.size()))
    text.replace(at, from.size(), to);
  return text;
}

std::string contents(const fs::path& file) {
  std::ifstream in(file, std::ios::binary);
  std::ostringstream s;
  s << in.rdbuf();
  return s.str();
}

// Every file under `folder` (hidden ones too), by relative path, with its bytes.
std::map<std::string, std::string> snapshot(const fs::path& folder) {
  std::map<std::string, std::string> files;
  for (const auto& entry : fs::recursive_directory_iterator(folder)) {
    const std::string name = fs::relative(entry.path(), folder).string();
    files[name] = entry.is_regular_file() ? contents(entry.path()) : "(folder)";
  }
  return files;
}

}  // namespace

TEST_CASE("every case of the bad-input corpus is refused cleanly", "[errors][safety][corpus]") {
  const std::vector<BadCase> cases = load_cases();
  // Keeps the corpus from silently shrinking.
  CHECK(cases.size() >= 150);
  const std::map<std::string, std::string> inputs_before = snapshot(bad);
  const fs::path demo = fs::path(LEVELHEAD_FIXTURES_DIR) / "demo";

  for (const BadCase& c : cases) {
    levelhead::testing::TempFolder tmp;
    const fs::path out = tmp.path() / "out";
    const fs::path copy = tmp.path() / "copy", demo_copy = tmp.path() / "demo";
    fs::copy(bad, copy, fs::copy_options::recursive);
    fs::copy(demo, demo_copy, fs::copy_options::recursive);
    std::string command = replaced(c.command, "{bad}", bad.string());
    for (const auto& [placeholder, folder] :
         {std::pair{"{out}", out}, std::pair{"{copy}", copy}, std::pair{"{demo}", demo_copy}})
      command = replaced(command, placeholder, folder.string());
    std::vector<std::string> args = {"levelhead"};
    for (const std::string& word : split(command, " ")) args.push_back(word);
    std::ostringstream stdout_text, stderr_text;
    const int code = levelhead::cli::run(args, stdout_text, stderr_text);
    const std::string err = stderr_text.str();
    INFO(c.name << " (" << c.defect << "): " << err);
    CHECK(code == c.exit);
    for (const std::string& fragment : c.expected) CHECK_THAT(err, Contains(fragment));
    CHECK_THAT(err, !Contains("internal error"));
    // Nothing left behind, hidden partial files and the folder itself included.
    std::vector<std::string> left;
    if (fs::exists(out)) {
      left.push_back("the folder itself");
      for (const auto& entry : fs::recursive_directory_iterator(out))
        left.push_back(entry.path().filename().string());
    }
    CHECK(left.empty());
    CHECK(snapshot(copy) == inputs_before);
    CHECK(snapshot(demo_copy) == snapshot(demo));
  }
  CHECK(snapshot(bad) == inputs_before);
}
