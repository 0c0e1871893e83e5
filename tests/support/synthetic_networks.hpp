#pragma once
// Invented levelling networks for tests and benchmarks (no real site).
// Heights are drawn at random, observations get Gaussian noise with
// sigma = k * sqrt(length in km), so the adjustment should pass its tests.

#include <cmath>
#include <cstdint>
#include <random>
#include <string>
#include <vector>

#include "levelhead/levelling/adjustment.hpp"
#include "levelhead/levelling/network.hpp"

namespace levelhead::testing {

struct SyntheticNetwork {
  std::vector<Point> points;
  std::vector<Section> sections;
  std::vector<double> true_height;  // m, per point
};

inline constexpr double synthetic_mm_per_sqrt_km = 1.0;

// Adjustment options whose a-priori precision is the one the noise was drawn
// with (the default class assumes 2 mm/sqrt(km)).
inline AdjustmentOptions synthetic_precision() {
  AdjustmentOptions options;
  options.mm_per_sqrt_km = synthetic_mm_per_sqrt_km;
  options.levelling_class.clear();
  return options;
}

inline Section noisy_section(const SyntheticNetwork& net, std::size_t f, std::size_t t,
                             std::mt19937_64& rng) {
  const double dx = *net.points[f].x - *net.points[t].x;
  const double dy = *net.points[f].y - *net.points[t].y;
  Section s;
  s.from = net.points[f].id;
  s.to = net.points[t].id;
  s.length = std::max(10.0, std::hypot(dx, dy));
  const double sigma = synthetic_mm_per_sqrt_km * 1e-3 * std::sqrt(*s.length / 1000.0);
  s.dh = net.true_height[t] - net.true_height[f] + std::normal_distribution<double>(0, sigma)(rng);
  return s;
}

inline void add_point(SyntheticNetwork& net, std::string id, double x, double y,
                      std::mt19937_64& rng) {
  Point p;
  p.id = std::move(id);
  p.x = x;
  p.y = y;
  net.points.push_back(p);
  net.true_height.push_back(100.0 + std::uniform_real_distribution<double>(-20.0, 20.0)(rng));
}

// Marks points as control: the first `fixed` held fixed, the next `weighted`
// known with the given sigma (their known heights carry that noise).
inline void set_control(SyntheticNetwork& net, const std::vector<std::size_t>& fixed,
                        const std::vector<std::size_t>& weighted, double weighted_sigma,
                        std::mt19937_64& rng) {
  for (std::size_t i : fixed) net.points[i].height = net.true_height[i];
  for (std::size_t i : weighted) {
    net.points[i].height =
        net.true_height[i] + std::normal_distribution<double>(0, weighted_sigma)(rng);
    net.points[i].sigma = weighted_sigma;
  }
}

// Random points in a 5 km square; a random spanning tree to near earlier
// points, plus `extra` sections between random near pairs (loops).
inline SyntheticNetwork random_network(std::size_t n_points, std::size_t extra,
                                       std::uint64_t seed) {
  std::mt19937_64 rng(seed);
  SyntheticNetwork net;
  std::uniform_real_distribution<double> coordinate(0.0, 5000.0);
  for (std::size_t i = 0; i < n_points; ++i) {
    add_point(net, "P" + std::to_string(i), coordinate(rng), coordinate(rng), rng);
  }
  const auto near_earlier = [&](std::size_t i) {
    std::size_t best = 0;
    double best_d = INFINITY;
    for (int tries = 0; tries < 5; ++tries) {
      const std::size_t j = std::uniform_int_distribution<std::size_t>(0, i - 1)(rng);
      const double d =
          std::hypot(*net.points[i].x - *net.points[j].x, *net.points[i].y - *net.points[j].y);
      if (d < best_d) best_d = d, best = j;
    }
    return best;
  };
  for (std::size_t i = 1; i < n_points; ++i) {
    net.sections.push_back(noisy_section(net, near_earlier(i), i, rng));
  }
  for (std::size_t k = 0; k < extra; ++k) {
    const std::size_t i = std::uniform_int_distribution<std::size_t>(1, n_points - 1)(rng);
    const std::size_t j = near_earlier(i);
    net.sections.push_back(noisy_section(net, i, j, rng));
  }
  return net;
}

// National-style: a g x g grid of junctions 20 km apart, neighbours joined by
// lines of `per_line` intermediate benchmarks (most points have degree 2).
inline SyntheticNetwork national_network(std::size_t target_points, std::size_t per_line,
                                         std::uint64_t seed) {
  std::mt19937_64 rng(seed);
  SyntheticNetwork net;
  const std::size_t g = std::max<std::size_t>(
      2, static_cast<std::size_t>(std::sqrt(static_cast<double>(target_points) /
                                            (1.0 + 2.0 * static_cast<double>(per_line)))));
  const double spacing = 20000.0;
  for (std::size_t r = 0; r < g; ++r) {
    for (std::size_t c = 0; c < g; ++c) {
      add_point(net, "J" + std::to_string(r) + "_" + std::to_string(c), c * spacing, r * spacing,
                rng);
    }
  }
  std::size_t bm = 0;
  const auto line = [&](std::size_t a, std::size_t b) {
    std::size_t previous = a;
    for (std::size_t k = 1; k <= per_line; ++k) {
      const double f = static_cast<double>(k) / static_cast<double>(per_line + 1);
      add_point(net, "B" + std::to_string(bm++),
                *net.points[a].x + f * (*net.points[b].x - *net.points[a].x),
                *net.points[a].y + f * (*net.points[b].y - *net.points[a].y), rng);
      net.sections.push_back(noisy_section(net, previous, net.points.size() - 1, rng));
      previous = net.points.size() - 1;
    }
    net.sections.push_back(noisy_section(net, previous, b, rng));
  };
  for (std::size_t r = 0; r < g; ++r) {
    for (std::size_t c = 0; c < g; ++c) {
      if (c + 1 < g) line(r * g + c, r * g + c + 1);
      if (r + 1 < g) line(r * g + c, (r + 1) * g + c);
    }
  }
  set_control(net, {0, g - 1, g * (g - 1), g * g - 1}, {}, 0.0, rng);
  return net;
}

// Dense monitoring mesh: a side x side grid 50 m apart, each point levelled
// to its right and lower neighbour (the worst case for fill).
inline SyntheticNetwork mesh_network(std::size_t target_points, std::uint64_t seed) {
  std::mt19937_64 rng(seed);
  SyntheticNetwork net;
  const std::size_t side = std::max<std::size_t>(
      2, static_cast<std::size_t>(std::sqrt(static_cast<double>(target_points))));
  for (std::size_t r = 0; r < side; ++r) {
    for (std::size_t c = 0; c < side; ++c) {
      add_point(net, "M" + std::to_string(r) + "_" + std::to_string(c), c * 50.0, r * 50.0, rng);
    }
  }
  for (std::size_t r = 0; r < side; ++r) {
    for (std::size_t c = 0; c < side; ++c) {
      if (c + 1 < side)
        net.sections.push_back(noisy_section(net, r * side + c, r * side + c + 1, rng));
      if (r + 1 < side)
        net.sections.push_back(noisy_section(net, r * side + c, (r + 1) * side + c, rng));
    }
  }
  set_control(net, {0, side - 1, side * (side - 1), side * side - 1}, {}, 0.0, rng);
  return net;
}

}  // namespace levelhead::testing
