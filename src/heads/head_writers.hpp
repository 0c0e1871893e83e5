#pragma once
// The sinks of `heads` (head_core.hpp): heads.csv and the heads layer of
// heads.gpkg, each written one record at a time.

#include <gdal.h>

#include <filesystem>
#include <ostream>
#include <string>
#include <vector>

#include "levelhead/core/units.hpp"
#include "levelhead/heads/head_core.hpp"

namespace levelhead {

// heads.csv (columns in docs/formats.md); `has_event`: whether the run has a
// synoptic event (else `in_event` stays empty); lengths in the target's unit,
// `per_metre` of them in a metre.
class HeadsCsvWriter final : public HeadSink {
 public:
  HeadsCsvWriter(std::ostream& out, const MeasuringPointHistory& history, const std::string& target,
                 bool has_event, double per_metre);
  void write(const Well& well, const ReadingInput& reading, const HeadRecord& record) override;

 private:
  std::ostream& out_;
  std::string target_cell_, row_;
  bool has_event_;
  double k_;                                                 // per metre
  std::vector<std::string> source_cells_, transform_cells_;  // per measuring-point record
};

// The point layer `heads` of a new GeoPackage at `path`, in one transaction.
// Throws OutputError when the file cannot be created or written, OptionError
// when GDAL does not know `crs`.
class HeadsGpkgWriter final : public HeadSink {
 public:
  HeadsGpkgWriter(const std::filesystem::path& path, const std::string& crs,
                  const std::string& target, bool has_event, LengthUnit unit);
  ~HeadsGpkgWriter() override;
  HeadsGpkgWriter(const HeadsGpkgWriter&) = delete;
  HeadsGpkgWriter& operator=(const HeadsGpkgWriter&) = delete;
  void write(const Well& well, const ReadingInput& reading, const HeadRecord& record) override;
  // Commits the transaction and closes the file.
  void finish();

 private:
  GDALDatasetH dataset_ = nullptr;
  OGRLayerH layer_ = nullptr;
  OGRFeatureH feature_ = nullptr;  // one feature and point, filled anew for every reading
  OGRGeometryH point_ = nullptr;   // owned by feature_
  std::string target_;
  bool has_event_;
  double k_;  // per metre
};

}  // namespace levelhead
