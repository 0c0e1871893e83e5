#pragma once
// JSON outputs as text. Table values are checked to be UTF-8 when read, but
// file paths and project-file text may hold other bytes (a Latin-1 folder
// name): those are written as U+FFFD instead of aborting the writer.

#include <cmath>
#include <nlohmann/json.hpp>
#include <string>

#include "levelhead/core/errors.hpp"

namespace levelhead::util {

// The key path of the first non-finite number in `value` ("global_test.upper",
// "points[3].sigma"), or empty. nlohmann writes NaN and inf as null, which
// would pass for "not given" in a summary.
inline std::string non_finite_path(const nlohmann::json& value, const std::string& path = "") {
  if (value.is_number_float())
    return std::isfinite(value.get<double>()) ? "" : (path.empty() ? "(top)" : path);
  if (value.is_object()) {
    for (const auto& [key, item] : value.items()) {
      std::string found = non_finite_path(item, path.empty() ? key : path + "." + key);
      if (!found.empty()) return found;
    }
  } else if (value.is_array()) {
    for (std::size_t i = 0; i < value.size(); ++i) {
      std::string found = non_finite_path(value[i], path + "[" + std::to_string(i) + "]");
      if (!found.empty()) return found;
    }
  }
  return "";
}

// Throws InternalCheckError when `value` holds a non-finite number: a fault of
// a computation, never written.
inline std::string json_text(const nlohmann::json& value) {
  if (const std::string path = non_finite_path(value); !path.empty()) {
    throw InternalCheckError(
        "internal check: a JSON summary would hold a value that is not a "
        "number at '" +
        path +
        "'; nothing was written. This is a fault of "
        "levelhead with these inputs: please report it with them");
  }
  return value.dump(2, ' ', false, nlohmann::json::error_handler_t::replace);
}

}  // namespace levelhead::util
