#include "heads/series_store.hpp"

#include <fmt/format.h>
#include <unistd.h>

#include <algorithm>
#include <cerrno>
#include <cstring>
#include <memory>
#include <string>
#include <tuple>

#include "levelhead/core/errors.hpp"

namespace levelhead {

namespace {

// A file in `folder` that no other process can see and that vanishes when
// closed or when the process ends: made by mkstemp and unlinked at once.
std::FILE* unlinked_temporary_file(const std::filesystem::path& folder) {
  std::string name = (folder / ".levelhead-series-XXXXXX").string();
  const int fd = ::mkstemp(name.data());
  if (fd < 0) {
    throw OutputError(fmt::format("cannot make a temporary file in {} for the wells' series: {}",
                                  folder.string(), std::strerror(errno)));
  }
  ::unlink(name.c_str());
  std::FILE* file = ::fdopen(fd, "w+b");
  if (file == nullptr) {
    ::close(fd);
    throw OutputError(fmt::format("cannot open a temporary file in {}: {}", folder.string(),
                                  std::strerror(errno)));
  }
  return file;
}

struct FileCloser {
  void operator()(std::FILE* file) const { std::fclose(file); }
};
using OwnedFile = std::unique_ptr<std::FILE, FileCloser>;

void write_entries(std::FILE* file, const SeriesEntry* entries, std::size_t count,
                   const std::filesystem::path& folder) {
  if (count > 0 && std::fwrite(entries, sizeof(SeriesEntry), count, file) != count) {
    throw OutputError(fmt::format("cannot write the wells' series to a temporary file in {}: {}",
                                  folder.string(), std::strerror(errno)));
  }
}

// Reads up to `count` entries; fewer only at the end of the file.
std::size_t read_entries(std::FILE* file, SeriesEntry* entries, std::size_t count,
                         const std::filesystem::path& folder) {
  const std::size_t got = std::fread(entries, sizeof(SeriesEntry), count, file);
  if (got < count && std::ferror(file)) {
    throw OutputError(
        fmt::format("cannot read back the wells' series from a temporary file in {}: {}",
                    folder.string(), std::strerror(errno)));
  }
  return got;
}

void rewind_for_reading(std::FILE* file, const std::filesystem::path& folder) {
  if (std::fflush(file) != 0 || std::fseek(file, 0, SEEK_SET) != 0) {
    throw OutputError(fmt::format("cannot read back the wells' series from a temporary file in {}",
                                  folder.string()));
  }
}

constexpr std::size_t chunk_entries = 65536;

}  // namespace

WellSeriesStore::WellSeriesStore(std::size_t wells, std::filesystem::path spill_folder,
                                 std::size_t memory_points)
    : folder_(std::move(spill_folder)),
      memory_points_(std::max<std::size_t>(memory_points, 1)),
      counts_(wells, 0) {}

WellSeriesStore::~WellSeriesStore() {
  if (spill_ != nullptr) std::fclose(spill_);
}

void WellSeriesStore::add(std::size_t well, double time, double head) {
  // Reserved whole at once: growing by doubling would briefly hold 1.5 times
  // the limit. Untouched pages of the reserve cost no memory.
  if (buffer_.capacity() == 0) buffer_.reserve(memory_points_);
  buffer_.push_back({time, head, static_cast<std::uint32_t>(well)});
  ++counts_[well];
  if (buffer_.size() >= memory_points_) flush();
}

void WellSeriesStore::flush() {
  if (spill_ == nullptr) spill_ = unlinked_temporary_file(folder_);
  write_entries(spill_, buffer_.data(), buffer_.size(), folder_);
  buffer_.clear();
}

void WellSeriesStore::visit_group(std::vector<SeriesEntry>& entries, const Visitor& visit) const {
  std::sort(entries.begin(), entries.end(), [](const SeriesEntry& a, const SeriesEntry& b) {
    return std::tie(a.well, a.time, a.head) < std::tie(b.well, b.time, b.head);
  });
  std::vector<std::pair<double, double>> series;
  for (std::size_t begin = 0; begin < entries.size();) {
    std::size_t end = begin;
    series.clear();
    while (end < entries.size() && entries[end].well == entries[begin].well) {
      series.emplace_back(entries[end].time, entries[end].head);
      ++end;
    }
    visit(entries[begin].well, series);
    begin = end;
  }
}

// Without a spill, one sort of what is held. With one: the wells are cut
// into consecutive groups of at most memory_points_ points, one pass over
// the spill sends each point to its group's own temporary file, and each
// group is then read back, sorted and visited: three sequential passes
// over the data, whatever the number of groups.
void WellSeriesStore::visit_wells(const Visitor& visit) {
  if (spill_ == nullptr) {
    visit_group(buffer_, visit);
    buffer_ = {};
    return;
  }
  flush();
  buffer_ = {};
  std::vector<std::size_t> group_of(counts_.size(), 0);
  std::size_t groups = 0, in_group = 0;
  for (std::size_t w = 0; w < counts_.size(); ++w) {
    if (counts_[w] == 0) continue;
    if (in_group > 0 && in_group + counts_[w] > memory_points_) {
      ++groups;
      in_group = 0;
    }
    group_of[w] = groups;
    in_group += counts_[w];
  }
  ++groups;

  std::vector<OwnedFile> group_files;
  for (std::size_t g = 0; g < groups && groups > 1; ++g)
    group_files.emplace_back(unlinked_temporary_file(folder_));
  std::vector<SeriesEntry> chunk(chunk_entries);
  rewind_for_reading(spill_, folder_);
  if (groups > 1) {
    std::vector<std::vector<SeriesEntry>> pending(groups);
    const std::size_t pending_limit = std::max<std::size_t>(chunk_entries / groups, 256);
    for (std::size_t got; (got = read_entries(spill_, chunk.data(), chunk.size(), folder_)) > 0;) {
      for (std::size_t i = 0; i < got; ++i) {
        std::vector<SeriesEntry>& p = pending[group_of[chunk[i].well]];
        p.push_back(chunk[i]);
        if (p.size() >= pending_limit) {
          write_entries(group_files[group_of[chunk[i].well]].get(), p.data(), p.size(), folder_);
          p.clear();
        }
      }
    }
    for (std::size_t g = 0; g < groups; ++g) {
      write_entries(group_files[g].get(), pending[g].data(), pending[g].size(), folder_);
      rewind_for_reading(group_files[g].get(), folder_);
    }
    std::fclose(spill_);
    spill_ = nullptr;
  }
  std::vector<std::size_t> group_points(groups, 0);
  for (std::size_t w = 0; w < counts_.size(); ++w) group_points[group_of[w]] += counts_[w];
  std::vector<SeriesEntry> entries;
  for (std::size_t g = 0; g < groups; ++g) {
    std::FILE* file = groups == 1 ? spill_ : group_files[g].get();
    entries.resize(group_points[g]);
    if (read_entries(file, entries.data(), entries.size(), folder_) != entries.size()) {
      throw OutputError(fmt::format("the wells' series came back short from a temporary file in {}",
                                    folder_.string()));
    }
    visit_group(entries, visit);
  }
}

}  // namespace levelhead
