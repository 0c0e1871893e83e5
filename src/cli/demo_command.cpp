// `levelhead demo`: writes the built-in demo site's tables and runs the
// chain on them with the same commands a user would type: field book ->
// sections -> loops -> adjustment (with iterative data snooping) -> heads of
// wells whose tops were surveyed on an old site datum and by the network ->
// gradient and flow for the October 2026 round.

#include <fmt/format.h>
#include <memory>

#include "cli/app.hpp"
#include "cli/commands.hpp"
#include "cli/demo_data.hpp"
#include "levelhead/output_files.hpp"

namespace levelhead::cli {

CommandRunner add_demo_command(CLI::App& app) {
  auto out_folder = std::make_shared<std::string>();
  CLI::App* command = app.add_subcommand(
      "demo", "Run levelhead on its built-in demo site: writes the inputs and the results");
  command->add_option("--out", *out_folder, "Output folder")->required();
  return [out_folder](std::ostream& out, std::ostream& err) {
    const std::filesystem::path folder(*out_folder);
    const std::filesystem::path inputs = folder / "inputs";
    {
      OutputSet files(inputs);
      for (const auto& file : demo::embedded_files()) {
        files.open(std::string(file.name)) << file.content;
      }
      files.commit();
    }
    out << fmt::format("Demo inputs written to {}\n", inputs.string());
    const std::string points = (inputs / "points.csv").string();
    const std::string sections = (folder / "reduce" / "sections.csv").string();
    const std::vector<std::vector<std::string>> stages = {
        {"reduce", (inputs / "fieldbook.csv").string()},
        {"loops", "--points", points, "--sections", sections},
        {"adjust", "--points", points, "--sections", sections, "--snoop"},
        {"heads", "--wells", (inputs / "wells.csv").string(), "--mp",
         (inputs / "measuring_points.csv").string(), "--levels", (inputs / "levels.csv").string(),
         "--references", (inputs / "references.toml").string(), "--adjusted",
         (folder / "adjust" / "heights.csv").string(), "--to", "EPSG:5703", "--crs", "EPSG:32613",
         "--event", "2026-10-11T12:00-06:00", "--synoptic-window", "72"},
        {"flow", "--heads", (folder / "heads" / "event.csv").string(), "--wells",
         (inputs / "wells.csv").string(), "--conductivity", "1e-5", "1e-3", "--porosity", "0.15",
         "0.30", "--distance", "500"},
    };
    for (const auto& stage : stages) {
      out << fmt::format("\n== levelhead {} ==\n", fmt::join(stage, " "));
      std::vector<std::string> args = {"levelhead"};
      args.insert(args.end(), stage.begin(), stage.end());
      args.insert(args.end(), {"--out", (folder / stage.front()).string()});
      const int code = run(args, out, err);
      if (code != exit_ok) return code;
    }
    return static_cast<int>(exit_ok);
  };
}

}  // namespace levelhead::cli
