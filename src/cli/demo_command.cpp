// `levelhead demo`: writes the built-in demo site's tables and its project
// file into DIR/inputs, then runs the chain on it as `levelhead run` would
// (a run folder of its own: a rerun replaces the previous demo as a whole).

#include <fmt/format.h>

#include <memory>

#include "cli/app.hpp"
#include "cli/commands.hpp"
#include "cli/demo_data.hpp"
#include "levelhead/core/output_files.hpp"
#include "levelhead/core/run_folder.hpp"

namespace levelhead::cli {

CommandRunner add_demo_command(CLI::App& app) {
  auto out_folder = std::make_shared<std::string>();
  CLI::App* command = app.add_subcommand(
      "demo", "Run levelhead on its built-in demo site: writes the inputs and the results");
  command->add_option("--out", *out_folder, "Output folder")->required();
  return [out_folder](std::ostream& out, std::ostream& err, StageResults*) {
    const std::filesystem::path folder(*out_folder);
    const std::filesystem::path inputs = folder / "inputs";
    // The demo's inputs live in its run folder, so they go and come with it.
    RunFolder run_folder(folder, RunFolderOptions{"levelhead demo", {}, false});
    {
      OutputSet files(inputs);
      for (const auto& file : demo::embedded_files()) {
        files.open(std::string(file.name)) << file.content;
      }
      files.commit();
    }
    out << fmt::format("Demo inputs written to {}\n", inputs.string());
    return run_chain(inputs / "project.toml", folder, ChainOptions{}, out, err, &run_folder);
  };
}

}  // namespace levelhead::cli
