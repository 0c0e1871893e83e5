// The sparse path (CHOLMOD + Takahashi selected inverse) against an
// independent dense solution written out here: dense A, P, N = A'PA, the full
// inverse of N, and Qvv = Ql - A N^-1 A' (Ghilani, Adjustment Computations,
// 6th ed., ch. 10-12: the same textbook formulas, computed without sparsity).

#include <Eigen/Dense>
#include <catch2/catch.hpp>
#include <cmath>

#include "levelhead/levelling/adjustment.hpp"
#include "support/synthetic_networks.hpp"

using namespace levelhead;
using Catch::Matchers::WithinAbs;

namespace {

struct DenseSolution {
  Eigen::VectorXd height;     // per point
  Eigen::VectorXd sigma;      // a posteriori, per point
  Eigen::VectorXd w_section;  // per section
  double sigma0 = 0;
};

DenseSolution dense_adjustment(const Network& net) {
  const std::size_t np = net.points.size();
  std::vector<int> unknown(np, -1);
  int n = 0;
  for (std::size_t i = 0; i < np; ++i) {
    if (!net.points[i].is_fixed()) unknown[i] = n++;
  }
  std::vector<std::size_t> weighted;
  for (std::size_t i = 0; i < np; ++i) {
    if (net.points[i].has_control() && !net.points[i].is_fixed()) weighted.push_back(i);
  }
  const std::size_t m = net.sections.size() + weighted.size();
  Eigen::MatrixXd A = Eigen::MatrixXd::Zero(static_cast<Eigen::Index>(m), n);
  Eigen::VectorXd l(static_cast<Eigen::Index>(m)), sigma(static_cast<Eigen::Index>(m));
  for (std::size_t s = 0; s < net.sections.size(); ++s) {
    const auto f = net.from_index[s], t = net.to_index[s];
    double value = net.sections[s].dh;
    if (unknown[t] >= 0)
      A(s, unknown[t]) = 1.0;
    else
      value -= *net.points[t].height;
    if (unknown[f] >= 0)
      A(s, unknown[f]) = -1.0;
    else
      value += *net.points[f].height;
    l[s] = value;
    sigma[s] =
        1e-3 * testing::synthetic_mm_per_sqrt_km * std::sqrt(*net.sections[s].length / 1000.0);
  }
  for (std::size_t k = 0; k < weighted.size(); ++k) {
    const auto row = static_cast<Eigen::Index>(net.sections.size() + k);
    A(row, unknown[weighted[k]]) = 1.0;
    l[row] = *net.points[weighted[k]].height;
    sigma[row] = *net.points[weighted[k]].sigma;
  }
  const Eigen::VectorXd p = sigma.array().square().inverse();
  const Eigen::MatrixXd N = A.transpose() * p.asDiagonal() * A;
  const Eigen::MatrixXd Q = N.inverse();
  const Eigen::VectorXd x = Q * (A.transpose() * p.asDiagonal() * l);
  const Eigen::VectorXd v = A * x - l;
  const double dof = static_cast<double>(m) - n;
  DenseSolution out;
  out.sigma0 = std::sqrt(v.dot(p.asDiagonal() * v) / dof);
  const Eigen::MatrixXd Qvv =
      Eigen::MatrixXd(sigma.array().square().matrix().asDiagonal()) - A * Q * A.transpose();
  out.height.resize(static_cast<Eigen::Index>(np));
  out.sigma.resize(static_cast<Eigen::Index>(np));
  for (std::size_t i = 0; i < np; ++i) {
    out.height[i] = unknown[i] >= 0 ? x[unknown[i]] : *net.points[i].height;
    out.sigma[i] = unknown[i] >= 0 ? out.sigma0 * std::sqrt(Q(unknown[i], unknown[i])) : 0.0;
  }
  out.w_section.resize(static_cast<Eigen::Index>(net.sections.size()));
  for (std::size_t s = 0; s < net.sections.size(); ++s)
    out.w_section[s] = v[s] / std::sqrt(Qvv(s, s));
  return out;
}

Network with_control(testing::SyntheticNetwork synthetic, std::uint64_t seed) {
  std::mt19937_64 rng(seed);
  testing::set_control(synthetic, {0, 7}, {3, 11, 19}, 0.004, rng);
  return make_network(std::move(synthetic.points), std::move(synthetic.sections));
}

}  // namespace

TEST_CASE("sparse adjustment equals the dense solution on random networks", "[adjust][dense]") {
  for (std::uint64_t seed : {1u, 2u, 3u, 4u, 5u}) {
    const Network net = with_control(testing::random_network(120, 80, seed), seed + 100);
    const DenseSolution dense = dense_adjustment(net);
    const AdjustmentResult sparse = adjust(net, testing::synthetic_precision());
    INFO("seed " << seed);
    REQUIRE(sparse.sigma0.has_value());
    // sigma0: both are sqrt(v'Pv / dof) from the same model; 1e-9 relative
    // leaves room for the different rounding of dense inverse and sparse factor.
    CHECK_THAT(*sparse.sigma0, WithinAbs(dense.sigma0, 1e-9 * dense.sigma0));
    for (std::size_t i = 0; i < net.points.size(); ++i) {
      CHECK_THAT(sparse.points[i].height, WithinAbs(dense.height[i], 1e-9));  // metres
      CHECK_THAT(*sparse.points[i].sigma, WithinAbs(dense.sigma[i], 1e-9 * dense.sigma[i] + 1e-15));
    }
    for (std::size_t s = 0; s < net.sections.size(); ++s) {
      if (!sparse.sections[s].w) continue;  // redundancy ~ 0: dense w is rounding noise
      CHECK_THAT(*sparse.sections[s].w, WithinAbs(dense.w_section[s], 1e-6));
    }
  }
}

TEST_CASE("a planted 20 mm blunder is the worst suspect", "[adjust][dense][snooping]") {
  for (std::uint64_t seed : {11u, 12u, 13u}) {
    testing::SyntheticNetwork synthetic = testing::random_network(150, 150, seed);
    // Plant the blunder on a section that lies in loops (a tree edge of a
    // well-meshed part): choose the last extra section.
    const std::size_t planted = synthetic.sections.size() - 1;
    synthetic.sections[planted].dh += 0.020;
    const Network net = with_control(std::move(synthetic), seed + 100);
    const AdjustmentResult result = adjust(net, testing::synthetic_precision());
    INFO("seed " << seed);
    REQUIRE_FALSE(result.suspects.empty());
    CHECK(result.suspects.front().kind == Suspect::Kind::section);
    CHECK(result.suspects.front().index == planted);
    const DenseSolution dense = dense_adjustment(net);
    CHECK_THAT(*result.sections[planted].w, WithinAbs(dense.w_section[planted], 1e-6));
  }
}
