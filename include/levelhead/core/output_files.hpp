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
#include <mutex>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "levelhead/core/errors.hpp"

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

  // Called by a CsvRows that wrote the whole of `name` (see there): the
  // file's numbers were checked as they were written, so commit does not
  // read it back; `non_finite_at` is the first non-finite cell, if any.
  // May be called from any thread.
  void note_checked_table(const std::string& name, std::optional<std::string> non_finite_at);

 private:
  std::filesystem::path temporary_path(const std::string& name) const;
  void refuse_input_destination(const std::string& name) const;
  void write_column_types();
  std::filesystem::path folder_;
  std::map<std::string, std::ofstream> streams_;
  std::vector<std::string> reserved_;
  std::vector<std::filesystem::path> created_folders_;  // by the constructor, innermost first
  std::mutex checked_mutex_;
  std::map<std::string, std::optional<std::string>> checked_tables_;
  bool committed_ = false;
};

// The error of a table about to hold a non-finite number at `cell` ("row R,
// column 'name' ('nan')"): a fault of levelhead, since inputs are checked
// at the edge.
InternalCheckError non_finite_output_error(const std::string& name, const std::string& cell);

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
//
// Every number given to fixed() is checked: first_non_finite() names the
// first that is not finite. Made on an OutputSet, a CsvRows opens the file
// itself, must be its only writer, and tells the set at finish(): the set
// then trusts the check instead of reading the file back at commit.
class CsvRows {
 public:
  explicit CsvRows(std::ostream& out);
  CsvRows(OutputSet& set, const std::string& name);
  ~CsvRows();
  CsvRows(const CsvRows&) = delete;
  CsvRows& operator=(const CsvRows&) = delete;

  CsvRows& line(std::string_view text);    // a whole line as it is (the header)
  CsvRows& text(std::string_view text);    // quoted when needed (csv_cell)
  CsvRows& quoted(std::string_view cell);  // a cell already made by csv_cell
  CsvRows& fixed(double value, int decimals);
  CsvRows& fixed(const std::optional<double>& value, int decimals);  // empty when unset
  CsvRows& integer(long long value);
  CsvRows& empty();
  void end_row();
  void finish();

  // "row R, column 'name' ('nan')" (the header is row 1), or nullopt.
  const std::optional<std::string>& first_non_finite() const { return first_non_finite_; }

 private:
  void separate();
  void note_non_finite(double value);
  std::ostream& out_;
  OutputSet* set_ = nullptr;
  std::string name_;
  std::string buffer_;
  bool row_started_ = false;
  std::size_t rows_ = 0, column_ = 0;  // lines ended; cells begun in the current one
  std::vector<std::string> header_;
  std::optional<std::string> first_non_finite_;
};

}  // namespace levelhead
