#pragma once
// Small locale-free text helpers shared by the readers and writers.

#include <algorithm>
#include <cctype>
#include <string>
#include <string_view>
#include <vector>

namespace levelhead::util {

inline std::string_view trim(std::string_view text) {
  const auto is_space = [](char c) { return c == ' ' || c == '\t' || c == '\r' || c == '\n'; };
  while (!text.empty() && is_space(text.front())) text.remove_prefix(1);
  while (!text.empty() && is_space(text.back())) text.remove_suffix(1);
  return text;
}

inline std::string to_lower(std::string_view text) {
  std::string out(text);
  std::transform(out.begin(), out.end(), out.begin(),
                 [](unsigned char c) { return static_cast<char>(std::tolower(c)); });
  return out;
}

inline bool iequals(std::string_view a, std::string_view b) {
  return a.size() == b.size() && std::equal(a.begin(), a.end(), b.begin(), [](char x, char y) {
           return std::tolower(static_cast<unsigned char>(x)) ==
                  std::tolower(static_cast<unsigned char>(y));
         });
}

// Levenshtein edit distance (Wagner-Fischer, one row).
inline std::size_t edit_distance(std::string_view a, std::string_view b) {
  std::vector<std::size_t> row(b.size() + 1);
  for (std::size_t j = 0; j <= b.size(); ++j) row[j] = j;
  for (std::size_t i = 1; i <= a.size(); ++i) {
    std::size_t diagonal = row[0];
    row[0] = i;
    for (std::size_t j = 1; j <= b.size(); ++j) {
      const std::size_t above = row[j];
      row[j] = std::min({row[j] + 1, row[j - 1] + 1, diagonal + (a[i - 1] != b[j - 1])});
      diagonal = above;
    }
  }
  return row[b.size()];
}

// The entry of `allowed` (not empty) closest to `name`, for "did you mean" hints.
inline std::string nearest_name(std::string_view name, const std::vector<std::string>& allowed) {
  std::string nearest = allowed.front();
  for (const auto& candidate : allowed) {
    if (edit_distance(name, candidate) < edit_distance(name, nearest)) nearest = candidate;
  }
  return nearest;
}

}  // namespace levelhead::util
