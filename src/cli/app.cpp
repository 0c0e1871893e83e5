#include "cli/app.hpp"

#include <sstream>
#include <utility>

#include "cli/commands.hpp"
#include "levelhead/errors.hpp"
#include "levelhead/version.hpp"

namespace levelhead::cli {

int run(const std::vector<std::string>& args, std::ostream& out, std::ostream& err) {
  CLI::App app{"levelhead: levelling adjustment and vertical datum reconciliation for well "
               "measuring points and groundwater heads",
               "levelhead"};
  app.require_subcommand(1);
  app.set_version_flag("--version", version_string());

  const std::vector<std::pair<std::string, CommandRunner>> commands = {
      {"reduce", add_reduce_command(app)},
      {"loops", add_loops_command(app)},
      {"adjust", add_adjust_command(app)},
      {"epochs", add_epochs_command(app)},
      {"convert", add_convert_command(app)},
      {"tie", add_tie_command(app)},
      {"gnss-check", add_gnss_check_command(app)},
      {"heads", add_heads_command(app)},
      {"flow", add_flow_command(app)},
      {"demo", add_demo_command(app)},
  };

  // CLI11 takes the arguments reversed and without the program name.
  std::vector<std::string> reversed(args.rbegin(), args.rend() - (args.empty() ? 0 : 1));
  try {
    app.parse(reversed);
  } catch (const CLI::ParseError& e) {
    std::ostringstream message, usage;
    const int code = app.exit(e, message, usage);
    out << message.str();
    err << usage.str();
    return code == 0 ? exit_ok : exit_usage;
  }

  try {
    for (const auto& [name, runner] : commands) {
      if (app.got_subcommand(name)) return runner(out, err);
    }
    return exit_usage;
  } catch (const OptionError& e) {
    err << "levelhead: " << e.what() << '\n';
    return exit_usage;
  } catch (const Error& e) {
    err << "levelhead: error: " << e.what() << '\n';
    return exit_failure;
  }
}

}  // namespace levelhead::cli
