// `levelhead adjust`.

#include <fmt/format.h>

#include <fstream>
#include <optional>

#include "cli/app.hpp"
#include "cli/commands.hpp"
#include "cli/network_inputs.hpp"
#include "levelhead/core/errors.hpp"
#include "levelhead/core/units.hpp"
#include "levelhead/levelling/adjustment.hpp"
#include "levelhead/levelling/adjustment_report.hpp"
#include "levelhead/report/stage_results.hpp"

namespace levelhead::cli {

namespace {

struct AdjustArguments {
  NetworkInputs inputs;
  std::string free_point;
  std::string sigma0 = "auto";
  std::string levelling_class;
  CLI::Option* mm_per_sqrt_km = nullptr;  // to tell a given k from the class's
  AdjustmentOptions options;
  bool strict = false;
  bool quiet = false;
};

void add_adjustment_options(CLI::App& command, AdjustArguments& a) {
  a.mm_per_sqrt_km = command
                         .add_option("--mm-per-sqrt-km", a.options.mm_per_sqrt_km,
                                     "Sigma of a section without a sigma, per square root of its "
                                     "length in km (mm/sqrt(km)), instead of --levelling-class")
                         ->capture_default_str();
  add_levelling_class_option(command, a.levelling_class, a.mm_per_sqrt_km,
                             "the sigma of sections without one (its standard error)");
  command
      .add_option("--mm-per-setup", a.options.mm_per_setup,
                  "Sigma per setup for sections with neither sigma nor length (mm)")
      ->capture_default_str();
  command.add_option("--alpha", a.options.alpha, "Significance level of the global test")
      ->capture_default_str();
  command
      .add_option("--alpha0", a.options.alpha0,
                  "Significance level of data snooping, per observation")
      ->capture_default_str();
  command
      .add_option("--sigma0", a.sigma0,
                  "How data snooping treats the a-priori precision: apriori (trusted: Baarda's "
                  "w-test), estimate (sigma0 from the data: Pope's tau test), auto (the w-test "
                  "while the global test passes, else the tau test)")
      ->check(CLI::IsMember({"apriori", "estimate", "auto"}))
      ->capture_default_str();
  command.add_option(
      "--variance-groups", a.options.variance_groups,
      "Estimate a variance factor per group of sections from the data; the column of "
      "the sections table that names the group: run, date, instrument, observer or "
      "any other; none to estimate none (data snooping then uses Pope's tau test)");
  command.add_option("--beta0", a.options.beta0, "Power for the minimal detectable bias")
      ->capture_default_str();
  command.add_option("--free", a.free_point,
                     "Free adjustment: hold only this point (at its known height, or 0) to check "
                     "the observations before the control is trusted");
  command.add_flag("--snoop", a.options.iterative_snooping,
                   "Iterative data snooping: remove the worst suspect section and adjust again, "
                   "reporting each removal");
  command.add_option("--max-removals", a.options.max_removals, "Most sections removed by --snoop")
      ->capture_default_str();
  command
      .add_option("--max-factor-nonzeros", a.options.max_factor_nonzeros,
                  "Refuse networks whose factor would be larger (memory guard)")
      ->capture_default_str();
  command.add_flag("--strict", a.strict,
                   "Exit with status 3 when the global test fails or a suspect is found");
  command.add_flag("--quiet", a.quiet, "Print nothing on success");
}

int adjust_files(const AdjustArguments& a, std::ostream& out, StageResults* chain) {
  AdjustmentOptions options = a.options;
  if (!a.free_point.empty()) options.free_point = a.free_point;
  options.sigma0 = parse_sigma0_use(a.sigma0);
  if (options.variance_groups == "none") options.variance_groups.clear();
  apply_levelling_class(a.levelling_class, a.mm_per_sqrt_km, options);
  options.validate();
  check_network_input_options(a.inputs);
  if (options_check_only()) return exit_ok;

  Network network = load_network(a.inputs, options.variance_groups);
  AdjustmentResult result = adjust(network, options);
  write_adjustment_outputs(
      network, result, options,
      AdjustmentInputs{a.inputs.points, a.inputs.sections, parse_length_unit(a.inputs.unit)},
      a.inputs.out);
  if (!a.quiet) {
    out << adjustment_summary_text(network, result);
    out << fmt::format("Wrote heights.csv, residuals.csv and summary.json in {}\n", a.inputs.out);
  }
  const int status =
      a.strict && adjustment_has_failed_checks(result) ? exit_checks_failed : exit_ok;
  if (chain) {
    chain->adjust = AdjustStage{std::move(network), std::move(result), options,
                                std::filesystem::path(a.inputs.out) / "heights.csv"};
  }
  return status;
}

}  // namespace

CommandRunner add_adjust_command(CLI::App& app) {
  auto args = std::make_shared<AdjustArguments>();
  CLI::App* command = app.add_subcommand(
      "adjust", "Least-squares adjustment of a levelling network with blunder checks");
  add_network_input_options(*command, args->inputs);
  add_adjustment_options(*command, *args);
  return [args](std::ostream& out, std::ostream&, StageResults* chain) {
    return adjust_files(*args, out, chain);
  };
}

}  // namespace levelhead::cli
