#pragma once
// Quantiles used by the statistical tests of an adjustment (Boost.Math).
// All probabilities are lower-tail unless the name says upper.

namespace levelhead {

// Standard normal quantile z(p), 0 < p < 1.
double normal_quantile(double p);

// Chi-square quantile with `dof` > 0 degrees of freedom, lower tail p.
double chi_square_quantile(double p, double dof);

// Chi-square quantile with upper-tail probability `alpha` (computed through
// the complement for accuracy in the tail).
double chi_square_upper_quantile(double alpha, double dof);

// Fisher F quantile with upper-tail probability `alpha`, d1, d2 > 0.
double fisher_upper_quantile(double alpha, double d1, double d2);

// Student t quantile with `dof` > 0 degrees of freedom, lower tail p.
double student_t_quantile(double p, double dof);

// Critical value of Baarda's w-test for a two-sided significance level alpha0:
// z(1 - alpha0/2). Reference: Baarda (1968), "A testing procedure for use in
// geodetic networks", Netherlands Geodetic Commission, Publ. on Geodesy 2(5).
double w_test_critical_value(double alpha0);

// Critical value of Pope's tau test, for residuals studentised with a sigma0
// estimated from the same data (redundancy r >= 2): tau = sqrt(r) t /
// sqrt(r - 1 + t^2) with t = t(1 - alpha0/2) of Student's t with r - 1
// degrees of freedom. |tau| can never exceed sqrt(r), so the normal
// quantile of the w-test would make the test unable to fire for small r.
// Reference: Pope (1976), "The statistics of residuals and the detection of
// outliers", NOAA Technical Report NOS 65 NGS 1.
double tau_test_critical_value(double alpha0, double redundancy);

// Non-centrality parameter lambda0 of the one-dimensional w-test for
// significance alpha0 and power beta0: lambda0 = (z(1 - alpha0/2) + z(beta0))^2
// (Baarda 1968; e.g. 17.07 for alpha0 = 0.001, beta0 = 0.80).
double baarda_noncentrality(double alpha0, double beta0);

}  // namespace levelhead
