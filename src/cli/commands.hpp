#pragma once
// Subcommands of the CLI: each registers its options on the parent app and
// returns the function that runs it once the command line is parsed.

#include <CLI/CLI.hpp>
#include <functional>
#include <ostream>

namespace levelhead::cli {

using CommandRunner = std::function<int(std::ostream& out, std::ostream& err)>;

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

}  // namespace levelhead::cli
