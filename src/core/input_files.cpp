#include "levelhead/input_files.hpp"

#include <sys/stat.h>

#include <vector>

namespace levelhead {

namespace {

struct NotedFile {
  dev_t device;
  ino_t inode;
  std::string as_written;
};

// One list per open scope, innermost last.
std::vector<std::vector<NotedFile>>& scopes() {
  static std::vector<std::vector<NotedFile>> stack;
  return stack;
}

std::optional<NotedFile> identify(const std::filesystem::path& file) {
  struct stat info {};
  if (::stat(file.c_str(), &info) != 0) return std::nullopt;
  return NotedFile{info.st_dev, info.st_ino, file.string()};
}

}  // namespace

void note_input_file(const std::filesystem::path& file) {
  if (scopes().empty()) return;
  if (auto noted = identify(file)) scopes().back().push_back(std::move(*noted));
}

std::optional<std::string> input_file_at(const std::filesystem::path& destination) {
  const auto target = identify(destination);
  if (!target) return std::nullopt;
  for (const auto& scope : scopes()) {
    for (const NotedFile& f : scope) {
      if (f.device == target->device && f.inode == target->inode) return f.as_written;
    }
  }
  return std::nullopt;
}

InputFileScope::InputFileScope() { scopes().emplace_back(); }
InputFileScope::~InputFileScope() { scopes().pop_back(); }

}  // namespace levelhead
