#include "levelhead/references/gnss_check.hpp"

#include <algorithm>
#include <cmath>

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
      return "difference fits no known mistake: check the mark (disturbed, misidentified) and the "
             "antenna height";
  }
  throw std::logic_error("unhandled GnssVerdict");
}

GnssCheckResult check_gnss_marks(const std::vector<GnssMark>& marks, double tolerance) {
  util::require_positive(tolerance, "GNSS check tolerance", "m");
  GnssCheckResult result;
  result.tolerance = tolerance;
  std::vector<double> differences;
  for (const GnssMark& m : marks) {
    GnssCheck c;
    c.difference = m.levelled - m.gnss_converted;
    c.separation = m.gnss - m.gnss_converted;
    result.marks.push_back(c);
    differences.push_back(c.difference);
  }
  const auto accepted = [&](std::size_t i) { return std::max(tolerance, 3.0 * marks[i].sigma); };
  // A common offset: the median of d, when more than half the marks lie
  // within tolerance of it and it is itself beyond tolerance.
  if (marks.size() >= 3) {
    std::vector<double> sorted = differences;
    std::nth_element(sorted.begin(), sorted.begin() + sorted.size() / 2, sorted.end());
    const double median = sorted[sorted.size() / 2];
    std::size_t near = 0;
    for (std::size_t i = 0; i < marks.size(); ++i)
      near += std::abs(differences[i] - median) <= accepted(i);
    if (2 * near > marks.size() && std::abs(median) > tolerance) result.common_offset = median;
  }
  for (std::size_t i = 0; i < marks.size(); ++i) {
    GnssCheck& c = result.marks[i];
    const double n = c.separation;
    const double hypothesis_tolerance = std::max(0.5, 0.05 * std::abs(n));
    const bool n_is_large = std::abs(n) > 2.0 * hypothesis_tolerance;
    if (std::abs(c.difference) <= accepted(i)) {
      c.verdict = GnssVerdict::consistent;
    } else if (n_is_large && std::abs(c.difference - n) <= hypothesis_tolerance) {
      c.verdict = GnssVerdict::geoid_twice;
    } else if (n_is_large && std::abs(c.difference - 2.0 * n) <= hypothesis_tolerance) {
      c.verdict = GnssVerdict::geoid_sign;
    } else if (n_is_large && std::abs(c.difference + n) <= hypothesis_tolerance) {
      c.verdict = GnssVerdict::geoid_removed;
    } else if (result.common_offset &&
               std::abs(c.difference - *result.common_offset) <= accepted(i)) {
      c.verdict = GnssVerdict::systematic;
    } else {
      c.verdict = GnssVerdict::inconsistent;
    }
  }
  return result;
}

}  // namespace levelhead
