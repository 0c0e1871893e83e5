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
//      inconsistent         anything else (a disturbed or misidentified mark,
//                           a wrong antenna height)
//      Hypotheses about N are matched within max(0.5 m, 5 % of |N|): a wrong
//      geoid model or datum differs by decimetres, these mistakes by tens
//      of metres.

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
  inconsistent
};
std::string to_string(GnssVerdict verdict);
std::string explain(GnssVerdict verdict);

struct GnssCheck {
  double difference = 0.0;  // m, d = H_lev - H_gnss
  double separation = 0.0;  // m, N
  GnssVerdict verdict = GnssVerdict::consistent;
};

struct GnssCheckResult {
  std::vector<GnssCheck> marks;
  std::optional<double> common_offset;  // m, median d when most marks share it beyond tolerance
  double tolerance = 0.0;
};

// tolerance: largest |d| accepted as consistent (m); 3 sigma of d is used
// when larger.
GnssCheckResult check_gnss_marks(const std::vector<GnssMark>& marks, double tolerance);

}  // namespace levelhead
