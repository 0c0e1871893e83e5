#include "levelhead/heads/event_qa.hpp"

#include <Eigen/Dense>
#include <algorithm>
#include <cmath>
#include <map>
#include <optional>

namespace levelhead {

namespace {

bool several_units(const std::string& aquifer) {
  return aquifer.find('+') != std::string::npos || aquifer.find(';') != std::string::npos;
}

struct PlaneFit {
  double prediction = 0.0;    // m
  double misfit_sigma = 0.0;  // m, of head(i) - prediction
};

// h = a + b (x - x_i) + c (y - y_i) through the neighbours, weighted least
// squares (weights 1 / sigma^2 of each head's own, unshared part); a is the
// prediction at the well, a linear combination g'h of the neighbours' heads
// (g = first row of (A'PA)^-1 A'P, summing to 1). The misfit's variance is
// propagated with the heads' full covariance (common_error.hpp), so errors
// the heads share cancel. Nothing when the neighbours lie on a line.
std::optional<PlaneFit> fit_plane(const std::vector<EventHead>& heads, std::size_t i,
                                  const std::vector<std::size_t>& near,
                                  const EventQaOptions& options) {
  const auto covariance = [&](const EventHead& a, const EventHead& b, bool same) {
    return head_covariance(a, b, same, options);
  };
  const auto m = static_cast<Eigen::Index>(near.size());
  Eigen::MatrixXd A(m, 3);
  Eigen::VectorXd l(m), p(m);
  for (Eigen::Index k = 0; k < m; ++k) {
    const EventHead& n = heads[near[static_cast<std::size_t>(k)]];
    A(k, 0) = 1.0;
    A(k, 1) = n.x - heads[i].x;
    A(k, 2) = n.y - heads[i].y;
    l[k] = n.head;
    const double own = n.sigma * n.sigma - total_variance(n.common);
    p[k] = 1.0 / std::max(own, 1e-8);  // 0.1 mm floor: no infinite weight
  }
  const Eigen::Matrix3d N = A.transpose() * p.asDiagonal() * A;
  const Eigen::LDLT<Eigen::Matrix3d> ldlt(N);
  // Neighbours on a line (relative pivot below 1e-10) give no plane.
  if (ldlt.info() != Eigen::Success ||
      ldlt.vectorD().minCoeff() <= 1e-10 * ldlt.vectorD().maxCoeff()) {
    return std::nullopt;
  }
  const Eigen::Vector3d x = ldlt.solve(A.transpose() * p.asDiagonal() * l);
  const Eigen::MatrixXd gain = ldlt.solve(A.transpose() * p.asDiagonal());  // 3 x m
  const Eigen::VectorXd g = gain.row(0).transpose();
  const EventHead& own = heads[i];
  double variance = own.sigma * own.sigma;
  for (Eigen::Index k = 0; k < m; ++k) {
    const EventHead& a = heads[near[static_cast<std::size_t>(k)]];
    variance -= 2.0 * g[k] * covariance(a, own, false);
    for (Eigen::Index j = 0; j < m; ++j)
      variance += g[k] * g[j] * covariance(a, heads[near[static_cast<std::size_t>(j)]], k == j);
  }
  return PlaneFit{x[0], std::sqrt(std::max(variance, 0.0))};
}

}  // namespace

// Leave-one-out local planar fits with the wells already flagged taken out
// of every neighbourhood, one at a time, worst first (as iterative data
// snooping does), so that one bad head does not drag its neighbours'
// predictions along.
EventQaResult check_event(const std::vector<EventHead>& heads, const EventQaOptions& options) {
  EventQaResult result;
  result.wells.resize(heads.size());
  std::vector<char> excluded(heads.size(), 0);
  for (std::size_t i = 0; i < heads.size(); ++i) {
    if (several_units(heads[i].aquifer)) {
      result.wells[i].flags.push_back("multiple-aquifers");
      excluded[i] = 1;
    }
  }
  const auto neighbours = [&](std::size_t i) {
    std::vector<std::pair<double, std::size_t>> near;
    for (std::size_t j = 0; j < heads.size(); ++j) {
      if (j == i || excluded[j] || heads[j].aquifer != heads[i].aquifer) continue;
      if (!heads[i].nest.empty() && heads[j].nest == heads[i].nest) continue;  // other screens
      near.emplace_back(std::hypot(heads[j].x - heads[i].x, heads[j].y - heads[i].y), j);
    }
    std::sort(near.begin(), near.end());
    if (near.size() > options.neighbours) near.resize(options.neighbours);
    std::vector<std::size_t> out;
    for (const auto& n : near) out.push_back(n.second);
    return out;
  };
  // The measuring point's sigma against the difference to the nearest
  // neighbour: its own, without what the two share.
  for (std::size_t i = 0; i < heads.size(); ++i) {
    if (excluded[i]) continue;
    const auto near = neighbours(i);
    if (near.empty()) continue;
    const EventHead& other = heads[near.front()];
    const double own = std::sqrt(std::max(
        heads[i].sigma * heads[i].sigma - head_covariance(heads[i], other, false, options), 0.0));
    if (own > std::abs(heads[i].head - other.head) / 3.0)
      result.wells[i].flags.push_back("mp-sigma-large");
  }
  while (true) {
    std::optional<std::size_t> worst;
    double worst_ratio = 1.0;
    for (std::size_t i = 0; i < heads.size(); ++i) {
      EventCheck& c = result.wells[i];
      if (excluded[i]) continue;
      const auto near = neighbours(i);
      const auto fit = near.size() >= 3 ? fit_plane(heads, i, near, options) : std::nullopt;
      c.prediction.reset();
      c.misfit.reset();
      if (!fit) continue;
      c.prediction = fit->prediction;
      c.misfit = heads[i].head - fit->prediction;
      const double limit = std::max(options.neighbour_tolerance, 3.0 * fit->misfit_sigma);
      const double ratio = std::abs(*c.misfit) / limit;
      if (ratio > worst_ratio) worst_ratio = ratio, worst = i;
    }
    if (!worst) break;
    result.wells[*worst].flags.push_back("neighbour-misfit");
    excluded[*worst] = 1;
  }
  for (std::size_t i = 0; i < heads.size(); ++i) {
    if (!excluded[i] && !result.wells[i].misfit)
      result.wells[i].flags.push_back("neighbour-check-skipped");
  }

  std::map<std::string, std::vector<std::size_t>> nests;
  for (std::size_t i = 0; i < heads.size(); ++i) {
    if (!heads[i].nest.empty() && heads[i].screen_middle) nests[heads[i].nest].push_back(i);
  }
  for (auto& [nest, members] : nests) {
    std::sort(members.begin(), members.end(), [&](std::size_t a, std::size_t b) {
      return *heads[a].screen_middle < *heads[b].screen_middle;
    });
    for (std::size_t k = 1; k < members.size(); ++k) {
      const EventHead& s = heads[members[k - 1]];
      const EventHead& d = heads[members[k]];
      NestPair pair{
          nest, s.well, d.well, s.head - d.head, std::sqrt(difference_variance(s, d, options)),
          "",   false};
      pair.direction = pair.dh > 0.0 ? "downward" : "upward";
      pair.significant = std::abs(pair.dh) > 2.0 * pair.sigma;
      result.nests.push_back(pair);
    }
  }
  return result;
}

double head_covariance(const EventHead& a, const EventHead& b, bool same,
                       const EventQaOptions& options) {
  if (same) return a.sigma * a.sigma;
  double c = shared_covariance(a.common, b.common);
  if (options.network_covariance && !a.network_point.empty() && !b.network_point.empty())
    c += options.network_covariance(a.network_point, b.network_point);
  return c;
}

double difference_variance(const EventHead& a, const EventHead& b, const EventQaOptions& options) {
  return std::max(
      a.sigma * a.sigma + b.sigma * b.sigma - 2.0 * head_covariance(a, b, false, options), 0.0);
}

}  // namespace levelhead
