#pragma once
// Checks that input text is UTF-8, the one encoding levelhead reads, so that
// a file saved as Latin-1/Windows-1252 or UTF-16 is refused at the edge with
// its place named, instead of reaching the JSON writers (which need UTF-8)
// or being shown as garbage. Validation is utfcpp's (Debian libutfcpp-dev).

#include <cstddef>
#include <optional>
#include <string>
#include <string_view>

namespace levelhead::util {

// Offset of the first byte that is not part of valid UTF-8, or nullopt.
std::optional<std::size_t> first_invalid_utf8(std::string_view text);

// Why `text` (a whole file's start) is not UTF-8 text, when it plainly is
// UTF-16 (byte order mark or NUL bytes); nullopt otherwise.
std::optional<std::string> utf16_hint(std::string_view text);

// Throws InputError when `text` (the whole of file `source`) is not UTF-8:
// names the line, the byte offset and the byte, and how to fix it.
void require_utf8_file(std::string_view text, const std::string& source);

// The same for one value of a table (a cell GDAL read).
void require_utf8_cell(std::string_view text, const std::string& source, std::size_t row,
                       const std::string& column);

// `text` cut to about `limit` bytes at a character boundary, with its length
// named when cut, and control characters shown as \xNN: for quoting user
// values in messages.
std::string shortened(std::string_view text, std::size_t limit = 80);

}  // namespace levelhead::util
