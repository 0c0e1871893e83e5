// `levelhead loops`: loop closures before adjustment.

#include <fmt/format.h>

#include <memory>

#include "cli/app.hpp"
#include "cli/commands.hpp"
#include "cli/network_inputs.hpp"
#include "levelhead/levelling/loop_report.hpp"
#include "levelhead/levelling/loops.hpp"
#include "levelhead/report/stage_results.hpp"

namespace levelhead::cli {

namespace {
struct LoopArguments {
  NetworkInputs inputs;
  LoopOptions options;
  std::string closure_class;
  CLI::Option* tolerance =
      nullptr;  // --tolerance-mm-per-sqrt-km, to tell a given k from the default
  bool strict = false;
  bool quiet = false;
};
}  // namespace

CommandRunner add_loops_command(CLI::App& app) {
  auto args = std::make_shared<LoopArguments>();
  CLI::App* command = app.add_subcommand(
      "loops", "Independent loops of a levelling network with misclosure against tolerance");
  add_network_input_options(*command, args->inputs);
  CLI::Option* k =
      command
          ->add_option("--tolerance-mm-per-sqrt-km", args->options.mm_per_sqrt_km,
                       "Loop tolerance k in k mm * sqrt(loop length in km), instead of "
                       "--levelling-class")
          ->capture_default_str();
  add_levelling_class_option(*command, args->closure_class, k, "the loop tolerance");
  args->tolerance = k;
  command->add_flag("--strict", args->strict, "Exit with status 3 when a loop fails");
  command->add_flag("--quiet", args->quiet, "Print nothing on success");
  return [args](std::ostream& out, std::ostream&, StageResults* chain) {
    LoopOptions options = args->options;
    if (!args->closure_class.empty()) {
      const LevellingClass& c = find_levelling_class(args->closure_class);
      options.mm_per_sqrt_km = c.loop_closure_mm_per_sqrt_km;
      options.levelling_class = std::string(c.name);
    } else if (args->tolerance->count() > 0) {
      options.levelling_class.clear();
    }
    options.validate();
    check_network_input_options(args->inputs);
    if (options_check_only()) return static_cast<int>(exit_ok);
    const Network network = load_network(args->inputs);
    LoopResult result = find_loops(network, options);
    write_loop_outputs(network, result, args->inputs.out);
    if (!args->quiet) {
      out << loop_summary_text(network, result);
      out << fmt::format("Wrote loops.csv, unchecked_sections.csv and summary.json in {}\n",
                         args->inputs.out);
    }
    const int status = args->strict && result.failed > 0 ? exit_checks_failed : exit_ok;
    if (chain) {
      LoopsStage stage{std::move(result), {}};
      for (const Loop& loop : stage.result.loops) {
        std::vector<std::string>& ids = stage.loop_points.emplace_back();
        for (std::size_t p : loop.points) ids.push_back(network.points[p].id);
      }
      chain->loops = std::move(stage);
    }
    return status;
  };
}

}  // namespace levelhead::cli
