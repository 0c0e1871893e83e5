#pragma once
// The joint adjustment of several epochs solved block by block: its
// solution and cofactors by the Schur complement on the marks the epochs
// share, each epoch's own points factorised on their own.
//
// In:  the lower triangle of the joint normal matrix N (u x u) whose
//      unknowns are ordered as the shared marks first, [0, shared), then
//      each epoch's own points in one range, [epoch_begin[k],
//      epoch_begin[k+1]); no entry joins the own points of two epochs.
// Out: solutions of N x = b; entries of N^-1: between any two shared marks, between a shared mark
//      and any point, between points of different epochs, and between two
//      points of one epoch on the pattern of that epoch's factor (a point
//      with itself always).
// Errors: ComputationError when N is not positive definite; std::logic_error
//      when N joins two epochs' own points.

#include <Eigen/Dense>
#include <memory>
#include <vector>

#include "adjust/normal_solver.hpp"

namespace levelhead::detail {

class EpochBlockSolver {
 public:
  EpochBlockSolver(const NormalSolver::LowerMatrix& lower, int shared, std::vector<int> epoch_begin,
                   const SolverLimits& limits);
  ~EpochBlockSolver();
  EpochBlockSolver(const EpochBlockSolver&) = delete;
  EpochBlockSolver& operator=(const EpochBlockSolver&) = delete;

  Eigen::VectorXd solve(const Eigen::VectorXd& rhs) const;
  double cofactor(int a, int b) const;

 private:
  struct Epoch {
    std::unique_ptr<NormalSolver> own;  // N_kk, with its selected inverse
    Eigen::MatrixXd w;                  // N_kk^-1 N_kS
    Eigen::MatrixXd v;                  // w C^-1
  };
  int epoch_of(int unknown) const;
  int shared_ = 0;
  std::vector<int> epoch_begin_;
  std::vector<Epoch> epochs_;
  Eigen::MatrixXd shared_inverse_;  // C^-1, C = N_SS - sum_k N_Sk N_kk^-1 N_kS
};

}  // namespace levelhead::detail
