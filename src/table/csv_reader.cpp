// Fast reader for delimited text (CSV/TSV). Written by hand rather than
// through GDAL's CSV driver because GDAL 3.6 guesses types from the first
// megabyte, silently empties later bad values and turns `007` into 7; here
// every cell stays text and the typed accessors of Table report bad cells.

#include <fcntl.h>
#include <fmt/format.h>
#include <sys/mman.h>
#include <sys/stat.h>
#include <unistd.h>

#include <algorithm>
#include <deque>
#include <filesystem>
#include <fstream>
#include <optional>
#include <sstream>

#include "levelhead/core/input_files.hpp"
#include "levelhead/core/progress.hpp"
#include "table/readers.hpp"
#include "util/encoding.hpp"
#include "util/text.hpp"

namespace levelhead {

namespace {

constexpr std::string_view utf8_byte_order_mark = "\xEF\xBB\xBF";

// The widest sheet of common spreadsheet programs (16384 columns, XFD): no
// survey table comes near it, and a header far wider is a wrong file.
constexpr std::size_t max_columns = 16384;

char detect_separator(std::string_view header_line) {
  std::size_t commas = 0, semicolons = 0, tabs = 0;
  bool quoted = false;
  for (char c : header_line) {
    if (c == '"') quoted = !quoted;
    if (quoted) continue;
    commas += c == ',';
    semicolons += c == ';';
    tabs += c == '\t';
  }
  if (tabs > commas && tabs >= semicolons) return '\t';
  if (semicolons > commas) return ';';
  return ',';
}

// Splits delimited text record by record. A record ends at a line break
// outside quotes; `""` inside quotes is one quote character.
class RecordReader {
 public:
  RecordReader(std::string_view text, char separator, std::string source)
      : text_(text), separator_(separator), source_(std::move(source)) {}

  // Bytes read so far.
  std::size_t position() const { return position_; }

  // Returns false at the end of the text. `line` is the line the record starts on.
  bool next(std::vector<std::string_view>& cells, std::size_t& line) {
    cells.clear();
    unescaped_.clear();
    if (position_ >= text_.size()) return false;
    line = line_;
    std::size_t cell_start = position_;
    while (true) {
      if (position_ < text_.size() && text_[position_] == '"' &&
          util::trim(text_.substr(cell_start, position_ - cell_start)).empty()) {
        cells.push_back(read_quoted(line));
        // Only blanks may follow the closing quote before the separator.
        while (position_ < text_.size() && (text_[position_] == ' ' || text_[position_] == '\t') &&
               text_[position_] != separator_) {
          ++position_;
        }
        if (position_ < text_.size() && text_[position_] != separator_ &&
            text_[position_] != '\n' && text_[position_] != '\r') {
          throw InputError(CellLocation{source_, line, {}}, std::string(cells.back()),
                           "unexpected text after a closing quote; inside a quoted cell write a "
                           "quote as two quotes (\"\")");
        }
      } else {
        while (position_ < text_.size() && text_[position_] != separator_ &&
               text_[position_] != '\n' && text_[position_] != '\r') {
          ++position_;
        }
        cells.push_back(text_.substr(cell_start, position_ - cell_start));
      }
      if (position_ >= text_.size()) return true;
      const char c = text_[position_++];
      if (c == separator_) {
        cell_start = position_;
        continue;
      }
      if (c == '\r' && position_ < text_.size() && text_[position_] == '\n') ++position_;
      ++line_;
      return true;
    }
  }

 private:
  std::string_view read_quoted(std::size_t record_line) {
    ++position_;  // opening quote
    const std::size_t start = position_;
    bool has_escape = false;
    while (true) {
      if (position_ >= text_.size()) {
        throw InputError(CellLocation{source_, record_line, {}}, "\"",
                         "a quoted cell is never closed; add the closing quote");
      }
      const char c = text_[position_];
      if (c == '"') {
        if (position_ + 1 < text_.size() && text_[position_ + 1] == '"') {
          has_escape = true;
          position_ += 2;
          continue;
        }
        break;
      }
      if (c == '\n') ++line_;
      ++position_;
    }
    std::string_view raw = text_.substr(start, position_ - start);
    ++position_;  // closing quote
    if (!has_escape) return raw;
    std::string& out = unescaped_.emplace_back();
    for (std::size_t i = 0; i < raw.size(); ++i) {
      out.push_back(raw[i]);
      if (raw[i] == '"') ++i;
    }
    return out;
  }

  std::string_view text_;
  char separator_;
  std::string source_;
  std::size_t position_ = 0;
  std::size_t line_ = 1;
  std::deque<std::string> unescaped_;  // deque: references stay valid as it grows
};

bool blank(const std::vector<std::string_view>& cells) {
  for (auto c : cells) {
    if (!util::trim(c).empty()) return false;
  }
  return true;
}

}  // namespace

namespace {

// `text` has been checked for UTF-8. After each batch is consumed,
// `passed(offset)` is told how far into `text` the reader has come.
void parse_delimited_batches(std::string_view text, const std::string& source,
                             const TableOptions& options, std::size_t batch_rows,
                             const std::function<void(Table&)>& consume,
                             const std::function<void(std::size_t)>& passed = {}) {
  const std::size_t first_break = text.find_first_of("\r\n");
  const char separator = detect_separator(text.substr(0, first_break));

  RecordReader reader(text, separator, source);
  std::vector<std::string_view> cells;
  std::size_t line = 0;
  std::vector<std::string> header;
  while (reader.next(cells, line)) {
    if (blank(cells)) continue;
    for (std::size_t i = 0; i < cells.size(); ++i) {
      const std::string_view name = util::trim(cells[i]);
      if (name.empty()) {
        throw InputError(CellLocation{source, line, {}}, "",
                         fmt::format("header cell {} is empty; every column needs a name", i + 1));
      }
      header.emplace_back(name);
    }
    if (header.size() > max_columns) {
      throw InputError(CellLocation{source, line, {}}, util::shortened(header.back(), 40),
                       fmt::format("the header names {} columns, more than any table levelhead "
                                   "reads ({} at most, the widest spreadsheet); is this the right "
                                   "file, and is its separator one of , ; or tab?",
                                   header.size(), max_columns));
    }
    break;
  }
  if (header.empty()) throw InputError(source, "the file is empty: expected a header row");

  const bool one_batch = batch_rows == 0;
  const auto fresh = [&] {
    Table table(source, header, options);
    // About 32 bytes a row is typical of survey tables; reserve to avoid regrowth.
    if (one_batch) table.reserve(text.size() / 32 + 1, text.size());
    return table;
  };
  Table table = fresh();
  const ProgressTask progress("reading " + std::filesystem::path(source).filename().string());
  while (reader.next(cells, line)) {
    if (blank(cells)) continue;
    table.add_row(cells, line);
    if (!one_batch && table.row_count() >= batch_rows) {
      consume(table);
      table = fresh();
      if (passed) passed(reader.position());
      progress.report(static_cast<double>(reader.position()) / static_cast<double>(text.size()));
    }
  }
  if (one_batch || table.row_count() > 0) consume(table);
}

}  // namespace

Table parse_delimited_text(std::string_view text, const std::string& source,
                           const TableOptions& options) {
  std::optional<Table> result;
  if (text.substr(0, 3) == utf8_byte_order_mark) text.remove_prefix(3);
  util::require_utf8_file(text, source);
  parse_delimited_batches(text, source, options, 0,
                          [&](Table& t) { result.emplace(std::move(t)); });
  return std::move(*result);
}

void read_table_in_batches(const std::filesystem::path& path, const TableOptions& options,
                           std::size_t batch_rows, const std::function<void(Table&)>& consume) {
  std::string extension = path.extension().string();
  std::transform(extension.begin(), extension.end(), extension.begin(), ::tolower);
  if (extension != ".csv" && extension != ".tsv" && extension != ".txt") {
    Table whole = read_table(path, options);
    consume(whole);
    return;
  }
  note_input_file(path);
  // Mapped, not read: the pages come and go as the reader passes.
  const int fd = ::open(path.c_str(), O_RDONLY);
  if (fd < 0) throw InputError(path.string(), "no such file or cannot open it for reading");
  struct stat info {};
  if (::fstat(fd, &info) != 0 || info.st_size == 0) {
    ::close(fd);
    throw InputError(path.string(), "the file is empty: expected a header row");
  }
  const std::size_t size = static_cast<std::size_t>(info.st_size);
  void* mapped = ::mmap(nullptr, size, PROT_READ, MAP_PRIVATE, fd, 0);
  ::close(fd);
  if (mapped == MAP_FAILED)
    throw InputError(path.string(), "the file cannot be mapped for reading");
  ::madvise(mapped, size, MADV_SEQUENTIAL);
  struct Unmap {
    void* p;
    std::size_t n;
    ~Unmap() { ::munmap(p, n); }
  } unmap{mapped, size};
  const char* const begin = static_cast<const char*>(mapped);
  // Pages behind the reader are given back (MADV_DONTNEED on a read-only
  // file mapping unmaps them from this process; the file and the page cache
  // keep them, and a later touch reads them again), so that resident memory
  // stays bounded whatever the file's size.
  const std::size_t page = static_cast<std::size_t>(::sysconf(_SC_PAGESIZE));
  std::size_t released = 0;
  const auto release_before = [&](const char* position) {
    const std::size_t upto = static_cast<std::size_t>(position - begin) / page * page;
    if (upto > released) {
      ::madvise(const_cast<char*>(begin) + released, upto - released, MADV_DONTNEED);
      released = upto;
    }
  };
  std::string_view text(begin, size);
  if (text.substr(0, 3) == utf8_byte_order_mark) text.remove_prefix(3);
  // The UTF-8 check in windows that end after a line break (a break is never
  // inside a multi-byte character); the whole text only to word an error.
  if (util::utf16_hint(text)) util::require_utf8_file(text, path.string());
  constexpr std::size_t utf8_window = std::size_t{16} << 20;
  for (std::size_t start = 0; start < text.size();) {
    std::size_t end = std::min(text.size(), start + utf8_window);
    if (end < text.size()) {
      const std::size_t last_break = text.rfind('\n', end - 1);
      if (last_break != std::string_view::npos && last_break >= start) end = last_break + 1;
    }
    if (util::first_invalid_utf8(text.substr(start, end - start)))
      util::require_utf8_file(text, path.string());
    release_before(text.data() + end);
    start = end;
  }
  released = 0;
  parse_delimited_batches(text, path.string(), options, std::max<std::size_t>(batch_rows, 1),
                          consume,
                          [&](std::size_t offset) { release_before(text.data() + offset); });
}

namespace detail {

Table read_delimited_file(const std::filesystem::path& path, const TableOptions& options) {
  return parse_delimited_text(read_input_text(path), path.string(), options);
}

}  // namespace detail
}  // namespace levelhead
