#include <catch2/catch.hpp>

#include "levelhead/core/errors.hpp"
#include "levelhead/references/gnss_check.hpp"

using namespace levelhead;

namespace {
// A mark whose true orthometric height is H where the geoid height is N;
// `levelled` and `gnss` carry the mistake under test.
GnssMark mark(const char* id, double levelled, double gnss, double n) {
  GnssMark m;
  m.id = id;
  m.levelled = levelled;
  m.gnss = gnss;
  m.gnss_converted = gnss - n;  // the conversion takes the geoid off
  m.sigma = 0.01;
  return m;
}
}  // namespace

TEST_CASE("the classic geoid mistakes are told apart by size and sign", "[gnss]") {
  const double n = -31.6;  // a geoid height of tens of metres (invented mark)
  const double H = 120.0, h = H + n;
  const std::vector<GnssMark> marks = {
      mark("ok", H + 0.01, h, n),
      mark("orthometric-as-ellipsoidal", H, H, n),  // h column holds H: geoid applied twice
      mark("ellipsoidal-levelled", h, h, n),        // levelled value is really h: d = N too
      mark("wrong-sign", H, H - n, n),              // "h" made as H - N: d = 2N
      mark("moved", H + 0.35, h, n),                // a disturbed mark
      mark("geoid-off-levelled", H - n, h, n),      // N taken off a levelled H: d = -N
  };
  const GnssCheckResult r = check_gnss_marks(marks, 0.05);
  CHECK(r.marks[0].verdict == GnssVerdict::consistent);
  CHECK(r.marks[1].verdict == GnssVerdict::geoid_twice);
  // An ellipsoidal height labelled orthometric: d = h - (h - N) = N, the same
  // signature as the geoid applied twice (the message names both).
  CHECK(r.marks[2].verdict == GnssVerdict::geoid_twice);
  CHECK(r.marks[3].verdict == GnssVerdict::geoid_sign);
  CHECK(r.marks[4].verdict == GnssVerdict::inconsistent);
  CHECK(r.marks[5].verdict == GnssVerdict::geoid_removed);
  CHECK_FALSE(r.common_offset);
}

TEST_CASE("an offset shared by most marks is called systematic", "[gnss]") {
  const double n = 2.1;  // small separation: only the offset hypothesis applies
  std::vector<GnssMark> marks;
  for (const char* id : {"a", "b", "c", "d"}) marks.push_back(mark(id, 50.0 + 0.42, 50.0 + n, n));
  marks.push_back(mark("e", 50.0, 50.0 + n, n));
  const GnssCheckResult r = check_gnss_marks(marks, 0.05);
  REQUIRE(r.common_offset);
  CHECK(*r.common_offset == Approx(0.42).margin(1e-9));
  CHECK(r.marks[0].verdict == GnssVerdict::systematic);
  CHECK(r.marks[4].verdict == GnssVerdict::consistent);
  CHECK_THROWS_AS(check_gnss_marks(marks, 0.0), OptionError);
}
