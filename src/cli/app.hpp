#pragma once
// The levelhead command line, callable in process (the tests drive it this way).
// Exit status: 0 done; 1 bad input or failed computation; 2 usage error;
// 3 with --strict when the work finished but a statistical test failed.

#include <ostream>
#include <string>
#include <vector>

namespace levelhead::cli {

enum ExitCode : int { exit_ok = 0, exit_failure = 1, exit_usage = 2, exit_checks_failed = 3 };

// args[0] is the program name, as in argv.
int run(const std::vector<std::string>& args, std::ostream& out, std::ostream& err);

}  // namespace levelhead::cli
