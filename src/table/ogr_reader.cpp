// Tables from any vector source GDAL/OGR reads. Every field is read as text
// (spreadsheet drivers are told to keep strings and to treat the first row as
// the header), so that GDAL's type guessing never alters a value.

#include <cpl_conv.h>
#include <cpl_error.h>
#include <cpl_vsi.h>
#include <fmt/format.h>
#include <gdal.h>
#include <ogr_api.h>
#include <ogr_srs_api.h>

#include <algorithm>
#include <memory>
#include <mutex>
#include <optional>

#include "table/readers.hpp"
#include "util/encoding.hpp"
#include "util/gdal_messages.hpp"
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
  const util::GdalMessages quiet;  // an unknown CRS is reported where it is used
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

// The whole of a file inside a zip (an XLSX part), through GDAL's /vsizip/.
std::optional<std::string> read_zip_part(const std::string& zip, const std::string& part) {
  const std::string name = fmt::format("/vsizip/{{{}}}/{}", zip, part);
  VSILFILE* f = VSIFOpenL(name.c_str(), "rb");
  if (!f) return std::nullopt;
  std::string text;
  char buffer[65536];
  for (std::size_t n; (n = VSIFReadL(buffer, 1, sizeof buffer, f)) > 0;) text.append(buffer, n);
  VSIFCloseL(f);
  return text;
}

// The value of attribute `name` inside the XML start tag `tag`.
std::string xml_attribute(std::string_view tag, std::string_view name) {
  const std::string key = fmt::format(" {}=\"", name);
  const std::size_t at = tag.find(key);
  if (at == std::string_view::npos) return {};
  const std::size_t start = at + key.size();
  return std::string(tag.substr(start, tag.find('"', start) - start));
}

// Cells of sheet `sheet` of an XLSX workbook that hold a formula but no
// stored value: a program that does not compute formulas wrote the file,
// and GDAL (which never computes them) reads such a cell as empty; a fixed
// height would silently become unknown. Read from the workbook's XML parts
// (ECMA-376 SpreadsheetML: workbook.xml names the sheets, its relationships
// give each sheet's part, a cell <c r="B2"> holds <f> and <v>).
std::vector<std::string> formula_cells_without_value(const std::string& path,
                                                     const std::string& sheet) {
  const auto workbook = read_zip_part(path, "xl/workbook.xml");
  const auto relations = read_zip_part(path, "xl/_rels/workbook.xml.rels");
  if (!workbook || !relations) return {};
  std::string relation_id;
  for (std::size_t at = workbook->find("<sheet "); at != std::string::npos;
       at = workbook->find("<sheet ", at + 1)) {
    const std::string_view tag =
        std::string_view(*workbook).substr(at, workbook->find('>', at) - at);
    if (xml_attribute(tag, "name") == sheet) relation_id = xml_attribute(tag, "r:id");
  }
  std::string target;
  for (std::size_t at = relations->find("<Relationship "); at != std::string::npos;
       at = relations->find("<Relationship ", at + 1)) {
    const std::string_view tag =
        std::string_view(*relations).substr(at, relations->find('>', at) - at);
    if (!relation_id.empty() && xml_attribute(tag, "Id") == relation_id)
      target = xml_attribute(tag, "Target");
  }
  if (target.empty()) return {};
  const auto part = read_zip_part(path, target.front() == '/' ? target.substr(1) : "xl/" + target);
  if (!part) return {};
  std::vector<std::string> cells;
  for (std::size_t at = part->find("<c "); at != std::string::npos;
       at = part->find("<c ", at + 1)) {
    const std::size_t tag_end = part->find('>', at);
    if (tag_end == std::string::npos) break;
    if ((*part)[tag_end - 1] == '/') continue;  // <c .../>: an empty cell
    const std::size_t close = part->find("</c>", tag_end);
    const std::string_view body = std::string_view(*part).substr(tag_end, close - tag_end);
    if (body.find("<f") != std::string_view::npos && body.find("<v") == std::string_view::npos)
      cells.push_back(xml_attribute(std::string_view(*part).substr(at, tag_end - at), "r"));
  }
  return cells;
}

// What may explain a missing column: GDAL names the fields Field1, Field2,
// ... when the first row is empty; other layers or sheets may hold the data.
std::string missing_column_hint(GDALDatasetH dataset, OGRLayerH layer,
                                const std::vector<std::string>& columns) {
  const bool generated = !columns.empty() &&
                         std::all_of(columns.begin(), columns.end(),
                                     [](const std::string& c) { return c.rfind("Field", 0) == 0; });
  const int layers = GDALDatasetGetLayerCount(dataset);
  std::vector<std::string> hints;
  if (layers > 1) {
    std::vector<std::string> names;
    for (int i = 0; i < layers; ++i)
      names.emplace_back(OGR_L_GetName(GDALDatasetGetLayer(dataset, i)));
    hints.push_back(
        fmt::format("This is sheet or layer '{}' of {} ({}); choose another with the "
                    "layer option of the table (e.g. --layer, --points-layer)",
                    OGR_L_GetName(layer), layers, fmt::join(names, ", ")));
  } else if (generated) {
    hints.push_back(
        "The first row of the sheet looks empty: levelhead takes the column names from the "
        "first row, so delete the empty rows above the header");
  }
  return fmt::format("{}", fmt::join(hints, ". "));
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
  DatasetPtr dataset(
      GDALOpenEx(name.c_str(), GDAL_OF_VECTOR | GDAL_OF_READONLY, nullptr, open_options, nullptr));
  CPLPopErrorHandler();
  if (!dataset) {
    throw InputError(name, fmt::format("GDAL cannot read this file as a table ({}); supported are "
                                       "CSV and the vector formats of GDAL (XLSX, ODS, GPKG, DBF, "
                                       "GeoJSON, ...)",
                                       last_gdal_message()));
  }
  OGRLayerH layer = nullptr;
  if (options.layer.empty()) {
    if (GDALDatasetGetLayerCount(dataset.get()) < 1)
      throw InputError(name, "the file has no layer");
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
  const bool geometry_xy = !has_xy && wkbFlatten(OGR_L_GetGeomType(layer)) == wkbPoint;
  if (geometry_xy) {
    columns.emplace_back("x");
    columns.emplace_back("y");
    require_layer_crs(layer, options.xy_crs, name);
  }

  if (GDALGetDriverShortName(GDALGetDatasetDriver(dataset.get())) == std::string("XLSX")) {
    const std::vector<std::string> cells = formula_cells_without_value(name, OGR_L_GetName(layer));
    if (!cells.empty()) {
      throw InputError(
          name, fmt::format("sheet '{}', cell {}{}: a formula without a stored value (the file "
                            "was saved by a program that does not compute formulas, and its "
                            "value would be read as empty); open and save it in a spreadsheet "
                            "program, or replace the formula by its value",
                            OGR_L_GetName(layer), cells.front(),
                            cells.size() > 1 ? fmt::format(" (and {} more)", cells.size() - 1)
                                             : std::string()));
    }
  }
  Table table(name, columns, options);
  table.set_missing_column_hint(missing_column_hint(dataset.get(), layer, columns));
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
    if (blank) continue;              // spreadsheets often end in empty rows
    table.add_row(views, index + 1);  // header counted as row 1, as a spreadsheet shows it
  }
  return table;
}

}  // namespace levelhead::detail
