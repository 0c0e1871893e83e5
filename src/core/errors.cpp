#include "levelhead/core/errors.hpp"

#include <fmt/format.h>

#include "util/encoding.hpp"

namespace levelhead {

std::string describe(const CellLocation& where) {
  std::string text = where.file.empty() ? std::string("input") : where.file;
  if (where.row > 0) text += fmt::format(", row {}", where.row);
  if (!where.column.empty()) text += fmt::format(", column '{}'", where.column);
  return text;
}

InputError::InputError(const CellLocation& where, const std::string& value, const std::string& what)
    : Error(fmt::format("{}: value '{}': {}", describe(where), util::shortened(value), what)),
      where_(where) {}

InputError::InputError(const std::string& file, const std::string& what)
    : Error(fmt::format("{}: {}", file, what)), where_{file, 0, {}} {}

NetworkError::NetworkError(const std::string& what, std::vector<std::string> point_ids)
    : Error(what), point_ids_(std::move(point_ids)) {}

}  // namespace levelhead
