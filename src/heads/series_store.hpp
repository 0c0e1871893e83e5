#pragma once
// Each well's heads over time, for the check of every well against its own
// history, kept in bounded memory however many readings there are.
//
// In:  (well index, time s UTC, head m) one at a time, in any order.
// Out: per well with points, in well order, its points sorted by time (then
//      head), handed to a visitor one well at a time.
// Memory: up to `memory_points` points are held (24 bytes each); beyond
//      that they go to an unlinked temporary file in `spill_folder` (the
//      output folder: nothing is left there, even after a crash), and are
//      read back in groups of wells of at most `memory_points` points. A
//      single well with more points than that is read back whole.
// Errors: OutputError naming the folder when the temporary file cannot be
//      made, written or read.

#include <cstddef>
#include <cstdint>
#include <cstdio>
#include <filesystem>
#include <functional>
#include <span>
#include <utility>
#include <vector>

namespace levelhead {

struct SeriesEntry {
  double time = 0.0;  // s, UTC
  double head = 0.0;  // m
  std::uint32_t well = 0;
};

class WellSeriesStore {
 public:
  static constexpr std::size_t default_memory_points = std::size_t{1} << 20;  // 24 MB

  WellSeriesStore(std::size_t wells, std::filesystem::path spill_folder,
                  std::size_t memory_points = default_memory_points);
  ~WellSeriesStore();
  WellSeriesStore(const WellSeriesStore&) = delete;
  WellSeriesStore& operator=(const WellSeriesStore&) = delete;

  void add(std::size_t well, double time, double head);

  // (time, head) of one well, sorted.
  using Visitor = std::function<void(std::size_t well, std::span<const std::pair<double, double>>)>;
  // Visits every well that has points, in well order; the store is spent
  // afterwards.
  void visit_wells(const Visitor& visit);

  bool spilled() const { return spill_ != nullptr; }

 private:
  void flush();
  void visit_group(std::vector<SeriesEntry>& entries, const Visitor& visit) const;

  std::filesystem::path folder_;
  std::size_t memory_points_;
  std::vector<std::size_t> counts_;  // points per well
  std::vector<SeriesEntry> buffer_;
  std::FILE* spill_ = nullptr;  // unlinked temporary file, or null while all fits
};

}  // namespace levelhead
