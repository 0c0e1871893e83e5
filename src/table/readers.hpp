#pragma once
// The two table readers behind levelhead::read_table.

#include <filesystem>

#include "levelhead/core/table.hpp"

namespace levelhead::detail {

Table read_delimited_file(const std::filesystem::path& path, const TableOptions& options);
Table read_ogr_table(const std::filesystem::path& path, const TableOptions& options);

}  // namespace levelhead::detail
