#pragma once
// Normal matrices for the solver tests, made as levelling makes them (the
// values are invented): each section adds w [1 -1; -1 1] on its two
// points, a known height adds w to its point's diagonal entry. Weights are
// drawn as 10^U(0, span), spread as lengths and precisions spread them.

#include <Eigen/SparseCore>
#include <cmath>
#include <random>
#include <vector>

#include "adjust/normal_solver.hpp"

namespace levelhead::testing {

class NormalMatrixBuilder {
 public:
  NormalMatrixBuilder(std::uint64_t seed, double log10_weight_span)
      : rng_(seed), log_weight_(0.0, log10_weight_span) {}

  void section(int a, int b) {
    const double w = random_weight();
    triplets_.emplace_back(a, a, w);
    triplets_.emplace_back(b, b, w);
    triplets_.emplace_back(std::max(a, b), std::min(a, b), -w);
  }
  void control(int a) { control(a, random_weight()); }
  void control(int a, double w) { triplets_.emplace_back(a, a, w); }
  std::mt19937_64& random() { return rng_; }

  // The lower triangle of the n x n matrix, compressed.
  detail::NormalSolver::LowerMatrix build(int n) const {
    detail::NormalSolver::LowerMatrix lower(n, n);
    lower.setFromTriplets(triplets_.begin(), triplets_.end());
    lower.makeCompressed();
    return lower;
  }

 private:
  double random_weight() { return std::pow(10.0, log_weight_(rng_)); }
  std::mt19937_64 rng_;
  std::uniform_real_distribution<double> log_weight_;
  std::vector<Eigen::Triplet<double, int>> triplets_;
};

}  // namespace levelhead::testing
