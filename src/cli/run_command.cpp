// `levelhead run PROJECT.toml --out DIR`: the whole chain from a project file.

#include <fmt/format.h>
#include <unistd.h>

#include <algorithm>
#include <chrono>
#include <cmath>
#include <ctime>
#include <memory>
#include <optional>

#include "cli/app.hpp"
#include "cli/commands.hpp"
#include "cli/project.hpp"
#include "levelhead/core/errors.hpp"
#include "levelhead/core/run_folder.hpp"
#include "levelhead/heads/heads.hpp"
#include "levelhead/references/coordinate_check.hpp"
#include "levelhead/references/references_file.hpp"
#include "levelhead/report/findings.hpp"
#include "levelhead/report/report.hpp"

namespace levelhead::cli {

namespace {

struct RunArguments {
  std::string project, out;
  ChainOptions chain;
};

bool has_strict_option(const std::string& command) {
  for (const OptionInfo& o : command_options(command)) {
    if (o.flag == "--strict") return true;
  }
  return false;
}

// "site-1998: EPSG:5703 + 95.250 m (sigma 5.0 mm); assumed 100.000 m on ..."
std::string describe_reference(const ReferenceDefinition& d) {
  std::string how;
  switch (d.kind) {
    case ReferenceDefinition::Kind::crs:
      how = "the CRS " + d.definition;
      break;
    case ReferenceDefinition::Kind::offset:
      how = fmt::format("{} {:+.3f} m", d.base, d.relation.offset);
      break;
    case ReferenceDefinition::Kind::grid:
      how = fmt::format("{} with the grid {}{}", d.base, d.grid.filename().string(),
                        std::abs(d.grid_multiplier - 1.0) < 1e-12
                            ? std::string()
                            : fmt::format(" times {:g}", d.grid_multiplier));
      break;
    case ReferenceDefinition::Kind::vertoffset:
      how = fmt::format("{} with an offset and slopes", d.base);
      break;
  }
  std::string line = fmt::format("{}: {}", d.name, how);
  if (d.relation.sigma) line += fmt::format(" (sigma {:.1f} mm)", 1000.0 * *d.relation.sigma);
  if (!d.source.empty()) line += "; " + d.source;
  return line;
}

ReportContext report_context(const Project& p, const std::vector<Stage>& stages) {
  ReportContext c;
  c.site = p.name;
  c.title = p.report.count("title") ? p.report.at("title") : (p.name.empty() ? "Site" : p.name);
  if (p.report.count("prepared_for")) c.prepared_for = p.report.at("prepared_for");
  if (p.report.count("prepared_by")) c.prepared_by = p.report.at("prepared_by");
  c.crs = p.crs;
  c.contour_interval = p.contour_interval;
  c.target = p.target;
  for (const ProjectInput& i : p.inputs) {
    const auto map = p.columns.find(i.role);
    c.inputs.push_back(
        {i.role, i.as_written, i.path, map == p.columns.end() ? std::string() : map->second});
  }
  if (!p.references.empty()) {
    c.inputs.push_back(
        {"references", p.references.lexically_relative(p.folder).string(), p.references, ""});
    const ReferenceSet references = ReferenceSet::load(p.references);
    for (const auto& [name, definition] : references.definitions()) {
      if (!definition.grid.empty()) c.grids.push_back(definition.grid);
      c.references.push_back(describe_reference(definition));
    }
  }
  for (const ProjectSetting& s : p.settings) {
    std::string value = fmt::format("{}", fmt::join(s.values, " "));
    if (value == s.default_text) continue;
    c.settings.push_back({s.section + "." + s.key, value, s.default_text, s.chain_default});
  }
  for (const Stage& s : stages) c.stages.push_back(s.name);
  if (!p.time_zone.empty())
    c.time_zones.push_back("times without a zone are read in " + p.time_zone);
  for (const auto& [table, zone] : p.time_zones)
    c.time_zones.push_back(fmt::format("times without a zone in {} are read in {}", table, zone));
  return c;
}

std::string local_run_time() {
  const std::time_t now = std::chrono::system_clock::to_time_t(std::chrono::system_clock::now());
  std::tm utc{};
  gmtime_r(&now, &utc);
  char text[32];
  std::strftime(text, sizeof text, "%Y-%m-%dT%H:%M:%SZ", &utc);
  return text;
}

// Which setting of the project file makes a stage's command line fail: the
// one whose removal (back to the command's default) makes it pass, named by
// line, section and key; the section alone when no single setting does.
std::string culprit_setting(const Project& project, const Stage& stage,
                            const std::vector<std::string>& args) {
  for (const ProjectSetting& s : project.settings) {
    if (s.section != stage.section || s.chain_default) continue;
    std::string flag = "--" + s.key;
    std::replace(flag.begin(), flag.end(), '_', '-');
    const auto at = std::find(args.begin(), args.end(), flag);
    if (at == args.end()) continue;
    std::vector<std::string> without(args.begin(), at);
    const std::size_t values = s.is_flag ? 0 : s.values.size();
    without.insert(without.end(), at + 1 + static_cast<std::ptrdiff_t>(values), args.end());
    if (!usage_error(without)) {
      return fmt::format(", line {}, [{}] {}", s.line, s.section, s.key);
    }
  }
  return fmt::format(" [{}]", stage.section);
}

// What makes one project's run: the project file as an absolute path.
std::string project_identity(const std::filesystem::path& file) {
  std::error_code ec;
  const std::filesystem::path absolute =
      std::filesystem::weakly_canonical(std::filesystem::absolute(file), ec);
  return (ec ? std::filesystem::absolute(file) : absolute).string();
}

std::vector<std::filesystem::path> project_files(const Project& p) {
  std::vector<std::filesystem::path> files = {p.file};
  for (const ProjectInput& i : p.inputs) files.push_back(i.path);
  if (!p.references.empty()) files.push_back(p.references);
  files.insert(files.end(), p.grid_paths.begin(), p.grid_paths.end());
  return files;
}

}  // namespace

int run_chain(const std::filesystem::path& project_file, const std::filesystem::path& folder,
              const ChainOptions& a, std::ostream& out, std::ostream& err, RunFolder* open_folder) {
  const Project project = load_project(project_file);
  if (!project.target.empty()) {
    const ReferenceSet references =
        project.references.empty() ? ReferenceSet{} : ReferenceSet::load(project.references);
    try {
      target_length_unit(project.target, references);
    } catch (const ReferenceError& e) {
      throw ReferenceError(fmt::format("{} [site] target: {}", project.file.string(), e.what()));
    }
  }
  if (!project.crs.empty()) {
    try {
      require_horizontal_crs(project.crs);
    } catch (const ReferenceError& e) {
      throw ReferenceError(fmt::format("{} [site] crs: {}", project.file.string(), e.what()));
    }
  }
  std::vector<Stage> stages = plan_stages(project, folder);
  if (a.strict) {
    for (Stage& stage : stages) {
      if (has_strict_option(stage.name)) stage.args.push_back("--strict");
    }
  }
  // Every stage's options are checked before the first one runs.
  for (const Stage& stage : stages) {
    std::vector<std::string> args = {"levelhead"};
    args.insert(args.end(), stage.args.begin(), stage.args.end());
    if (const auto problem = usage_error(args)) {
      throw OptionError(fmt::format("{}{}: {}", project.file.string(),
                                    culprit_setting(project, stage, args), *problem));
    }
  }
  // Only now is the output folder touched: a previous run there is moved
  // aside, and comes back unless this run completes.
  std::optional<RunFolder> own_folder;
  if (!open_folder) {
    own_folder.emplace(folder, RunFolderOptions{project_identity(project.file),
                                                project_files(project), a.replace});
    open_folder = &*own_folder;
  }
  const bool progress = !a.quiet && isatty(STDERR_FILENO);
  std::ostream quiet_sink(nullptr);
  std::ostream& stage_out = a.quiet ? quiet_sink : out;
  // With --strict a failed QA check does not stop the chain: the work is done
  // and reported, and the run's status says which stages failed their checks.
  std::vector<std::string> failed_checks, rejected_in;
  StageResults results;  // handed on in memory: to later stages and to the report
  for (std::size_t i = 0; i < stages.size(); ++i) {
    const Stage& stage = stages[i];
    if (progress) err << fmt::format("[{}/{}] {}\n", i + 1, stages.size() + 1, stage.name);
    if (!a.quiet) out << fmt::format("\n== {} ==\n", stage.name);
    if (a.verbose) out << fmt::format("levelhead {}\n", fmt::join(stage.args, " "));
    std::vector<std::string> args = {"levelhead"};
    args.insert(args.end(), stage.args.begin(), stage.args.end());
    const int code = run(args, stage_out, err, &results);
    if (code == exit_checks_failed) {
      failed_checks.push_back(stage.name);
    } else if (code == exit_rejected) {
      rejected_in.push_back(stage.name);  // complete but for the rows set aside (keep_going)
    } else if (code != exit_ok) {
      err << fmt::format(
          "levelhead run: stopped at stage '{}' (reading {}). Nothing of this run was kept: {}\n",
          stage.name, fmt::join(stage.inputs, ", "),
          open_folder->had_previous()
              ? fmt::format("{} holds the previous complete run, as before", folder.string())
              : fmt::format("{} was not created", folder.string()));
      return code;
    }
  }
  if (progress) err << fmt::format("[{}/{}] report\n", stages.size() + 1, stages.size() + 1);
  ReportContext context = report_context(project, stages);
  context.run_time = local_run_time();
  const std::vector<Finding> findings = chain_findings(results);
  write_report(context, results, findings, folder);
  open_folder->commit();
  // After the commit: a print that fails leaves the run complete.
  if (a.pdf) {
    try {
      print_report_pdf(folder);
    } catch (const OutputError& e) {
      err << "levelhead run: the run is complete, but " << e.what() << '\n';
      return exit_failure;
    }
  }
  if (!a.quiet) {
    // The same findings, word for word, as the report's and run.json's.
    out << "\n== findings ==\n";
    if (findings.empty()) out << "Nothing to report: every check passed.\n";
    for (const Finding& f : findings) out << "- " << finding_line(f) << '\n';
    out << fmt::format("\nReport: {} (also report.md{}); audit record: run.json\n",
                       (folder / "report.html").string(), a.pdf ? ", report.pdf" : "");
  }
  if (!failed_checks.empty()) {
    err << fmt::format(
        "levelhead run: QA checks failed in {} (see each stage's summary and the report's "
        "findings); all outputs are complete.\n",
        fmt::join(failed_checks, ", "));
  }
  if (!rejected_in.empty()) {
    err << fmt::format(
        "levelhead run: records were set aside in {} (each stage's rejects.csv); "
        "the results rest on the others.\n",
        fmt::join(rejected_in, ", "));
    return exit_rejected;
  }
  return failed_checks.empty() ? exit_ok : exit_checks_failed;
}

CommandRunner add_run_command(CLI::App& app) {
  auto a = std::make_shared<RunArguments>();
  CLI::App* c = app.add_subcommand("run", "Run the whole chain described by a project file");
  c->add_option("PROJECT", a->project, "Project file (TOML; see docs/project-file.md)")->required();
  c->add_option("--out", a->out, "Output folder: one folder per stage, the report and run.json")
      ->required();
  c->add_flag("--quiet", a->chain.quiet, "Print nothing but errors");
  c->add_flag("--verbose", a->chain.verbose, "Also print each stage's command line");
  c->add_flag("--pdf", a->chain.pdf,
              "Also print the report to report.pdf (A4, page numbers) with headless Chromium");
  c->add_flag("--replace", a->chain.replace,
              "Replace an output folder that holds the run of another project");
  c->add_flag("--strict", a->chain.strict,
              "Pass --strict to every stage that has it; run the whole chain, then exit with "
              "status 3 when any stage's QA check failed");
  return [a](std::ostream& out, std::ostream& err, StageResults*) {
    return run_chain(a->project, a->out, a->chain, out, err, nullptr);
  };
}

}  // namespace levelhead::cli
