#pragma once
// Sparse factorisation of a symmetric positive definite normal matrix, its
// solution, and the selected inverse (the entries of N^-1 on the pattern of
// the Cholesky factor), which holds every variance and the covariance of
// every pair of unknowns joined by an observation.
//
// In:  N as a lower triangle (Eigen column-major, int indices).
// Out: solutions of N x = b; entries of N^-1 on the factor's pattern.
// Errors: ComputationError when N is not numerically positive definite (a
//      datum defect the structural checks missed) or when the factor would
//      exceed the configured size.

#include <Eigen/SparseCore>
#include <cstddef>
#include <memory>
#include <vector>

namespace levelhead::detail {

// How the factor is laid out. CHOLMOD chooses by the work per nonzero
// (supernodal where columns share enough structure, as in meshes; simplicial
// for long lines of degree-2 points); tests and benchmarks force either.
enum class FactorLayout { automatic, simplicial, supernodal };

struct SolverLimits {
  // Refuse factors with more nonzeros than this (each costs about 20 bytes
  // with the selected inverse); 2e8 is about 4 GB.
  double max_factor_nonzeros = 2e8;
  FactorLayout layout = FactorLayout::automatic;
};

struct SolverFigures {
  double analyse_seconds = 0, factor_seconds = 0, solve_seconds = 0, inverse_seconds = 0;
  double factor_nonzeros = 0;
  double factor_flops = 0;
  bool supernodal = false;
  unsigned inverse_threads = 1;  // threads that shared the selected inverse
  double pivot_ratio = 0;        // min(D) / max(D) of N = L D L' (D_j = L_jj^2 of N = L L')
};

class NormalSolver {
 public:
  using LowerMatrix = Eigen::SparseMatrix<double, Eigen::ColMajor, int>;

  NormalSolver(const LowerMatrix& lower, const SolverLimits& limits);
  ~NormalSolver();
  NormalSolver(const NormalSolver&) = delete;
  NormalSolver& operator=(const NormalSolver&) = delete;

  Eigen::VectorXd solve(const Eigen::VectorXd& rhs);

  // Computes N^-1 on the factor's pattern: supernode by supernode with dense
  // blocks on a supernodal factor, column by column on a simplicial one.
  // Call once before inverse_entry / inverse_diagonal.
  void compute_selected_inverse();
  // (N^-1)_{ij} for unknowns i, j that are equal or share a nonzero of N.
  double inverse_entry(int i, int j) const;
  Eigen::VectorXd inverse_diagonal() const;

  const SolverFigures& figures() const { return figures_; }

 private:
  struct Cholmod;
  std::unique_ptr<Cholmod> cholmod_;
  SolverFigures figures_;
  int n_ = 0;
  std::vector<int> position_;      // unknown -> row of the permuted factor
  std::vector<int> supernode_of_;  // permuted column -> its supernode (supernodal only)
  std::vector<double> inverse_;    // N^-1 on the factor pattern, same layout as L->x

  void invert_simplicial();
  void invert_supernodal();
  double simplicial_entry(int a, int b) const;
  double supernodal_entry(int a, int b) const;
};

}  // namespace levelhead::detail
