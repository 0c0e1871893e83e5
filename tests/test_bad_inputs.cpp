// The bad-input corpus (fixtures/bad/cases.tsv): every case exits with its
// status, names the problem where the user can find it, leaves nothing in
// its output folder and changes no input.

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

}  // namespace

TEST_CASE("every case of the bad-input corpus is refused cleanly", "[errors][safety][corpus]") {
  const std::vector<BadCase> cases = load_cases();
  // The issue that started the corpus asks for it to grow past 150 cases;
  // this keeps it from silently shrinking.
  CHECK(cases.size() >= 75);
  std::map<std::string, std::string> inputs_before;
  for (const auto& entry : fs::directory_iterator(bad))
    inputs_before[entry.path().filename().string()] = contents(entry.path());

  for (const BadCase& c : cases) {
    levelhead::testing::TempFolder tmp;
    const fs::path out = tmp.path() / "out";
    std::vector<std::string> args = {"levelhead"};
    for (const std::string& word :
         split(replaced(replaced(c.command, "{bad}", bad.string()), "{out}", out.string()), " "))
      args.push_back(word);
    std::ostringstream stdout_text, stderr_text;
    const int code = levelhead::cli::run(args, stdout_text, stderr_text);
    const std::string err = stderr_text.str();
    INFO(c.name << " (" << c.defect << "): " << err);
    CHECK(code == c.exit);
    for (const std::string& fragment : c.expected) CHECK_THAT(err, Contains(fragment));
    CHECK_THAT(err, !Contains("internal error"));
    // Nothing left behind, hidden partial files included.
    std::vector<std::string> left;
    if (fs::exists(out)) {
      for (const auto& entry : fs::recursive_directory_iterator(out))
        left.push_back(entry.path().filename().string());
    }
    CHECK(left.empty());
  }
  std::map<std::string, std::string> inputs_after;
  for (const auto& entry : fs::directory_iterator(bad))
    inputs_after[entry.path().filename().string()] = contents(entry.path());
  CHECK(inputs_after == inputs_before);
}
