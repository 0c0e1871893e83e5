#include "levelhead/references/site_tie.hpp"

#include <fmt/format.h>

#include <Eigen/Dense>
#include <algorithm>
#include <cmath>
#include <unordered_map>
#include <unordered_set>

#include "levelhead/core/errors.hpp"
#include "levelhead/levelling/statistics.hpp"

namespace levelhead {

TieModel parse_tie_model(const std::string& text) {
  if (text == "offset") return TieModel::offset;
  if (text == "plane") return TieModel::plane;
  throw OptionError(fmt::format("tie model '{}': use offset or plane (offset and slope)", text));
}

std::string to_string(TieModel model) { return model == TieModel::offset ? "offset" : "plane"; }

std::vector<TiePoint> match_tie_points(const Table& site, const Table& base) {
  const std::size_t site_id = site.require_column("id"), base_id = base.require_column("id");
  const std::size_t site_h = site.require_column("height"), base_h = base.require_column("height");
  const std::size_t x = site.require_column("x"), y = site.require_column("y");
  const auto site_s = site.find_column("sigma"), base_s = base.find_column("sigma");
  std::unordered_map<std::string, std::size_t> base_rows;
  for (std::size_t r = 0; r < base.row_count(); ++r) {
    if (!base_rows.emplace(std::string(base.cell(r, base_id)), r).second) {
      throw InputError(base.location(r, base_id), std::string(base.cell(r, base_id)),
                       "this id appears twice; ids must be unique");
    }
  }
  std::vector<TiePoint> ties;
  std::unordered_set<std::string> site_ids;
  for (std::size_t r = 0; r < site.row_count(); ++r) {
    if (!site_ids.insert(std::string(site.cell(r, site_id))).second) {
      throw InputError(site.location(r, site_id), std::string(site.cell(r, site_id)),
                       "this id appears twice; ids must be unique");
    }
    const auto it = base_rows.find(std::string(site.cell(r, site_id)));
    if (it == base_rows.end()) continue;
    const auto hs = site.height(r, site_h);
    const auto hb = base.length(it->second, base_h);
    if (!hs || !hb) continue;
    const auto px = site.number(r, x), py = site.number(r, y);
    if (!px || !py) {
      throw InputError(site.location(r, px ? y : x), "", "a tie point needs x and y");
    }
    TiePoint t;
    t.id = std::string(site.cell(r, site_id));
    t.x = *px;
    t.y = *py;
    t.site_height = *hs;
    t.base_height = *hb;
    if (site_s) t.site_sigma = site.sigma(r, *site_s);
    if (base_s) t.base_sigma = base.length(it->second, *base_s);
    ties.push_back(t);
  }
  return ties;
}

namespace {

// Convex hull by Andrew's monotone chain (Andrew 1979), counter-clockwise.
std::vector<std::array<double, 2>> convex_hull(std::vector<std::array<double, 2>> p) {
  std::sort(p.begin(), p.end());
  p.erase(std::unique(p.begin(), p.end()), p.end());
  if (p.size() < 3) return p;
  const auto cross = [](const auto& o, const auto& a, const auto& b) {
    return (a[0] - o[0]) * (b[1] - o[1]) - (a[1] - o[1]) * (b[0] - o[0]);
  };
  std::vector<std::array<double, 2>> hull(2 * p.size());
  std::size_t k = 0;
  for (std::size_t i = 0; i < p.size(); ++i) {
    while (k >= 2 && cross(hull[k - 2], hull[k - 1], p[i]) <= 0) --k;
    hull[k++] = p[i];
  }
  for (std::size_t i = p.size() - 1, t = k + 1; i > 0; --i) {
    while (k >= t && cross(hull[k - 2], hull[k - 1], p[i - 1]) <= 0) --k;
    hull[k++] = p[i - 1];
  }
  hull.resize(k - 1);
  return hull;
}

}  // namespace

TieResult estimate_tie(const std::vector<TiePoint>& ties, const TieOptions& options) {
  const int parameters = options.model == TieModel::offset ? 1 : 3;
  const std::size_t needed = std::max<std::size_t>(options.min_ties, parameters + 1);
  if (ties.size() < needed) {
    throw InputError("ties", fmt::format("only {} common point(s) with heights in both tables; a "
                                         "{} tie needs at least {} (--min-ties)",
                                         ties.size(), to_string(options.model), needed));
  }
  TieResult result;
  const auto n = static_cast<Eigen::Index>(ties.size());
  result.weighted = std::all_of(ties.begin(), ties.end(), [](const TiePoint& t) {
    return t.site_sigma && t.base_sigma && *t.site_sigma + *t.base_sigma > 0.0;
  });
  double x0 = 0.0, y0 = 0.0;
  for (const TiePoint& t : ties) x0 += t.x, y0 += t.y;
  x0 /= static_cast<double>(n);
  y0 /= static_cast<double>(n);

  Eigen::MatrixXd A(n, parameters);
  Eigen::VectorXd l(n), p(n);
  for (Eigen::Index i = 0; i < n; ++i) {
    const TiePoint& t = ties[static_cast<std::size_t>(i)];
    A(i, 0) = 1.0;
    if (parameters == 3) {
      A(i, 1) = t.x - x0;
      A(i, 2) = t.y - y0;
    }
    l[i] = t.base_height - t.site_height;
    p[i] = result.weighted ? 1.0 / (*t.site_sigma * *t.site_sigma + *t.base_sigma * *t.base_sigma)
                           : 1.0;
  }
  // Weighted least squares; N is at most 3 x 3 here, so a dense solution.
  const Eigen::MatrixXd N = A.transpose() * p.asDiagonal() * A;
  const Eigen::LDLT<Eigen::MatrixXd> ldlt(N);
  const double condition_floor = 1e-10;  // relative pivot below which the slope is undetermined
  const Eigen::VectorXd d = ldlt.vectorD();
  if (ldlt.info() != Eigen::Success || d.minCoeff() <= condition_floor * d.maxCoeff()) {
    throw InputError("ties",
                     "the tie points lie (nearly) on a line, so a slope across it cannot "
                     "be estimated; use the offset model or add ties off the line");
  }
  const Eigen::MatrixXd Q = ldlt.solve(Eigen::MatrixXd::Identity(parameters, parameters));
  const Eigen::VectorXd x = Q * (A.transpose() * p.asDiagonal() * l);
  const Eigen::VectorXd v = A * x - l;
  result.dof = ties.size() - static_cast<std::size_t>(parameters);
  const double vtpv = v.dot(p.asDiagonal() * v);
  result.sigma0 = std::sqrt(vtpv / static_cast<double>(result.dof));
  // Covariance: a priori when weighted, inflated by sigma0^2 when the ties
  // scatter more than their sigmas say (a conservative common practice);
  // from the residuals alone when unweighted.
  const double scale = result.weighted ? std::max(1.0, *result.sigma0 * *result.sigma0)
                                       : *result.sigma0 * *result.sigma0;
  const Eigen::MatrixXd C = scale * Q;

  OffsetRelation& r = result.relation;
  r.offset = x[0];
  r.x0 = x0;
  r.y0 = y0;
  if (parameters == 3) {
    r.slope_x = x[1];
    r.slope_y = x[2];
  }
  std::array<std::array<double, 3>, 3> cov{};
  for (int i = 0; i < parameters; ++i) {
    for (int j = 0; j < parameters; ++j) cov[i][j] = C(i, j);
  }
  r.covariance = cov;
  std::vector<std::array<double, 2>> xy;
  for (const TiePoint& t : ties) xy.push_back({t.x, t.y});
  r.hull = convex_hull(xy);

  // Weighted: Baarda's w with the a-priori sigmas. Unweighted: sigma0 is
  // estimated from these residuals, so they are studentised and tested with
  // Pope's tau distribution (statistics.hpp), which needs a redundancy >= 2.
  const bool testable = result.weighted || result.dof >= 2;
  if (result.weighted) {
    result.test = "Baarda's w-test";
    result.w_critical = w_test_critical_value(options.alpha0);
  } else if (testable) {
    result.test = "Pope's tau test";
    result.w_critical = tau_test_critical_value(options.alpha0, static_cast<double>(result.dof));
  } else {
    result.test = "none (redundancy < 2)";
  }
  const Eigen::MatrixXd Qvv =
      Eigen::MatrixXd(p.cwiseInverse().asDiagonal()) - A * Q * A.transpose();
  for (Eigen::Index i = 0; i < n; ++i) {
    TieResidual t;
    t.difference = l[i];
    t.residual = v[i];
    t.redundancy = Qvv(i, i) * p[i];
    if (testable && t.redundancy > 1e-6) {
      const double scale_w = result.weighted ? 1.0 : *result.sigma0;
      // A perfect fit without sigmas (sigma0 = 0): every residual is 0.
      t.w = scale_w > 0.0 ? v[i] / (scale_w * std::sqrt(Qvv(i, i))) : 0.0;
      if (std::abs(*t.w) > result.w_critical)
        result.suspects.push_back(static_cast<std::size_t>(i));
    }
    result.residuals.push_back(t);
  }
  std::sort(result.suspects.begin(), result.suspects.end(), [&](std::size_t a, std::size_t b) {
    return std::abs(*result.residuals[a].w) > std::abs(*result.residuals[b].w);
  });
  return result;
}

}  // namespace levelhead
