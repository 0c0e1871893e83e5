// Fuzz harness: the project file (TOML) and the chain planned from it.
// Checks: parsing and planning either succeed or throw a typed error.

#include <cstddef>
#include <cstdint>

#include "cli/project.hpp"
#include "fuzz_support.hpp"

using namespace levelhead;

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  fuzz::accept_typed_errors([&] {
    const cli::Project project =
        cli::parse_project(fuzz::as_text(data, size), LEVELHEAD_FIXTURES_DIR "/demo/project.toml");
    cli::plan_stages(project, "fuzz-out");
  });
  return 0;
}
