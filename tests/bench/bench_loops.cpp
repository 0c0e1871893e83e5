// Benchmark of the loop basis: meshes of side x side points with a diagonal
// in about 30 % of the squares. For each, Horton's exact minimum basis
// against the shortest loop through each chain (the path used beyond
// LoopOptions::max_exact_candidates), in the same process: the time ratio
// and how much longer in total and in the longest loop the short basis is.
// Usage: bench_loops [SIDE ...]   (default 12 20 30)

#include <fmt/format.h>

#include <algorithm>
#include <chrono>
#include <cstdlib>
#include <vector>

#include "levelhead/levelling/loops.hpp"
#include "support/network_builders.hpp"

using namespace levelhead;
using Clock = std::chrono::steady_clock;

namespace {

struct Figures {
  double seconds = 0.0, total = 0.0, longest = 0.0;
  bool minimum = false;
};

Figures measure(const Network& net, double max_exact_candidates) {
  LoopOptions options;
  options.max_exact_candidates = max_exact_candidates;
  const auto start = Clock::now();
  const LoopResult r = find_loops(net, options);
  Figures f;
  f.seconds = std::chrono::duration<double>(Clock::now() - start).count();
  for (const Loop& loop : r.loops) {
    f.total += loop.length;
    f.longest = std::max(f.longest, loop.length);
  }
  f.minimum = r.minimum_basis;
  return f;
}

}  // namespace

int main(int argc, char** argv) {
  std::vector<std::size_t> sides = {12, 20, 30};
  if (argc > 1) {
    sides.clear();
    for (int i = 1; i < argc; ++i) sides.push_back(std::strtoul(argv[i], nullptr, 10));
  }
  fmt::print("{:>6} {:>8} {:>12} {:>12} {:>8} {:>14} {:>14}\n", "side", "sections", "exact (s)",
             "short (s)", "ratio", "total longer", "longest longer");
  for (std::size_t side : sides) {
    const Network net = testing::mesh_with_diagonals(side, 12);
    const Figures exact = measure(net, 1e300), fast = measure(net, 0.0);
    fmt::print("{:>6} {:>8} {:>12.4f} {:>12.4f} {:>8.1f} {:>13.1f}% {:>13.1f}%{}\n", side,
               net.sections.size(), exact.seconds, fast.seconds, exact.seconds / fast.seconds,
               100.0 * (fast.total / exact.total - 1.0),
               100.0 * (fast.longest / exact.longest - 1.0),
               exact.minimum ? "" : "  (exact path not taken)");
  }
}
