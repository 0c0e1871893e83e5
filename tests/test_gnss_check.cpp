#include <catch2/catch.hpp>
#include <random>

#include "levelhead/core/errors.hpp"
#include "levelhead/levelling/statistics.hpp"
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
  const GnssCheckResult r = check_gnss_marks(marks, GnssCheckOptions{0.05});
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
  const GnssCheckResult r = check_gnss_marks(marks, GnssCheckOptions{0.05});
  REQUIRE(r.common_offset);
  CHECK(*r.common_offset == Approx(0.42).margin(1e-9));
  CHECK(r.marks[0].verdict == GnssVerdict::systematic);
  CHECK(r.marks[4].verdict == GnssVerdict::consistent);
  CHECK_THROWS_AS(check_gnss_marks(marks, GnssCheckOptions{0.0}), OptionError);
  CHECK_THROWS_AS(check_gnss_marks(marks, GnssCheckOptions{0.05, 0.0}), OptionError);
}

namespace {
// Ten marks without sigmas where the geoid height is -31.6 m, levelled minus
// GNSS = scale * the invented errors below, plus `extra` at the mark `odd`.
std::vector<GnssMark> ten_marks(double scale, std::size_t odd, double extra) {
  const double errors[10] = {0.8, -1.1, 0.3, 1.6, -0.4, -1.9, 0.9, 0.1, -0.6, 1.2};
  std::vector<GnssMark> marks;
  for (std::size_t i = 0; i < 10; ++i) {
    GnssMark m = mark("m", 100.0 + scale * errors[i] + (i == odd ? extra : 0.0), 68.4, -31.6);
    m.sigma = 0.0;
    marks.push_back(m);
  }
  return marks;
}
}  // namespace

TEST_CASE("without sigmas the marks are tested against each other by Pope's tau test",
          "[gnss][verdicts]") {
  SECTION("a 5 m blunder in one of ten marks is found, the others are consistent") {
    const GnssCheckResult r = check_gnss_marks(ten_marks(0.003, 4, 5.0), GnssCheckOptions{0.05});
    CHECK(r.fit.test == "Pope's tau test");
    // After the blunder is taken out: 9 marks, redundancy 8.
    CHECK(r.fit.marks == 9);
    CHECK(r.fit.critical == Approx(tau_test_critical_value(0.001, 8.0)).epsilon(1e-12));
    for (std::size_t i = 0; i < 10; ++i) {
      INFO(i);
      CHECK(r.marks[i].verdict == (i == 4 ? GnssVerdict::inconsistent : GnssVerdict::consistent));
    }
    CHECK_FALSE(r.common_offset);
    // The blunder no longer biases the offset: 3 mm noise, mean of nine.
    CHECK(std::abs(r.fit.offset) < 0.003);
  }
  SECTION("a mark discordant with precise marks but within the tolerance is no finding") {
    const GnssCheckResult r = check_gnss_marks(ten_marks(0.001, 2, 0.04), GnssCheckOptions{0.05});
    REQUIRE(r.marks[2].statistic);
    CHECK(*r.marks[2].statistic > r.fit.critical);         // the test sees it (d - c > 0) ...
    CHECK(r.marks[2].verdict == GnssVerdict::consistent);  // ... the tolerance accepts it
    CHECK(r.fit.marks == 9);                               // and the fit leaves it out
  }
  SECTION("the same mark 80 mm off is inconsistent") {
    const GnssCheckResult r = check_gnss_marks(ten_marks(0.001, 2, 0.08), GnssCheckOptions{0.05});
    CHECK(r.marks[2].verdict == GnssVerdict::inconsistent);
  }
  SECTION("marks that all scatter beyond the tolerance are scattered, not each a bad mark") {
    // 40 mm * errors: up to 76 mm, no outlier among them.
    const GnssCheckResult r = check_gnss_marks(ten_marks(0.04, 0, 0.0), GnssCheckOptions{0.05});
    CHECK(r.fit.marks == 10);
    std::size_t scattered = 0;
    for (const GnssCheck& c : r.marks) {
      CHECK(c.verdict != GnssVerdict::inconsistent);
      scattered += c.verdict == GnssVerdict::scattered;
    }
    CHECK(scattered == 2);  // 1.6 and -1.9 times 40 mm
  }
  SECTION("an offset shared by all, with one blunder, is systematic and the blunder named") {
    std::vector<GnssMark> marks = ten_marks(0.003, 7, 2.0);
    for (GnssMark& m : marks) m.levelled += 0.30;
    const GnssCheckResult r = check_gnss_marks(marks, GnssCheckOptions{0.05});
    REQUIRE(r.common_offset);
    CHECK(*r.common_offset == Approx(0.30).margin(0.003));
    CHECK(r.marks[7].verdict == GnssVerdict::inconsistent);
    CHECK(r.marks[0].verdict == GnssVerdict::systematic);
  }
  SECTION("with fewer than three marks the tolerance alone decides") {
    std::vector<GnssMark> marks = ten_marks(0.003, 1, 0.2);
    marks.resize(2);
    const GnssCheckResult r = check_gnss_marks(marks, GnssCheckOptions{0.05});
    CHECK(r.fit.test.empty());
    CHECK(r.marks[0].verdict == GnssVerdict::consistent);
    CHECK(r.marks[1].verdict == GnssVerdict::inconsistent);
  }
}

TEST_CASE("clean marks without sigmas: the tau test's false alarms stay near alpha0",
          "[gnss][verdicts]") {
  // 20 000 sets of ten marks with 3 mm of noise and no blunder, a tolerance
  // below the noise (1 mm) so that the test alone decides: Pope's tau test
  // at alpha0 = 0.01 per mark, taken out one at a time, should call about 1 %
  // of the marks inconsistent (the first test of each set is exact; the
  // later ones, after a removal, slightly more lenient).
  std::mt19937 random(2026);
  std::normal_distribution<double> noise(0.0, 0.003);
  GnssCheckOptions options;
  options.tolerance = 0.001;
  options.alpha0 = 0.01;
  const int sets = 20000;
  std::size_t flagged = 0, marks_checked = 0;
  for (int k = 0; k < sets; ++k) {
    std::vector<GnssMark> marks;
    for (int i = 0; i < 10; ++i) {
      GnssMark m = mark("m", 100.0 + noise(random), 68.4, -31.6);
      m.sigma = 0.0;
      marks.push_back(m);
    }
    for (const GnssCheck& c : check_gnss_marks(marks, options).marks) {
      flagged += c.verdict == GnssVerdict::inconsistent;
      ++marks_checked;
    }
  }
  const double rate = static_cast<double>(flagged) / static_cast<double>(marks_checked);
  INFO("inconsistent on clean data: " << rate);
  // Binomial standard error at 1 % over 2e5 marks: 0.022 %.
  CHECK(rate > 0.007);
  CHECK(rate < 0.013);
}
