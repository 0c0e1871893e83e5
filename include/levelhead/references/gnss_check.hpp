#pragma once
// GNSS sanity checks at marks with both a levelled and a GNSS height.
//
// In:  per mark: the levelled height H_lev (m, in the levelling reference),
//      the GNSS height h (m, as labelled, e.g. ellipsoidal), and the GNSS
//      height converted into the levelling reference H_gnss (m).
//      N = h - H_gnss is the separation the conversion applied (the geoid
//      height for an ellipsoidal -> orthometric conversion).
// Out: d = H_lev - H_gnss and a verdict by the size and sign of d:
//      consistent           |d| <= tolerance
//      geoid-twice          d ~ +N: the geoid applied twice, or an ellipsoidal
//                           height labelled as orthometric
//      geoid-sign           d ~ +2N: the geoid applied with the wrong sign
//      geoid-removed        d ~ -N: the geoid taken off an orthometric height
//      systematic           d ~ the common offset of most marks (a different
//                           geoid model or vertical datum, a site offset)
//      inconsistent         the mark disagrees with the others: taken out by
//                           the outlier test below (a disturbed or
//                           misidentified mark, a wrong antenna height)
//      scattered            beyond the tolerance of zero and of the common
//                           offset, yet no outlier: the marks scatter that
//                           much among themselves, so the GNSS heights are
//                           poorer than the tolerance assumes
//      Hypotheses about N are matched within max(0.5 m, 5 % of |N|): a wrong
//      geoid model or datum differs by decimetres, these mistakes by tens
//      of metres.
//      The other marks share one model, d_i = c + e_i (the offset model of
//      site_tie.hpp), fitted by least squares with data snooping: with
//      sigmas for every mark Baarda's w-test, without them Pope's tau test
//      (sigma0 from the same residuals), at alpha0, needing 3 marks. The
//      worst mark over the critical value is taken out of the fit and the
//      rest refitted while 3 marks remain; c is common when more than half
//      of all marks remain and |c| exceeds the tolerance. The test says
//      whether a mark belongs with the others, the tolerance whether its
//      difference matters: a mark within the tolerance of zero is
//      consistent, of c systematic; beyond both, a mark taken out is
//      inconsistent and a mark kept scattered. With fewer than 3 marks the
//      tolerance alone decides (inconsistent beyond it).

#include <optional>
#include <string>
#include <vector>

namespace levelhead {

struct GnssMark {
  std::string id;
  double levelled = 0.0;        // m
  double gnss = 0.0;            // m, as given (e.g. ellipsoidal)
  double gnss_converted = 0.0;  // m, in the levelling reference
  double sigma = 0.0;           // m, of d (levelled and GNSS combined); 0 if unknown
};

enum class GnssVerdict {
  consistent,
  geoid_twice,
  geoid_sign,
  geoid_removed,
  systematic,
  inconsistent,
  scattered
};
std::string to_string(GnssVerdict verdict);
std::string explain(GnssVerdict verdict);

struct GnssCheck {
  double difference = 0.0;  // m, d = H_lev - H_gnss
  double separation = 0.0;  // m, N
  GnssVerdict verdict = GnssVerdict::consistent;
  // Of the last fit the mark took part in (empty: matched a geoid mistake,
  // or too few marks to fit): d - c (m) and its test statistic.
  std::optional<double> from_offset, statistic;
};

struct GnssCheckOptions {
  double tolerance = 0.05;  // m, largest |d| accepted as consistent; 3 sigma of d when larger
  double alpha0 = 0.001;    // significance of the outlier test per mark
};

// The outlier test as it ran on the marks that share the offset model.
struct GnssOffsetFit {
  // "w (Baarda)", "tau (Pope)" (site_tie.hpp), or empty: never 3 marks to fit.
  std::string test;
  double critical = 0.0;  // of that test at alpha0
  // Of the final fit; marks = 0 when fewer than 3 remained after rejections.
  double offset = 0.0, offset_sigma = 0.0;  // m, c of the accepted marks
  std::optional<double> sigma0;             // m without sigmas (the marks' scatter), else unitless
  std::size_t marks = 0, redundancy = 0;
};

struct GnssCheckResult {
  std::vector<GnssCheck> marks;
  std::optional<double> common_offset;  // m, c when most marks share it beyond tolerance
  double tolerance = 0.0, alpha0 = 0.0;
  GnssOffsetFit fit;
};

// One sentence naming the test, its critical value, alpha0 and the tolerance.
std::string describe_outlier_test(const GnssCheckResult& result);

// Errors: OptionError for a tolerance or alpha0 out of range.
GnssCheckResult check_gnss_marks(const std::vector<GnssMark>& marks,
                                 const GnssCheckOptions& options);

}  // namespace levelhead
