#pragma once
// Records gathered by group in bounded memory, however many there are: the
// wells' series of `heads` and the sensors' records of `transducer`.
//
// In:  (group index, record) one at a time, in any order; Record is
//      trivially copyable.
// Out: every group in index order (empty ones too), with its records in the
//      order they were added, handed to a visitor one group at a time (the
//      visitor may reorder them).
// Memory: up to `memory_records` records are held; beyond that they go to
//      an unlinked temporary file in `spill_folder` (the output folder:
//      nothing is left there, even after a crash), and are read back in
//      groups of consecutive indices holding at most `memory_records`
//      records. A single group with more records than that is read back
//      whole.
// Errors: OutputError naming the folder when a temporary file cannot be
//      made, written or read.

#include <algorithm>
#include <cstddef>
#include <cstdint>
#include <cstdio>
#include <filesystem>
#include <functional>
#include <memory>
#include <span>
#include <type_traits>
#include <utility>
#include <vector>

namespace levelhead::util {

[[noreturn]] void throw_short_spill_read(const std::filesystem::path& folder);

namespace spill_files {
struct Closer {
  void operator()(std::FILE* file) const { std::fclose(file); }
};
using File = std::unique_ptr<std::FILE, Closer>;
// A file in `folder` no other process can see, gone when closed.
File unlinked_temporary_file(const std::filesystem::path& folder);
void write(std::FILE* file, const void* data, std::size_t bytes,
           const std::filesystem::path& folder);
// Reads up to `bytes`; fewer only at the end of the file.
std::size_t read(std::FILE* file, void* data, std::size_t bytes,
                 const std::filesystem::path& folder);
void rewind_for_reading(std::FILE* file, const std::filesystem::path& folder);
}  // namespace spill_files

template <class Record>
class GroupedSpill {
  static_assert(std::is_trivially_copyable_v<Record>);

 public:
  static constexpr std::size_t default_memory_records = std::size_t{1} << 20;

  GroupedSpill(std::size_t groups, std::filesystem::path spill_folder,
               std::size_t memory_records = default_memory_records)
      : folder_(std::move(spill_folder)),
        memory_records_(std::max<std::size_t>(memory_records, 1)),
        counts_(groups, 0) {}

  void add(std::size_t group, const Record& record) {
    // Reserved whole at once: growing by doubling would briefly hold 1.5
    // times the limit. Untouched pages of the reserve cost no memory.
    if (buffer_.capacity() == 0) buffer_.reserve(memory_records_);
    buffer_.push_back({record, static_cast<std::uint32_t>(group)});
    ++counts_[group];
    if (buffer_.size() >= memory_records_) flush();
  }

  std::size_t groups() const { return counts_.size(); }
  bool spilled() const { return spill_ != nullptr; }

  using Visitor = std::function<void(std::size_t group, std::span<Record> records)>;

  // Visits every group in index order; the spill is spent afterwards.
  //
  // Without a spill: one stable sort of what is held by group. With one:
  // the groups are cut into consecutive runs of at most memory_records_
  // records, one pass over the spill sends each record to its run's own
  // temporary file (in order), and each run is read back, sorted stably by
  // group and visited: three sequential passes over the data, whatever the
  // number of runs.
  void visit(const Visitor& visit_group) {
    if (spill_ == nullptr) {
      visit_run(buffer_, 0, counts_.size(), visit_group);
      buffer_ = {};
      return;
    }
    flush();
    buffer_ = {};
    std::vector<std::size_t> run_of(counts_.size(), 0), run_start;
    std::size_t in_run = 0;
    for (std::size_t g = 0; g < counts_.size(); ++g) {
      if (run_start.empty() || (in_run > 0 && in_run + counts_[g] > memory_records_)) {
        run_start.push_back(g);
        in_run = 0;
      }
      run_of[g] = run_start.size() - 1;
      in_run += counts_[g];
    }
    const std::size_t runs = run_start.size();
    run_start.push_back(counts_.size());
    std::vector<spill_files::File> run_files;
    for (std::size_t r = 0; r < runs && runs > 1; ++r)
      run_files.push_back(spill_files::unlinked_temporary_file(folder_));
    spill_files::rewind_for_reading(spill_.get(), folder_);
    constexpr std::size_t chunk_records = 65536;
    std::vector<Stored> chunk(chunk_records);
    if (runs > 1) {
      std::vector<std::vector<Stored>> pending(runs);
      const std::size_t pending_limit = std::max<std::size_t>(chunk_records / runs, 256);
      for (std::size_t got; (got = read_stored(spill_.get(), chunk.data(), chunk.size())) > 0;) {
        for (std::size_t i = 0; i < got; ++i) {
          const std::size_t r = run_of[chunk[i].group];
          pending[r].push_back(chunk[i]);
          if (pending[r].size() >= pending_limit) {
            write_stored(run_files[r].get(), pending[r]);
            pending[r].clear();
          }
        }
      }
      for (std::size_t r = 0; r < runs; ++r) {
        write_stored(run_files[r].get(), pending[r]);
        spill_files::rewind_for_reading(run_files[r].get(), folder_);
      }
      spill_.reset();
    }
    std::vector<Stored> records;
    for (std::size_t r = 0; r < runs; ++r) {
      std::size_t size = 0;
      for (std::size_t g = run_start[r]; g < run_start[r + 1]; ++g) size += counts_[g];
      records.resize(size);
      std::FILE* file = runs == 1 ? spill_.get() : run_files[r].get();
      if (read_stored(file, records.data(), size) != size) throw_short_spill_read(folder_);
      visit_run(records, run_start[r], run_start[r + 1], visit_group);
    }
  }

 private:
  struct Stored {
    Record record;
    std::uint32_t group;
  };

  void flush() {
    if (!spill_) spill_ = spill_files::unlinked_temporary_file(folder_);
    write_stored(spill_.get(), buffer_);
    buffer_.clear();
  }
  void write_stored(std::FILE* file, const std::vector<Stored>& stored) const {
    spill_files::write(file, stored.data(), stored.size() * sizeof(Stored), folder_);
  }
  std::size_t read_stored(std::FILE* file, Stored* stored, std::size_t count) const {
    return spill_files::read(file, stored, count * sizeof(Stored), folder_) / sizeof(Stored);
  }

  // Visits groups [first, last) from `stored`, which holds exactly their
  // records (and is released): each record is placed at its group's next
  // slot (a counting sort, stable), then each group's slice is visited.
  void visit_run(std::vector<Stored>& stored, std::size_t first, std::size_t last,
                 const Visitor& visit_group) const {
    std::vector<std::size_t> begin(last - first + 1, 0);
    for (std::size_t g = first; g < last; ++g) begin[g - first + 1] = begin[g - first] + counts_[g];
    std::vector<Record> records(stored.size());
    std::vector<std::size_t> next(begin.begin(), begin.end() - 1);
    for (const Stored& s : stored) records[next[s.group - first]++] = s.record;
    stored = {};
    for (std::size_t g = first; g < last; ++g) {
      visit_group(g, std::span<Record>(records.data() + begin[g - first], counts_[g]));
    }
  }

  std::filesystem::path folder_;
  std::size_t memory_records_;
  std::vector<std::size_t> counts_;  // records per group
  std::vector<Stored> buffer_;
  spill_files::File spill_;  // null while all fits
};

}  // namespace levelhead::util
