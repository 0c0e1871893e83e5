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

HeadsCsvWriter::HeadsCsvWriter(std::ostream& out, const MeasuringPointHistory& history,
                               const std::string& target, bool has_event, double per_metre)
    : out_(out), target_cell_(csv_cell(target)), has_event_(has_event), k_(per_metre) {
  for (const MeasuringPointElevation& e : history.elevations()) {
    source_cells_.push_back(csv_cell(e.source));
    transform_cells_.push_back(csv_cell(e.transform));
  }
  out_ << "well,time,head,sigma,datum,sigma_relative,time_utc,mp_elevation,mp_sigma,mp_source,"
          "depth,state,"
          "flags,contour,reason,in_event,transform,density,freshwater_head,environmental_head\n";
}

void HeadsCsvWriter::write(const Well& well, const ReadingInput& reading, const HeadRecord& r) {
  // Full precision (0.1 mm) with the sigmas beside: rounding to what the
  // sigma supports is for text a person reads. One buffer per row, written at once: this runs for
  // every reading (1e7).
  row_.clear();
  auto to = std::back_inserter(row_);
  append_csv_cell(row_, well.id);
  row_ += ',';
  append_csv_cell(row_, reading.time_text);
  row_ += ',';
  if (r.head)
    fmt::format_to(to, "{:.4f},{:.4f}", *r.head * k_, r.sigma * k_);
  else
    row_ += ',';
  row_ += ',';
  row_ += target_cell_;
  row_ += ',';
  if (r.head) fmt::format_to(to, "{:.4f}", r.sigma_relative * k_);
  row_ += ',';
  row_ += format_utc(reading.time);
  fmt::format_to(to, ",{:.4f},{:.4f},", r.mp.height * k_, r.mp.sigma * k_);
  row_ += source_cells_[r.mp.record];
  row_ += ',';
  if (reading.level.depth) fmt::format_to(to, "{:.4f}", *reading.level.depth * k_);
  row_ += ',';
  append_csv_cell(row_, r.state);
  row_ += ',';
  append_csv_cell(row_, fmt::format("{}", fmt::join(r.flags, " ")));
  row_ += r.contour() ? ",yes," : ",no,";
  append_csv_cell(row_, r.reason);
  row_ += ',';
  if (has_event_) row_ += r.outside_event ? "no" : "yes";
  row_ += ',';
  row_ += transform_cells_[r.mp.record];
  row_ += ',';
  if (r.density) fmt::format_to(to, "{:.2f}", *r.density);
  row_ += ',';
  if (r.freshwater_head) fmt::format_to(to, "{:.4f}", *r.freshwater_head * k_);
  row_ += ',';
  if (r.environmental_head) fmt::format_to(to, "{:.4f}", *r.environmental_head * k_);
  row_ += '\n';
  out_.write(row_.data(), static_cast<std::streamsize>(row_.size()));
}

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
  OGR_F_SetGeometryDirectly(feature_, OGR_G_CreateGeometry(wkbPoint));
  point_ = OGR_F_GetGeometryRef(feature_);
  GDALDatasetStartTransaction(dataset_, 1);
}

HeadsGpkgWriter::~HeadsGpkgWriter() {
  if (feature_) OGR_F_Destroy(feature_);
  if (dataset_) GDALClose(dataset_);
}

void HeadsGpkgWriter::write(const Well& well, const ReadingInput& reading, const HeadRecord& r) {
  OGRFeatureH f = feature_;
  for (int i = 0; i < OGR_F_GetFieldCount(f); ++i) OGR_F_SetFieldNull(f, i);
  OGR_F_SetFID(f, OGRNullFID);
  OGR_F_SetFieldString(f, 0, well.id.c_str());
  OGR_F_SetFieldString(f, 1, reading.time_text.c_str());
  set_utc(f, 2, reading.time);
  if (r.head) {
    OGR_F_SetFieldDouble(f, 3, *r.head * k_);
    OGR_F_SetFieldDouble(f, 4, r.sigma * k_);
    OGR_F_SetFieldDouble(f, 5, r.sigma_relative * k_);
  }
  OGR_F_SetFieldString(f, 6, target_.c_str());
  OGR_F_SetFieldDouble(f, 7, r.mp.height * k_);
  if (!r.state.empty()) OGR_F_SetFieldString(f, 8, r.state.c_str());
  if (!r.flags.empty())
    OGR_F_SetFieldString(f, 9, fmt::format("{}", fmt::join(r.flags, " ")).c_str());
  OGR_F_SetFieldInteger(f, 10, r.contour() ? 1 : 0);
  if (has_event_) OGR_F_SetFieldInteger(f, 11, r.outside_event ? 0 : 1);
  OGR_G_SetPoint_2D(point_, 0, well.x, well.y);
  const OGRErr err = OGR_L_CreateFeature(layer_, f);
  if (err != OGRERR_NONE)
    throw OutputError("writing heads.gpkg failed: " + std::string(CPLGetLastErrorMsg()));
}

void HeadsGpkgWriter::finish() {
  OGR_F_Destroy(feature_);
  feature_ = nullptr;
  GDALDatasetCommitTransaction(dataset_);
  GDALClose(dataset_);
  dataset_ = nullptr;
}

}  // namespace levelhead
