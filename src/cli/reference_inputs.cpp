#include "cli/reference_inputs.hpp"

namespace levelhead::cli {

ProjSettings ReferenceInputs::settings() const {
  ProjSettings s;
  for (const auto& p : grid_paths) s.grid_paths.emplace_back(p);
  s.allow_network = network;
  return s;
}

ReferenceSet ReferenceInputs::load() const {
  return references.empty() ? ReferenceSet{} : ReferenceSet::load(references);
}

void add_reference_options(CLI::App& command, ReferenceInputs& inputs) {
  command.add_option("--references", inputs.references,
                     "References file (TOML) of our own references");
  command.add_option("--grid-path", inputs.grid_paths,
                     "Folder searched for grids before PROJ_DATA");
  command.add_flag("--network", inputs.network, "Let PROJ download missing grids (off by default)");
}

}  // namespace levelhead::cli
