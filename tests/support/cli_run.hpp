#pragma once
// The CLI driven in process, and a file read whole, for the tests.

#include <filesystem>
#include <fstream>
#include <sstream>
#include <string>
#include <vector>

#include "cli/app.hpp"

namespace levelhead::testing {

struct CliRun {
  int code;
  std::string out, err;
};

// `args` without the program name.
inline CliRun run_cli(std::vector<std::string> args) {
  args.insert(args.begin(), "levelhead");
  std::ostringstream out, err;
  const int code = levelhead::cli::run(args, out, err);
  return {code, out.str(), err.str()};
}

inline std::string read_file(const std::filesystem::path& path) {
  std::ifstream in(path, std::ios::binary);
  std::ostringstream s;
  s << in.rdbuf();
  return s.str();
}

}  // namespace levelhead::testing
