// The selected inverse, both ways it is computed (supernode by supernode on
// CHOLMOD's supernodal L L', column by column on a simplicial L D L'),
// against the full inverse of the same matrix computed densely here, and
// against each other where a dense inverse would be too slow.

#include <Eigen/Dense>
#include <algorithm>
#include <catch2/catch.hpp>
#include <cmath>
#include <memory>
#include <random>
#include <stdexcept>
#include <thread>
#include <vector>

#include "adjust/normal_solver.hpp"
#include "support/normal_matrices.hpp"
#include "util/parallel.hpp"

using levelhead::detail::FactorLayout;
using levelhead::detail::NormalSolver;
using levelhead::detail::SolverLimits;

namespace {

struct TestMatrix {
  NormalSolver::LowerMatrix lower;
  std::vector<std::pair<int, int>> pattern;  // (row >= column) of every stored entry
};

// Normal matrix of a levelling grid of side x side points, weights over four
// orders of magnitude; `long_lines` random extra sections between far points
// bring the fill of lines crossing a mesh; two points carry control.
TestMatrix grid_normal_matrix(int side, int long_lines, std::uint64_t seed) {
  levelhead::testing::NormalMatrixBuilder normal(seed, 4.0);
  std::uniform_int_distribution<int> any_point(0, side * side - 1);
  for (int r = 0; r < side; ++r) {
    for (int c = 0; c < side; ++c) {
      const int p = r * side + c;
      if (c + 1 < side) normal.section(p, p + 1);
      if (r + 1 < side) normal.section(p, p + side);
    }
  }
  for (int k = 0; k < long_lines; ++k) {
    const int a = any_point(normal.random()), b = any_point(normal.random());
    if (a != b) normal.section(a, b);
  }
  normal.control(0, 1e4);                // a weighted benchmark
  normal.control(side * side - 1, 1e2);  // and another
  const int n = side * side;
  TestMatrix out;
  out.lower = normal.build(n);
  for (int j = 0; j < n; ++j) {
    for (NormalSolver::LowerMatrix::InnerIterator it(out.lower, j); it; ++it)
      out.pattern.emplace_back(static_cast<int>(it.row()), j);
  }
  return out;
}

Eigen::MatrixXd dense_inverse(const NormalSolver::LowerMatrix& lower) {
  const Eigen::MatrixXd full = Eigen::MatrixXd(lower).selfadjointView<Eigen::Lower>();
  return full.llt().solve(Eigen::MatrixXd::Identity(full.rows(), full.cols()));
}

// Largest difference on the matrix's pattern, relative to the largest
// variance: both sides are backward stable, so they agree to about
// cond(N) * 1e-16, far below 1e-9 for these grids (cond about 1e6).
double largest_difference(const TestMatrix& m, const NormalSolver& solver,
                          const Eigen::MatrixXd& reference) {
  const double scale = reference.diagonal().cwiseAbs().maxCoeff();
  double worst = 0.0;
  for (const auto& [i, j] : m.pattern)
    worst = std::max(worst, std::abs(solver.inverse_entry(i, j) - reference(i, j)) / scale);
  return worst;
}

std::unique_ptr<NormalSolver> inverted(const TestMatrix& m, FactorLayout layout) {
  auto solver = std::make_unique<NormalSolver>(m.lower, SolverLimits{1e9, layout});
  solver->compute_selected_inverse();
  return solver;
}

}  // namespace

TEST_CASE("selected inverse equals the dense inverse on the factor's pattern", "[adjust][selinv]") {
  for (const auto& [side, long_lines, seed] : {std::tuple{7, 0, 1u}, std::tuple{24, 0, 2u},
                                               std::tuple{24, 40, 3u}, std::tuple{31, 5, 4u}}) {
    const TestMatrix m = grid_normal_matrix(side, long_lines, seed);
    const Eigen::MatrixXd reference = dense_inverse(m.lower);
    for (FactorLayout layout : {FactorLayout::supernodal, FactorLayout::simplicial}) {
      CAPTURE(side, long_lines, static_cast<int>(layout));
      const auto owned = inverted(m, layout);
      const NormalSolver& solver = *owned;
      CHECK(solver.figures().supernodal == (layout == FactorLayout::supernodal));
      CHECK(largest_difference(m, solver, reference) < 1e-9);
      const Eigen::VectorXd diagonal = solver.inverse_diagonal();
      CHECK((diagonal - reference.diagonal()).cwiseAbs().maxCoeff() <
            1e-9 * reference.diagonal().maxCoeff());
      // The entry is the same whichever way round it is asked for.
      const auto [i, j] = m.pattern[m.pattern.size() / 2];
      CHECK(solver.inverse_entry(i, j) == Approx(solver.inverse_entry(j, i)).epsilon(1e-15));
    }
  }
}

TEST_CASE("supernodal and simplicial selected inverses agree on a large mesh", "[adjust][selinv]") {
  // 90 x 90 points: CHOLMOD's supernodes reach hundreds of columns here,
  // and the dense inverse (8100 unknowns) would dominate the test's time.
  const TestMatrix m = grid_normal_matrix(90, 20, 5);
  const auto supernodal = inverted(m, FactorLayout::supernodal);
  const auto simplicial = inverted(m, FactorLayout::simplicial);
  const auto automatic = inverted(m, FactorLayout::automatic);
  CHECK(automatic->figures().supernodal);  // a mesh has the fill that makes supernodes pay
  // Large enough for the supernodes to be shared among the cores, when there are several.
  CHECK(supernodal->figures().inverse_threads ==
        std::min(8u, std::max(1u, std::thread::hardware_concurrency())));
  double scale = 0.0, worst = 0.0;
  for (const auto& [i, j] : m.pattern) scale = std::max(scale, simplicial->inverse_entry(i, i));
  for (const auto& [i, j] : m.pattern) {
    worst = std::max(worst,
                     std::abs(supernodal->inverse_entry(i, j) - simplicial->inverse_entry(i, j)));
  }
  CHECK(worst / scale < 1e-9);
}

TEST_CASE("an entry off the factor's pattern is refused", "[adjust][selinv]") {
  const TestMatrix m = grid_normal_matrix(12, 0, 6);
  for (FactorLayout layout : {FactorLayout::supernodal, FactorLayout::simplicial}) {
    const auto solver = inverted(m, layout);
    // Opposite corners of a 12 x 12 grid share no column of any factor.
    CHECK_THROWS_AS(solver->inverse_entry(0, 143), std::logic_error);
  }
}

TEST_CASE("parallel ranges cover every item once and pass on a failure", "[adjust][threads]") {
  for (const std::size_t count : {std::size_t{0}, std::size_t{7}, std::size_t{250001}}) {
    std::vector<int> visits(count, 0);
    levelhead::util::run_in_parallel_ranges(
        count,
        [&](std::size_t begin, std::size_t end) {
          for (std::size_t i = begin; i < end; ++i) ++visits[i];
        },
        1000);
    CHECK(std::count(visits.begin(), visits.end(), 1) == static_cast<long>(count));
  }
  CHECK_THROWS_AS(levelhead::util::run_in_parallel_ranges(
                      100000,
                      [](std::size_t, std::size_t end) {
                        // The last range fails, whatever the number of threads.
                        if (end == 100000) throw std::runtime_error("a range failed");
                      },
                      1000),
                  std::runtime_error);
}
