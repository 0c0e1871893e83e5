#include "levelhead/output_files.hpp"

#include <algorithm>
#include <fmt/format.h>
#include <unistd.h>

#include "levelhead/errors.hpp"

namespace levelhead {

OutputSet::OutputSet(std::filesystem::path folder) : folder_(std::move(folder)) {
  std::error_code ec;
  std::filesystem::create_directories(folder_, ec);
  if (ec || !std::filesystem::is_directory(folder_)) {
    throw OutputError(fmt::format("cannot create the output folder '{}': {}", folder_.string(),
                                  ec ? ec.message() : "a file of that name is in the way"));
  }
}

OutputSet::~OutputSet() {
  if (committed_) return;
  for (auto& [name, stream] : streams_) {
    stream.close();
    std::error_code ignored;
    std::filesystem::remove(temporary_path(name), ignored);
  }
  for (const std::string& name : reserved_) {
    std::error_code ignored;
    std::filesystem::remove(temporary_path(name), ignored);
  }
}

std::filesystem::path OutputSet::reserve(const std::string& name) {
  if (streams_.count(name) || std::find(reserved_.begin(), reserved_.end(), name) != reserved_.end()) {
    throw std::logic_error("output file reserved twice: " + name);
  }
  reserved_.push_back(name);
  std::error_code ignored;
  std::filesystem::remove(temporary_path(name), ignored);
  return temporary_path(name);
}

std::filesystem::path OutputSet::temporary_path(const std::string& name) const {
  // Hidden and marked as partial, with the process id so runs do not collide;
  // the extension is kept (GDAL drivers check it).
  const std::filesystem::path plain(name);
  return folder_ / fmt::format(".{}.partial-{}{}", plain.stem().string(), static_cast<long>(getpid()),
                               plain.extension().string());
}

std::ostream& OutputSet::open(const std::string& name) {
  auto [it, inserted] = streams_.try_emplace(name);
  if (!inserted) throw std::logic_error("output file opened twice: " + name);
  it->second.open(temporary_path(name), std::ios::binary | std::ios::trunc);
  if (!it->second) {
    throw OutputError(fmt::format("cannot write in the output folder '{}'", folder_.string()));
  }
  return it->second;
}

void OutputSet::commit() {
  for (auto& [name, stream] : streams_) {
    stream.flush();
    stream.close();
    if (stream.fail()) {
      throw OutputError(fmt::format("writing '{}' in '{}' failed (disk full?)", name,
                                    folder_.string()));
    }
  }
  std::vector<std::string> names = reserved_;
  for (const auto& [name, stream] : streams_) names.push_back(name);
  for (const std::string& name : names) {
    std::error_code ec;
    std::filesystem::rename(temporary_path(name), folder_ / name, ec);
    if (ec) {
      throw OutputError(fmt::format("cannot move '{}' into place in '{}': {}", name,
                                    folder_.string(), ec.message()));
    }
  }
  committed_ = true;
}

void append_csv_cell(std::string& out, std::string_view text) {
  if (text.find_first_of(",\"\r\n") == std::string_view::npos) {
    out.append(text);
    return;
  }
  out.push_back('"');
  for (char c : text) {
    out.push_back(c);
    if (c == '"') out.push_back('"');
  }
  out.push_back('"');
}

std::string csv_cell(const std::string& text) {
  std::string out;
  append_csv_cell(out, text);
  return out;
}

}  // namespace levelhead
