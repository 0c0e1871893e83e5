#pragma once
// All-or-nothing output: files are written under temporary names in the
// output folder and renamed to their real names only when every one of them
// is complete. If anything fails (or the set is destroyed uncommitted), the
// temporary files are removed and no file that looks finished is left.
// Existing files of the same names are replaced only at commit.
//
// A file that is an input of the running command (levelhead/core/input_files.hpp)
// is never replaced: open, reserve and commit throw OutputError naming it.
// At commit every file is flushed to disk before the renames, and the
// renames are not interrupted by Ctrl-C or kill (those signals wait until
// the set is in place).

#include <filesystem>
#include <fstream>
#include <map>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

namespace levelhead {

class OutputSet {
 public:
  // Creates `folder` (and parents) if needed; throws OutputError if it cannot.
  explicit OutputSet(std::filesystem::path folder);
  ~OutputSet();
  OutputSet(const OutputSet&) = delete;
  OutputSet& operator=(const OutputSet&) = delete;

  // A stream to the temporary file behind `name` (a plain file name).
  std::ostream& open(const std::string& name);
  // A temporary path for a file written by another library (e.g. a
  // GeoPackage by GDAL); it is renamed to `name` at commit like the rest.
  std::filesystem::path reserve(const std::string& name);
  // Closes every stream, checks it, writes NAME.csvt beside every NAME.csv
  // (GDAL's column types, output_columns.hpp), and renames all files into
  // place.
  void commit();

  const std::filesystem::path& folder() const { return folder_; }

 private:
  std::filesystem::path temporary_path(const std::string& name) const;
  void refuse_input_destination(const std::string& name) const;
  void write_column_types();
  std::filesystem::path folder_;
  std::map<std::string, std::ofstream> streams_;
  std::vector<std::string> reserved_;
  std::vector<std::filesystem::path> created_folders_;  // by the constructor, innermost first
  bool committed_ = false;
};

// A CSV cell: quoted when it holds a comma, quote or line break.
std::string csv_cell(const std::string& text);
// The same, appended to `out` (no allocation for plain cells).
void append_csv_cell(std::string& out, std::string_view text);

// `value` in fixed notation with `decimals` (0-15) digits after the point,
// appended to `out`: the same text as fmt's "{:.Nf}" and printf's "%.Nf"
// (correctly rounded, "-0.00" for a small negative value), made without
// the general algorithm for the usual table values.
void append_fixed(std::string& out, double value, int decimals);

// A CSV table written cell by cell into one buffer that goes to the stream
// in blocks of about 1 MB: numbers are formatted straight into the buffer,
// no string is made per cell. Cells are separated by commas; end_row ends a
// line. The last block is written by finish() or the destructor; the
// stream's state is checked by OutputSet::commit as for any stream.
class CsvRows {
 public:
  explicit CsvRows(std::ostream& out);
  ~CsvRows();
  CsvRows(const CsvRows&) = delete;
  CsvRows& operator=(const CsvRows&) = delete;

  CsvRows& line(std::string_view text);  // a whole line as it is (the header)
  CsvRows& text(std::string_view text);  // quoted when needed (csv_cell)
  CsvRows& fixed(double value, int decimals);
  CsvRows& fixed(const std::optional<double>& value, int decimals);  // empty when unset
  CsvRows& integer(long long value);
  CsvRows& empty();
  void end_row();
  void finish();

 private:
  void separate();
  std::ostream& out_;
  std::string buffer_;
  bool row_started_ = false;
};

}  // namespace levelhead
