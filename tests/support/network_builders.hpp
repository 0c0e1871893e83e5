#pragma once
// Compact builders for hand-made networks in tests.

#include <optional>
#include <string>
#include <vector>

#include "levelhead/levelling/network.hpp"

namespace levelhead::testing {

inline Point point(std::string id, std::optional<double> height = std::nullopt,
                   std::optional<double> sigma = std::nullopt, std::string datum = {}) {
  Point p;
  p.id = std::move(id);
  p.height = height;
  p.sigma = sigma;
  p.datum = std::move(datum);
  return p;
}

inline Section section(std::string from, std::string to, double dh,
                       std::optional<double> length = 1000.0) {
  Section s;
  s.from = std::move(from);
  s.to = std::move(to);
  s.dh = dh;
  s.length = length;
  return s;
}

}  // namespace levelhead::testing
