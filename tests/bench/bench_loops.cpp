// Benchmark of the loop basis: meshes of side x side points with a diagonal
// in about 30 % of the squares. For each, in the same process: the time of
// the default minimum basis (Horton's candidates up to a doubling length
// limit) and of the short basis without candidates (the shortest loop
// through each chain, then fundamental loops), and how much longer in total
// and in the longest loop the short basis is.
// Usage: bench_loops [SIDE ...]   (default 12 40 100)

#include <fmt/format.h>

#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdlib>
#include <string>
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
  std::vector<std::size_t> sides = {12, 40, 100};
  if (argc > 1) {
    sides.clear();
    for (int i = 1; i < argc; ++i) sides.push_back(std::strtoul(argv[i], nullptr, 10));
  }
  // minimum: the default (Horton's candidates up to a doubling length
  // limit, within max_exact_candidates); short: the shortest loop through
  // each chain and fundamental loops (no candidates).
  fmt::print("{:>6} {:>8} {:>12} {:>10} {:>8} {:>9} {:>14} {:>14}\n", "side", "sections",
             "minimum (s)", "short (s)", "ratio", "minimum", "short: total", "short: longest");
  for (std::size_t side : sides) {
    const Network net = testing::mesh_with_diagonals(side, 12);
    const Figures minimum = measure(net, LoopOptions{}.max_exact_candidates);
    const Figures fast = measure(net, 0.0);
    fmt::print("{:>6} {:>8} {:>12.3f} {:>10.3f} {:>8.1f} {:>9} {:>13.1f}% {:>13.1f}%\n", side,
               net.sections.size(), minimum.seconds, fast.seconds, minimum.seconds / fast.seconds,
               minimum.minimum ? "proven" : "no", 100.0 * (fast.total / minimum.total - 1.0),
               100.0 * (fast.longest / minimum.longest - 1.0));
  }
}
