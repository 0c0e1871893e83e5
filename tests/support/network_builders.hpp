#pragma once
// Compact builders for hand-made networks in tests.

#include <cmath>
#include <cstdint>
#include <optional>
#include <random>
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

// A side x side mesh 50 m apart with jittered points (no two loops of equal
// length) and a diagonal in about 30 % of the squares.
inline Network mesh_with_diagonals(std::size_t side, std::uint64_t seed) {
  std::mt19937_64 rng(seed);
  std::uniform_real_distribution<double> jitter(-12.0, 12.0), unit(0.0, 1.0);
  std::vector<Point> points;
  std::vector<std::pair<double, double>> at;
  for (std::size_t r = 0; r < side; ++r) {
    for (std::size_t c = 0; c < side; ++c) {
      points.push_back(point("M" + std::to_string(r * side + c), r + c == 0 ? 100.0 : 0.0));
      if (r + c != 0) points.back().height.reset();
      at.emplace_back(50.0 * c + jitter(rng), 50.0 * r + jitter(rng));
    }
  }
  std::vector<Section> sections;
  const auto join = [&](std::size_t a, std::size_t b) {
    sections.push_back(section(points[a].id, points[b].id, 0.0,
                               std::hypot(at[a].first - at[b].first, at[a].second - at[b].second)));
  };
  for (std::size_t r = 0; r < side; ++r) {
    for (std::size_t c = 0; c < side; ++c) {
      const std::size_t i = r * side + c;
      if (c + 1 < side) join(i, i + 1);
      if (r + 1 < side) join(i, i + side);
      if (c + 1 < side && r + 1 < side && unit(rng) < 0.3) join(i, i + side + 1);
    }
  }
  return make_network(std::move(points), std::move(sections));
}

}  // namespace levelhead::testing
