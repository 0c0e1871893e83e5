#pragma once
// Hydraulic gradient and flow direction from heads (`levelhead flow`).
//
// Method: generalised least-squares plane h = a + b (x - x0) + c (y - y0)
// through n >= 3 wells (x0, y0 their centroid), the three-point problem
// generalised to n wells, with the heads' full covariance C: sigma_i^2 on
// the diagonal, off it what two heads share (common_error.hpp: a geoid
// model's or datum's error common to wells converted alike; the adjusted
// network's covariance of their measuring points where given). Weights
// P = C^-1 (Aitken 1935; Koch 1999, ch. 3.2). An error every well shares
// moves a alone, so it leaves the gradient untouched. Flow goes from high to
// low head (Darcy's law), along -grad h = -(b, c):
//   gradient i = sqrt(b^2 + c^2)                          (m/m)
//   azimuth   = atan2(-b, -c) in degrees clockwise from grid north, 0..360
// Uncertainties, two ways, propagated to i and the azimuth by their
// Jacobians (first order):
//   from the heads: Q = (A'PA)^-1 of (b, c), the heads' sigmas as given;
//   from the misfit: sigma0^2 Q, sigma0^2 = v'Pv / (n - 3), the plane's
//   scatter about the heads (needs 4 wells), with the global test of
//   v'Pv against chi2(n - 3) at alpha (two-sided).
// The larger of the two is the result's sigma, and which one dominates is
// stated.
// Wells off the plane: with sigma0 estimated from the same residuals, each
// residual studentised by it, tau_i = v_i / (sigma0 sqrt(q_vv,i)), Q_vv =
// C - A Q A', is tested with Pope's tau test at alpha0 (Pope 1976, NOAA
// Technical Report NOS 65 NGS 1); it needs 5 wells or more (redundancy 2).
// Darcy: specific discharge q = K i, average linear velocity v = q / n_e,
// travel time t = L / v, each as a range from the ranges of K and n_e.
// In:  wells with x, y (project CRS, metres), head and sigma (m), the
//      errors they share, optionally the covariances of their heads.
// Errors: ComputationError when the covariance is not positive definite.
// Errors: InputError for fewer than 3 wells or wells (nearly) on a line.

#include <optional>
#include <string>
#include <vector>

#include "levelhead/core/common_error.hpp"

namespace levelhead {

struct FlowWell {
  std::string id;
  double x = 0.0, y = 0.0, head = 0.0, sigma = 0.0;  // m; sigma of the absolute head
  std::vector<CommonError> common;                   // errors shared with other wells' heads
};

// Covariances between wells' heads beyond the shared errors (m^2), e.g. of
// measuring points adjusted in one levelling network; (i, j) with i != j.
struct HeadCovariance {
  std::size_t i = 0, j = 0;
  double value = 0.0;
};

struct Range {
  double low = 0.0, high = 0.0;
};

struct FlowOptions {
  std::optional<Range> conductivity;  // K, m/s
  std::optional<Range> porosity;      // effective porosity n_e, 0..1
  std::optional<double> distance;     // m, for the travel time
  double alpha0 = 0.001;              // the tau test of each well, two-sided
  double alpha = 0.05;                // the global test of the plane's misfit, two-sided
};

// The gradient's and azimuth's sigmas one way (see the header comment).
struct FlowSigmas {
  double gradient = 0.0, azimuth = 0.0;  // m/m, degrees
};

struct FlowResult {
  double gradient = 0.0, gradient_sigma = 0.0;  // m/m; sigma: the larger way
  double azimuth = 0.0, azimuth_sigma = 0.0;    // degrees clockwise from grid north
  FlowSigmas from_heads;                        // the heads' covariance alone
  std::optional<FlowSigmas> from_misfit;        // sigma0^2 times it (4 wells or more)
  bool misfit_dominates = false;                // the misfit's sigmas are the larger
  // The global test of the misfit: v'Pv against chi2(dof), two-sided at alpha.
  std::optional<double> misfit_lower, misfit_upper;  // bounds of v'Pv
  std::optional<bool> misfit_passed;
  double vtpv = 0.0;
  double dh_dx = 0.0, dh_dy = 0.0;                  // m/m
  double cov_xx = 0.0, cov_xy = 0.0, cov_yy = 0.0;  // of (dh/dx, dh/dy), the larger way
  double intercept = 0.0, x0 = 0.0, y0 = 0.0;       // plane at the centroid
  std::vector<double> residuals;                    // m, fitted - observed, per well
  std::vector<std::optional<double>> tau;           // per well; empty when untestable
  double tau_critical = 0.0;           // |tau| above it: off the plane; infinite below redundancy 2
  std::vector<std::size_t> off_plane;  // wells failing the tau test, worst first
  std::size_t dof = 0;
  std::optional<double> sigma0;
  bool nearly_collinear = false;            // geometry weak (see methods)
  std::optional<Range> specific_discharge;  // m/s
  std::optional<Range> velocity;            // m/s
  std::optional<Range> travel_time;         // s
};

FlowResult estimate_flow(const std::vector<FlowWell>& wells, const FlowOptions& options,
                         const std::vector<HeadCovariance>& covariances = {});

// One sentence: the sigmas both ways, the misfit's global test, and which
// dominates.
std::string describe_flow_uncertainty(const FlowResult& result);

// The Darcy ranges as the console and the report both give them, to two
// significant digits: "0.0041 to 0.83 m/day"; "1.7 to 330 years" (in days
// when the longest is under a year).
std::string describe_velocity(const Range& velocity_m_per_s);
std::string describe_travel_time(const Range& travel_time_s);

// The heads' covariance matrix (m^2) of estimate_flow, row-major n x n.
std::vector<double> head_covariance(const std::vector<FlowWell>& wells,
                                    const std::vector<HeadCovariance>& covariances);

}  // namespace levelhead
