#include "levelhead/core/output_files.hpp"

#include <fcntl.h>
#include <fmt/format.h>
#include <signal.h>
#include <unistd.h>

#include <algorithm>
#include <array>
#include <charconv>
#include <cmath>
#include <cstdint>
#include <cstring>
#include <iterator>
#include <optional>

#include "levelhead/core/errors.hpp"
#include "levelhead/core/input_files.hpp"
#include "levelhead/core/output_columns.hpp"
#include "levelhead/core/rejects.hpp"

namespace levelhead {

namespace {

// Forces a file's (or a folder's) contents to the disk, so that a crash
// after the renames cannot leave a renamed but empty file.
void flush_to_disk(const std::filesystem::path& path) {
  const int fd = ::open(path.c_str(), O_RDONLY | O_CLOEXEC);
  if (fd < 0) return;  // reported by the rename that follows if it matters
  ::fsync(fd);
  ::close(fd);
}

// Blocks the signals that end a process on the user's request (Ctrl-C, kill,
// a closed terminal) while in scope: they are delivered after the renames,
// so an interrupted commit never leaves part of the set new and part old.
class DeferTerminationSignals {
 public:
  DeferTerminationSignals() {
    sigset_t set;
    sigemptyset(&set);
    for (int s : {SIGINT, SIGTERM, SIGHUP, SIGQUIT}) sigaddset(&set, s);
    pthread_sigmask(SIG_BLOCK, &set, &previous_);
  }
  ~DeferTerminationSignals() { pthread_sigmask(SIG_SETMASK, &previous_, nullptr); }
  DeferTerminationSignals(const DeferTerminationSignals&) = delete;
  DeferTerminationSignals& operator=(const DeferTerminationSignals&) = delete;

 private:
  sigset_t previous_{};
};

// "nan", "inf", signed or not, any case; `cell` without its line end.
bool is_non_finite_text(std::string_view cell) {
  if (cell.size() == 4 && (cell[0] == '-' || cell[0] == '+')) cell.remove_prefix(1);
  if (cell.size() != 3) return false;
  const auto lower = [](char c) { return static_cast<char>(c | 0x20); };  // ASCII letters only
  const char a = lower(cell[0]), b = lower(cell[1]), c = lower(cell[2]);
  return (a == 'n' && b == 'a' && c == 'n') || (a == 'i' && b == 'n' && c == 'f');
}

// The first cell of a CSV file that holds a non-finite number as fmt and
// iostreams print one (nan, -nan, inf, -inf): "row R, column 'name'
// ('nan')". Inputs are checked at the edge, so such a cell is a fault of a
// computation; it is caught here, before the file is committed, rather than
// reaching a user as a number. Reads the file once, in blocks.
std::optional<std::string> find_non_finite_cell(const std::filesystem::path& file) {
  std::ifstream in(file, std::ios::binary);
  std::vector<char> block(1 << 20);
  std::vector<std::string> header;
  std::string header_cell;
  char start[4];                             // the current cell's first characters
  std::size_t cell_length = 0;               // without '\r'
  bool quoted = false, cell_quoted = false;  // a quoted cell is text
  std::size_t row = 1, column = 0;
  const auto end_cell = [&]() -> std::optional<std::string> {
    std::optional<std::string> found;
    if (row == 1) {
      header.push_back(std::move(header_cell));
      header_cell.clear();
    } else if (!cell_quoted && cell_length <= 4 &&
               is_non_finite_text(std::string_view(start, cell_length))) {
      found = fmt::format("row {}, column '{}' ('{}')", row,
                          column < header.size() ? header[column] : std::to_string(column + 1),
                          std::string_view(start, cell_length));
    }
    cell_length = 0;
    cell_quoted = false;
    return found;
  };
  // Bytes that end or open a cell; the rest of a cell longer than 4
  // characters cannot make it non-finite, so it is skipped by a table look-up
  // per byte (most cells of a table are longer numbers).
  std::array<bool, 256> boundary{};
  for (const unsigned char c : {',', '\n', '"'}) boundary[c] = true;
  while (in) {
    in.read(block.data(), static_cast<std::streamsize>(block.size()));
    const std::size_t n = static_cast<std::size_t>(in.gcount());
    const char* const data = block.data();
    for (std::size_t i = 0; i < n; ++i) {
      if (quoted) {
        const void* close = std::memchr(data + i, '"', n - i);
        if (close == nullptr) break;
        i = static_cast<std::size_t>(static_cast<const char*>(close) - data);
        quoted = false;  // "" inside quotes closes and reopens: the same
        continue;
      }
      if (row > 1 && cell_length > sizeof start) {
        while (i < n && !boundary[static_cast<unsigned char>(data[i])]) ++i;
        if (i == n) break;
      }
      const char c = data[i];
      if (c == ',' || c == '\n') {
        if (auto found = end_cell()) return found;
        if (c == ',') {
          ++column;
        } else {
          ++row;
          column = 0;
        }
      } else if (c == '"') {
        quoted = cell_quoted = true;
      } else if (c != '\r') {
        if (row == 1) header_cell.push_back(c);
        if (cell_length < sizeof start) start[cell_length] = c;
        ++cell_length;
      }
    }
  }
  if (cell_length > 0 || row == 1) return end_cell();
  return std::nullopt;
}

}  // namespace

OutputSet::OutputSet(std::filesystem::path folder) : folder_(std::move(folder)) {
  // The folders this set creates, innermost first: removed again when it
  // is never committed, so a failed command leaves no empty folder behind.
  for (std::filesystem::path missing = folder_; !missing.empty() && !path_exists(missing);
       missing = missing.parent_path()) {
    created_folders_.push_back(missing);
    if (missing == missing.parent_path()) break;
  }
  std::error_code ec;
  std::filesystem::create_directories(folder_, ec);
  if (ec || !std::filesystem::is_directory(folder_)) {
    throw OutputError(fmt::format("cannot create the output folder '{}': {}", folder_.string(),
                                  ec ? ec.message() : "a file of that name is in the way"));
  }
}

OutputSet::~OutputSet() {
  if (committed_) return;
  for (auto& [name, stream] : streams_) {
    stream.close();
    std::error_code ignored;
    std::filesystem::remove(temporary_path(name), ignored);
  }
  for (const std::string& name : reserved_) {
    std::error_code ignored;
    std::filesystem::remove(temporary_path(name), ignored);
  }
  // Only while empty: remove() leaves a folder that holds anything.
  for (const std::filesystem::path& created : created_folders_) {
    std::error_code ignored;
    if (!std::filesystem::remove(created, ignored)) break;
  }
}

std::filesystem::path OutputSet::reserve(const std::string& name) {
  if (streams_.count(name) ||
      std::find(reserved_.begin(), reserved_.end(), name) != reserved_.end()) {
    throw std::logic_error("output file reserved twice: " + name);
  }
  refuse_input_destination(name);
  reserved_.push_back(name);
  std::error_code ignored;
  std::filesystem::remove(temporary_path(name), ignored);
  return temporary_path(name);
}

std::filesystem::path OutputSet::temporary_path(const std::string& name) const {
  // Hidden and marked as partial, with the process id so runs do not collide;
  // the extension is kept (GDAL drivers check it).
  const std::filesystem::path plain(name);
  return folder_ / fmt::format(".{}.partial-{}{}", plain.stem().string(),
                               static_cast<long>(getpid()), plain.extension().string());
}

void OutputSet::refuse_input_destination(const std::string& name) const {
  if (const auto input = input_file_at(folder_ / name)) {
    throw OutputError(fmt::format(
        "refusing to write '{}': it is the input file '{}' of this run, which would be replaced; "
        "choose another output folder or file name so the input is kept",
        (folder_ / name).string(), *input));
  }
}

std::ostream& OutputSet::open(const std::string& name) {
  refuse_input_destination(name);
  auto [it, inserted] = streams_.try_emplace(name);
  if (!inserted) throw std::logic_error("output file opened twice: " + name);
  it->second.open(temporary_path(name), std::ios::binary | std::ios::trunc);
  if (!it->second) {
    throw OutputError(fmt::format("cannot write in the output folder '{}'", folder_.string()));
  }
  return it->second;
}

namespace {

// The cells of a CSV header line (RFC 4180 quoting).
std::vector<std::string> header_cells(const std::string& line) {
  std::vector<std::string> cells(1);
  bool quoted = false;
  for (std::size_t i = 0; i < line.size(); ++i) {
    const char c = line[i];
    if (quoted && c == '"' && i + 1 < line.size() && line[i + 1] == '"') {
      cells.back() += '"';
      ++i;
    } else if (c == '"') {
      quoted = !quoted;
    } else if (c == ',' && !quoted) {
      cells.emplace_back();
    } else if (c != '\r') {
      cells.back() += c;
    }
  }
  return cells;
}

}  // namespace

void OutputSet::write_column_types() {
  std::vector<std::string> tables;
  for (const auto& [name, stream] : streams_) {
    if (std::filesystem::path(name).extension() == ".csv") tables.push_back(name);
  }
  for (const std::string& table : tables) {
    const std::string types = std::filesystem::path(table).stem().string() + ".csvt";
    if (streams_.count(types)) continue;
    std::string header;
    std::ifstream in(temporary_path(table));
    std::getline(in, header);
    std::ofstream out(reserve(types), std::ios::binary | std::ios::trunc);
    out << csvt_line(header_cells(header)) << '\n';
    out.close();
    if (!out)
      throw OutputError(fmt::format("writing '{}' in '{}' failed", types, folder_.string()));
  }
}

void OutputSet::commit() {
  for (auto& [name, stream] : streams_) {
    stream.flush();
    stream.close();
    if (stream.fail()) {
      throw OutputError(
          fmt::format("writing '{}' in '{}' failed (disk full?)", name, folder_.string()));
    }
  }
  write_column_types();
  std::vector<std::string> names = reserved_;
  for (const auto& [name, stream] : streams_) names.push_back(name);
  // Inputs read after the files were opened (streamed tables) are checked
  // again here, before anything is renamed.
  for (const std::string& name : names) refuse_input_destination(name);
  for (const auto& [name, stream] : streams_) {
    if (std::filesystem::path(name).extension() != ".csv") continue;
    {
      const std::lock_guard lock(checked_mutex_);
      if (const auto checked = checked_tables_.find(name); checked != checked_tables_.end()) {
        if (checked->second) throw non_finite_output_error(name, *checked->second);
        continue;
      }
    }
    if (const auto cell = find_non_finite_cell(temporary_path(name)))
      throw non_finite_output_error(name, *cell);
  }
  for (const std::string& name : names) flush_to_disk(temporary_path(name));
  const DeferTerminationSignals defer;
  for (const std::string& name : names) {
    std::error_code ec;
    std::filesystem::rename(temporary_path(name), folder_ / name, ec);
    if (ec) {
      throw OutputError(fmt::format("cannot move '{}' into place in '{}': {}", name,
                                    folder_.string(), ec.message()));
    }
  }
  flush_to_disk(folder_);
  committed_ = true;
}

void OutputSet::note_checked_table(const std::string& name,
                                   std::optional<std::string> non_finite_at) {
  const std::lock_guard lock(checked_mutex_);
  checked_tables_[name] = std::move(non_finite_at);
}

InternalCheckError non_finite_output_error(const std::string& name, const std::string& cell) {
  return InternalCheckError(
      fmt::format("internal check: {} would hold a value that is not a number at {}; nothing was "
                  "written. This is a fault of levelhead with these inputs: please report it "
                  "with them",
                  name, cell));
}

void append_csv_cell(std::string& out, std::string_view text) {
  if (text.find_first_of(",\"\r\n") == std::string_view::npos) {
    out.append(text);
    return;
  }
  out.push_back('"');
  for (char c : text) {
    out.push_back(c);
    if (c == '"') out.push_back('"');
  }
  out.push_back('"');
}

std::string csv_cell(const std::string& text) {
  std::string out;
  append_csv_cell(out, text);
  return out;
}

namespace {
constexpr std::size_t csv_block_bytes = 1 << 20;

constexpr double powers_of_ten[] = {1e0, 1e1, 1e2,  1e3,  1e4,  1e5,  1e6,  1e7,
                                    1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14, 1e15};
constexpr std::uint64_t integer_powers_of_ten[] = {1,
                                                   10,
                                                   100,
                                                   1000,
                                                   10000,
                                                   100000,
                                                   1000000,
                                                   10000000,
                                                   100000000,
                                                   1000000000,
                                                   10000000000,
                                                   100000000000,
                                                   1000000000000,
                                                   10000000000000,
                                                   100000000000000,
                                                   1000000000000000};
}  // namespace

// Fixed notation by scaling (common practice in fast number formatting):
// y = |value| 10^d is computed with one rounding, an error of at most half
// an ulp of y (10^d is exact for d <= 15). When y < 2^52 and its fraction
// lies farther than two ulps from one half, rounding y to the nearest integer
// gives the same integer as rounding the exact product, which is what a
// correctly rounded formatter writes. Anything else (near-ties, huge values,
// NaN, infinities) goes to fmt, whose output this reproduces.
void append_fixed(std::string& out, double value, int decimals) {
  if (decimals < 0 || decimals > 15 || !std::isfinite(value)) {
    fmt::format_to(std::back_inserter(out), "{:.{}f}", value, decimals);
    return;
  }
  const double magnitude = std::abs(value);
  const double y = magnitude * powers_of_ten[decimals];
  constexpr double two_to_52 = 4503599627370496.0;
  const double whole = std::floor(y);
  const double fraction = y - whole;
  const double ulp = std::nextafter(y, INFINITY) - y;
  if (!(y < two_to_52) || std::abs(fraction - 0.5) <= 2.0 * ulp) {
    fmt::format_to(std::back_inserter(out), "{:.{}f}", value, decimals);
    return;
  }
  const auto scaled = static_cast<std::uint64_t>(whole) + (fraction > 0.5 ? 1u : 0u);
  if (std::signbit(value)) out.push_back('-');
  const std::uint64_t unit = integer_powers_of_ten[decimals];
  char digits[24];
  auto written = std::to_chars(digits, digits + sizeof digits, scaled / unit);
  out.append(digits, written.ptr);
  if (decimals == 0) return;
  out.push_back('.');
  written = std::to_chars(digits, digits + sizeof digits, scaled % unit);
  const auto length = static_cast<int>(written.ptr - digits);
  out.append(static_cast<std::size_t>(decimals - length), '0');
  out.append(digits, written.ptr);
}

CsvRows::CsvRows(std::ostream& out) : out_(out) { buffer_.reserve(csv_block_bytes + 4096); }

CsvRows::CsvRows(OutputSet& set, const std::string& name)
    : out_(set.open(name)), set_(&set), name_(name) {
  buffer_.reserve(csv_block_bytes + 4096);
}

CsvRows::~CsvRows() { finish(); }

void CsvRows::separate() {
  if (row_started_) {
    buffer_.push_back(',');
    ++column_;
  } else {
    column_ = 0;
  }
  row_started_ = true;
}

CsvRows& CsvRows::line(std::string_view text) {
  if (rows_ == 0) {
    for (std::size_t start = 0; start <= text.size();) {
      const std::size_t comma = std::min(text.find(',', start), text.size());
      header_.emplace_back(text.substr(start, comma - start));
      start = comma + 1;
    }
  }
  buffer_.append(text);
  buffer_.push_back('\n');
  ++rows_;
  return *this;
}

CsvRows& CsvRows::text(std::string_view text) {
  separate();
  if (rows_ == 0) header_.emplace_back(text);
  append_csv_cell(buffer_, text);
  return *this;
}

CsvRows& CsvRows::quoted(std::string_view cell) {
  separate();
  buffer_.append(cell);
  return *this;
}

void CsvRows::note_non_finite(double value) {
  first_non_finite_ =
      fmt::format("row {}, column '{}' ('{}')", rows_ + 1,
                  column_ < header_.size() ? header_[column_] : std::to_string(column_ + 1), value);
}

CsvRows& CsvRows::fixed(double value, int decimals) {
  separate();
  if (!std::isfinite(value) && !first_non_finite_) note_non_finite(value);
  append_fixed(buffer_, value, decimals);
  return *this;
}

CsvRows& CsvRows::fixed(const std::optional<double>& value, int decimals) {
  if (!value) return empty();
  return fixed(*value, decimals);
}

CsvRows& CsvRows::integer(long long value) {
  separate();
  fmt::format_to(std::back_inserter(buffer_), "{}", value);
  return *this;
}

CsvRows& CsvRows::empty() {
  separate();
  return *this;
}

void CsvRows::end_row() {
  buffer_.push_back('\n');
  row_started_ = false;
  ++rows_;
  if (buffer_.size() >= csv_block_bytes) {
    out_.write(buffer_.data(), static_cast<std::streamsize>(buffer_.size()));
    buffer_.clear();
  }
}

void CsvRows::finish() {
  if (!buffer_.empty()) {
    out_.write(buffer_.data(), static_cast<std::streamsize>(buffer_.size()));
    buffer_.clear();
  }
  if (set_ != nullptr) set_->note_checked_table(name_, first_non_finite_);
}

void write_rejects(std::ostream& out, const std::vector<RejectedRecord>& rejects) {
  out << "file,row,column,problem\n";
  for (const RejectedRecord& r : rejects) {
    out << csv_cell(r.where.file) << ',';
    if (r.where.row) out << r.where.row;
    out << ',' << csv_cell(r.where.column) << ',' << csv_cell(r.problem) << '\n';
  }
}

}  // namespace levelhead
