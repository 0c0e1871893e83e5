#pragma once
// The files a command reads, so that none of its outputs can replace one.
//
// Every reader of the library (tables, references and project files, grids,
// earlier runs) notes the file it opens here. OutputSet refuses to commit a
// file whose destination is the same file as a noted input (same device and
// inode, so a hard link or another spelling of the path is caught too).
//
// Notes are kept per scope: the CLI opens an InputFileScope around each
// command; a command run inside another (a stage of `levelhead run`) sees the
// inputs of the scopes around it as well, so no stage replaces a file the
// chain reads. Without any scope (library use) nothing is noted or checked.
// Not thread-safe by design: commands run their readers on one thread.

#include <filesystem>
#include <optional>
#include <string>

namespace levelhead {

// Notes `file` (as the user wrote it, for messages) as an input of the
// innermost scope. A file that does not exist is not noted.
void note_input_file(const std::filesystem::path& file);

// The noted input that is the same file as `destination` (any scope), or
// nullopt; nullopt too when `destination` does not exist.
std::optional<std::string> input_file_at(const std::filesystem::path& destination);

// Whether `path` names something that exists; false too when it cannot be
// examined (a name too long, no permission), never an exception: for paths
// that come from the user's files and command line.
bool path_exists(const std::filesystem::path& path) noexcept;

// Notes `file` and returns its whole content as bytes. InputError naming the
// file when it cannot be opened or read completely.
std::string read_input_text(const std::filesystem::path& file);

class InputFileScope {
 public:
  InputFileScope();
  ~InputFileScope();
  InputFileScope(const InputFileScope&) = delete;
  InputFileScope& operator=(const InputFileScope&) = delete;
};

}  // namespace levelhead
