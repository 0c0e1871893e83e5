// Tables from any vector source GDAL/OGR reads. Every field is read as text
// (spreadsheet drivers are told to keep strings and to treat the first row as
// the header), so that GDAL's type guessing never alters a value.

#include <cpl_conv.h>
#include <cpl_error.h>
#include <fmt/format.h>
#include <gdal.h>
#include <ogr_api.h>
#include <ogr_srs_api.h>

#include <memory>
#include <mutex>

#include "table/readers.hpp"
#include "util/encoding.hpp"
#include "util/text.hpp"

namespace levelhead::detail {

namespace {

struct DatasetCloser {
  void operator()(void* dataset) const { GDALClose(dataset); }
};
using DatasetPtr = std::unique_ptr<void, DatasetCloser>;

struct FeatureDestroyer {
  void operator()(OGRFeatureH feature) const { OGR_F_Destroy(feature); }
};
using FeaturePtr = std::unique_ptr<std::remove_pointer_t<OGRFeatureH>, FeatureDestroyer>;

std::string last_gdal_message() {
  const char* message = CPLGetLastErrorMsg();
  return message && *message ? std::string(message) : std::string("no reason given by GDAL");
}

// GDAL writes date and date-time cells (spreadsheet dates, GeoPackage
// fields) as YYYY/MM/DD[ HH:MM:SS[.sss][+HH[MM]]], even when asked for text;
// they become ISO 8601 (YYYY-MM-DD[THH:MM:SS...]), which is unambiguous, so
// the tables read the same as their CSV. Only text that is exactly in that
// form is changed ("2024/01/02 10:00 re-read" stays as it is).
void iso_from_gdal_date(std::string& text) {
  std::size_t p = 0;
  const auto digits = [&](std::size_t count) {
    for (std::size_t i = 0; i < count; ++i, ++p) {
      if (p >= text.size() || text[p] < '0' || text[p] > '9') return false;
    }
    return true;
  };
  const auto literal = [&](char c) {
    if (p >= text.size() || text[p] != c) return false;
    ++p;
    return true;
  };
  if (!(digits(4) && literal('/') && digits(2) && literal('/') && digits(2))) return;
  if (p < text.size()) {
    if (!(literal(' ') && digits(2) && literal(':') && digits(2))) return;
    if (p < text.size() && text[p] == ':' && !(literal(':') && digits(2))) return;
    if (p < text.size() && text[p] == '.' && !(literal('.') && digits(3))) return;
    if (p < text.size() && (text[p] == '+' || text[p] == '-')) {
      ++p;
      if (!digits(2)) return;
      if (p < text.size()) {
        literal(':');  // +HH:MM or +HHMM
        if (!digits(2)) return;
      }
    }
    if (p != text.size()) return;
  }
  text[4] = text[7] = '-';
  if (text.size() > 10) text[10] = 'T';
}

// The geometry's CRS must be the one the caller reads x and y in.
void require_layer_crs(OGRLayerH layer, const std::string& expected, const std::string& file) {
  OGRSpatialReferenceH layer_srs = OGR_L_GetSpatialRef(layer);
  if (expected.empty() || !layer_srs) return;
  OGRSpatialReferenceH wanted = OSRNewSpatialReference(nullptr);
  const bool known = OSRSetFromUserInput(wanted, expected.c_str()) == OGRERR_NONE;
  // Same CRS whatever the axis order GDAL maps the geometry to.
  const char* compare[] = {"IGNORE_DATA_AXIS_TO_SRS_AXIS_MAPPING=YES", nullptr};
  const bool same = known && OSRIsSameEx(layer_srs, wanted, compare);
  OSRDestroySpatialReference(wanted);
  if (!known || same) return;  // an unknown --crs is reported where it is used
  const char* name = OSRGetName(layer_srs);
  const char* auth = OSRGetAuthorityName(layer_srs, nullptr);
  const char* code = OSRGetAuthorityCode(layer_srs, nullptr);
  throw InputError(
      file, fmt::format("the layer's points are in {}{}, but x and y are taken in {}; reproject "
                        "the layer (e.g. ogr2ogr -t_srs {}) or give {} as the CRS",
                        name ? name : "another CRS",
                        auth && code ? fmt::format(" ({}:{})", auth, code) : std::string(),
                        expected, expected,
                        auth && code ? fmt::format("{}:{}", auth, code) : std::string("its CRS")));
}

}  // namespace

Table read_ogr_table(const std::filesystem::path& path, const TableOptions& options) {
  static std::once_flag registered;
  std::call_once(registered, [] { GDALAllRegister(); });
  // Thread-local settings: the first row is the header and every cell text.
  CPLSetThreadLocalConfigOption("OGR_XLSX_HEADERS", "FORCE");
  CPLSetThreadLocalConfigOption("OGR_XLSX_FIELD_TYPES", "STRING");
  CPLSetThreadLocalConfigOption("OGR_ODS_HEADERS", "FORCE");
  CPLSetThreadLocalConfigOption("OGR_ODS_FIELD_TYPES", "STRING");

  const std::string name = path.string();
  CPLPushErrorHandler(CPLQuietErrorHandler);
  CPLErrorReset();
  // GeoJSON types its values itself; these keep dates and arrays as the
  // text they are (other drivers ignore the options; the quiet handler
  // swallows their warning).
  const char* const open_options[] = {"DATE_AS_STRING=YES", "ARRAY_AS_STRING=YES", nullptr};
  DatasetPtr dataset(GDALOpenEx(name.c_str(), GDAL_OF_VECTOR | GDAL_OF_READONLY, nullptr,
                                open_options, nullptr));
  CPLPopErrorHandler();
  if (!dataset) {
    throw InputError(name, fmt::format("GDAL cannot read this file as a table ({}); supported are "
                                       "CSV and the vector formats of GDAL (XLSX, ODS, GPKG, DBF, "
                                       "GeoJSON, ...)",
                                       last_gdal_message()));
  }
  OGRLayerH layer = nullptr;
  if (options.layer.empty()) {
    if (GDALDatasetGetLayerCount(dataset.get()) < 1) throw InputError(name, "the file has no layer");
    layer = GDALDatasetGetLayer(dataset.get(), 0);
  } else {
    layer = GDALDatasetGetLayerByName(dataset.get(), options.layer.c_str());
    if (!layer) {
      std::vector<std::string> names;
      for (int i = 0; i < GDALDatasetGetLayerCount(dataset.get()); ++i) {
        names.emplace_back(OGR_L_GetName(GDALDatasetGetLayer(dataset.get(), i)));
      }
      throw InputError(name, fmt::format("no layer or sheet '{}' (there are: {})", options.layer,
                                         fmt::join(names, ", ")));
    }
  }

  OGRFeatureDefnH definition = OGR_L_GetLayerDefn(layer);
  const int field_count = OGR_FD_GetFieldCount(definition);
  std::vector<std::string> columns;
  // A field GDAL typed as a date or time; in a spreadsheet every field, as
  // its date cells come as GDAL's date text in fields typed as strings.
  const std::string driver = GDALGetDriverShortName(GDALGetDatasetDriver(dataset.get()));
  const bool spreadsheet = driver == "XLSX" || driver == "ODS";
  std::vector<char> date_field;
  for (int i = 0; i < field_count; ++i) {
    const OGRFieldDefnH field = OGR_FD_GetFieldDefn(definition, i);
    columns.emplace_back(OGR_Fld_GetNameRef(field));
    const OGRFieldType type = OGR_Fld_GetType(field);
    date_field.push_back(spreadsheet || type == OFTDate || type == OFTDateTime || type == OFTTime);
  }
  // A point layer without x/y fields offers its geometry as x and y.
  const bool has_xy = [&] {
    for (const auto& c : columns) {
      if (util::iequals(c, "x") || util::iequals(c, "y")) return true;
    }
    return false;
  }();
  const bool geometry_xy =
      !has_xy && wkbFlatten(OGR_L_GetGeomType(layer)) == wkbPoint;
  if (geometry_xy) {
    columns.emplace_back("x");
    columns.emplace_back("y");
    require_layer_crs(layer, options.xy_crs, name);
  }

  Table table(name, columns, options);
  std::vector<std::string> values(columns.size());
  std::vector<std::string_view> views(columns.size());
  std::size_t index = 0;
  OGR_L_ResetReading(layer);
  while (FeaturePtr feature{OGR_L_GetNextFeature(layer)}) {
    for (int i = 0; i < field_count; ++i) {
      values[i] = OGR_F_IsFieldSetAndNotNull(feature.get(), i)
                      ? std::string(OGR_F_GetFieldAsString(feature.get(), i))
                      : std::string();
      if (date_field[static_cast<std::size_t>(i)]) iso_from_gdal_date(values[i]);
      util::require_utf8_cell(values[i], name, index + 2, columns[static_cast<std::size_t>(i)]);
    }
    if (geometry_xy) {
      OGRGeometryH geometry = OGR_F_GetGeometryRef(feature.get());
      if (geometry && !OGR_G_IsEmpty(geometry)) {
        values[field_count] = fmt::format("{:.17g}", OGR_G_GetX(geometry, 0));
        values[field_count + 1] = fmt::format("{:.17g}", OGR_G_GetY(geometry, 0));
      } else {
        values[field_count].clear();
        values[field_count + 1].clear();
      }
    }
    ++index;
    bool blank = true;
    for (std::size_t i = 0; i < values.size(); ++i) {
      views[i] = values[i];
      blank = blank && util::trim(values[i]).empty();
    }
    if (blank) continue;                 // spreadsheets often end in empty rows
    table.add_row(views, index + 1);     // header counted as row 1, as a spreadsheet shows it
  }
  return table;
}

}  // namespace levelhead::detail
