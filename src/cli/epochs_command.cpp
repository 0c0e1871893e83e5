// `levelhead epochs`.

#include <fmt/format.h>

#include <algorithm>
#include <filesystem>

#include "cli/app.hpp"
#include "cli/commands.hpp"
#include "cli/network_inputs.hpp"
#include "levelhead/core/errors.hpp"
#include "levelhead/core/table.hpp"
#include "levelhead/core/units.hpp"
#include "levelhead/levelling/epoch_report.hpp"
#include "levelhead/levelling/epochs.hpp"
#include "levelhead/report/stage_results.hpp"
#include "util/text.hpp"

namespace levelhead::cli {

namespace {

struct EpochArguments {
  std::string points, out, unit = "m", points_columns, sections_columns;
  std::vector<std::string> sections, marks;
  std::string variance = "pooled", sigma0 = "auto", levelling_class;
  CLI::Option* mm_per_sqrt_km = nullptr;  // to tell a given k from the class's
  EpochOptions options;
  bool strict = false, quiet = false;
};

// Epochs from each sections table: by its `epoch` column, or the file's stem.
std::vector<EpochSections> read_epochs(const EpochArguments& a, LengthUnit unit) {
  std::vector<EpochSections> epochs;
  for (const std::string& file : a.sections) {
    const Table table =
        read_table(file, TableOptions{parse_column_map(a.sections_columns), unit, {}, {}, {}});
    // Grouped by epoch: every section of an epoch in one group, set below.
    const std::string& groups = a.options.adjustment.variance_groups;
    SectionTable sections = read_sections(table, groups == "epoch" ? std::string() : groups);
    std::vector<std::string> names;
    if (const auto column = table.find_column("epoch")) {
      for (std::size_t r = 0; r < table.row_count(); ++r) {
        names.emplace_back(util::trim(table.cell(r, *column)));
      }
    } else {
      names.assign(sections.sections.size(), std::filesystem::path(file).stem().string());
    }
    for (EpochSections& e : split_by_epoch(std::move(sections), names)) {
      if (groups == "epoch") {
        for (Section& s : e.sections.sections) s.group = e.name;
      }
      epochs.push_back(std::move(e));
    }
  }
  return epochs;
}

// Candidate marks: as named, or the points whose kind is benchmark or reference
// (in id order).
std::vector<std::string> candidate_marks(const EpochArguments& a, const PointTable& points) {
  std::vector<std::string> marks;
  for (const std::string& id : a.marks) {
    if (!util::trim(id).empty()) marks.emplace_back(util::trim(id));
  }
  if (!marks.empty()) return marks;
  for (const Point& p : points.points) {
    const std::string kind = util::to_lower(p.kind);
    if (kind == "benchmark" || kind == "reference") marks.push_back(p.id);
  }
  // In id order: the results must not depend on the order of the table's rows.
  std::sort(marks.begin(), marks.end());
  if (marks.empty()) {
    throw OptionError(
        fmt::format("no candidate reference marks: name them with --marks A,B,C, or "
                    "give them kind 'benchmark' in {}",
                    a.points));
  }
  return marks;
}

int run_epochs(const EpochArguments& a, std::ostream& out, StageResults* chain) {
  EpochOptions options = a.options;
  if (a.variance == "pooled") {
    options.variance = VarianceFactor::pooled;
  } else if (a.variance == "apriori") {
    options.variance = VarianceFactor::apriori;
  } else {
    throw OptionError(fmt::format("--variance {}: use pooled or apriori", a.variance));
  }
  options.adjustment.sigma0 = parse_sigma0_use(a.sigma0);
  if (options.adjustment.variance_groups == "none") options.adjustment.variance_groups.clear();
  apply_levelling_class(a.levelling_class, a.mm_per_sqrt_km, options.adjustment);
  options.validate();
  const LengthUnit unit = parse_length_unit(a.unit);
  for (const std::string* map : {&a.points_columns, &a.sections_columns}) parse_column_map(*map);
  if (options_check_only()) return exit_ok;
  const PointTable points = read_points(
      read_table(a.points, TableOptions{parse_column_map(a.points_columns), unit, {}, {}, {}}));
  require_point_units(points, unit);
  EpochAnalysis analysis =
      analyse_epochs(points, read_epochs(a, unit), candidate_marks(a, points), options);
  write_epoch_outputs(analysis, options, EpochInputs{a.points, a.sections}, a.out);
  if (!a.quiet) {
    out << epoch_summary_text(analysis);
    out << fmt::format(
        "Wrote epochs.csv, reference_stability.csv, displacements.csv, rates.csv, "
        "heights_by_epoch.csv and summary.json in {}\n",
        a.out);
  }
  const int status = a.strict && epochs_have_failed_checks(analysis) ? exit_checks_failed : exit_ok;
  if (chain) {
    chain->epochs =
        EpochsStage{std::move(analysis), std::filesystem::path(a.out) / "heights_by_epoch.csv"};
  }
  return status;
}

}  // namespace

CommandRunner add_epochs_command(CLI::App& app) {
  auto a = std::make_shared<EpochArguments>();
  CLI::App* command = app.add_subcommand(
      "epochs",
      "Repeated levelling epochs: stability of the reference marks, displacements, rates");
  command->add_option("--points", a->points, "Points table (id, height, datum, kind)")->required();
  command
      ->add_option("--sections", a->sections,
                   "Sections table(s): an epoch column, or one table per epoch (named by file)")
      ->required();
  command->add_option("--out", a->out, "Output folder")->required();
  command
      ->add_option("--marks", a->marks,
                   "Candidate reference marks, e.g. BM1,BM2,BM3 (default: points of kind "
                   "benchmark)")
      ->delimiter(',');
  command
      ->add_option("--alpha", a->options.alpha,
                   "Significance level of the congruence and displacement tests")
      ->capture_default_str();
  command->add_option("--beta0", a->options.beta, "Power for the minimal detectable displacement")
      ->capture_default_str();
  command
      ->add_option("--variance", a->variance,
                   "Variance factor: pooled (from the epochs' residuals) or apriori")
      ->capture_default_str();
  command->add_option(
      "--variance-groups", a->options.adjustment.variance_groups,
      "Estimate variance factors from the data in each epoch: epoch (one factor per epoch), or a "
      "column of the sections tables naming the group (run, date, instrument, observer, ...); the "
      "joint adjustment then weighs with the estimated sigmas, and data snooping uses Pope's tau "
      "test");
  command
      ->add_option("--sigma0", a->sigma0,
                   "Data snooping in each epoch: apriori (Baarda's w-test), estimate (Pope's tau "
                   "test), auto (the w-test while the epoch's global test passes)")
      ->check(CLI::IsMember({"apriori", "estimate", "auto"}))
      ->capture_default_str();
  command->add_flag("--snoop", a->options.remove_suspects,
                    "Iterative data snooping in each epoch before movement is judged");
  a->mm_per_sqrt_km =
      command
          ->add_option("--mm-per-sqrt-km", a->options.adjustment.mm_per_sqrt_km,
                       "Sigma of a section without a sigma, per square root of km (mm), instead "
                       "of --levelling-class")
          ->capture_default_str();
  add_levelling_class_option(*command, a->levelling_class, a->mm_per_sqrt_km,
                             "the sigma of sections without one (its standard error)");
  command
      ->add_option("--mm-per-setup", a->options.adjustment.mm_per_setup,
                   "Sigma per setup for sections with neither sigma nor length (mm)")
      ->capture_default_str();
  command
      ->add_option("--alpha0", a->options.adjustment.alpha0,
                   "Significance level of data snooping in each epoch")
      ->capture_default_str();
  command
      ->add_option("--max-factor-nonzeros", a->options.adjustment.max_factor_nonzeros,
                   "Refuse joint adjustments whose factor would be larger (memory guard)")
      ->capture_default_str();
  command->add_option("--unit", a->unit, "Length unit of the input tables: m, ft, us-ft")
      ->capture_default_str();
  command->add_option("--points-columns", a->points_columns, "Column map for the points table");
  command->add_option("--sections-columns", a->sections_columns,
                      "Column map for the sections tables");
  command->add_flag("--strict", a->strict,
                    "Exit with status 3 when an epoch fails its test or a mark moved");
  command->add_flag("--quiet", a->quiet, "Print nothing on success");
  return [a](std::ostream& out, std::ostream&, StageResults* chain) {
    return run_epochs(*a, out, chain);
  };
}

}  // namespace levelhead::cli
