#include "levelhead/flow/flow.hpp"

#include <fmt/format.h>

#include <Eigen/Dense>
#include <algorithm>
#include <cmath>
#include <limits>
#include <numbers>

#include "levelhead/core/errors.hpp"
#include "levelhead/levelling/statistics.hpp"

namespace levelhead {

namespace {

// Pope's tau test of each well's residual against the plane (see flow.hpp).
void test_wells_against_plane(const Eigen::MatrixXd& A, const Eigen::VectorXd& p,
                              const Eigen::VectorXd& v, const Eigen::Matrix3d& Q, double alpha0,
                              FlowResult& r) {
  r.tau.assign(static_cast<std::size_t>(v.size()), std::nullopt);
  r.tau_critical = std::numeric_limits<double>::infinity();
  if (!r.sigma0 || r.dof < 2 || !(*r.sigma0 > 0.0)) return;
  r.tau_critical = tau_test_critical_value(alpha0, static_cast<double>(r.dof));
  for (Eigen::Index i = 0; i < v.size(); ++i) {
    const Eigen::Vector3d a = A.row(i).transpose();
    const double q_vv = 1.0 / p[i] - a.dot(Q * a);
    // Below 1e-6 of its own variance the residual is not checked (a well
    // that alone fixes the plane there), as in the adjustment.
    if (!(q_vv * p[i] > 1e-6)) continue;
    const double tau = v[i] / (*r.sigma0 * std::sqrt(q_vv));
    r.tau[static_cast<std::size_t>(i)] = tau;
    if (std::abs(tau) > r.tau_critical) r.off_plane.push_back(static_cast<std::size_t>(i));
  }
  std::stable_sort(r.off_plane.begin(), r.off_plane.end(), [&](std::size_t x, std::size_t y) {
    return std::abs(*r.tau[x]) > std::abs(*r.tau[y]);
  });
}

}  // namespace

FlowResult estimate_flow(const std::vector<FlowWell>& wells, const FlowOptions& options) {
  if (wells.size() < 3) {
    throw InputError(
        "heads",
        fmt::format("a gradient needs heads in at least 3 wells; there are {}", wells.size()));
  }
  const auto n = static_cast<Eigen::Index>(wells.size());
  FlowResult r;
  for (const FlowWell& w : wells) r.x0 += w.x, r.y0 += w.y;
  r.x0 /= static_cast<double>(n);
  r.y0 /= static_cast<double>(n);
  Eigen::MatrixXd A(n, 3);
  Eigen::VectorXd l(n), p(n);
  for (Eigen::Index i = 0; i < n; ++i) {
    const FlowWell& w = wells[static_cast<std::size_t>(i)];
    A(i, 0) = 1.0;
    A(i, 1) = w.x - r.x0;
    A(i, 2) = w.y - r.y0;
    l[i] = w.head;
    p[i] = 1.0 / std::max(w.sigma * w.sigma, 1e-8);  // 0.1 mm floor: no infinite weight
  }
  // Geometry: the spread of the wells across their narrowest direction,
  // from the eigenvalues of the coordinates' scatter.
  Eigen::Matrix2d scatter = Eigen::Matrix2d::Zero();
  for (Eigen::Index i = 0; i < n; ++i) {
    const Eigen::Vector2d d(A(i, 1), A(i, 2));
    scatter += d * d.transpose();
  }
  const Eigen::SelfAdjointEigenSolver<Eigen::Matrix2d> spread(scatter);
  const double narrow = std::sqrt(std::max(spread.eigenvalues()[0], 0.0) / static_cast<double>(n));
  const double wide = std::sqrt(std::max(spread.eigenvalues()[1], 0.0) / static_cast<double>(n));
  // Collinear when the narrow spread is below 1e-6 of the wide one (a line to
  // rounding); nearly so below 5 % (the gradient across the line is then
  // twenty times less well determined than along it).
  if (!(wide > 0.0) || narrow < 1e-6 * wide) {
    throw InputError("heads",
                     "the wells lie on a line: the gradient across it cannot be "
                     "determined; add a well off the line");
  }
  r.nearly_collinear = narrow < 0.05 * wide;

  const Eigen::Matrix3d N = A.transpose() * p.asDiagonal() * A;
  const Eigen::Matrix3d Q = N.ldlt().solve(Eigen::Matrix3d::Identity());
  const Eigen::Vector3d x = Q * (A.transpose() * p.asDiagonal() * l);
  const Eigen::VectorXd v = A * x - l;
  r.intercept = x[0];
  r.dh_dx = x[1];
  r.dh_dy = x[2];
  r.dof = wells.size() - 3;
  double scale = 1.0;
  if (r.dof > 0) {
    r.sigma0 = std::sqrt(v.dot(p.asDiagonal() * v) / static_cast<double>(r.dof));
    scale = std::max(1.0, *r.sigma0 * *r.sigma0);
  }
  r.cov_xx = scale * Q(1, 1);
  r.cov_xy = scale * Q(1, 2);
  r.cov_yy = scale * Q(2, 2);
  for (Eigen::Index i = 0; i < n; ++i) r.residuals.push_back(v[i]);
  test_wells_against_plane(A, p, v, Q, options.alpha0, r);

  const double b = r.dh_dx, c = r.dh_dy;
  r.gradient = std::hypot(b, c);
  double az = std::atan2(-b, -c) * 180.0 / std::numbers::pi;
  if (az < 0.0) az += 360.0;
  r.azimuth = az;
  if (r.gradient > 0.0) {
    // i = sqrt(b^2 + c^2): di = (b, c) / i; azimuth = atan2(-b, -c):
    // d az = (-c, b) / i^2 (radians).
    const double gb = b / r.gradient, gc = c / r.gradient;
    r.gradient_sigma = std::sqrt(gb * gb * r.cov_xx + 2 * gb * gc * r.cov_xy + gc * gc * r.cov_yy);
    const double ab = -c / (r.gradient * r.gradient), ac = b / (r.gradient * r.gradient);
    r.azimuth_sigma = std::sqrt(ab * ab * r.cov_xx + 2 * ab * ac * r.cov_xy + ac * ac * r.cov_yy) *
                      180.0 / std::numbers::pi;
  }
  if (options.conductivity) {
    r.specific_discharge =
        Range{options.conductivity->low * r.gradient, options.conductivity->high * r.gradient};
    if (options.porosity) {
      r.velocity = Range{r.specific_discharge->low / options.porosity->high,
                         r.specific_discharge->high / options.porosity->low};
      if (options.distance && r.velocity->low > 0.0) {
        r.travel_time =
            Range{*options.distance / r.velocity->high, *options.distance / r.velocity->low};
      }
    }
  }
  return r;
}

}  // namespace levelhead
