#include "levelhead/levelling/statistics.hpp"

#include <fmt/format.h>

#include <boost/math/distributions/chi_squared.hpp>
#include <boost/math/distributions/fisher_f.hpp>
#include <boost/math/distributions/normal.hpp>
#include <boost/math/distributions/students_t.hpp>
#include <cmath>

#include "levelhead/core/errors.hpp"

namespace levelhead {

namespace {
void require_probability(double p, const char* name) {
  if (!(p > 0.0 && p < 1.0)) {
    throw OptionError(fmt::format("{} = {} must lie strictly between 0 and 1", name, p));
  }
}
void require_dof(double dof) {
  // Boost's default policy throws for dof <= 0; callers handle redundancy 0 themselves.
  if (!(dof > 0.0)) throw std::logic_error("a quantile needs degrees of freedom > 0");
}
}  // namespace

double normal_quantile(double p) {
  require_probability(p, "probability");
  return boost::math::quantile(boost::math::normal_distribution<double>(), p);
}

double chi_square_quantile(double p, double dof) {
  require_probability(p, "probability");
  require_dof(dof);
  return boost::math::quantile(boost::math::chi_squared_distribution<double>(dof), p);
}

double chi_square_upper_quantile(double alpha, double dof) {
  require_probability(alpha, "alpha");
  require_dof(dof);
  return boost::math::quantile(
      boost::math::complement(boost::math::chi_squared_distribution<double>(dof), alpha));
}

double fisher_upper_quantile(double alpha, double d1, double d2) {
  require_probability(alpha, "alpha");
  require_dof(d1);
  require_dof(d2);
  return boost::math::quantile(
      boost::math::complement(boost::math::fisher_f_distribution<double>(d1, d2), alpha));
}

double student_t_quantile(double p, double dof) {
  require_probability(p, "probability");
  require_dof(dof);
  return boost::math::quantile(boost::math::students_t_distribution<double>(dof), p);
}

double w_test_critical_value(double alpha0) {
  require_probability(alpha0, "alpha0");
  const boost::math::normal_distribution<double> normal;
  return boost::math::quantile(boost::math::complement(normal, alpha0 / 2.0));
}

double tau_test_critical_value(double alpha0, double redundancy) {
  require_probability(alpha0, "alpha0");
  if (!(redundancy >= 2.0)) {
    throw ComputationError(fmt::format(
        "the tau test needs a redundancy of at least 2 (here {:g}): with less, every studentised "
        "residual is +-1 and no outlier can show",
        redundancy));
  }
  const double t = student_t_quantile(1.0 - alpha0 / 2.0, redundancy - 1.0);
  return std::sqrt(redundancy) * t / std::sqrt(redundancy - 1.0 + t * t);
}

double baarda_noncentrality(double alpha0, double beta0) {
  require_probability(beta0, "beta0");
  const double z = w_test_critical_value(alpha0) + normal_quantile(beta0);
  return z * z;
}

}  // namespace levelhead
