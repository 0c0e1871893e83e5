#include "util/encoding.hpp"

#include <fmt/format.h>
#include <utf8.h>

#include <algorithm>

#include "levelhead/core/errors.hpp"

namespace levelhead::util {

std::optional<std::size_t> first_invalid_utf8(std::string_view text) {
  // ASCII is most of every table: skip it eight bytes at a time.
  std::size_t i = 0;
  while (i + 8 <= text.size()) {
    std::uint64_t block;
    std::copy_n(text.data() + i, 8, reinterpret_cast<char*>(&block));
    if (block & 0x8080808080808080ULL) break;
    i += 8;
  }
  const auto bad = utf8::find_invalid(text.begin() + static_cast<std::ptrdiff_t>(i), text.end());
  if (bad == text.end()) return std::nullopt;
  return static_cast<std::size_t>(bad - text.begin());
}

std::optional<std::string> utf16_hint(std::string_view text) {
  if (text.substr(0, 2) == "\xFF\xFE" || text.substr(0, 2) == "\xFE\xFF") {
    return "the file is UTF-16 (it starts with a UTF-16 byte order mark)";
  }
  const std::string_view start = text.substr(0, 64);
  if (std::count(start.begin(), start.end(), '\0') * 4 >= static_cast<long>(start.size()) &&
      !start.empty()) {
    return "the file is UTF-16 or binary (it holds NUL bytes between its characters)";
  }
  return std::nullopt;
}

void require_utf8_file(std::string_view text, const std::string& source) {
  if (const auto hint = utf16_hint(text)) {
    throw InputError(source, *hint +
                                 "; save it as UTF-8 text (in a spreadsheet: 'CSV UTF-8'; in a "
                                 "text editor: encoding UTF-8)");
  }
  const auto bad = first_invalid_utf8(text);
  if (!bad) return;
  const std::size_t line =
      1 + static_cast<std::size_t>(
              std::count(text.begin(), text.begin() + static_cast<std::ptrdiff_t>(*bad), '\n'));
  throw InputError(
      fmt::format("{}, line {}", source, line),
      fmt::format("byte 0x{:02X} at byte offset {} is not UTF-8 (a file saved as Latin-1 or "
                  "Windows-1252?); save the file as UTF-8 (in a spreadsheet: 'CSV UTF-8')",
                  static_cast<unsigned char>(text[*bad]), *bad));
}

void require_utf8_cell(std::string_view text, const std::string& source, std::size_t row,
                       const std::string& column) {
  const auto bad = first_invalid_utf8(text);
  if (!bad) return;
  throw InputError(
      CellLocation{source, row, column}, shortened(text.substr(0, *bad)) + "...",
      fmt::format("byte 0x{:02X} at byte {} of the value is not UTF-8; save the table with UTF-8 "
                  "text (or give GDAL the file's encoding, e.g. a .cpg file beside a DBF)",
                  static_cast<unsigned char>(text[*bad]), *bad));
}

namespace {

// Control characters (a NUL, a line break inside a quoted cell) shown as
// \xNN, so that a message is one readable line and a NUL does not end it.
std::string visible(std::string_view text) {
  std::string out;
  out.reserve(text.size());
  for (const char c : text) {
    const auto byte = static_cast<unsigned char>(c);
    if (byte < 0x20 || byte == 0x7F) {
      out += fmt::format("\\x{:02X}", byte);
    } else {
      out += c;
    }
  }
  return out;
}

}  // namespace

std::string shortened(std::string_view text, std::size_t limit) {
  if (text.size() <= limit) return visible(text);
  std::size_t cut = limit;
  // Back off to the start of a UTF-8 character (not a continuation byte).
  while (cut > 0 && (static_cast<unsigned char>(text[cut]) & 0xC0) == 0x80) --cut;
  return fmt::format("{}... ({} bytes in all)", visible(text.substr(0, cut)), text.size());
}

}  // namespace levelhead::util
