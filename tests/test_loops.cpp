#include <bitset>
#include <catch2/catch.hpp>
#include <cmath>
#include <set>

#include "levelhead/levelling/adjustment.hpp"
#include "levelhead/levelling/epochs.hpp"
#include "levelhead/levelling/fieldbook.hpp"
#include "levelhead/levelling/loops.hpp"
#include "levelhead/levelling/precision.hpp"
#include "support/network_builders.hpp"
#include "support/synthetic_networks.hpp"

using namespace levelhead;
using Catch::Matchers::Contains;
using Catch::Matchers::WithinAbs;
using levelhead::testing::point;
using levelhead::testing::section;

namespace {

// Every loop is a closed walk along its sections, its misclosure is the
// signed sum of their dh and its length their sum.
void check_loops_are_consistent(const Network& net, const LoopResult& r) {
  for (const Loop& loop : r.loops) {
    REQUIRE(loop.points.size() == loop.steps.size() + 1);
    CHECK(loop.points.front() == loop.points.back());
    double misclosure = 0.0, length = 0.0;
    for (std::size_t k = 0; k < loop.steps.size(); ++k) {
      const LoopStep& step = loop.steps[k];
      const std::size_t from =
          step.forward ? net.from_index[step.section] : net.to_index[step.section];
      const std::size_t to =
          step.forward ? net.to_index[step.section] : net.from_index[step.section];
      CHECK(from == loop.points[k]);
      CHECK(to == loop.points[k + 1]);
      misclosure += step.forward ? net.sections[step.section].dh : -net.sections[step.section].dh;
      length += *net.sections[step.section].length;
    }
    CHECK_THAT(loop.misclosure, WithinAbs(misclosure, 1e-12));
    CHECK_THAT(loop.length, WithinAbs(length, 1e-9));
  }
}

// Rank over GF(2) of the loops' section sets, by dense elimination.
std::size_t gf2_rank(const Network& net, const LoopResult& r) {
  std::vector<std::vector<char>> rows;
  for (const Loop& loop : r.loops) {
    std::vector<char> row(net.sections.size(), 0);
    for (const LoopStep& step : loop.steps) row[step.section] ^= 1;
    rows.push_back(row);
  }
  std::size_t rank = 0;
  for (std::size_t col = 0; col < net.sections.size() && rank < rows.size(); ++col) {
    std::size_t pivot = rank;
    while (pivot < rows.size() && !rows[pivot][col]) ++pivot;
    if (pivot == rows.size()) continue;
    std::swap(rows[pivot], rows[rank]);
    for (std::size_t i = 0; i < rows.size(); ++i) {
      if (i != rank && rows[i][col]) {
        for (std::size_t c = 0; c < net.sections.size(); ++c) rows[i][c] ^= rows[rank][c];
      }
    }
    ++rank;
  }
  return rank;
}

}  // namespace

TEST_CASE("loop count equals the cyclomatic number and the loops are independent", "[loops]") {
  for (std::uint64_t seed : {1u, 2u, 3u, 4u, 5u, 6u}) {
    testing::SyntheticNetwork a = testing::random_network(70, 30 + 10 * seed, seed);
    testing::SyntheticNetwork b = testing::random_network(25, 5, seed + 50);
    // Two parts, so connected parts count; b's ids renamed to stay unique.
    for (auto& p : b.points) p.id = "Q" + p.id;
    for (auto& s : b.sections) s.from = "Q" + s.from, s.to = "Q" + s.to;
    a.points.insert(a.points.end(), b.points.begin(), b.points.end());
    a.sections.insert(a.sections.end(), b.sections.begin(), b.sections.end());
    a.sections.push_back(a.sections.front());  // a repeated observation: a two-section loop
    const Network net = make_network(a.points, a.sections);
    const LoopResult r = find_loops(net, LoopOptions{});
    INFO("seed " << seed);
    CHECK(r.connected_parts == 2);
    CHECK(r.cyclomatic_number == net.sections.size() - r.points_in_sections + 2);
    CHECK(r.loops.size() == r.cyclomatic_number);
    CHECK(gf2_rank(net, r) == r.loops.size());
    check_loops_are_consistent(net, r);
  }
}

TEST_CASE("loops of a mesh are its cells, of a national net its junction squares", "[loops]") {
  const testing::SyntheticNetwork mesh = testing::mesh_network(100, 9);  // 10 x 10
  const Network mesh_net = make_network(mesh.points, mesh.sections);
  const LoopResult m = find_loops(mesh_net, LoopOptions{});
  CHECK(m.loops.size() == 81);
  for (const Loop& loop : m.loops) CHECK(loop.steps.size() == 4);

  const testing::SyntheticNetwork national = testing::national_network(4 * 4 * 11, 5, 9);
  const Network national_net = make_network(national.points, national.sections);
  const LoopResult n = find_loops(national_net, LoopOptions{});
  CHECK(n.loops.size() == 9);  // 4 x 4 junctions: 3 x 3 cells
  for (const Loop& loop : n.loops) CHECK(loop.steps.size() == 4 * 6);  // 6 sections a line
  check_loops_are_consistent(national_net, n);
}

TEST_CASE("a planted 15 mm blunder shows in exactly the loops through its section", "[loops]") {
  testing::SyntheticNetwork synthetic = testing::random_network(80, 60, 77);
  for (Section& s : synthetic.sections) {  // noise-free, so only the blunder misclosed
    s.dh = synthetic.true_height[std::stoul(s.to.substr(1))] -
           synthetic.true_height[std::stoul(s.from.substr(1))];
  }
  const std::size_t planted = synthetic.sections.size() - 2;
  synthetic.sections[planted].dh += 0.015;
  const Network net = make_network(synthetic.points, synthetic.sections);
  const LoopResult r = find_loops(net, LoopOptions{});
  std::size_t through = 0;
  for (const Loop& loop : r.loops) {
    bool contains = false;
    for (const LoopStep& step : loop.steps) contains = contains || step.section == planted;
    through += contains;
    // 1e-9 m: the sums of exact differences only carry rounding.
    CHECK_THAT(std::abs(loop.misclosure), WithinAbs(contains ? 0.015 : 0.0, 1e-9));
  }
  CHECK(through >= 1);
}

TEST_CASE("spurs, links and single observations are reported", "[loops]") {
  // Two triangles joined by one link C-D, a spur C-W to a well, and A-B
  // levelled twice (forward and back).
  const Network net = make_network(
      {point("A"), point("B"), point("C"), point("D"), point("E"), point("F"), point("W")},
      {section("A", "B", 1.0, 100), section("B", "A", -1.0, 100), section("B", "C", 1.0, 100),
       section("C", "A", -2.0, 100), section("C", "D", 0.5, 100), section("D", "E", 0.1, 100),
       section("E", "F", 0.1, 100), section("F", "D", -0.2, 100), section("C", "W", 0.3, 30)});
  const LoopResult r = find_loops(net, LoopOptions{});
  CHECK(r.loops.size() == 3);
  CHECK(r.unchecked_sections == std::vector<std::size_t>{4, 8});
  // A-B is observed twice; everything else once.
  CHECK(r.single_observations == std::vector<std::size_t>{2, 3, 4, 5, 6, 7, 8});
}

TEST_CASE("failing loops name the sections they share", "[loops]") {
  // Two loops sharing B-C; a 20 mm blunder on B-C fails both.
  const Network net = make_network(
      {point("A"), point("B"), point("C"), point("D")},
      {section("A", "B", 1.0, 500), section("B", "C", 1.020, 500), section("C", "A", -2.0, 500),
       section("B", "D", 0.5, 500), section("D", "C", 0.5, 500)});
  LoopOptions options;
  options.mm_per_sqrt_km = 4.0;
  const LoopResult r = find_loops(net, options);
  REQUIRE(r.failed == 2);
  for (const Loop& loop : r.loops) {
    REQUIRE(loop.shared_with_failing.size() == 1);
    CHECK(loop.shared_with_failing[0].first == 1);
  }
  CHECK_THAT(r.loops[0].tolerance, WithinAbs(4e-3 * std::sqrt(1.5), 1e-15));
}

TEST_CASE("loops refuse sections without length and bad tolerances", "[loops][errors]") {
  Section bare = section("A", "B", 1.0, std::nullopt);
  bare.row = 4;
  const Network net = make_network({point("A"), point("B")}, {bare});
  CHECK_THROWS_WITH(find_loops(net, LoopOptions{}), Contains("row 4") && Contains("no length"));
  LoopOptions bad;
  bad.mm_per_sqrt_km = 0.0;
  CHECK_THROWS_AS(find_loops(net, bad), OptionError);
  CHECK_THROWS_WITH(find_levelling_class("first"), Contains("fgcc-third"));
  CHECK(find_levelling_class("FGCC-Third").loop_closure_mm_per_sqrt_km > 0.0);
}

TEST_CASE("one levelling class sets every stage's precision, by default third order",
          "[loops][precision]") {
  // FGCC 1984, third order (from memory): standard error 2.0 mm/sqrt(km),
  // section and loop closures 12 mm/sqrt(km).
  const LevellingClass& third = default_levelling_class();
  CHECK(third.name == "fgcc-third");
  CHECK_THAT(third.sigma_mm_per_sqrt_km, WithinAbs(2.0, 1e-12));
  CHECK_THAT(third.loop_closure_mm_per_sqrt_km, WithinAbs(12.0, 1e-12));
  // The defaults of the stages come from it, not from numbers of their own.
  CHECK_THAT(LoopOptions{}.mm_per_sqrt_km, WithinAbs(third.loop_closure_mm_per_sqrt_km, 1e-12));
  CHECK_THAT(FieldBookOptions{}.section_tolerance_mm_per_sqrt_km,
             WithinAbs(third.section_closure_mm_per_sqrt_km, 1e-12));
  CHECK_THAT(AdjustmentOptions{}.mm_per_sqrt_km, WithinAbs(third.sigma_mm_per_sqrt_km, 1e-12));
  CHECK_THAT(EpochOptions{}.adjustment.mm_per_sqrt_km,
             WithinAbs(third.sigma_mm_per_sqrt_km, 1e-12));
  // Every class: the closures are specifications of several standard errors.
  for (const LevellingClass& c : levelling_classes()) {
    INFO(c.name);
    CHECK(c.loop_closure_mm_per_sqrt_km > 3.0 * c.sigma_mm_per_sqrt_km);
    CHECK(c.section_closure_mm_per_sqrt_km > 3.0 * c.sigma_mm_per_sqrt_km);
  }
}

namespace {

// Total length of a minimum cycle basis found independently of find_loops:
// every element of the cycle space (all 2^c sums of the fundamental cycles
// of a spanning tree, as edge bit masks), sorted by length, taken greedily
// when independent over GF(2). The cycle space is a matroid, so the greedy
// choice over all its elements is a minimum basis (common practice).
double minimum_basis_by_enumeration(const Network& net) {
  const std::size_t n = net.points.size(), m = net.sections.size();
  REQUIRE(m <= 64);
  std::vector<std::size_t> parent(n, n), via(n, m);
  std::vector<std::vector<std::size_t>> adjacent(n);
  for (std::size_t s = 0; s < m; ++s) {
    adjacent[net.from_index[s]].push_back(s);
    adjacent[net.to_index[s]].push_back(s);
  }
  std::vector<std::size_t> order = {0};
  parent[0] = 0;
  for (std::size_t k = 0; k < order.size(); ++k) {
    for (std::size_t s : adjacent[order[k]]) {
      const std::size_t q = net.from_index[s] == order[k] ? net.to_index[s] : net.from_index[s];
      if (parent[q] == n) parent[q] = order[k], via[q] = s, order.push_back(q);
    }
  }
  const auto to_root = [&](std::size_t p) {
    std::uint64_t mask = 0;
    for (; p != 0; p = parent[p]) mask ^= std::uint64_t{1} << via[p];
    return mask;
  };
  std::vector<std::uint64_t> fundamental;
  for (std::size_t s = 0; s < m; ++s) {
    if (via[net.to_index[s]] == s || via[net.from_index[s]] == s) continue;
    fundamental.push_back((std::uint64_t{1} << s) ^ to_root(net.from_index[s]) ^
                          to_root(net.to_index[s]));
  }
  const std::size_t c = fundamental.size();
  REQUIRE(c <= 22);
  std::vector<std::pair<double, std::uint64_t>> space;
  for (std::uint64_t pick = 1; pick < (std::uint64_t{1} << c); ++pick) {
    std::uint64_t mask = 0;
    for (std::size_t k = 0; k < c; ++k)
      if (pick >> k & 1) mask ^= fundamental[k];
    double length = 0.0;
    for (std::size_t s = 0; s < m; ++s)
      if (mask >> s & 1) length += *net.sections[s].length;
    space.emplace_back(length, mask);
  }
  std::sort(space.begin(), space.end());
  std::vector<std::uint64_t> pivots(64, 0);
  double total = 0.0;
  std::size_t rank = 0;
  for (const auto& [length, mask] : space) {
    std::uint64_t v = mask;
    for (int b = 63; b >= 0 && v; --b) {
      if (!(v >> b & 1)) continue;
      if (!pivots[b]) {
        pivots[b] = v;
        total += length;
        ++rank;
        break;
      }
      v ^= pivots[b];
    }
    if (rank == c) break;
  }
  return total;
}

// Total length of a minimum cycle basis by Horton's whole candidate set,
// written here without find_loops' code: from every point a shortest-path
// tree (Dijkstra over a dense scan), and for every section off it the sum
// over GF(2) of the two tree paths and the section, weighed by the sections
// it holds; greedy over all of them, shortest first (Horton 1987; a sum that
// is not a simple loop is still an element of the cycle space, so keeping
// it changes nothing).
double minimum_basis_by_horton(const Network& net) {
  using Mask = std::bitset<1024>;
  const std::size_t n = net.points.size(), m = net.sections.size();
  REQUIRE(m <= 1024);
  std::vector<std::pair<double, Mask>> candidates;
  for (std::size_t root = 0; root < n; ++root) {
    std::vector<double> distance(n, INFINITY);
    std::vector<Mask> path(n);
    std::vector<std::size_t> via(n, m);
    std::vector<char> done(n, 0);
    distance[root] = 0.0;
    for (std::size_t k = 0; k < n; ++k) {
      std::size_t p = n;
      for (std::size_t q = 0; q < n; ++q)
        if (!done[q] && distance[q] < INFINITY && (p == n || distance[q] < distance[p])) p = q;
      if (p == n) break;
      done[p] = 1;
      for (std::size_t s = 0; s < m; ++s) {
        if (net.from_index[s] != p && net.to_index[s] != p) continue;
        const std::size_t q = net.from_index[s] == p ? net.to_index[s] : net.from_index[s];
        if (distance[p] + *net.sections[s].length < distance[q]) {
          distance[q] = distance[p] + *net.sections[s].length;
          path[q] = path[p];
          path[q].set(s);
          via[q] = s;
        }
      }
    }
    for (std::size_t s = 0; s < m; ++s) {
      const std::size_t x = net.from_index[s], y = net.to_index[s];
      if (via[x] == s || via[y] == s || distance[x] == INFINITY || distance[y] == INFINITY)
        continue;
      Mask loop = path[x] ^ path[y];
      loop.flip(s);
      double length = 0.0;
      for (std::size_t t = 0; t < m; ++t)
        if (loop[t]) length += *net.sections[t].length;
      candidates.emplace_back(length, loop);
    }
  }
  std::sort(candidates.begin(), candidates.end(),
            [](const auto& a, const auto& b) { return a.first < b.first; });
  std::vector<Mask> pivots(m);
  std::vector<char> has_pivot(m, 0);
  double total = 0.0;
  for (const auto& [length, mask] : candidates) {
    Mask v = mask;
    for (std::size_t b = m; b-- > 0 && v.any();) {
      if (!v[b]) continue;
      if (!has_pivot[b]) {
        pivots[b] = v;
        has_pivot[b] = 1;
        total += length;
        break;
      }
      v ^= pivots[b];
    }
  }
  return total;
}

}  // namespace

TEST_CASE("the loop basis is a minimum-length basis on meshes with diagonals", "[loops][basis]") {
  for (const auto& [side, seed] :
       {std::pair<std::size_t, std::uint64_t>{4, 1}, {4, 2}, {4, 3}, {5, 4}, {5, 5}}) {
    const Network net = testing::mesh_with_diagonals(side, seed);
    const LoopResult r = find_loops(net, LoopOptions{});
    INFO("mesh " << side << " seed " << seed);
    CHECK(r.minimum_basis);
    REQUIRE(r.loops.size() == r.cyclomatic_number);
    double total = 0.0;
    for (const Loop& loop : r.loops) total += loop.length;
    CHECK_THAT(total, WithinAbs(minimum_basis_by_enumeration(net), 1e-6));
  }
}

TEST_CASE(
    "beyond the whole candidate set, loops up to a doubling length limit still give the "
    "minimum basis",
    "[loops][basis]") {
  const auto total_of = [](const LoopResult& r) {
    double total = 0.0;
    for (const Loop& loop : r.loops) total += loop.length;
    return total;
  };
  SECTION("a long loop needs several doublings of the limit") {
    // A 4 x 4 mesh and a line of 12 sections of 1 km from one corner to
    // the opposite one (invented): the loop through that line is about 60
    // times the mesh's median chain, so the rounds double the limit six times.
    Network mesh = testing::mesh_with_diagonals(4, 3);
    std::vector<Point> points = mesh.points;
    std::vector<Section> sections = mesh.sections;
    std::string previous = "M0";
    for (int k = 1; k < 12; ++k) {
      points.push_back(testing::point("L" + std::to_string(k)));
      sections.push_back(testing::section(previous, points.back().id, 0.0, 1000.0));
      previous = points.back().id;
    }
    sections.push_back(testing::section(previous, "M15", 0.0, 1000.0));
    const Network net = make_network(std::move(points), std::move(sections));
    const LoopResult r = find_loops(net, LoopOptions{});
    CHECK(r.minimum_basis);
    CHECK_THAT(total_of(r), WithinAbs(minimum_basis_by_enumeration(net), 1e-6));
    double longest = 0.0;
    for (const Loop& loop : r.loops) longest = std::max(longest, loop.length);
    CHECK(longest > 12000.0);
  }
  SECTION("against Horton's whole candidate set, built independently, on 12 x 12 meshes") {
    for (const std::uint64_t seed : {7, 8, 9}) {
      const Network net = testing::mesh_with_diagonals(12, seed);
      const LoopResult r = find_loops(net, LoopOptions{});
      INFO("seed " << seed);
      CHECK(r.minimum_basis);
      CHECK_THAT(total_of(r), WithinAbs(minimum_basis_by_horton(net), 1e-6));
    }
  }
  SECTION("a budget too small for any round: short loops, not proven minimum") {
    const Network net = testing::mesh_with_diagonals(15, 7);
    LoopOptions tiny;
    tiny.max_exact_candidates = 10;
    const LoopResult r = find_loops(net, tiny);
    CHECK_FALSE(r.minimum_basis);
    CHECK(r.loops.size() == r.cyclomatic_number);
  }
}

TEST_CASE("a network of one loop, or of none, has its minimum basis at once", "[loops][basis]") {
  using testing::point;
  using testing::section;
  const Network ring =
      make_network({point("A", 100.0), point("B"), point("C")},
                   {section("A", "B", 1.0), section("B", "C", 1.0), section("C", "A", -2.0)});
  const LoopResult one = find_loops(ring, LoopOptions{});
  CHECK(one.loops.size() == 1);
  CHECK(one.minimum_basis);
  const Network line = make_network({point("A", 100.0), point("B"), point("C")},
                                    {section("A", "B", 1.0), section("B", "C", 1.0)});
  const LoopResult none = find_loops(line, LoopOptions{});
  CHECK(none.loops.empty());
  CHECK(none.minimum_basis);
}
