#include "epochs/epoch_block_solver.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <stdexcept>

#include "levelhead/core/errors.hpp"

namespace levelhead::detail {

// Block inverse by the Schur complement of the epochs' own blocks (e.g.
// Golub & Van Loan, "Matrix Computations", 4th ed., sec. 3.2.11; in
// adjustment, reduction of the normal equations to the shared unknowns,
// Koch, "Parameter Estimation and Hypothesis Testing in Linear Models",
// ch. 3.2). With S the shared marks and E = blockdiag(N_kk) the epochs' own
// points, W = E^-1 N_ES and C = N_SS - N_SE W:
//   Q_SS = C^-1,   Q_ES = -W C^-1,   Q_EE = E^-1 + W C^-1 W'.
// E^-1 is block diagonal, so points of different epochs covary only through
// W C^-1 W', and one point's own variance needs only its epoch's selected
// inverse. Each epoch is factorised on its own, as small as one epoch's
// adjustment; joining the epochs of every point in one matrix instead
// turned the layers of a mesh into one thick mesh and cost 12 epoch
// adjustments at 1e4 points.
EpochBlockSolver::EpochBlockSolver(const NormalSolver::LowerMatrix& lower, int shared,
                                   std::vector<int> epoch_begin, const SolverLimits& limits)
    : shared_(shared), epoch_begin_(std::move(epoch_begin)) {
  const int epochs = static_cast<int>(epoch_begin_.size()) - 1;
  const auto memory = static_cast<double>(shared) * static_cast<double>(lower.rows());
  if (memory > limits.max_factor_nonzeros) {
    throw ComputationError(fmt::format(
        "{} shared marks over {} unknowns would need {:.3g} numbers for their cofactors, above the "
        "limit of {:.3g}; name fewer candidate reference marks",
        shared, lower.rows(), memory, limits.max_factor_nonzeros));
  }
  Eigen::MatrixXd c = Eigen::MatrixXd::Zero(shared, shared);
  std::vector<std::vector<Eigen::Triplet<double, int>>> own(static_cast<std::size_t>(epochs));
  epochs_.resize(static_cast<std::size_t>(epochs));
  for (int k = 0; k < epochs; ++k) {
    const int size = epoch_begin_[k + 1] - epoch_begin_[k];
    epochs_[k].w = Eigen::MatrixXd::Zero(size, shared);  // N_kS until solved
  }
  for (int j = 0; j < lower.outerSize(); ++j) {
    for (NormalSolver::LowerMatrix::InnerIterator it(lower, j); it; ++it) {
      const int i = static_cast<int>(it.row());
      if (j < shared && i < shared) {
        c(i, j) = it.value();
        c(j, i) = it.value();
      } else if (j < shared) {
        const int k = epoch_of(i);
        epochs_[k].w(i - epoch_begin_[k], j) = it.value();
      } else {
        const int k = epoch_of(j);
        if (epoch_of(i) != k)
          throw std::logic_error("EpochBlockSolver: N joins the own points of two epochs");
        own[k].emplace_back(i - epoch_begin_[k], j - epoch_begin_[k], it.value());
      }
    }
  }
  for (int k = 0; k < epochs; ++k) {
    Epoch& e = epochs_[k];
    const int size = epoch_begin_[k + 1] - epoch_begin_[k];
    if (size == 0) continue;
    NormalSolver::LowerMatrix block(size, size);
    block.setFromTriplets(own[k].begin(), own[k].end());
    block.makeCompressed();
    e.own = std::make_unique<NormalSolver>(block, limits);
    e.own->compute_selected_inverse();
    const Eigen::MatrixXd n_ks = e.w;
    for (int s = 0; s < shared; ++s) e.w.col(s) = e.own->solve(n_ks.col(s));
    c.noalias() -= n_ks.transpose() * e.w;
  }
  const Eigen::LLT<Eigen::MatrixXd> factor(c);
  if (factor.info() != Eigen::Success) {
    throw ComputationError(
        "the shared marks' reduced normal matrix is not positive definite: a mark's height is "
        "not determined by the epochs and the held mark");
  }
  shared_inverse_ = factor.solve(Eigen::MatrixXd::Identity(shared, shared));
  for (Epoch& e : epochs_) e.v = e.w * shared_inverse_;
}

EpochBlockSolver::~EpochBlockSolver() = default;

int EpochBlockSolver::epoch_of(int unknown) const {
  const auto after = std::upper_bound(epoch_begin_.begin(), epoch_begin_.end(), unknown);
  return static_cast<int>(after - epoch_begin_.begin()) - 1;
}

// The same blocks solve N x = b: with y_k = N_kk^-1 b_k,
//   x_S = C^-1 (b_S - sum_k W_k' b_k),   x_k = y_k - W_k x_S
// (W_k' b_k = N_Sk N_kk^-1 b_k, N_kk being symmetric).
Eigen::VectorXd EpochBlockSolver::solve(const Eigen::VectorXd& rhs) const {
  Eigen::VectorXd x(rhs.size());
  Eigen::VectorXd reduced = rhs.head(shared_);
  for (std::size_t k = 0; k < epochs_.size(); ++k) {
    const int begin = epoch_begin_[k], size = epoch_begin_[k + 1] - begin;
    if (size == 0) continue;
    x.segment(begin, size) = epochs_[k].own->solve(rhs.segment(begin, size));
    reduced.noalias() -= epochs_[k].w.transpose() * rhs.segment(begin, size);
  }
  x.head(shared_) = shared_inverse_ * reduced;
  for (std::size_t k = 0; k < epochs_.size(); ++k) {
    const int begin = epoch_begin_[k], size = epoch_begin_[k + 1] - begin;
    if (size > 0) x.segment(begin, size).noalias() -= epochs_[k].w * x.head(shared_);
  }
  return x;
}

double EpochBlockSolver::cofactor(int a, int b) const {
  if (a > b) std::swap(a, b);
  if (b < shared_) return shared_inverse_(a, b);
  const int kb = epoch_of(b);
  const int lb = b - epoch_begin_[kb];
  if (a < shared_) return -epochs_[kb].v(lb, a);
  const int ka = epoch_of(a);
  const int la = a - epoch_begin_[ka];
  const double through_shared = epochs_[ka].v.row(la).dot(epochs_[kb].w.row(lb));
  return ka == kb ? epochs_[ka].own->inverse_entry(la, lb) + through_shared : through_shared;
}

}  // namespace levelhead::detail
