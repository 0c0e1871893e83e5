#pragma once
// Hydraulic gradient and flow direction from heads (`levelhead flow`).
//
// Method: weighted least-squares plane h = a + b (x - x0) + c (y - y0)
// through n >= 3 wells (x0, y0 their centroid; weights 1 / sigma^2), the
// three-point problem generalised to n wells. Flow goes from high to low
// head (Darcy's law), along -grad h = -(b, c):
//   gradient i = sqrt(b^2 + c^2)                          (m/m)
//   azimuth   = atan2(-b, -c) in degrees clockwise from grid north, 0..360
// Uncertainties: the covariance of (b, c) from (A'PA)^-1, scaled by sigma0^2
// when there is redundancy and sigma0 > 1, propagated to i and the azimuth
// by their Jacobians (first order).
// Wells off the plane: with sigma0 estimated from the same residuals, each
// residual studentised by it, tau_i = v_i / (sigma0 sqrt(q_vv,i)), q_vv =
// P^-1 - A (A'PA)^-1 A', is tested with Pope's tau test at alpha0 (Pope
// 1976, NOAA Technical Report NOS 65 NGS 1); it needs 5 wells or more
// (redundancy 2).
// Darcy: specific discharge q = K i, average linear velocity v = q / n_e,
// travel time t = L / v, each as a range from the ranges of K and n_e.
// In:  wells with x, y (project CRS, metres), head and sigma (m).
// Errors: InputError for fewer than 3 wells or wells (nearly) on a line.

#include <optional>
#include <string>
#include <vector>

namespace levelhead {

struct FlowWell {
  std::string id;
  double x = 0.0, y = 0.0, head = 0.0, sigma = 0.0;  // m
};

struct Range {
  double low = 0.0, high = 0.0;
};

struct FlowOptions {
  std::optional<Range> conductivity;  // K, m/s
  std::optional<Range> porosity;      // effective porosity n_e, 0..1
  std::optional<double> distance;     // m, for the travel time
  double alpha0 = 0.001;              // the tau test of each well, two-sided
};

struct FlowResult {
  double gradient = 0.0, gradient_sigma = 0.0;      // m/m
  double azimuth = 0.0, azimuth_sigma = 0.0;        // degrees clockwise from grid north
  double dh_dx = 0.0, dh_dy = 0.0;                  // m/m
  double cov_xx = 0.0, cov_xy = 0.0, cov_yy = 0.0;  // of (dh/dx, dh/dy)
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

FlowResult estimate_flow(const std::vector<FlowWell>& wells, const FlowOptions& options);

}  // namespace levelhead
