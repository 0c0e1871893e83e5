#include <cpl_conv.h>
#include <fmt/format.h>
#include <gdal.h>
#include <ogr_api.h>
#include <ogr_srs_api.h>

#include <catch2/catch.hpp>
#include <filesystem>
#include <fstream>
#include <iostream>
#include <limits>
#include <map>
#include <random>
#include <sstream>

#include "levelhead/core/output_columns.hpp"
#include "levelhead/core/output_files.hpp"
#include "levelhead/core/progress.hpp"
#include "levelhead/core/table.hpp"
#include "levelhead/core/time.hpp"
#include "support/cli_run.hpp"
#include "support/temp_folder.hpp"
#include "util/gdal_messages.hpp"

using namespace levelhead;
using Catch::Matchers::Contains;
using Catch::Matchers::WithinAbs;

TEST_CASE("CSV columns are found by name, case-insensitively", "[table]") {
  const Table t = parse_delimited_text("ID,Height,SIGMA\nBM1,10.5,0.001\n", "p.csv");
  REQUIRE(t.row_count() == 1);
  CHECK(t.cell(0, t.require_column("id")) == "BM1");
  CHECK_THAT(*t.number(0, t.require_column("height")), WithinAbs(10.5, 1e-15));
  CHECK_FALSE(t.find_column("datum"));
}

TEST_CASE("a column map renames the file's columns", "[table]") {
  TableOptions options;
  options.column_map = parse_column_map("id=Station, height=Elev_m");
  const Table t = parse_delimited_text("Station;Elev_m\nBM1;10.5\n", "p.csv", options);
  CHECK(t.cell(0, t.require_column("id")) == "BM1");
  CHECK_THAT(*t.number(0, t.require_column("height")), WithinAbs(10.5, 1e-15));
  options.column_map = parse_column_map("height=Elevation");
  CHECK_THROWS_WITH(parse_delimited_text("Station;Elev_m\n", "p.csv", options),
                    Contains("Elevation") && Contains("Station, Elev_m"));
  CHECK_THROWS_AS(parse_column_map("height"), OptionError);
}

TEST_CASE("separators, quotes, BOM and line ends are handled", "[table]") {
  const Table t = parse_delimited_text(
      "\xEF\xBB\xBFid\tremark\r\nA\t\"says \"\"hi\"\"\tthere\"\r\n\r\nB\tplain\r\n", "t.tsv");
  REQUIRE(t.row_count() == 2);
  CHECK(t.column_names()[0] == "id");
  CHECK(t.cell(0, 1) == "says \"hi\"\tthere");
  CHECK(t.cell(1, 0) == "B");
  CHECK(t.source_row(1) == 4);  // the blank line still counts
  const Table multi = parse_delimited_text("id,note\nA,\"two\nlines\"\nB,x\n", "m.csv");
  CHECK(multi.source_row(1) == 4);
}

TEST_CASE("ids stay text: 007 is not 7", "[table]") {
  const Table t = parse_delimited_text("id\n007\n", "p.csv");
  CHECK(t.cell(0, 0) == "007");
}

TEST_CASE("bad numbers name file, row, column and value", "[table][errors]") {
  const Table t = parse_delimited_text(
      "id,dh,length\nA,1.5,12\nB,abc,12\nC,1,2\nD,nan,1\nE,1,\"1,5\"\n", "sections.csv");
  CHECK_THROWS_WITH(t.number(1, 1), Contains("sections.csv, row 3, column 'dh'") &&
                                        Contains("'abc'") && Contains("expected a number"));
  CHECK_THROWS_WITH(t.number(3, 1), Contains("row 5") && Contains("NaN"));
  CHECK_THROWS_WITH(t.number(4, 2), Contains("decimal point"));
  CHECK_FALSE(parse_delimited_text("a,b\n1,\n", "x.csv").number(0, 1));
  CHECK(*parse_delimited_text("a\n+2.5e-3\n", "x.csv").number(0, 0) == Approx(2.5e-3).epsilon(0));
}

TEST_CASE("lengths convert from the declared unit to metres", "[table][units]") {
  TableOptions feet;
  feet.length_unit = LengthUnit::us_survey_foot;
  const Table t = parse_delimited_text("dh\n3937\n", "s.csv", feet);
  CHECK_THAT(*t.length(0, 0), WithinAbs(1200.0, 1e-9));  // 3937 US survey ft = 1200 m exactly
  CHECK_THAT(*t.number(0, 0), WithinAbs(3937.0, 1e-12));
}

TEST_CASE("structural CSV problems are clear errors", "[table][errors]") {
  CHECK_THROWS_WITH(parse_delimited_text("", "e.csv"), Contains("e.csv") && Contains("empty"));
  CHECK_THROWS_WITH(parse_delimited_text("id,ID\n", "d.csv"), Contains("appears twice"));
  CHECK_THROWS_WITH(parse_delimited_text("id,x\nA,1,2\n", "w.csv"),
                    Contains("row 2") && Contains("3 cells"));
  CHECK_THROWS_WITH(parse_delimited_text("id\n\"A\n", "q.csv"), Contains("never closed"));
  CHECK_THROWS_WITH(parse_delimited_text("id,\n", "h.csv"), Contains("header cell 2"));
  const Table t = parse_delimited_text("id\nA\n", "m.csv");
  CHECK_THROWS_WITH(t.require_column("height"), Contains("'height' is missing"));
}

TEST_CASE("a missing file is named", "[table][errors]") {
  CHECK_THROWS_WITH(read_table("no/such/points.csv"), Contains("no/such/points.csv"));
}

namespace {
// Writes a small table with GDAL in the given driver: id as text, h as real.
void write_ogr_table(const std::filesystem::path& path, const char* driver_name, bool as_points) {
  GDALAllRegister();
  GDALDriverH driver = GDALGetDriverByName(driver_name);
  REQUIRE(driver != nullptr);
  GDALDatasetH ds = GDALCreate(driver, path.string().c_str(), 0, 0, 0, GDT_Unknown, nullptr);
  REQUIRE(ds != nullptr);
  OGRLayerH layer =
      GDALDatasetCreateLayer(ds, "pts", nullptr, as_points ? wkbPoint : wkbNone, nullptr);
  OGRFieldDefnH id = OGR_Fld_Create("ID", OFTString);
  OGR_L_CreateField(layer, id, 1);
  OGR_Fld_Destroy(id);
  OGRFieldDefnH h = OGR_Fld_Create("Height", OFTReal);
  OGR_L_CreateField(layer, h, 1);
  OGR_Fld_Destroy(h);
  OGRFieldDefnH day = OGR_Fld_Create("Day", OFTDate);
  OGR_L_CreateField(layer, day, 1);
  OGR_Fld_Destroy(day);
  OGRFieldDefnH when = OGR_Fld_Create("When", OFTDateTime);
  OGR_L_CreateField(layer, when, 1);
  OGR_Fld_Destroy(when);
  const char* ids[] = {"007", "BM-2"};
  for (int i = 0; i < 2; ++i) {
    OGRFeatureH f = OGR_F_Create(OGR_L_GetLayerDefn(layer));
    OGR_F_SetFieldString(f, 0, ids[i]);
    if (i == 0) OGR_F_SetFieldDouble(f, 1, 12.3456);
    OGR_F_SetFieldDateTime(f, 2, 2026, 10, 6, 0, 0, 0, 0);
    OGR_F_SetFieldDateTime(f, 3, 2026, 10, 6, 8, 30, 0, 100);  // 100: UTC in GDAL's flags
    if (as_points) {
      OGRGeometryH g = OGR_G_CreateGeometry(wkbPoint);
      OGR_G_SetPoint_2D(g, 0, 500000.0 + i, 4400000.0);
      OGR_F_SetGeometryDirectly(f, g);
    }
    REQUIRE(OGR_L_CreateFeature(layer, f) == OGRERR_NONE);
    OGR_F_Destroy(f);
  }
  GDALClose(ds);
}
// Date and date-time cells read as ISO 8601, the same instants as in a CSV
// (GDAL itself writes them as YYYY/MM/DD HH:MM:SS).
void check_dates(const Table& t) {
  CHECK(t.cell(0, t.require_column("day")) == "2026-10-06");
  const auto when = parse_iso8601(t.cell(0, t.require_column("when")));
  REQUIRE(when);
  CHECK_THAT(when->seconds, WithinAbs(parse_iso8601("2026-10-06T08:30:00Z")->seconds, 1e-6));
}
}  // namespace

TEST_CASE("GDAL sources are read as text tables", "[table][gdal]") {
  testing::TempFolder folder;
  SECTION("GeoPackage point layer, geometry as x and y") {
    const auto path = folder.path() / "points.gpkg";
    write_ogr_table(path, "GPKG", true);
    const Table t = read_table(path);
    REQUIRE(t.row_count() == 2);
    CHECK(t.cell(0, t.require_column("id")) == "007");
    CHECK_THAT(*t.number(0, t.require_column("height")), WithinAbs(12.3456, 1e-12));
    CHECK_FALSE(t.number(1, t.require_column("height")));  // unset stays empty, not 0
    CHECK_THAT(*t.number(1, t.require_column("x")), WithinAbs(500001.0, 1e-9));
    check_dates(t);
  }
  SECTION("XLSX sheet, header forced and cells kept as text") {
    const auto path = folder.path() / "points.xlsx";
    write_ogr_table(path, "XLSX", false);
    const Table t = read_table(path);
    REQUIRE(t.row_count() == 2);
    CHECK(t.cell(0, t.require_column("id")) == "007");
    CHECK(t.source_row(1) == 3);
    check_dates(t);
  }
  SECTION("a point layer in another CRS than the one x and y are taken in is refused") {
    // Degrees read as metres would move every well; the layer says its CRS.
    const auto path = folder.path() / "wells.gpkg";
    GDALAllRegister();
    GDALDatasetH ds = GDALCreate(GDALGetDriverByName("GPKG"), path.string().c_str(), 0, 0, 0,
                                 GDT_Unknown, nullptr);
    REQUIRE(ds != nullptr);
    OGRSpatialReferenceH wgs84 = OSRNewSpatialReference(nullptr);
    REQUIRE(OSRSetFromUserInput(wgs84, "EPSG:4326") == OGRERR_NONE);
    OGRLayerH layer = GDALDatasetCreateLayer(ds, "wells", wgs84, wkbPoint, nullptr);
    OSRDestroySpatialReference(wgs84);
    OGRFieldDefnH id = OGR_Fld_Create("id", OFTString);
    OGR_L_CreateField(layer, id, 1);
    OGR_Fld_Destroy(id);
    OGRFeatureH f = OGR_F_Create(OGR_L_GetLayerDefn(layer));
    OGR_F_SetFieldString(f, 0, "W1");
    OGRGeometryH g = OGR_G_CreateGeometry(wkbPoint);
    OGR_G_SetPoint_2D(g, 0, -105.1, 39.8);
    OGR_F_SetGeometryDirectly(f, g);
    REQUIRE(OGR_L_CreateFeature(layer, f) == OGRERR_NONE);
    OGR_F_Destroy(f);
    GDALClose(ds);
    TableOptions projected;
    projected.xy_crs = "EPSG:32613";
    CHECK_THROWS_WITH(read_table(path, projected),
                      Contains("wells.gpkg") && Contains("EPSG:4326") && Contains("EPSG:32613"));
    TableOptions geographic;
    geographic.xy_crs = "EPSG:4326";
    CHECK_THAT(*read_table(path, geographic).number(0, 1), WithinAbs(-105.1, 1e-12));
    CHECK_NOTHROW(read_table(path));  // not checked when the caller names no CRS
  }
  SECTION("GeoJSON") {
    const auto path = folder.path() / "points.geojson";
    std::ofstream(path) << R"({"type":"FeatureCollection","features":[
      {"type":"Feature","properties":{"id":"A","height":"1.25"},"geometry":null}]})";
    const Table t = read_table(path);
    CHECK_THAT(*t.number(0, t.require_column("height")), WithinAbs(1.25, 1e-15));
  }
  SECTION("an unreadable file") {
    const auto path = folder.path() / "junk.xlsx";
    std::ofstream(path) << "not a spreadsheet";
    CHECK_THROWS_WITH(read_table(path), Contains("junk.xlsx") && Contains("cannot read"));
  }
}

TEST_CASE("GeoJSON values are read as written, not as GDAL guesses them", "[table][gdal][safety]") {
  levelhead::testing::TempFolder tmp;
  const auto file = tmp.path() / "points.geojson";
  std::ofstream(file) << R"({"type":"FeatureCollection","features":[
{"type":"Feature","properties":{"id":"2024/01/02 10:00 re-read","date":"2024-01-02T10:00:00"},"geometry":null},
{"type":"Feature","properties":{"id":"007","date":"2024-01-02"},"geometry":null}]})";
  const Table t = read_table(file);
  REQUIRE(t.row_count() == 2);
  const std::size_t id = t.require_column("id"), date = t.require_column("date");
  // Once read as a date-time and rewritten; the date column was turned to
  // 2024/01/02 10:00:00 by GDAL's own typing.
  CHECK(t.cell(0, id) == "2024/01/02 10:00 re-read");
  CHECK(t.cell(1, id) == "007");
  CHECK(t.cell(0, date) == "2024-01-02T10:00:00");
  CHECK(t.cell(1, date) == "2024-01-02");
}

TEST_CASE("a whole number written as a decimal is that whole number", "[table]") {
  // Spreadsheet writers (GDAL's ODS driver among them) give integers as
  // "1.0000000000000000".
  const Table t =
      parse_delimited_text("setups\n4\n4.0\n1.0000000000000000\n12.\n2.5\n-1.0\n.0\n", "s.csv");
  const std::size_t c = t.require_column("setups");
  CHECK(*t.count(0, c) == 4);
  CHECK(*t.count(1, c) == 4);
  CHECK(*t.count(2, c) == 1);
  CHECK(*t.count(3, c) == 12);
  CHECK_THROWS_WITH(t.count(4, c), Contains("row 6") && Contains("whole number"));
  CHECK_THROWS_WITH(t.count(5, c), Contains("whole number"));
  CHECK_THROWS_WITH(t.count(6, c), Contains("whole number"));
}

TEST_CASE("GDAL dataset names and standard input are tables too", "[table]") {
  testing::TempFolder tmp;
  const std::string text = "id,height\nBM1,10.5\nBM2,11.25\n";
  SECTION("a CSV inside a zip archive, through GDAL's /vsizip/") {
    // Written by GDAL's own zip writer, read back by name inside the archive.
    const std::string zip = (tmp.path() / "points.zip").string();
    void* handle = CPLCreateZip(zip.c_str(), nullptr);
    REQUIRE(handle);
    REQUIRE(CPLCreateFileInZip(handle, "points.csv", nullptr) == CE_None);
    REQUIRE(CPLWriteFileInZip(handle, text.data(), static_cast<int>(text.size())) == CE_None);
    CPLCloseFileInZip(handle);
    CPLCloseZip(handle);
    const Table t = read_table("/vsizip/" + zip + "/points.csv");
    REQUIRE(t.row_count() == 2);
    CHECK_THAT(*t.number(1, t.require_column("height")), WithinAbs(11.25, 1e-12));
    CHECK_THROWS_WITH(read_table("/vsizip/" + zip + "/other.csv"), Contains("other.csv"));
  }
  SECTION("\"-\" is a CSV on standard input") {
    std::istringstream input(text);
    std::streambuf* const saved = std::cin.rdbuf(input.rdbuf());
    const Table t = read_table("-");
    std::cin.rdbuf(saved);
    REQUIRE(t.row_count() == 2);
    CHECK(t.cell(0, t.require_column("id")) == "BM1");
    CHECK_THAT(*t.number(0, t.require_column("height")), WithinAbs(10.5, 1e-12));
  }
}

TEST_CASE("GDAL's messages are caught for levelhead's own, not printed", "[table][gdal]") {
  GDALAllRegister();
  OGRSpatialReferenceH srs = OSRNewSpatialReference(nullptr);
  std::string quoted;
  {
    const util::GdalMessages gdal;
    CHECK(OSRSetFromUserInput(srs, "EPSG:99999") != OGRERR_NONE);
    quoted = gdal.quoted();
  }
  OSRDestroySpatialReference(srs);
  CHECK_THAT(quoted, Contains("(GDAL: ") && Contains("crs not found"));
}

TEST_CASE("every output column has one type and unit, and the formats doc lists each",
          "[table][outputs]") {
  // The dictionary is sorted (find_output_column searches it) and unique.
  const auto& columns = output_columns();
  for (std::size_t i = 1; i < columns.size(); ++i) {
    INFO(columns[i].name);
    CHECK(columns[i - 1].name < columns[i].name);
  }
  // docs/formats.md: "| `name` | Type | unit |" for every column, the same.
  std::ifstream doc(std::filesystem::path(LEVELHEAD_FIXTURES_DIR) / ".." / "docs" / "formats.md");
  REQUIRE(doc);
  std::map<std::string, std::string> documented;
  bool in_section = false;
  for (std::string line; std::getline(doc, line);) {
    if (line.rfind("## ", 0) == 0) in_section = line == "## Columns of the CSV outputs";
    if (!in_section || line.rfind("| `", 0) != 0) continue;
    const auto close = line.find('`', 3);
    documented[line.substr(3, close - 3)] = line.substr(close + 1);
  }
  for (const OutputColumn& c : columns) {
    INFO(c.name);
    const auto it = documented.find(std::string(c.name));
    REQUIRE(it != documented.end());
    CHECK(it->second == fmt::format(" | {} | {} |", csvt_name(c.type), c.unit));
  }
  CHECK(csvt_line({"well", "head", "time_utc", "their_own"}) ==
        "\"String\",\"Real\",\"DateTime\",\"String\"");
}

TEST_CASE("a CSV written by levelhead opens typed in GDAL through its CSVT",
          "[table][outputs][gdal]") {
  testing::TempFolder folder;
  OutputSet out(folder.path());
  out.open("heads.csv") << "well,head,time_utc,their_own\n007,12.5,2026-10-06T08:30:00Z,4\n";
  out.commit();
  REQUIRE(std::filesystem::exists(folder.path() / "heads.csvt"));
  GDALAllRegister();
  GDALDatasetH ds = GDALOpenEx((folder.path() / "heads.csv").string().c_str(), GDAL_OF_VECTOR,
                               nullptr, nullptr, nullptr);
  REQUIRE(ds);
  OGRLayerH layer = GDALDatasetGetLayer(ds, 0);
  OGRFeatureDefnH defn = OGR_L_GetLayerDefn(layer);
  const auto type = [&](const char* name) {
    return OGR_Fld_GetType(OGR_FD_GetFieldDefn(defn, OGR_FD_GetFieldIndex(defn, name)));
  };
  CHECK(type("well") == OFTString);
  CHECK(type("head") == OFTReal);
  CHECK(type("time_utc") == OFTDateTime);
  CHECK(type("their_own") == OFTString);
  OGRFeatureH f = OGR_L_GetNextFeature(layer);
  REQUIRE(f);
  CHECK(std::string(OGR_F_GetFieldAsString(f, OGR_FD_GetFieldIndex(defn, "well"))) == "007");
  OGR_F_Destroy(f);
  GDALClose(ds);
}

namespace {
struct RecordedProgress : ProgressReporter {
  std::vector<std::pair<std::string, double>> reports;
  std::vector<std::string> finished;
  void report(const std::string& task, double fraction) override {
    reports.emplace_back(task, fraction);
  }
  void done(const std::string& task) override { finished.push_back(task); }
};
}  // namespace

TEST_CASE("reading a long table in batches reports its progress", "[table][progress]") {
  testing::TempFolder folder;
  const auto path = folder.path() / "records.csv";
  {
    std::ofstream out(path);
    out << "sensor,time,pressure\n";
    for (int i = 0; i < 25000; ++i) out << "T1,2026-01-01T00:00Z," << i << "\n";
  }
  RecordedProgress recorded;
  std::size_t rows = 0;
  {
    const ProgressScope scope(&recorded);
    read_table_in_batches(path, {}, 10000, [&](Table& t) { rows += t.row_count(); });
  }
  CHECK(rows == 25000);
  // 0 at the start, then after each full batch, rising; done once.
  REQUIRE(recorded.reports.size() == 3);
  CHECK(recorded.reports.front() == std::pair<std::string, double>("reading records.csv", 0.0));
  // Bytes read: the rows grow by a digit now and then, so about 2/5 and 4/5.
  CHECK_THAT(recorded.reports[1].second, WithinAbs(0.4, 0.02));
  CHECK_THAT(recorded.reports[2].second, WithinAbs(0.8, 0.02));
  CHECK(recorded.finished == std::vector<std::string>{"reading records.csv"});
  // Without a scope nothing is reported, and nothing fails.
  read_table_in_batches(path, {}, 10000, [](Table&) {});
  CHECK(recorded.reports.size() == 3);
}

// The batch reader checks UTF-8 in 16 MB windows and gives back the pages
// it has passed: a file of several windows must read every row as written,
// and a bad byte in a later window must still be named by its line.
TEST_CASE("a table of several windows reads whole, and a late bad byte is named by its line",
          "[table][safety]") {
  testing::TempFolder folder;
  const auto path = folder.path() / "long.csv";
  const int rows = 700000;  // about 21 MB
  const auto write = [&](int bad_row) {
    std::ofstream out(path, std::ios::binary);
    out << "\xEF\xBB\xBFwell,time,depth_with_a_long_name\n";
    for (int i = 0; i < rows; ++i) {
      out << "W" << i % 97 << ",2026-01-01T00:00Z," << i << (i == bad_row ? "\xE9" : "") << "\n";
    }
  };
  write(-1);
  long long sum = 0;
  int read = 0;
  read_table_in_batches(path, {}, 65536, [&](Table& t) {
    const auto depth = t.require_column("depth_with_a_long_name");
    for (std::size_t r = 0; r < t.row_count(); ++r) {
      sum += static_cast<long long>(*t.number(r, depth));
      ++read;
    }
  });
  CHECK(read == rows);
  CHECK(sum == static_cast<long long>(rows) * (rows - 1) / 2);
  write(650000);  // past the first 16 MB window; line = row + 2
  CHECK_THROWS_WITH(read_table_in_batches(path, {}, 65536, [](Table&) {}),
                    Catch::Contains("line 650002") && Catch::Contains("0xE9"));
}

TEST_CASE("a CSV with a cell that is not a number is never put in place",
          "[table][outputs][safety]") {
  for (const char* bad : {"nan", "-nan", "NaN", "inf", "-Inf", "+inf"}) {
    testing::TempFolder folder;
    {
      OutputSet out(folder.path());
      out.open("heights.csv") << "point,height\nBM1,101.2\nBM2," << bad << "\n";
      CHECK_THROWS_AS(out.commit(), InternalCheckError);
    }
    CHECK_FALSE(std::filesystem::exists(folder.path() / "heights.csv"));
  }
  // Text that only begins like one, and quoted text, is written.
  testing::TempFolder folder;
  OutputSet out(folder.path());
  out.open("notes.csv") << "point,note\nBM1,info\nBM2,nano\nBM3,\"nan\"\nBM4,nan1\n";
  CHECK_NOTHROW(out.commit());
  CHECK(std::filesystem::exists(folder.path() / "notes.csv"));
}

// A table written whole by CsvRows on the set is checked number by number
// as it is written, and not read back at commit: a non-finite number is
// still refused, named by row and column, and text is never mistaken for one.
TEST_CASE("a table written by CsvRows is checked as it is written", "[table][outputs][safety]") {
  for (const double bad :
       {std::numeric_limits<double>::quiet_NaN(), -std::numeric_limits<double>::infinity()}) {
    testing::TempFolder folder;
    {
      OutputSet out(folder.path());
      CsvRows rows(out, "heights.csv");
      rows.line("point,height,sigma");
      rows.text("BM1").fixed(101.2, 4).fixed(0.001, 4).end_row();
      rows.text("BM2").fixed(99.0, 4).fixed(bad, 4).end_row();
      rows.finish();
      REQUIRE(rows.first_non_finite());
      CHECK_THAT(*rows.first_non_finite(), Contains("row 3") && Contains("column 'sigma'"));
      CHECK_THROWS_WITH(out.commit(),
                        Contains("heights.csv") && Contains("row 3") && Contains("column 'sigma'"));
    }
    CHECK_FALSE(std::filesystem::exists(folder.path() / "heights.csv"));
  }
  // Header cells given one by one name the column too; an id that reads
  // "nan" is text and is written.
  testing::TempFolder folder;
  OutputSet out(folder.path());
  CsvRows rows(out, "points.csv");
  rows.text("id").text("height").end_row();
  rows.text("nan").fixed(1.5, 3).end_row();
  rows.text("inf").fixed(std::optional<double>(), 3).end_row();
  rows.finish();
  CHECK_FALSE(rows.first_non_finite());
  CHECK_NOTHROW(out.commit());
  CHECK(testing::read_file(folder.path() / "points.csv") == "id,height\nnan,1.500\ninf,\n");
}

TEST_CASE("fixed notation is written as fmt writes it", "[table][outputs][numbers]") {
  const auto fixed = [](double value, int decimals) {
    std::string out;
    append_fixed(out, value, decimals);
    return out;
  };
  const auto reference = [](double value, int decimals) {
    return fmt::format("{:.{}f}", value, decimals);
  };
  // Exact binary ties (printf rounds them to even), values that only look
  // like ties, negative values that round to zero, and the special values.
  for (const double value : {0.0,
                             -0.0,
                             0.125,
                             0.375,
                             2.5,
                             3.5,
                             -2.5,
                             1.0005,
                             2.675,
                             1e-6,
                             -1e-6,
                             -0.000004,
                             0.000005,
                             123456.789012345,
                             -98765.4321,
                             4503599627370495.0,
                             1e17,
                             9.999995,
                             99.9999949999,
                             std::numeric_limits<double>::infinity(),
                             -std::numeric_limits<double>::infinity(),
                             std::numeric_limits<double>::quiet_NaN(),
                             std::numeric_limits<double>::denorm_min()}) {
    for (int decimals : {0, 1, 2, 3, 5, 9, 15}) {
      INFO(value << " with " << decimals);
      CHECK(fixed(value, decimals) == reference(value, decimals));
    }
  }
  // Random heights, differences and sigmas in the ranges of survey tables.
  std::mt19937_64 rng(11);
  std::uniform_real_distribution<double> heights(-500.0, 9000.0), small(-0.05, 0.05);
  std::uniform_int_distribution<int> decimals(0, 8);
  int differing = 0;
  for (int i = 0; i < 200000; ++i) {
    const double value = i % 2 ? heights(rng) : small(rng);
    const int d = decimals(rng);
    differing += fixed(value, d) != reference(value, d);
  }
  CHECK(differing == 0);
  // Near-ties made on purpose: k + 0.5 ulp-scale neighbours at 5 decimals.
  for (long k = 0; k < 20000; ++k) {
    const double tie = (static_cast<double>(k) + 0.5) / 1e5;
    for (double value : {std::nextafter(tie, 0.0), tie, std::nextafter(tie, 1.0)}) {
      INFO(value);
      CHECK(fixed(value, 5) == reference(value, 5));
    }
  }
}
