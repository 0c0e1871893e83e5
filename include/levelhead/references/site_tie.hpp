#pragma once
// Estimating a site reference from common points (`levelhead tie`).
//
// In:  points with a height in the site reference and in the base reference
//      (matched by id), x, y in one CRS, optional sigmas (m).
// Model (weighted least squares, Gauss-Markov; as in adjustment.hpp):
//   d_i = H_base,i - H_site,i = offset                          (model offset)
//   d_i = offset + slope_x (x_i - x0) + slope_y (y_i - y0)      (model plane)
//   with x0, y0 the centroid of the ties, weights 1 / (sigma_site^2 + sigma_base^2).
//   Without sigmas every tie weighs the same and the scale comes from the
//   residuals (sigma0).
// Out: the relation (an OffsetRelation with covariance and the convex hull of
//      the ties), each tie's residual v = fitted - observed d (m), its
//      redundancy and test statistic, sigma0, suspects (|statistic| >
//      critical). With sigmas: Baarda's w-test (a priori sigma, normal
//      critical value). Without: sigma0 comes from the same residuals, so
//      the residuals are studentised and tested with Pope's tau test
//      (statistics.hpp); with a redundancy below 2 no tie can be tested.
// Errors: InputError for fewer ties than the minimum, or ties too nearly
//      collinear for a slope.

#include <optional>
#include <string>
#include <vector>

#include "levelhead/core/table.hpp"
#include "levelhead/references/references_file.hpp"

namespace levelhead {

enum class TieModel { offset, plane };
TieModel parse_tie_model(const std::string& text);
std::string to_string(TieModel model);

struct TiePoint {
  std::string id;
  double x = 0.0, y = 0.0;
  double site_height = 0.0, base_height = 0.0;   // m
  std::optional<double> site_sigma, base_sigma;  // m
};

struct TieOptions {
  TieModel model = TieModel::offset;
  std::size_t min_ties = 3;
  double alpha0 = 0.001;
};

struct TieResidual {
  double difference = 0.0;  // m, base - site
  double residual = 0.0;    // m, fitted - observed difference
  double redundancy = 0.0;
  std::optional<double> w;
};

struct TieResult {
  OffsetRelation relation;
  std::vector<TieResidual> residuals;  // per tie, in input order
  std::size_t dof = 0;
  std::optional<double> sigma0;
  bool weighted = true;
  std::string test;                   // "w (Baarda)", "tau (Pope)" or "none (redundancy < 2)"
  double w_critical = 0.0;            // critical value of that test at alpha0; 0 when none
  std::vector<std::size_t> suspects;  // worst first
};

// Common points of the two tables (id, x, y, height, optional sigma), in the
// order of the site table; x, y from the site table.
std::vector<TiePoint> match_tie_points(const Table& site, const Table& base);

TieResult estimate_tie(const std::vector<TiePoint>& ties, const TieOptions& options);

}  // namespace levelhead
