// `levelhead diff OLD_DIR NEW_DIR`: what changed between two runs and why.

#include <fmt/format.h>

#include <memory>
#include <nlohmann/json.hpp>

#include "cli/app.hpp"
#include "cli/commands.hpp"
#include "levelhead/core/errors.hpp"
#include "levelhead/core/output_files.hpp"
#include "levelhead/report/run_diff.hpp"
#include "levelhead/version.hpp"
#include "util/json_text.hpp"

namespace levelhead::cli {

namespace {

struct DiffArguments {
  std::string before, after, json;
  double tolerance = 0.001;
};

nlohmann::json as_json(const RunDifference& d, double tolerance) {
  nlohmann::json out;
  out["levelhead_version"] = version_string();
  out["format_version"] = output_format_version;
  out["command"] = "diff";
  out["tolerance_m"] = tolerance;
  out["identical"] = d.identical();
  out["configuration"] = nlohmann::json::array();
  for (const ConfigurationChange& c : d.configuration) {
    out["configuration"].push_back(
        {{"kind", c.kind}, {"name", c.name}, {"before", c.before}, {"after", c.after}});
  }
  for (const auto& [name, list] :
       {std::pair{"heights", &d.heights}, std::pair{"measuring_points", &d.measuring_points}}) {
    out[name] = nlohmann::json::array();
    for (const ValueChange& v : *list)
      out[name].push_back({{"key", v.key}, {"before", v.before}, {"after", v.after}});
  }
  for (const auto& [name, sides] :
       {std::pair{"heights_one_sided", &d.heights_one_sided},
        std::pair{"measuring_points_one_sided", &d.measuring_points_one_sided}}) {
    out[name] = {{"only_old", sides->only_before}, {"only_new", sides->only_after}};
  }
  out["file_problems"] = d.file_problems;
  out["heads_compared"] = d.heads_compared;
  out["wells"] = nlohmann::json::array();
  for (const WellHeadChanges& w : d.wells) {
    out["wells"].push_back({{"well", w.well},
                            {"moved", w.moved},
                            {"added", w.added},
                            {"dropped", w.dropped},
                            {"largest", w.largest},
                            {"causes", w.causes}});
  }
  return out;
}

}  // namespace

CommandRunner add_diff_command(CLI::App& app) {
  auto a = std::make_shared<DiffArguments>();
  CLI::App* c = app.add_subcommand("diff", "What changed between two runs of the chain, and why");
  c->add_option("OLD", a->before, "Output folder of the earlier run")->required();
  c->add_option("NEW", a->after, "Output folder of the later run")->required();
  c->add_option("--tolerance-m", a->tolerance, "Smallest change of a height or head reported (m)")
      ->capture_default_str();
  c->add_option("--json", a->json, "Also write the differences to this JSON file");
  return [a](std::ostream& out, std::ostream&, StageResults*) {
    if (!(a->tolerance >= 0.0)) throw OptionError("--tolerance-m must be 0 or more");
    const RunDifference d = compare_runs(a->before, a->after, a->tolerance);
    out << difference_text(d, a->tolerance);
    if (!a->json.empty()) {
      const std::filesystem::path path(a->json);
      OutputSet files(path.has_parent_path() ? path.parent_path() : std::filesystem::path("."));
      files.open(path.filename().string()) << util::json_text(as_json(d, a->tolerance)) << '\n';
      files.commit();
    }
    // As diff and cmp: 0 when the runs agree, 1 when they differ.
    return static_cast<int>(d.identical() ? exit_ok : exit_failure);
  };
}

}  // namespace levelhead::cli
