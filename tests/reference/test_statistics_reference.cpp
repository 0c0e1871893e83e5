// Quantiles against published statistical tables.

#include <catch2/catch.hpp>
#include <cmath>

#include "levelhead/core/errors.hpp"
#include "levelhead/levelling/statistics.hpp"

using namespace levelhead;
using Catch::Matchers::WithinAbs;

TEST_CASE("normal quantiles match the standard normal table", "[reference][statistics]") {
  // NIST/SEMATECH e-Handbook of Statistical Methods, 1.3.6.7.1 (critical
  // values of the normal distribution): z(0.975) = 1.960, z(0.9995) = 3.291.
  // Tables give 3 decimals, hence the 5e-4 tolerance; the 6-decimal value
  // 1.959964 is the usual quoted figure (common practice).
  CHECK_THAT(normal_quantile(0.975), WithinAbs(1.959964, 5e-7));
  CHECK_THAT(w_test_critical_value(0.001), WithinAbs(3.291, 5e-4));
  CHECK_THAT(normal_quantile(0.80), WithinAbs(0.8416, 5e-5));  // same table, 0.84 to 4 decimals
}

TEST_CASE("chi-square quantiles match the chi-square table", "[reference][statistics]") {
  // NIST/SEMATECH e-Handbook, 1.3.6.7.4 (critical values of the chi-square
  // distribution), nu = 10: lower 0.025 -> 3.247, upper 0.025 -> 20.483;
  // nu = 1: upper 0.05 -> 3.841; nu = 100: upper 0.05 -> 124.342.
  CHECK_THAT(chi_square_quantile(0.025, 10), WithinAbs(3.247, 5e-4));
  CHECK_THAT(chi_square_upper_quantile(0.025, 10), WithinAbs(20.483, 5e-4));
  CHECK_THAT(chi_square_upper_quantile(0.05, 1), WithinAbs(3.841, 5e-4));
  CHECK_THAT(chi_square_upper_quantile(0.05, 100), WithinAbs(124.342, 5e-4));
}

TEST_CASE("F and t quantiles match the F and t tables", "[reference][statistics]") {
  // NIST/SEMATECH e-Handbook, 1.3.6.7.3 (upper critical values of the F
  // distribution, alpha = 0.05) and 1.3.6.7.2 (upper critical values of
  // Student's t): F(1, 10) = 4.965, F(3, 10) = 3.708, F(5, 20) = 2.711,
  // t(0.975, 10) = 2.228, t(0.975, 5) = 2.571 (3-decimal table values,
  // recalled from memory of the tables; F(1, n) = t(0.975, n)^2 ties them).
  CHECK_THAT(fisher_upper_quantile(0.05, 1, 10), WithinAbs(4.965, 5e-4));
  CHECK_THAT(fisher_upper_quantile(0.05, 3, 10), WithinAbs(3.708, 5e-4));
  CHECK_THAT(fisher_upper_quantile(0.05, 5, 20), WithinAbs(2.711, 5e-4));
  CHECK_THAT(student_t_quantile(0.975, 10), WithinAbs(2.228, 5e-4));
  CHECK_THAT(student_t_quantile(0.975, 5), WithinAbs(2.571, 5e-4));
  const double t = student_t_quantile(0.975, 10);
  CHECK_THAT(fisher_upper_quantile(0.05, 1, 10), WithinAbs(t * t, 1e-9));
}

TEST_CASE("Baarda's non-centrality for alpha0 = 0.1 %, beta0 = 80 %", "[reference][statistics]") {
  // Baarda (1968), Publications on Geodesy 2(5), Netherlands Geodetic
  // Commission: lambda0 = 17.075 for the one-dimensional test with these
  // settings (value recalled from memory of Baarda's table; it equals
  // (3.2905 + 0.8416)^2 from the normal table above).
  CHECK_THAT(baarda_noncentrality(0.001, 0.80), WithinAbs(17.075, 1e-3));
}

TEST_CASE("probabilities outside (0, 1) are refused", "[statistics]") {
  CHECK_THROWS_AS(normal_quantile(1.0), OptionError);
  CHECK_THROWS_AS(chi_square_quantile(0.0, 3), OptionError);
}

TEST_CASE("Pope's tau critical value from the t table", "[reference][statistics]") {
  // tau = sqrt(r) t / sqrt(r - 1 + t^2) (Pope 1976, NOAA Technical Report
  // NOS 65 NGS 1) with t the Student t quantile of r - 1 degrees of freedom.
  // r = 9, alpha0 = 0.001: t(0.9995, 8) = 5.041 (NIST/SEMATECH e-Handbook
  // 1.3.6.7.2, 3-decimal table value) -> tau = 3 * 5.041 / sqrt(8 + 25.41)
  // = 2.616.
  CHECK_THAT(student_t_quantile(0.9995, 8), WithinAbs(5.041, 5e-4));
  CHECK_THAT(tau_test_critical_value(0.001, 9), WithinAbs(2.616, 5e-4));
  // The statistic is bounded by sqrt(r), so the critical value must be too.
  for (const double r : {2.0, 3.0, 5.0, 30.0, 1000.0})
    CHECK(tau_test_critical_value(0.001, r) < std::sqrt(r));
  // For a large redundancy tau tends to the normal quantile (common practice).
  CHECK_THAT(tau_test_critical_value(0.001, 1e6), WithinAbs(w_test_critical_value(0.001), 1e-3));
  CHECK_THROWS_AS(tau_test_critical_value(0.001, 1.0), ComputationError);
}
