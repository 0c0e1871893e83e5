#include "levelhead/core/input_files.hpp"

#include <sys/stat.h>

#include <fstream>
#include <mutex>
#include <vector>

#include "levelhead/core/errors.hpp"

namespace levelhead {

namespace {

struct NotedFile {
  dev_t device;
  ino_t inode;
  std::string as_written;
};

// Guards scopes(): tables may be read on two threads at once.
std::mutex scopes_mutex;

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
  auto noted = identify(file);
  const std::lock_guard lock(scopes_mutex);
  if (scopes().empty() || !noted) return;
  scopes().back().push_back(std::move(*noted));
}

bool path_exists(const std::filesystem::path& path) noexcept {
  std::error_code error;
  return std::filesystem::exists(path, error) && !error;
}

std::string read_input_text(const std::filesystem::path& file) {
  std::ifstream in(file, std::ios::binary);
  if (!in) throw InputError(file.string(), "cannot open the file for reading");
  note_input_file(file);
  std::string text;
  in.seekg(0, std::ios::end);
  text.resize(static_cast<std::size_t>(in.tellg()));
  in.seekg(0, std::ios::beg);
  in.read(text.data(), static_cast<std::streamsize>(text.size()));
  if (!in) throw InputError(file.string(), "the file could not be read completely");
  return text;
}

std::optional<std::string> input_file_at(const std::filesystem::path& destination) {
  const auto target = identify(destination);
  if (!target) return std::nullopt;
  const std::lock_guard lock(scopes_mutex);
  for (const auto& scope : scopes()) {
    for (const NotedFile& f : scope) {
      if (f.device == target->device && f.inode == target->inode) return f.as_written;
    }
  }
  return std::nullopt;
}

InputFileScope::InputFileScope() {
  const std::lock_guard lock(scopes_mutex);
  scopes().emplace_back();
}
InputFileScope::~InputFileScope() {
  const std::lock_guard lock(scopes_mutex);
  scopes().pop_back();
}

}  // namespace levelhead
