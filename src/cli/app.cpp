#include "cli/app.hpp"

#include <cpl_error.h>
#include <fmt/format.h>
#include <unistd.h>

#include <algorithm>
#include <cmath>
#include <cstdlib>
#include <iostream>
#include <map>
#include <optional>
#include <sstream>
#include <string_view>
#include <utility>

#include "cli/commands.hpp"
#include "cli/terminal_progress.hpp"
#include "levelhead/core/errors.hpp"
#include "levelhead/core/input_files.hpp"
#include "levelhead/version.hpp"
#include "util/text.hpp"

namespace levelhead::cli {

namespace {

using CommandList = std::vector<std::pair<std::string, CommandRunner>>;

[[nodiscard]] CommandList add_commands(CLI::App& app) {
  app.require_subcommand(1);
  app.set_version_flag("--version", version_string());
  return {
      {"reduce", add_reduce_command(app)},
      {"loops", add_loops_command(app)},
      {"adjust", add_adjust_command(app)},
      {"epochs", add_epochs_command(app)},
      {"convert", add_convert_command(app)},
      {"tie", add_tie_command(app)},
      {"gnss-check", add_gnss_check_command(app)},
      {"transducer", add_transducer_command(app)},
      {"heads", add_heads_command(app)},
      {"flow", add_flow_command(app)},
      {"run", add_run_command(app)},
      {"diff", add_diff_command(app)},
      {"demo", add_demo_command(app)},
  };
}

// CLI11 takes the arguments reversed and without the program name.
std::vector<std::string> reversed_arguments(const std::vector<std::string>& args) {
  return {args.rbegin(), args.rend() - (args.empty() ? 0 : 1)};
}

// The choice nearest `word` when it is close enough to be a slip of the
// keyboard (a third of its letters, at least one), with a ", did you mean"
// phrase; empty otherwise.
std::string suggestion(std::string_view word, const std::vector<std::string>& choices) {
  if (choices.empty()) return {};
  const std::string nearest = util::nearest_name(word, choices);
  const std::size_t slip = std::max<std::size_t>(1, word.size() / 3);
  return util::edit_distance(word, nearest) <= slip ? fmt::format("; did you mean '{}'?", nearest)
                                                    : std::string();
}

}  // namespace

const std::map<std::pair<std::string, std::string>, std::string>& renamed_options() {
  // One name per concept across the command line, the project file and the
  // docs; tolerances carry their unit.
  static const std::map<std::pair<std::string, std::string>, std::string> renamed = {
      {{"heads", "--to"}, "--target"},
      {{"heads", "--mp"}, "--measuring-points"},
      {{"heads", "--mp-columns"}, "--measuring-points-columns"},
      {{"heads", "--mp-change-tolerance"}, "--measuring-point-change-tolerance-m"},
      {{"heads", "--repeat-tolerance"}, "--repeat-tolerance-m"},
      {{"heads", "--history-tolerance"}, "--history-tolerance-m"},
      {{"loops", "--tolerance"}, "--tolerance-mm-per-sqrt-km"},
      {{"reduce", "--double-tolerance"}, "--double-tolerance-mm"},
      {{"reduce", "--section-tolerance"}, "--section-tolerance-mm-per-sqrt-km"},
      {{"gnss-check", "--tolerance"}, "--tolerance-m"},
      {{"diff", "--tolerance"}, "--tolerance-m"},
      {{"epochs", "--power"}, "--beta0"},
      {{"reduce", "--class"}, "--levelling-class"},
      {{"loops", "--class"}, "--levelling-class"},
      {{"adjust", "--class"}, "--levelling-class"},
      {{"epochs", "--class"}, "--levelling-class"}};
  return renamed;
}

std::optional<std::string> renamed_option(const std::string& command, const std::string& flag) {
  const auto& renamed = renamed_options();
  const auto it = renamed.find({command, flag});
  if (it == renamed.end()) return std::nullopt;
  return it->second;
}

namespace {

// An unknown command or an unknown option of the command, with the nearest
// known one; CLI11 would call the first "A subcommand is required" and the
// second a missing required option.
std::optional<std::string> misspelling(const std::vector<std::string>& args, const CLI::App& app,
                                       const CommandList& commands) {
  if (args.size() < 2 || args[1].empty() || args[1][0] == '-') return std::nullopt;
  std::vector<std::string> names;
  for (const auto& [name, runner] : commands) names.push_back(name);
  if (std::find(names.begin(), names.end(), args[1]) == names.end()) {
    return fmt::format("unknown command '{}'{} (levelhead --help lists them all)", args[1],
                       suggestion(args[1], names));
  }
  std::vector<std::string> options;
  const CLI::App* command = app.get_subcommand(args[1]);
  for (const CLI::Option* o : command->get_options()) {
    for (const std::string& name : o->get_lnames()) options.push_back("--" + name);
  }
  for (std::size_t k = 2; k < args.size(); ++k) {
    if (args[k] == "--") break;
    if (args[k].rfind("--", 0) != 0) continue;
    const std::string flag = args[k].substr(0, args[k].find('='));
    if (std::find(options.begin(), options.end(), flag) == options.end()) {
      if (const auto now = renamed_option(args[1], flag)) {
        return fmt::format(
            "option '{}' of '{}' is now '{}' (one name with the project file and "
            "the docs)",
            flag, args[1], *now);
      }
      return fmt::format("unknown option '{}' for '{}'{} (levelhead {} --help lists them all)",
                         flag, args[1], suggestion(flag, options), args[1]);
    }
  }
  return std::nullopt;
}

// CLI11 reads "nan" and "inf" into a number option like any other value;
// no option of levelhead means them, so they are usage errors here, once
// for every command.
void refuse_non_finite_numbers(const CLI::App& app) {
  for (const CLI::App* command : app.get_subcommands()) {
    for (const CLI::Option* option : command->get_options()) {
      if (option->get_type_name().rfind("FLOAT", 0) != 0) continue;
      for (const std::string& text : option->results()) {
        char* end = nullptr;
        const double value = std::strtod(text.c_str(), &end);
        if (end != text.c_str() && !std::isfinite(value)) {
          throw CLI::ValidationError(option->get_name(), "'" + text + "' is not a finite number");
        }
      }
    }
  }
}

// GDAL's messages that no library call quotes in its own error
// (util/gdal_messages.hpp) still reach the user, in levelhead's words on the
// command's error stream rather than as GDAL's "ERROR 1: ..." on stderr.
thread_local std::ostream* gdal_notes = nullptr;

void CPL_STDCALL note_from_gdal(CPLErr level, CPLErrorNum, const char* line) {
  if (level == CE_Debug || level == CE_None || !line || !gdal_notes) return;
  *gdal_notes << "levelhead: note from GDAL: " << line << '\n';
}

// For the time of one command.
class GdalNotesTo {
 public:
  explicit GdalNotesTo(std::ostream& err) : previous_(gdal_notes) {
    gdal_notes = &err;
    CPLSetErrorHandler(note_from_gdal);
  }
  ~GdalNotesTo() { gdal_notes = previous_; }
  GdalNotesTo(const GdalNotesTo&) = delete;
  GdalNotesTo& operator=(const GdalNotesTo&) = delete;

 private:
  std::ostream* previous_;
};

const char* const description =
    "levelhead: levelling adjustment and vertical datum reconciliation for well measuring points "
    "and groundwater heads";

}  // namespace

std::vector<OptionInfo> command_options(const std::string& command) {
  CLI::App app{description, "levelhead"};
  // The runners own the variables the options write into: keep them alive.
  const CommandList commands = add_commands(app);
  std::vector<OptionInfo> out;
  for (const CLI::Option* o : app.get_subcommand(command)->get_options()) {
    if (o->get_lnames().empty()) continue;  // positionals and --help's short form only
    OptionInfo info;
    info.flag = "--" + o->get_lnames().front();
    info.is_flag = o->get_expected_max() == 0;
    info.default_text = o->get_default_str();
    info.values = o->get_expected_max() > 1 ? 2 : 1;
    if (info.flag != "--help") out.push_back(std::move(info));
  }
  return out;
}

namespace {
bool checking_options_only = false;
}  // namespace

bool options_check_only() { return checking_options_only; }

std::optional<std::string> usage_error(const std::vector<std::string>& args) {
  CLI::App app{description, "levelhead"};
  // The runners own the variables the options write into: keep them alive.
  const CommandList commands = add_commands(app);
  if (auto problem = misspelling(args, app, commands)) return problem;
  std::vector<std::string> reversed = reversed_arguments(args);
  try {
    app.parse(reversed);
    refuse_non_finite_numbers(app);
  } catch (const CLI::ParseError& e) {
    return std::string(e.what());
  }
  struct CheckOnly {
    CheckOnly() { checking_options_only = true; }
    ~CheckOnly() { checking_options_only = false; }
  } check_only;
  std::ostream no_output(nullptr);
  try {
    for (const auto& [name, runner] : commands) {
      if (app.got_subcommand(name)) runner(no_output, no_output, nullptr);
    }
  } catch (const OptionError& e) {
    return std::string(e.what());
  }
  return std::nullopt;
}

int run(const std::vector<std::string>& args, std::ostream& out, std::ostream& err) {
  return run(args, out, err, nullptr);
}

int run(const std::vector<std::string>& args, std::ostream& out, std::ostream& err,
        StageResults* chain) {
  CLI::App app{description, "levelhead"};
  const CommandList commands = add_commands(app);

  if (const auto problem = misspelling(args, app, commands)) {
    err << "levelhead: " << *problem << '\n';
    return exit_usage;
  }
  std::vector<std::string> reversed = reversed_arguments(args);
  try {
    app.parse(reversed);
    refuse_non_finite_numbers(app);
  } catch (const CLI::ParseError& e) {
    std::ostringstream message, usage;
    const int code = app.exit(e, message, usage);
    out << message.str();
    err << usage.str();
    return code == 0 ? exit_ok : exit_usage;
  }

  // Whatever this command reads, none of its outputs may replace.
  const InputFileScope inputs;
  const GdalNotesTo gdal_notes_to(err);
  // A progress line for a person at a terminal (never in a pipe, a log or --quiet).
  const bool watched = &err == &std::cerr && ::isatty(STDERR_FILENO) == 1 &&
                       std::find(args.begin(), args.end(), "--quiet") == args.end();
  TerminalProgress terminal(err);
  const ProgressScope progress(watched ? &terminal : nullptr);
  try {
    for (const auto& [name, runner] : commands) {
      if (app.got_subcommand(name)) return runner(out, err, chain);
    }
    return exit_usage;
  } catch (const OptionError& e) {
    err << "levelhead: " << e.what() << '\n';
    return exit_usage;
  } catch (const Error& e) {
    err << "levelhead: error: " << e.what() << '\n';
    return exit_failure;
  } catch (const std::bad_alloc&) {
    err << "levelhead: error: out of memory (an input far larger than expected, e.g. a header "
           "of thousands of columns or a table without line breaks?); no output was written\n";
    return exit_failure;
  } catch (const std::exception& e) {
    // A fault of levelhead itself, not of the input: still an orderly exit,
    // and the outputs' all-or-nothing writers have removed their partial files.
    err << "levelhead: internal error: " << e.what()
        << "\nno output was written by the failing step; please report this with the inputs\n";
    return exit_failure;
  }
}

int report_rejected(std::ostream& err, const std::string& command, std::size_t rejected,
                    const std::string& what) {
  if (rejected == 0) return exit_ok;
  err << fmt::format(
      "levelhead {}: {} {} set aside in rejects.csv (each with its file, row and problem); the "
      "others were processed\n",
      command, rejected, what);
  return exit_rejected;
}

}  // namespace levelhead::cli
