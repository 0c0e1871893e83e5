#include "levelhead/references/gnss_check.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>

#include "levelhead/core/errors.hpp"
#include "levelhead/references/site_tie.hpp"
#include "util/option_checks.hpp"

namespace levelhead {

std::string to_string(GnssVerdict verdict) {
  switch (verdict) {
    case GnssVerdict::consistent:
      return "consistent";
    case GnssVerdict::geoid_twice:
      return "geoid-twice";
    case GnssVerdict::geoid_sign:
      return "geoid-sign";
    case GnssVerdict::geoid_removed:
      return "geoid-removed";
    case GnssVerdict::systematic:
      return "systematic";
    case GnssVerdict::inconsistent:
      return "inconsistent";
    case GnssVerdict::scattered:
      return "scattered";
  }
  throw std::logic_error("unhandled GnssVerdict");
}

std::string explain(GnssVerdict verdict) {
  switch (verdict) {
    case GnssVerdict::consistent:
      return "levelled and GNSS heights agree";
    case GnssVerdict::geoid_twice:
      return "difference is about +N: the geoid was applied twice, or an ellipsoidal height is "
             "labelled as orthometric";
    case GnssVerdict::geoid_sign:
      return "difference is about +2N: the geoid was applied with the wrong sign";
    case GnssVerdict::geoid_removed:
      return "difference is about -N: the geoid was taken off a height that was already "
             "orthometric";
    case GnssVerdict::systematic:
      return "difference matches the offset common to most marks: another geoid model, another "
             "vertical datum, or a site datum offset";
    case GnssVerdict::inconsistent:
      return "difference fits no known mistake and the outlier test rejects it against the other "
             "marks: check the mark (disturbed, misidentified) and the antenna height";
    case GnssVerdict::scattered:
      return "difference beyond the tolerance, but the marks scatter that much among themselves: "
             "the GNSS heights are poorer than the tolerance assumes, not this mark alone";
  }
  throw std::logic_error("unhandled GnssVerdict");
}

namespace {

// The marks `group` share d_i = c + e_i: the offset model of a site tie
// (site_tie.hpp), weighted by each mark's sigma of d when every mark has one.
TieResult fit_common_offset(const std::vector<GnssMark>& marks,
                            const std::vector<std::size_t>& group, double alpha0) {
  std::vector<TiePoint> points;
  for (const std::size_t i : group) {
    TiePoint p;
    p.id = marks[i].id;
    p.base_height = marks[i].levelled;
    p.site_height = marks[i].gnss_converted;
    if (marks[i].sigma > 0.0) {
      p.base_sigma = marks[i].sigma;
      p.site_sigma = 0.0;
    }
    points.push_back(p);
  }
  return estimate_tie(points, TieOptions{TieModel::offset, 3, alpha0});
}

}  // namespace

// Classification by hypotheses about N, then least squares on a common offset
// with iterative data snooping: Baarda's w-test with a-priori sigmas, Pope's
// tau test without (Baarda 1968; Pope 1976; statistics.hpp), one mark taken
// out per fit.
GnssCheckResult check_gnss_marks(const std::vector<GnssMark>& marks,
                                 const GnssCheckOptions& options) {
  util::require_positive(options.tolerance, "GNSS check tolerance", "m");
  if (!(options.alpha0 > 0.0 && options.alpha0 < 0.5))
    throw OptionError(fmt::format("alpha0 = {}: must lie between 0 and 0.5", options.alpha0));
  GnssCheckResult result;
  result.tolerance = options.tolerance;
  result.alpha0 = options.alpha0;
  const auto accepted = [&](std::size_t i) {
    return std::max(options.tolerance, 3.0 * marks[i].sigma);
  };
  // 1. The geoid mistakes, by size and sign of d against N.
  std::vector<std::size_t> group;
  for (std::size_t i = 0; i < marks.size(); ++i) {
    GnssCheck c;
    c.difference = marks[i].levelled - marks[i].gnss_converted;
    c.separation = marks[i].gnss - marks[i].gnss_converted;
    const double n = c.separation;
    const double hypothesis_tolerance = std::max(0.5, 0.05 * std::abs(n));
    const bool n_is_large = std::abs(n) > 2.0 * hypothesis_tolerance;
    c.verdict = GnssVerdict::consistent;
    if (std::abs(c.difference) > accepted(i) && n_is_large) {
      if (std::abs(c.difference - n) <= hypothesis_tolerance)
        c.verdict = GnssVerdict::geoid_twice;
      else if (std::abs(c.difference - 2.0 * n) <= hypothesis_tolerance)
        c.verdict = GnssVerdict::geoid_sign;
      else if (std::abs(c.difference + n) <= hypothesis_tolerance)
        c.verdict = GnssVerdict::geoid_removed;
    }
    if (c.verdict == GnssVerdict::consistent) group.push_back(i);
    result.marks.push_back(c);
  }
  // 2. The others share a common offset: fit, take the worst discordant
  // mark out of the fit, refit, while 3 marks remain.
  std::vector<std::size_t> discordant;
  std::optional<TieResult> fit;
  while (group.size() >= 3) {
    fit = fit_common_offset(marks, group, options.alpha0);
    result.fit.test = fit->test;
    result.fit.critical = fit->w_critical;
    for (std::size_t k = 0; k < group.size(); ++k) {
      GnssCheck& c = result.marks[group[k]];
      c.from_offset = -fit->residuals[k].residual;
      // The tie's statistic is of fitted - observed; here of d - c.
      if (fit->residuals[k].w) c.statistic = -*fit->residuals[k].w;
    }
    if (fit->suspects.empty()) break;
    const std::size_t worst = fit->suspects.front();
    discordant.push_back(group[worst]);
    group.erase(group.begin() + static_cast<std::ptrdiff_t>(worst));
    fit.reset();  // refitted without it, if 3 marks remain
  }
  if (fit) {
    result.fit.offset = fit->relation.offset;
    result.fit.offset_sigma = std::sqrt((*fit->relation.covariance)[0][0]);
    result.fit.sigma0 = fit->sigma0;
    result.fit.marks = group.size();
    result.fit.redundancy = fit->dof;
    // The offset is common when most marks share it, and matters beyond
    // the tolerance.
    if (2 * group.size() > marks.size() && std::abs(fit->relation.offset) > options.tolerance)
      result.common_offset = fit->relation.offset;
  }
  // 3. Verdicts: the tolerance says whether a difference matters, the test
  // whether the mark belongs with the others.
  const auto judge = [&](std::size_t i, GnssVerdict beyond) {
    GnssCheck& c = result.marks[i];
    if (std::abs(c.difference) <= accepted(i))
      c.verdict = GnssVerdict::consistent;
    else if (result.common_offset && std::abs(c.difference - *result.common_offset) <= accepted(i))
      c.verdict = GnssVerdict::systematic;
    else
      c.verdict = beyond;
  };
  for (const std::size_t i : discordant) judge(i, GnssVerdict::inconsistent);
  // Without a fit (fewer than 3 marks) nothing says the marks scatter alike.
  for (const std::size_t i : group)
    judge(i, fit ? GnssVerdict::scattered : GnssVerdict::inconsistent);
  return result;
}

std::string describe_outlier_test(const GnssCheckResult& result) {
  if (result.fit.test.empty())
    return "Outlier test: none, fewer than 3 marks share the offset model (the tolerance decides)";
  return fmt::format(
      "Outlier test against the common offset: {}, |statistic| > {:.2f} at alpha0 = {:g}; a "
      "difference within the tolerance ({:g} m, or 3 sigma) is never a finding",
      result.fit.test, result.fit.critical, result.alpha0, result.tolerance);
}

}  // namespace levelhead
