#include "util/grouped_spill.hpp"

#include <fmt/format.h>
#include <unistd.h>

#include <cerrno>
#include <cstring>
#include <string>

#include "levelhead/core/errors.hpp"

namespace levelhead::util {

namespace spill_files {

// mkstemp, then unlink at once: the open file stays usable and has no name.
File unlinked_temporary_file(const std::filesystem::path& folder) {
  std::string name = (folder / ".levelhead-spill-XXXXXX").string();
  const int fd = ::mkstemp(name.data());
  if (fd < 0) {
    throw OutputError(fmt::format("cannot make a temporary file in {} for records held back: {}",
                                  folder.string(), std::strerror(errno)));
  }
  ::unlink(name.c_str());
  std::FILE* file = ::fdopen(fd, "w+b");
  if (file == nullptr) {
    ::close(fd);
    throw OutputError(fmt::format("cannot open a temporary file in {}: {}", folder.string(),
                                  std::strerror(errno)));
  }
  return File(file);
}

void write(std::FILE* file, const void* data, std::size_t bytes,
           const std::filesystem::path& folder) {
  if (bytes > 0 && std::fwrite(data, 1, bytes, file) != bytes) {
    throw OutputError(fmt::format("cannot write records held back to a temporary file in {}: {}",
                                  folder.string(), std::strerror(errno)));
  }
}

std::size_t read(std::FILE* file, void* data, std::size_t bytes,
                 const std::filesystem::path& folder) {
  const std::size_t got = std::fread(data, 1, bytes, file);
  if (got < bytes && std::ferror(file)) {
    throw OutputError(fmt::format("cannot read back records from a temporary file in {}: {}",
                                  folder.string(), std::strerror(errno)));
  }
  return got;
}

void rewind_for_reading(std::FILE* file, const std::filesystem::path& folder) {
  if (std::fflush(file) != 0 || std::fseek(file, 0, SEEK_SET) != 0) {
    throw OutputError(
        fmt::format("cannot read back records from a temporary file in {}", folder.string()));
  }
}

}  // namespace spill_files

[[noreturn]] void throw_short_spill_read(const std::filesystem::path& folder) {
  throw OutputError(
      fmt::format("records came back short from a temporary file in {}", folder.string()));
}

}  // namespace levelhead::util
