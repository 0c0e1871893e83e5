#include "heads/head_writers.hpp"

#include <cpl_conv.h>
#include <cpl_string.h>
#include <fmt/format.h>
#include <fmt/ranges.h>
#include <ogr_api.h>
#include <ogr_srs_api.h>

#include <algorithm>
#include <chrono>
#include <cmath>
#include <iterator>

#include "levelhead/core/errors.hpp"
#include "levelhead/core/output_files.hpp"
#include "levelhead/core/time.hpp"
#include "levelhead/version.hpp"
#include "util/gdal_messages.hpp"

namespace levelhead {

namespace {

constexpr std::size_t rows_per_batch = 4096;

// A time in seconds since 1970 UTC as an OGR DateTime in UTC (TZ flag 100).
void set_utc(OGRFeatureH feature, int field, double seconds) {
  using namespace std::chrono;
  const double whole = std::floor(seconds);
  const sys_seconds t{std::chrono::seconds{static_cast<long long>(whole)}};
  const sys_days day = floor<days>(t);
  const year_month_day date{day};
  const hh_mm_ss clock{t - day};
  OGR_F_SetFieldDateTimeEx(
      feature, field, static_cast<int>(date.year()),
      static_cast<int>(static_cast<unsigned>(date.month())),
      static_cast<int>(static_cast<unsigned>(date.day())), static_cast<int>(clock.hours().count()),
      static_cast<int>(clock.minutes().count()),
      static_cast<float>(clock.seconds().count()) + static_cast<float>(seconds - whole), 100);
}

}  // namespace

HeadsCsvWriter::HeadsCsvWriter(OutputSet& out, const MeasuringPointHistory& history,
                               const std::string& target, bool has_event, double per_metre)
    : rows_(out, "heads.csv"),
      target_cell_(csv_cell(target)),
      has_event_(has_event),
      k_(per_metre) {
  for (const MeasuringPointElevation& e : history.elevations()) {
    source_cells_.push_back(csv_cell(e.source));
    transform_cells_.push_back(csv_cell(e.transform));
  }
  rows_.line(
      "well,time,head,sigma,datum,sigma_relative,time_utc,mp_elevation,mp_sigma,mp_source,"
      "depth,state,flags,contour,reason,in_event,transform,density,freshwater_head,"
      "environmental_head");
}

void HeadsCsvWriter::write(const Well& well, const ReadingInput& reading, const HeadRecord& r) {
  // Full precision (0.1 mm) with the sigmas beside: rounding to what the
  // sigma supports is for text a person reads. Cells go straight into
  // CsvRows' buffer: this runs for every reading (1e7).
  const auto if_head = [&](double value) {
    return r.head ? std::optional<double>(value * k_) : std::nullopt;
  };
  const auto scaled = [&](const std::optional<double>& value) {
    return value ? std::optional<double>(*value * k_) : std::nullopt;
  };
  flags_.clear();
  for (const std::string& f : r.flags) {
    if (!flags_.empty()) flags_ += ' ';
    flags_ += f;
  }
  rows_.text(well.id)
      .text(reading.time_text)
      .fixed(scaled(r.head), 4)
      .fixed(if_head(r.sigma), 4)
      .quoted(target_cell_)
      .fixed(if_head(r.sigma_relative), 4)
      .text(format_utc(reading.time))
      .fixed(r.mp.height * k_, 4)
      .fixed(r.mp.sigma * k_, 4)
      .quoted(source_cells_[r.mp.record])
      .fixed(scaled(reading.level.depth), 4)
      .text(r.state)
      .text(flags_)
      .text(r.contour() ? "yes" : "no")
      .text(r.reason)
      .text(has_event_ ? (r.outside_event ? "no" : "yes") : "")
      .quoted(transform_cells_[r.mp.record])
      .fixed(r.density, 2)
      .fixed(scaled(r.freshwater_head), 4)
      .fixed(scaled(r.environmental_head), 4)
      .end_row();
}

void HeadsCsvWriter::finish() { rows_.finish(); }

HeadsGpkgWriter::HeadsGpkgWriter(const std::filesystem::path& path, const std::string& crs,
                                 const std::string& target, bool has_event, LengthUnit unit)
    : target_(target), has_event_(has_event), k_(1.0 / metres_per_unit(unit)) {
  GDALAllRegister();
  CPLSetThreadLocalConfigOption("OGR_CURRENT_DATE", "2000-01-01T00:00:00.000Z");  // reproducible
  dataset_ =
      GDALCreate(GDALGetDriverByName("GPKG"), path.string().c_str(), 0, 0, 0, GDT_Unknown, nullptr);
  if (!dataset_)
    throw OutputError("cannot create heads.gpkg: " + std::string(CPLGetLastErrorMsg()));
  OGRSpatialReferenceH srs = OSRNewSpatialReference(nullptr);
  const util::GdalMessages gdal;
  if (OSRSetFromUserInput(srs, crs.c_str()) != OGRERR_NONE) {
    OSRDestroySpatialReference(srs);
    throw OptionError(
        crs.find('+') == std::string::npos
            ? fmt::format("--crs '{}' is not a CRS GDAL knows{}", crs, gdal.quoted())
            : fmt::format("'{}' is not a compound CRS GDAL knows{}: --compound-crs needs a target "
                          "that is a vertical CRS of its own (an EPSG code), not a reference "
                          "defined in a references file",
                          crs, gdal.quoted()));
  }
  OSRSetAxisMappingStrategy(srs, OAMS_TRADITIONAL_GIS_ORDER);
  // The layer says what its numbers are: GIS lists show the identifier and
  // description of gpkg_contents.
  const std::string description =
      fmt::format("Groundwater heads in {} ({}), one point per reading; time_utc in UTC", target,
                  unit_label(unit));
  char** options = CSLSetNameValue(nullptr, "IDENTIFIER", "heads");
  options = CSLSetNameValue(options, "DESCRIPTION", description.c_str());
  // No R-tree: the readings sit on a few hundred well positions, thousands
  // to a point, where a spatial index finds little and its inserts took a
  // fifth of the writing (bench_heads). A GIS can build one if it wants.
  options = CSLSetNameValue(options, "SPATIAL_INDEX", "NO");
  layer_ = GDALDatasetCreateLayer(dataset_, "heads", srs, wkbPoint, options);
  CSLDestroy(options);
  OSRDestroySpatialReference(srs);
  // Types a GIS can use: a DateTime for its time controls, Booleans, Reals;
  // missing values are NULL.
  struct FieldType {
    const char* name;
    OGRFieldType type;
    OGRFieldSubType subtype;
  };
  for (const FieldType& f : std::vector<FieldType>{{"well", OFTString, OFSTNone},
                                                   {"time", OFTString, OFSTNone},
                                                   {"time_utc", OFTDateTime, OFSTNone},
                                                   {"head", OFTReal, OFSTNone},
                                                   {"sigma", OFTReal, OFSTNone},
                                                   {"sigma_relative", OFTReal, OFSTNone},
                                                   {"datum", OFTString, OFSTNone},
                                                   {"mp_elevation", OFTReal, OFSTNone},
                                                   {"state", OFTString, OFSTNone},
                                                   {"flags", OFTString, OFSTNone},
                                                   {"contour", OFTInteger, OFSTBoolean},
                                                   {"in_event", OFTInteger, OFSTBoolean}}) {
    OGRFieldDefnH field = OGR_Fld_Create(f.name, f.type);
    OGR_Fld_SetSubType(field, f.subtype);
    OGR_L_CreateField(layer_, field, 1);
    OGR_Fld_Destroy(field);
  }
  GDALSetMetadataItem(layer_, "VERTICAL_REFERENCE", target.c_str(), nullptr);
  GDALSetMetadataItem(layer_, "HEIGHT_UNIT", to_string(unit).c_str(), nullptr);
  GDALSetMetadataItem(layer_, "PRODUCER", version_string().c_str(), nullptr);
  feature_ = OGR_F_Create(OGR_L_GetLayerDefn(layer_));
  for (int i = 0; i < OGR_F_GetFieldCount(feature_); ++i) OGR_F_SetFieldNull(feature_, i);
  OGR_F_SetFieldString(feature_, 6, target_.c_str());
  OGR_F_SetGeometryDirectly(feature_, OGR_G_CreateGeometry(wkbPoint));
  point_ = OGR_F_GetGeometryRef(feature_);
  GDALDatasetStartTransaction(dataset_, 1);
  batch_.reserve(rows_per_batch);
  thread_ = std::thread([this] { write_rows(); });
}

HeadsGpkgWriter::~HeadsGpkgWriter() {
  if (thread_.joinable()) {
    {
      const std::lock_guard lock(mutex_);
      closing_ = true;
      queue_.clear();  // an error is on its way out: what waits is not written
    }
    changed_.notify_all();
    thread_.join();
  }
  if (feature_) OGR_F_Destroy(feature_);
  if (dataset_) GDALClose(dataset_);
}

void HeadsGpkgWriter::write(const Well& well, const ReadingInput& reading, const HeadRecord& r) {
  Row& row = batch_.emplace_back();
  row.well = &well;
  row.time = reading.time;
  row.time_text = reading.time_text;
  row.state = r.state;
  if (!r.flags.empty()) row.flags = fmt::format("{}", fmt::join(r.flags, " "));
  row.head = r.head;
  row.sigma = r.sigma;
  row.sigma_relative = r.sigma_relative;
  row.mp_elevation = r.mp.height;
  row.contour = r.contour();
  row.in_event = !r.outside_event;
  if (batch_.size() >= rows_per_batch) hand_over();
}

void HeadsGpkgWriter::hand_over() {
  std::unique_lock lock(mutex_);
  // Two batches in the queue at most: the thread is the slower side.
  changed_.wait(lock, [&] { return queue_.size() < 2 || error_; });
  if (error_) std::rethrow_exception(error_);
  queue_.push_back(std::move(batch_));
  lock.unlock();
  changed_.notify_all();
  batch_ = {};
  batch_.reserve(rows_per_batch);
}

void HeadsGpkgWriter::write_rows() {
  std::unique_lock lock(mutex_);
  while (true) {
    changed_.wait(lock, [&] { return !queue_.empty() || closing_; });
    if (queue_.empty()) return;
    const std::vector<Row> rows = std::move(queue_.front());
    queue_.pop_front();
    lock.unlock();
    std::exception_ptr failed;
    try {
      const util::GdalMessages gdal;
      for (const Row& row : rows) {
        if (OGR_L_CreateFeature(layer_, fill_feature(row)) != OGRERR_NONE)
          throw OutputError("writing heads.gpkg failed" + gdal.quoted());
      }
    } catch (...) {
      failed = std::current_exception();
    }
    lock.lock();
    if (failed) {
      error_ = failed;
      queue_.clear();
      closing_ = true;
    }
    changed_.notify_all();
  }
}

OGRFeatureH HeadsGpkgWriter::fill_feature(const Row& row) {
  // Every field is given a value or NULL here, but for `datum` and, without
  // an event, `in_event`: the same for every row, set once when the feature
  // was made.
  OGRFeatureH f = feature_;
  OGR_F_SetFID(f, OGRNullFID);
  OGR_F_SetFieldString(f, 0, row.well->id.c_str());
  OGR_F_SetFieldString(f, 1, row.time_text.c_str());
  set_utc(f, 2, row.time);
  if (row.head) {
    OGR_F_SetFieldDouble(f, 3, *row.head * k_);
    OGR_F_SetFieldDouble(f, 4, row.sigma * k_);
    OGR_F_SetFieldDouble(f, 5, row.sigma_relative * k_);
  } else {
    for (const int i : {3, 4, 5}) OGR_F_SetFieldNull(f, i);
  }
  OGR_F_SetFieldDouble(f, 7, row.mp_elevation * k_);
  if (!row.state.empty())
    OGR_F_SetFieldString(f, 8, row.state.c_str());
  else
    OGR_F_SetFieldNull(f, 8);
  if (!row.flags.empty())
    OGR_F_SetFieldString(f, 9, row.flags.c_str());
  else
    OGR_F_SetFieldNull(f, 9);
  OGR_F_SetFieldInteger(f, 10, row.contour ? 1 : 0);
  if (has_event_) OGR_F_SetFieldInteger(f, 11, row.in_event ? 1 : 0);
  OGR_G_SetPoint_2D(point_, 0, row.well->x, row.well->y);
  return f;
}

void HeadsGpkgWriter::finish() {
  if (!batch_.empty()) hand_over();
  {
    // The thread writes what is queued before it ends.
    const std::lock_guard lock(mutex_);
    closing_ = true;
  }
  changed_.notify_all();
  thread_.join();
  if (error_) std::rethrow_exception(error_);
  OGR_F_Destroy(feature_);
  feature_ = nullptr;
  const util::GdalMessages gdal;
  if (GDALDatasetCommitTransaction(dataset_) != OGRERR_NONE)
    throw OutputError("cannot finish writing heads.gpkg" + gdal.quoted());
  GDALClose(dataset_);
  dataset_ = nullptr;
}

}  // namespace levelhead
