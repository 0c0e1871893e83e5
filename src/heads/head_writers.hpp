#pragma once
// The sinks of `heads` (head_core.hpp): heads.csv and the heads layer of
// heads.gpkg, each written one record at a time.

#include <gdal.h>

#include <condition_variable>
#include <deque>
#include <exception>
#include <filesystem>
#include <mutex>
#include <optional>
#include <ostream>
#include <string>
#include <thread>
#include <vector>

#include "levelhead/core/output_files.hpp"
#include "levelhead/core/units.hpp"
#include "levelhead/heads/head_core.hpp"

namespace levelhead {

// heads.csv (columns in docs/formats.md); `has_event`: whether the run has a
// synoptic event (else `in_event` stays empty); lengths in the target's unit,
// `per_metre` of them in a metre.
class HeadsCsvWriter final : public HeadSink {
 public:
  HeadsCsvWriter(OutputSet& out, const MeasuringPointHistory& history, const std::string& target,
                 bool has_event, double per_metre);
  void write(const Well& well, const ReadingInput& reading, const HeadRecord& record) override;
  void finish();  // writes what is buffered

 private:
  CsvRows rows_;
  std::string target_cell_, flags_;
  bool has_event_;
  double k_;                                                 // per metre
  std::vector<std::string> source_cells_, transform_cells_;  // per measuring-point record
};

// The point layer `heads` of a new GeoPackage at `path`, in one transaction.
// The rows are handed in batches to a thread of its own, which alone calls
// GDAL between construction and finish(): the GeoPackage is written on the
// second core while the readings are computed and heads.csv is written.
// At most two batches wait, so memory does not grow with the readings.
// The wells given to write() must outlive finish() (rows point to them).
// Throws OutputError when the file cannot be created or written (from write
// or finish, once the thread has met the error), OptionError when GDAL does
// not know `crs`.
class HeadsGpkgWriter final : public HeadSink {
 public:
  HeadsGpkgWriter(const std::filesystem::path& path, const std::string& crs,
                  const std::string& target, bool has_event, LengthUnit unit);
  ~HeadsGpkgWriter() override;
  HeadsGpkgWriter(const HeadsGpkgWriter&) = delete;
  HeadsGpkgWriter& operator=(const HeadsGpkgWriter&) = delete;
  void write(const Well& well, const ReadingInput& reading, const HeadRecord& record) override;
  // Waits for the rows handed over, commits the transaction and closes the file.
  void finish();

  // One reading as the layer stores it (lengths in m).
  struct Row {
    const Well* well = nullptr;
    double time = 0.0;  // s, UTC
    std::string time_text, state, flags;
    std::optional<double> head;
    double sigma = 0.0, sigma_relative = 0.0, mp_elevation = 0.0;
    bool contour = false, in_event = false;
  };

 private:
  void hand_over();                          // queues batch_ for the thread; rethrows its error
  void write_rows();                         // the thread
  OGRFeatureH fill_feature(const Row& row);  // feature_, holding `row`

  GDALDatasetH dataset_ = nullptr;
  OGRLayerH layer_ = nullptr;
  OGRFeatureH feature_ = nullptr;  // one feature and point, filled anew for every reading
  OGRGeometryH point_ = nullptr;   // owned by feature_
  std::string target_;
  bool has_event_;
  double k_;  // per metre

  std::vector<Row> batch_;  // being filled by write()
  std::mutex mutex_;
  std::condition_variable changed_;
  std::deque<std::vector<Row>> queue_;  // handed over, not yet written
  bool closing_ = false;
  std::exception_ptr error_;  // the thread's first error
  std::thread thread_;
};

}  // namespace levelhead
