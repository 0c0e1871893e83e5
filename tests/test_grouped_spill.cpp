// Records gathered by group in bounded memory: the same groups, in the
// order added, whether they stay in memory or go through the temporary
// files, and nothing left behind.

#include <catch2/catch.hpp>
#include <filesystem>
#include <random>
#include <utility>
#include <vector>

#include "support/temp_folder.hpp"
#include "util/grouped_spill.hpp"

using levelhead::util::GroupedSpill;

namespace {

struct Record {
  double value = 0.0;
  int order = 0;
  bool operator==(const Record&) const = default;
};

std::size_t files_in(const std::filesystem::path& folder) {
  return static_cast<std::size_t>(std::distance(std::filesystem::directory_iterator(folder),
                                                std::filesystem::directory_iterator()));
}

}  // namespace

TEST_CASE("groups come back in index order with their records as added, spilled or not",
          "[grouped_spill]") {
  levelhead::testing::TempFolder folder;
  // 7 groups, one (3) empty and one (5) with more records than the smallest
  // memory limits alone; records added in a shuffled group order.
  std::mt19937 random(11);
  std::uniform_real_distribution<double> value(0.0, 1e6);
  const std::vector<std::size_t> per_group = {40, 3, 17, 0, 1, 260, 9};
  std::vector<std::size_t> group_of_record;
  for (std::size_t g = 0; g < per_group.size(); ++g)
    group_of_record.insert(group_of_record.end(), per_group[g], g);
  std::shuffle(group_of_record.begin(), group_of_record.end(), random);
  std::vector<std::pair<std::size_t, Record>> added;
  for (std::size_t i = 0; i < group_of_record.size(); ++i)
    added.push_back({group_of_record[i], {value(random), static_cast<int>(i)}});
  std::vector<std::vector<Record>> expected(per_group.size());
  for (const auto& [g, r] : added) expected[g].push_back(r);

  for (const std::size_t limit : {100000, 331, 64, 5, 1}) {
    CAPTURE(limit);
    GroupedSpill<Record> spill(per_group.size(), folder.path(), limit);
    for (const auto& [g, r] : added) spill.add(g, r);
    CHECK(spill.spilled() == (limit <= added.size()));
    // The spill is unlinked at once: the output folder stays empty.
    CHECK(files_in(folder.path()) == 0);
    std::vector<std::vector<Record>> got;
    spill.visit([&](std::size_t group, std::span<Record> records) {
      CHECK(group == got.size());
      got.emplace_back(records.begin(), records.end());
    });
    CHECK(got == expected);
  }
  CHECK(files_in(folder.path()) == 0);
}

TEST_CASE("a spill without a writable folder says which folder", "[grouped_spill]") {
  levelhead::testing::TempFolder folder;
  GroupedSpill<Record> spill(1, folder.path() / "missing", 2);
  spill.add(0, {1.0, 0});
  CHECK_THROWS_WITH(spill.add(0, {2.0, 1}),
                    Catch::Contains("missing") && Catch::Contains("temporary file"));
}
