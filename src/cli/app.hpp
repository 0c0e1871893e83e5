#pragma once
// The levelhead command line, callable in process (the tests drive it this way).
// Exit status: 0 done; 1 bad input or failed computation; 2 usage error;
// 3 with --strict when the work finished but a statistical test failed.

#include <map>
#include <optional>
#include <ostream>
#include <string>
#include <vector>

namespace levelhead {
struct StageResults;
}

namespace levelhead::cli {

// 4: the command finished but set records aside (--keep-going, rejects.csv).
enum ExitCode : int {
  exit_ok = 0,
  exit_failure = 1,
  exit_usage = 2,
  exit_checks_failed = 3,
  exit_rejected = 4
};

// An option of a command, as the project file sees it.
struct OptionInfo {
  std::string flag;          // "--mm-per-sqrt-km"
  bool is_flag = false;      // takes no value
  std::size_t values = 1;    // 1, or 2 and more (a range, a list)
  std::string default_text;  // as the command's help shows it; empty when none
};

// The present name of an option `command` had under the name `flag` (e.g.
// heads --to: --target), or nullopt.
std::optional<std::string> renamed_option(const std::string& command, const std::string& flag);
// Every such rename: (command, former flag) -> present flag.
const std::map<std::pair<std::string, std::string>, std::string>& renamed_options();

// The long options of `command` (e.g. "adjust"), in the order they are declared.
std::vector<OptionInfo> command_options(const std::string& command);

// What is wrong with a command line (args[0] the program name), without
// running it: a parse error, or an option value the command refuses. The
// command runs in check-only mode: it validates its options and stops before
// reading any input (see options_check_only).
std::optional<std::string> usage_error(const std::vector<std::string>& args);

// True while usage_error runs a command: the command returns right after its
// options are validated. Every command that the chain runs checks this at
// that point, so `levelhead run` refuses a bad setting of any stage before
// the first stage starts.
bool options_check_only();

// args[0] is the program name, as in argv.
int run(const std::vector<std::string>& args, std::ostream& out, std::ostream& err);

// One stage of `levelhead run`: as above, and the command takes what it can
// of its inputs from the earlier stages' results in `chain` and adds its
// own (stage_results.hpp).
int run(const std::vector<std::string>& args, std::ostream& out, std::ostream& err,
        StageResults* chain);

// The exit status of a command that set `rejected` rows aside (--keep-going),
// saying so on `err`; exit_ok when there were none.
int report_rejected(std::ostream& err, const std::string& command, std::size_t rejected,
                    const std::string& what);

}  // namespace levelhead::cli
