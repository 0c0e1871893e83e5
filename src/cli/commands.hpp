#pragma once
// Subcommands of the CLI: each registers its options on the parent app and
// returns the function that runs it once the command line is parsed.

#include <CLI/CLI.hpp>
#include <filesystem>
#include <functional>
#include <ostream>

namespace levelhead {
class RunFolder;
struct StageResults;
}  // namespace levelhead

namespace levelhead::cli {

// `chain`: the results of the stages before this one in `levelhead run`, to
// which this stage adds its own (stage_results.hpp); null for a single command.
using CommandRunner = std::function<int(std::ostream& out, std::ostream& err, StageResults* chain)>;

CommandRunner add_adjust_command(CLI::App& app);
CommandRunner add_demo_command(CLI::App& app);
CommandRunner add_loops_command(CLI::App& app);
CommandRunner add_reduce_command(CLI::App& app);
CommandRunner add_convert_command(CLI::App& app);
CommandRunner add_tie_command(CLI::App& app);
CommandRunner add_gnss_check_command(CLI::App& app);
CommandRunner add_heads_command(CLI::App& app);
CommandRunner add_transducer_command(CLI::App& app);
CommandRunner add_flow_command(CLI::App& app);
CommandRunner add_epochs_command(CLI::App& app);
CommandRunner add_run_command(CLI::App& app);
CommandRunner add_diff_command(CLI::App& app);

struct ChainOptions {
  bool quiet = false, verbose = false, strict = false;
  bool replace = false;  // replace an output folder holding another project's run
  bool pdf = false;      // also print the report to report.pdf (headless Chromium)
};

// Runs the chain of `project_file` into `folder` (levelhead run). Every
// setting is checked first; then the run folder is prepared, unless
// `open_folder` is one prepared already (the demo writes its inputs into it),
// and committed when the chain completes. Returns the exit status.
int run_chain(const std::filesystem::path& project_file, const std::filesystem::path& folder,
              const ChainOptions& options, std::ostream& out, std::ostream& err,
              RunFolder* open_folder);

}  // namespace levelhead::cli
