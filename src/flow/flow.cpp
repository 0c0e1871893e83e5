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

// Pope's tau test of each well's residual against the plane (see flow.hpp),
// with the residuals' cofactors Q_vv = C - A Q A'.
void test_wells_against_plane(const Eigen::MatrixXd& A, const Eigen::MatrixXd& C,
                              const Eigen::VectorXd& v, const Eigen::Matrix3d& Q, double alpha0,
                              FlowResult& r) {
  r.tau.assign(static_cast<std::size_t>(v.size()), std::nullopt);
  r.tau_critical = std::numeric_limits<double>::infinity();
  if (!r.sigma0 || r.dof < 2 || !(*r.sigma0 > 0.0)) return;
  r.tau_critical = tau_test_critical_value(alpha0, static_cast<double>(r.dof));
  for (Eigen::Index i = 0; i < v.size(); ++i) {
    const Eigen::Vector3d a = A.row(i).transpose();
    const double q_vv = C(i, i) - a.dot(Q * a);
    // Below 1e-6 of its own variance the residual is not checked (a well
    // that alone fixes the plane there), as in the adjustment.
    if (!(q_vv > 1e-6 * C(i, i))) continue;
    const double tau = v[i] / (*r.sigma0 * std::sqrt(q_vv));
    r.tau[static_cast<std::size_t>(i)] = tau;
    if (std::abs(tau) > r.tau_critical) r.off_plane.push_back(static_cast<std::size_t>(i));
  }
  std::stable_sort(r.off_plane.begin(), r.off_plane.end(), [&](std::size_t x, std::size_t y) {
    return std::abs(*r.tau[x]) > std::abs(*r.tau[y]);
  });
}

// The gradient's and azimuth's sigmas from a covariance of (b, c):
// i = sqrt(b^2 + c^2): di = (b, c) / i; azimuth = atan2(-b, -c):
// d az = (-c, b) / i^2 (radians).
FlowSigmas propagate(double b, double c, double xx, double xy, double yy) {
  const double i = std::hypot(b, c);
  if (!(i > 0.0)) return {};
  const double gb = b / i, gc = c / i;
  const double ab = -c / (i * i), ac = b / (i * i);
  return {std::sqrt(std::max(gb * gb * xx + 2 * gb * gc * xy + gc * gc * yy, 0.0)),
          std::sqrt(std::max(ab * ab * xx + 2 * ab * ac * xy + ac * ac * yy, 0.0)) * 180.0 /
              std::numbers::pi};
}

}  // namespace

FlowResult estimate_flow(const std::vector<FlowWell>& wells, const FlowOptions& options,
                         const std::vector<HeadCovariance>& covariances) {
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
  Eigen::VectorXd l(n);
  for (Eigen::Index i = 0; i < n; ++i) {
    const FlowWell& w = wells[static_cast<std::size_t>(i)];
    A(i, 0) = 1.0;
    A(i, 1) = w.x - r.x0;
    A(i, 2) = w.y - r.y0;
    l[i] = w.head;
  }
  const std::vector<double> c_values = head_covariance(wells, covariances);
  const Eigen::MatrixXd C = Eigen::Map<const Eigen::MatrixXd>(c_values.data(), n, n);
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

  // Whitened by the Cholesky factor of C: C = L L', then ordinary least
  // squares on L^-1 A and L^-1 l.
  const Eigen::LLT<Eigen::MatrixXd> factor(C);
  if (factor.info() != Eigen::Success) {
    throw ComputationError(
        "the heads' covariance is not positive definite: a head without a sigma, or shared "
        "errors larger than a head's own sigma");
  }
  const Eigen::MatrixXd WA = factor.matrixL().solve(A);
  const Eigen::VectorXd Wl = factor.matrixL().solve(l);
  const Eigen::Matrix3d N = WA.transpose() * WA;
  const Eigen::Matrix3d Q = N.ldlt().solve(Eigen::Matrix3d::Identity());
  const Eigen::Vector3d x = Q * (WA.transpose() * Wl);
  const Eigen::VectorXd v = A * x - l;
  const Eigen::VectorXd Wv = factor.matrixL().solve(v);
  r.intercept = x[0];
  r.dh_dx = x[1];
  r.dh_dy = x[2];
  r.dof = wells.size() - 3;
  r.vtpv = Wv.squaredNorm();
  for (Eigen::Index i = 0; i < n; ++i) r.residuals.push_back(v[i]);
  const double b = r.dh_dx, c = r.dh_dy;
  r.gradient = std::hypot(b, c);
  double az = std::atan2(-b, -c) * 180.0 / std::numbers::pi;
  if (az < 0.0) az += 360.0;
  r.azimuth = az;
  r.from_heads = propagate(b, c, Q(1, 1), Q(1, 2), Q(2, 2));
  double scale = 1.0;
  if (r.dof > 0) {
    const double dof = static_cast<double>(r.dof);
    r.sigma0 = std::sqrt(r.vtpv / dof);
    const double s2 = *r.sigma0 * *r.sigma0;
    r.from_misfit = propagate(b, c, s2 * Q(1, 1), s2 * Q(1, 2), s2 * Q(2, 2));
    r.misfit_lower = chi_square_quantile(options.alpha / 2.0, dof);
    r.misfit_upper = chi_square_upper_quantile(options.alpha / 2.0, dof);
    r.misfit_passed = r.vtpv >= *r.misfit_lower && r.vtpv <= *r.misfit_upper;
    r.misfit_dominates = s2 > 1.0;
    scale = std::max(1.0, s2);
  }
  r.cov_xx = scale * Q(1, 1);
  r.cov_xy = scale * Q(1, 2);
  r.cov_yy = scale * Q(2, 2);
  const FlowSigmas& used = r.misfit_dominates ? *r.from_misfit : r.from_heads;
  r.gradient_sigma = used.gradient;
  r.azimuth_sigma = used.azimuth;
  test_wells_against_plane(A, C, v, Q, options.alpha0, r);
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

namespace {

// Two significant digits, in plain decimals where that stays short.
std::string two_digits(double x) {
  if (x == 0.0 || !std::isfinite(x)) return fmt::format("{:g}", x);
  const int magnitude = static_cast<int>(std::floor(std::log10(std::abs(x))));
  if (magnitude < -4 || magnitude > 5) return fmt::format("{:.1e}", x);
  const double step = std::pow(10.0, magnitude - 1);
  return fmt::format("{:.{}f}", std::round(x / step) * step, std::max(0, 1 - magnitude));
}

}  // namespace

std::string describe_velocity(const Range& v) {
  return fmt::format("{} to {} m/day", two_digits(v.low * 86400.0), two_digits(v.high * 86400.0));
}

std::string describe_travel_time(const Range& t) {
  constexpr double day = 86400.0, year = 365.25 * day;  // Julian year
  if (t.high < year)
    return fmt::format("{} to {} days", two_digits(t.low / day), two_digits(t.high / day));
  return fmt::format("{} to {} years", two_digits(t.low / year), two_digits(t.high / year));
}

std::string describe_flow_uncertainty(const FlowResult& r) {
  const std::string heads = fmt::format("from the heads' covariance +- {:.1e} and {:.1f} degrees",
                                        r.from_heads.gradient, r.from_heads.azimuth);
  if (!r.from_misfit) return "Uncertainty " + heads + " (3 wells: no misfit to judge the plane by)";
  return fmt::format(
      "Uncertainty {}; from the plane's misfit +- {:.1e} and {:.1f} degrees (sigma0 {:.2f}, "
      "global test {}: v'Pv = {:.2f} against {:.2f} .. {:.2f}); the {} dominates",
      heads, r.from_misfit->gradient, r.from_misfit->azimuth, *r.sigma0,
      *r.misfit_passed           ? "passed"
      : r.vtpv < *r.misfit_lower ? "failed low, the heads' sigmas look pessimistic"
                                 : "failed high",
      r.vtpv, *r.misfit_lower, *r.misfit_upper,
      r.misfit_dominates ? "misfit: the plane does not fit the heads as their sigmas say"
                         : "heads' covariance");
}

std::vector<double> head_covariance(const std::vector<FlowWell>& wells,
                                    const std::vector<HeadCovariance>& covariances) {
  const std::size_t n = wells.size();
  std::vector<double> c(n * n, 0.0);
  for (std::size_t i = 0; i < n; ++i) {
    // 0.1 mm floor: a head without a sigma gets no infinite weight.
    c[i * n + i] = std::max(wells[i].sigma * wells[i].sigma, 1e-8);
    for (std::size_t j = 0; j < i; ++j)
      c[i * n + j] = c[j * n + i] = shared_covariance(wells[i].common, wells[j].common);
  }
  for (const HeadCovariance& k : covariances) {
    c[k.i * n + k.j] += k.value;
    c[k.j * n + k.i] += k.value;
  }
  return c;
}

}  // namespace levelhead
