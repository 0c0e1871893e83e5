#pragma once
// Options shared by the commands that convert heights between references:
// --references, --grid-path, --network.

#include <CLI/CLI.hpp>
#include <string>
#include <vector>

#include "levelhead/references/references_file.hpp"
#include "levelhead/references/vertical_reference.hpp"

namespace levelhead::cli {

struct ReferenceInputs {
  std::string references;
  std::vector<std::string> grid_paths;
  bool network = false;

  ProjSettings settings() const;
  ReferenceSet load() const;  // empty when no file is given
};

void add_reference_options(CLI::App& command, ReferenceInputs& inputs);

}  // namespace levelhead::cli
