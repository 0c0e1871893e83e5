#pragma once
// The demo scenario of fixtures/demo, compiled into the program.
#include <string_view>
#include <vector>

namespace levelhead::demo {
struct EmbeddedFile {
  std::string_view name;
  std::string_view content;
};
const std::vector<EmbeddedFile>& embedded_files();
}  // namespace levelhead::demo
