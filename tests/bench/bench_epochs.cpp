// Benchmark of the monitoring analysis: three epochs of a mesh-like
// monitoring network of N points, four reference marks at the corners.
// Prints the time of analyse_epochs (per-epoch adjustments, congruence
// tests, the sparse joint adjustment and its selected inverse) against one
// adjustment of one epoch in the same process, and the ratio; then the same
// analysis with one mark raised 20 mm in the last epoch, which adds the
// stepwise search for the moving mark (one joint solve per mark and step).
// Times are process CPU seconds, the least of repeated runs (at least five,
// and until 0.3 s is spent): one run of sub-millisecond work by wall clock
// swung the ratio from 1.7 to 179 between runs.
// Usage: bench_epochs [N ...]   (default 100 400 1000)

#include <fmt/format.h>
#include <time.h>

#include <algorithm>
#include <cmath>
#include <cstdlib>
#include <limits>
#include <unordered_map>
#include <vector>

#include "levelhead/levelling/adjustment.hpp"
#include "levelhead/levelling/epochs.hpp"
#include "support/synthetic_networks.hpp"

using namespace levelhead;

namespace {

double cpu_seconds() {
  timespec t{};
  clock_gettime(CLOCK_PROCESS_CPUTIME_ID, &t);
  return static_cast<double>(t.tv_sec) + 1e-9 * static_cast<double>(t.tv_nsec);
}

// CPU seconds of one call of `work`: the least of repeated calls.
template <class Work>
double least_cpu_seconds(Work&& work) {
  double least = std::numeric_limits<double>::infinity(), spent = 0.0;
  for (int run = 0; run < 5 || spent < 0.3; ++run) {
    const double start = cpu_seconds();
    work();
    const double took = cpu_seconds() - start;
    least = std::min(least, took);
    spent += took;
  }
  return least;
}

}  // namespace

int main(int argc, char** argv) {
  std::vector<std::size_t> sizes = {100, 400, 1000};
  if (argc > 1) {
    sizes.clear();
    for (int i = 1; i < argc; ++i) sizes.push_back(std::strtoul(argv[i], nullptr, 10));
  }
  fmt::print("{:>8} {:>10} {:>12} {:>12} {:>8} {:>12} {:>8}\n", "points", "unknowns",
             "adjust (CPU s)", "epochs (CPU s)", "ratio", "moved (CPU s)", "ratio");
  for (std::size_t n : sizes) {
    testing::SyntheticNetwork net = testing::mesh_network(n, 7);
    const std::size_t side =
        static_cast<std::size_t>(std::sqrt(static_cast<double>(net.points.size())));
    const std::vector<std::string> marks = {net.points[0].id, net.points[side - 1].id,
                                            net.points[side * (side - 1)].id, net.points.back().id};
    std::unordered_map<std::string, std::size_t> index;
    for (std::size_t i = 0; i < net.points.size(); ++i) index[net.points[i].id] = i;
    std::mt19937_64 rng(99);
    std::vector<EpochSections> epochs;
    const char* dates[] = {"2024-10-01", "2025-10-01", "2026-10-01"};
    for (int k = 0; k < 3; ++k) {
      SectionTable table{"epoch", {}};
      for (const Section& s : net.sections) {
        Section e = testing::noisy_section(net, index.at(s.from), index.at(s.to), rng);
        e.date = dates[k];
        table.sections.push_back(std::move(e));
      }
      epochs.push_back({fmt::format("E{}", k + 1), std::move(table)});
    }
    std::vector<Point> points = net.points;
    for (Point& p : points) p.height.reset();
    points[0].height = net.true_height[0];

    AdjustmentOptions one;
    one.free_point = marks.front();
    AdjustmentResult single;
    const double t_adjust = least_cpu_seconds([&] {
      single = adjust(make_network(std::vector<Point>(points),
                                   std::vector<Section>(epochs[0].sections.sections)),
                      one);
    });

    EpochAnalysis a;
    const double t_epochs = least_cpu_seconds([&] {
      a = analyse_epochs(PointTable{"points", points}, epochs, marks, EpochOptions{});
    });

    for (Section& e : epochs.back().sections.sections) {
      if (e.to == marks[1]) e.dh += 0.020;
      if (e.from == marks[1]) e.dh -= 0.020;
    }
    EpochAnalysis moved;
    const double t_moved = least_cpu_seconds([&] {
      moved = analyse_epochs(PointTable{"points", points}, epochs, marks, EpochOptions{});
    });
    std::size_t moving = 0;
    for (const MarkVerdict& v : moved.marks) moving += v.kind == MarkVerdict::Kind::moving;
    // Joint unknowns: three epochs of the points that are not marks, the
    // four shared marks, less the one held.
    fmt::print(
        "{:>8} {:>10} {:>12.4f} {:>12.4f} {:>8.1f} {:>12.4f} {:>8.1f}   (congruence {}, dof {}; "
        "moved: {} mark(s) found moving)\n",
        net.points.size(), 3 * (net.points.size() - 4) + 3, t_adjust, t_epochs, t_epochs / t_adjust,
        t_moved, t_moved / t_adjust, a.tests.back().passed ? "passed" : "failed", single.dof,
        moving);
  }
}
