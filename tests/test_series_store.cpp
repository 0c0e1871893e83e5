// The wells' series store of `heads`: the same series whether they stay in
// memory or go through the temporary files, and nothing left behind.

#include <catch2/catch.hpp>
#include <filesystem>
#include <map>
#include <random>
#include <utility>
#include <vector>

#include "heads/series_store.hpp"
#include "support/temp_folder.hpp"

using levelhead::WellSeriesStore;
using Series = std::vector<std::pair<double, double>>;

namespace {

std::map<std::size_t, Series> collect(WellSeriesStore& store) {
  std::map<std::size_t, Series> out;
  std::vector<std::size_t> order;
  store.visit_wells([&](std::size_t well, std::span<const std::pair<double, double>> points) {
    order.push_back(well);
    out[well].assign(points.begin(), points.end());
  });
  CHECK(std::is_sorted(order.begin(), order.end()));
  CHECK(std::adjacent_find(order.begin(), order.end()) == order.end());
  return out;
}

std::size_t files_in(const std::filesystem::path& folder) {
  return static_cast<std::size_t>(std::distance(std::filesystem::directory_iterator(folder),
                                                std::filesystem::directory_iterator()));
}

}  // namespace

TEST_CASE("series come back per well, sorted, in memory or through a spill", "[series_store]") {
  levelhead::testing::TempFolder folder;
  // 7 wells, one of them (3) with no point and one (5) with more points than
  // the smallest memory limit alone.
  std::mt19937 random(11);
  std::uniform_real_distribution<double> time(0.0, 1e6), head(100.0, 110.0);
  std::vector<std::pair<std::size_t, std::pair<double, double>>> points;
  const std::vector<std::size_t> per_well = {40, 3, 17, 0, 1, 260, 9};
  for (std::size_t w = 0; w < per_well.size(); ++w)
    for (std::size_t i = 0; i < per_well[w]; ++i)
      points.push_back({w, {time(random), head(random)}});
  points.push_back({2, {5.0, 101.0}});  // two heads at one time: ordered by head
  points.push_back({2, {5.0, 100.5}});
  std::shuffle(points.begin(), points.end(), random);
  std::map<std::size_t, Series> expected;
  for (const auto& [w, p] : points) expected[w].push_back(p);
  for (auto& [w, s] : expected) std::sort(s.begin(), s.end());

  for (const std::size_t limit : {100000, 331, 64, 5, 1}) {
    CAPTURE(limit);
    WellSeriesStore store(per_well.size(), folder.path(), limit);
    for (const auto& [w, p] : points) store.add(w, p.first, p.second);
    CHECK(store.spilled() == (limit < points.size()));
    // The spill is unlinked at once: the output folder stays empty.
    CHECK(files_in(folder.path()) == 0);
    const auto got = collect(store);
    CHECK(got == expected);
    CHECK(got.count(3) == 0);
  }
  CHECK(files_in(folder.path()) == 0);
}

TEST_CASE("a series store without a writable folder says which folder", "[series_store]") {
  levelhead::testing::TempFolder folder;
  WellSeriesStore store(1, folder.path() / "missing", 2);
  store.add(0, 1.0, 2.0);
  CHECK_THROWS_WITH(store.add(0, 2.0, 3.0),
                    Catch::Contains("missing") && Catch::Contains("temporary file"));
}
