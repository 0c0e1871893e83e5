// The block solution of the joint epochs' normal equations (Schur complement
// on the shared marks) against the dense solution and inverse of the same
// matrix computed here.

#include <Eigen/Dense>
#include <algorithm>
#include <catch2/catch.hpp>
#include <cmath>
#include <random>
#include <vector>

#include "epochs/epoch_block_solver.hpp"
#include "support/normal_matrices.hpp"

using levelhead::detail::EpochBlockSolver;
using levelhead::detail::NormalSolver;
using levelhead::detail::SolverLimits;

namespace {

struct BlockMatrix {
  NormalSolver::LowerMatrix lower;
  std::vector<int> epoch_begin;
};

// `shared` marks, then epochs of the given sizes: each epoch a chain of its
// own points closed into a ring, every few points tied to a shared mark,
// weights over three orders of magnitude.
BlockMatrix block_matrix(int shared, const std::vector<int>& sizes, std::uint64_t seed) {
  levelhead::testing::NormalMatrixBuilder normal(seed, 3.0);
  BlockMatrix m;
  int next = shared;
  for (int s = 0; s < shared; ++s) normal.control(s);  // each mark also tied to the held mark
  for (int size : sizes) {
    m.epoch_begin.push_back(next);
    for (int i = 0; i < size; ++i) {
      normal.section(next + i, next + (i + 1) % size);
      if (shared > 0 && i % 4 == 0) normal.section(next + i, i % shared);
    }
    if (shared == 0 && size > 0) normal.control(next);
    next += size;
  }
  m.epoch_begin.push_back(next);
  m.lower = normal.build(next);
  return m;
}

}  // namespace

TEST_CASE("block solution and cofactors of joint epochs equal the dense ones", "[epochs][selinv]") {
  for (const auto& [shared, sizes] :
       {std::pair{3, std::vector<int>{20, 25, 15}}, std::pair{1, std::vector<int>{12, 0, 30}},
        std::pair{0, std::vector<int>{10, 14}}, std::pair{6, std::vector<int>{40, 40, 40, 40}}}) {
    CAPTURE(shared, sizes.size());
    const BlockMatrix m = block_matrix(shared, sizes, 7);
    const Eigen::MatrixXd full = Eigen::MatrixXd(m.lower).selfadjointView<Eigen::Lower>();
    const Eigen::MatrixXd inverse =
        full.llt().solve(Eigen::MatrixXd::Identity(full.rows(), full.cols()));
    const EpochBlockSolver blocks(m.lower, shared, m.epoch_begin, SolverLimits{});

    const Eigen::VectorXd b = Eigen::VectorXd::LinSpaced(full.rows(), -1.0, 2.0);
    const Eigen::VectorXd x = full.llt().solve(b);
    // Both backward stable on matrices of condition about 1e4: agreement to
    // far below 1e-9 of the largest entry.
    CHECK((blocks.solve(b) - x).cwiseAbs().maxCoeff() < 1e-9 * x.cwiseAbs().maxCoeff());

    const double scale = inverse.diagonal().maxCoeff();
    double worst = 0.0;
    const int n = static_cast<int>(full.rows());
    for (int a = 0; a < n; ++a) {
      for (int c = 0; c < n; ++c) {
        // Pairs inside one epoch only on the factor's pattern: the diagonal.
        const bool same_epoch = a >= shared && c >= shared && a != c &&
                                std::upper_bound(m.epoch_begin.begin(), m.epoch_begin.end(), a) ==
                                    std::upper_bound(m.epoch_begin.begin(), m.epoch_begin.end(), c);
        if (same_epoch) continue;
        worst = std::max(worst, std::abs(blocks.cofactor(a, c) - inverse(a, c)) / scale);
      }
    }
    CHECK(worst < 1e-9);
  }
}

TEST_CASE("a matrix joining two epochs' own points is refused", "[epochs][selinv]") {
  BlockMatrix m = block_matrix(2, {5, 5}, 8);
  std::vector<Eigen::Triplet<double, int>> t;
  for (int j = 0; j < m.lower.outerSize(); ++j)
    for (NormalSolver::LowerMatrix::InnerIterator it(m.lower, j); it; ++it)
      t.emplace_back(static_cast<int>(it.row()), j, it.value());
  t.emplace_back(m.epoch_begin[1], m.epoch_begin[0], -0.5);  // first points of epochs 0 and 1
  t.emplace_back(m.epoch_begin[1], m.epoch_begin[1], 0.5);
  t.emplace_back(m.epoch_begin[0], m.epoch_begin[0], 0.5);
  m.lower.setFromTriplets(t.begin(), t.end());
  m.lower.makeCompressed();
  CHECK_THROWS_AS(EpochBlockSolver(m.lower, 2, m.epoch_begin, SolverLimits{}), std::logic_error);
}
