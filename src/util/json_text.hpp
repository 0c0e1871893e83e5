#pragma once
// JSON outputs as text. Table values are checked to be UTF-8 when read, but
// file paths and project-file text may hold other bytes (a Latin-1 folder
// name): those are written as U+FFFD instead of aborting the writer.

#include <nlohmann/json.hpp>
#include <string>

namespace levelhead::util {

inline std::string json_text(const nlohmann::json& value) {
  return value.dump(2, ' ', false, nlohmann::json::error_handler_t::replace);
}

}  // namespace levelhead::util
