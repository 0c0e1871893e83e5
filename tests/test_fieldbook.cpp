// Field-book reduction against a hand-worked field book
// (fixtures/fieldbook/hand_worked.csv, invented readings). Every expected
// value below is worked by hand from the readings; tolerances are 1e-9 m,
// far inside the 0.01 mm the reduction must keep, leaving only rounding.

#include <catch2/catch.hpp>
#include <cmath>

#include "levelhead/levelling/fieldbook.hpp"

using namespace levelhead;
using Catch::Matchers::Contains;
using Catch::Matchers::WithinAbs;

namespace {

const char* hand_worked =
    "run,date,setup,sight,point,reading,distance,temperature,remark\n"
    "R1,2026-10-06,1,back,BM1,1.5000,30.0,25,start\n"
    "R1,2026-10-06,1,fore,,0.9000,28.0,15,\n"
    "R1,2026-10-06,2,back,,1.2000,25.0,25,\n"
    "R1,2026-10-06,2,fore,MW1,1.6000,27.0,15,\n"
    "R1,2026-10-06,2,side,MW2,1.1000,20.0,15,\n"
    "R1,2026-10-06,3,back,MW1,1.4000,35.0,25,\n"
    "R1,2026-10-06,3,fore,BM2,1.3000,33.0,15,\n";

FieldBookResult reduce_text(const std::string& text, FieldBookOptions options) {
  return reduce_field_book(read_field_book(parse_delimited_text(text, "book.csv")), options);
}

FieldBookOptions no_corrections() {
  FieldBookOptions o;
  o.curvature_refraction = false;
  return o;
}

const ReducedSection& find(const FieldBookResult& r, const std::string& from,
                           const std::string& to) {
  for (const ReducedSection& s : r.sections) {
    if (s.from == from && s.to == to) return s;
  }
  FAIL("no section " << from << " -> " << to);
  throw std::logic_error("unreachable");
}

}  // namespace

TEST_CASE("the hand-worked field book reduces without corrections", "[fieldbook]") {
  const FieldBookResult r = reduce_text(hand_worked, no_corrections());
  REQUIRE(r.sections.size() == 3);
  // Setups: 1.5 - 0.9 = 0.6; 1.2 - 1.6 = -0.4; 1.4 - 1.3 = 0.1.
  const ReducedSection& a = find(r, "BM1", "MW1");
  CHECK_THAT(a.dh, WithinAbs(0.2, 1e-9));         // 0.6 - 0.4
  CHECK_THAT(*a.length, WithinAbs(110.0, 1e-9));  // 30 + 28 + 25 + 27
  CHECK(a.setups == 2);
  CHECK_THAT(*a.imbalance, WithinAbs(0.0, 1e-9));  // (30 - 28) + (25 - 27)
  const ReducedSection& b = find(r, "MW1", "BM2");
  CHECK_THAT(b.dh, WithinAbs(0.1, 1e-9));
  CHECK_THAT(*b.length, WithinAbs(68.0, 1e-9));
  const ReducedSection& side = find(r, "BM1", "MW2");
  CHECK(side.side_shot);
  CHECK_THAT(side.dh, WithinAbs(0.7, 1e-9));         // 0.6 + (1.2 - 1.1)
  CHECK_THAT(*side.length, WithinAbs(103.0, 1e-9));  // 58 + 25 + 20
  CHECK(side.setups == 2);
  CHECK(r.failed_setups == 0);
}

TEST_CASE("collimation from a two-peg test corrects each setup's imbalance", "[fieldbook]") {
  // Two-peg result 0.02 mm per m (the line of sight rises 0.02 mm per metre,
  // so each reading is too high by 0.02 mm per metre of its sight):
  // correction -c (d_back - d_fore).
  FieldBookOptions o = no_corrections();
  o.collimation_mm_per_m = 0.02;
  const FieldBookResult r = reduce_text(hand_worked, o);
  CHECK_THAT(r.setups[0].collimation, WithinAbs(-2e-5 * 2.0, 1e-12));  // 30 - 28
  CHECK_THAT(r.setups[1].collimation, WithinAbs(+2e-5 * 2.0, 1e-12));  // 25 - 27
  CHECK_THAT(find(r, "BM1", "MW1").dh, WithinAbs(0.2, 1e-9));          // balanced: cancels
  CHECK_THAT(find(r, "MW1", "BM2").dh, WithinAbs(0.09996, 1e-9));      // 0.1 - 0.00004
  CHECK_THAT(find(r, "BM1", "MW2").dh, WithinAbs(0.69986, 1e-9));      // 0.7 - 0.00004 - 0.0001
  // The same error as an angle: 0.02 mm/m = atan(2e-5) rad = 4.1253 arc seconds.
  FieldBookOptions angle = no_corrections();
  angle.collimation_arcsec = std::atan(2e-5) * 180.0 * 3600.0 / M_PI;
  CHECK_THAT(reduce_text(hand_worked, angle).setups[2].collimation, WithinAbs(-4e-5, 1e-12));
}

TEST_CASE("curvature and refraction follow the handbook rule", "[fieldbook][reference]") {
  // Combined correction of one reading: (1 - k) d^2 / (2 R). With k = 0.13
  // and R = 6371 km: 0.0683 m per km^2; the handbook rule of about 0.0675 m
  // per km^2 (from memory) corresponds to k near 0.14. 1 mm tolerance on the
  // rule covers that spread of k.
  const double per_km2 = (1.0 - 0.13) / (2.0 * earth_radius_m) * 1e6;
  CHECK_THAT(per_km2, WithinAbs(0.0675, 0.001));

  FieldBookOptions o = no_corrections();
  o.curvature_refraction = true;
  const FieldBookResult r = reduce_text(hand_worked, o);
  const double f = 0.87 / (2.0 * 6371000.0);  // per m^2
  CHECK_THAT(*r.setups[0].curvature_refraction, WithinAbs(-f * (900.0 - 784.0), 1e-12));
  // Sections: BM1-MW1 -(116 - 104) f; MW1-BM2 -136 f; side -(116 + 225) f.
  CHECK_THAT(find(r, "BM1", "MW1").dh, WithinAbs(0.2 - 12.0 * f, 1e-12));
  CHECK_THAT(find(r, "MW1", "BM2").dh, WithinAbs(0.09999071417, 1e-9));
  CHECK_THAT(find(r, "BM1", "MW2").dh, WithinAbs(0.7 - 341.0 * f, 1e-12));
}

TEST_CASE("rod scale and thermal expansion scale the readings", "[fieldbook]") {
  FieldBookOptions o = no_corrections();
  o.rod_scale_ppm = 10.0;
  o.rod_expansion_ppm_per_c = 11.5;  // an input value for the test, not a claim about a rod
  const FieldBookResult r = reduce_text(hand_worked, o);
  // Setup 1: scale 0.6 * 1e-5 = 6e-6; expansion 11.5e-6 * (1.5 * 5 - 0.9 * (-5)) = 1.38e-4.
  CHECK_THAT(r.setups[0].rod_scale, WithinAbs(6e-6, 1e-12));
  CHECK_THAT(r.setups[0].rod_expansion, WithinAbs(1.38e-4, 1e-12));
  // Setup 2: scale -4e-6; expansion 11.5e-6 * (1.2 * 5 + 1.6 * 5) = 1.61e-4.
  CHECK_THAT(find(r, "BM1", "MW1").dh, WithinAbs(0.2 + 6e-6 + 1.38e-4 - 4e-6 + 1.61e-4, 1e-12));
  FieldBookOptions warm = no_corrections();
  warm.rod_expansion_ppm_per_c = 11.5;
  CHECK_THROWS_WITH(reduce_text("run,setup,sight,point,reading\nR,1,b,A,1\nR,1,f,B,1\n", warm),
                    Contains("row 2") && Contains("temperature"));
}

TEST_CASE("double readings are checked per setup and their mean used", "[fieldbook]") {
  const std::string book =
      "run,setup,sight,point,reading,reading2,distance\n"
      "R,1,b,A,1.50000,4.51550,20\n"   // second scale offset 3.0155 m
      "R,1,f,B,1.20000,4.21580,20\n";  // dh1 = 0.3, dh2 = 0.2997: differ by 0.3 mm
  const FieldBookResult ok = reduce_text(book, no_corrections());
  CHECK_THAT(*ok.setups[0].double_difference, WithinAbs(0.0003, 1e-9));
  CHECK(ok.setups[0].failed_checks.empty());
  CHECK_THAT(ok.sections[0].dh, WithinAbs(0.29985, 1e-9));  // mean of 0.3 and 0.2997
  FieldBookOptions tight = no_corrections();
  tight.double_reading_tolerance = 0.0002;
  CHECK(reduce_text(book, tight).setups[0].failed_checks ==
        std::vector<std::string>{"double-reading"});
}

TEST_CASE("field checks flag long sights, imbalance and low readings", "[fieldbook]") {
  const std::string book =
      "run,setup,sight,point,reading,distance\n"
      "R,1,b,A,1.5,70\n"
      "R,1,f,,0.3,58\n"
      "R,2,b,,1.0,40\n"
      "R,2,f,B,1.0,40\n";
  const FieldBookResult r = reduce_text(book, no_corrections());
  CHECK(r.setups[0].failed_checks ==
        std::vector<std::string>{"long-sight", "setup-imbalance", "low-reading"});
  CHECK(r.setups[1].failed_checks.empty());
  // Accumulated imbalance 12 m > 10 m.
  CHECK_THAT(r.sections[0].flags.back(), Contains("section-imbalance"));
  CHECK(r.failed_setups == 1);
}

TEST_CASE("forward and backward runs are merged and their spread judged", "[fieldbook]") {
  const std::string book =
      "run,setup,sight,point,reading,distance\n"
      "F,1,b,A,1.5000,250\n"
      "F,1,f,B,0.5000,250\n"
      "K,1,b,B,0.5000,250\n"
      "K,1,f,A,1.5030,250\n";
  FieldBookOptions o = no_corrections();
  o.max_sight_length = 300;
  const FieldBookResult r = reduce_text(book, o);
  REQUIRE(r.sections.size() == 1);
  const ReducedSection& s = r.sections[0];
  CHECK(s.runs == 2);
  CHECK(s.run == "F+K");
  CHECK_THAT(s.dh, WithinAbs(1.0015, 1e-9));  // mean of 1.0 and 1.003
  CHECK_THAT(*s.spread, WithinAbs(0.003, 1e-9));
  CHECK_THAT(*s.length, WithinAbs(500.0, 1e-9));
  CHECK_THAT(*s.levelled_length, WithinAbs(1000.0, 1e-9));
  // 3 mm spread against 12 mm * sqrt(0.5) = 8.5 mm: passes; at 4 mm/sqrt(km) (2.8 mm) it fails.
  CHECK(s.flags.empty());
  o.section_tolerance_mm_per_sqrt_km = 4.0;
  CHECK(reduce_text(book, o).sections[0].flags == std::vector<std::string>{"runs-disagree"});
}

TEST_CASE("instrument and observer follow a section from its runs", "[fieldbook]") {
  const std::string book =
      "run,setup,sight,point,reading,distance,instrument,observer\n"
      "F,1,b,A,1.5000,25,L-12,ana\n"
      "F,1,f,B,0.5000,25,L-12,ana\n"
      "F,2,b,B,1.2000,25,L-12,ana\n"
      "F,2,f,C,1.0000,25,L-12,ana\n"
      "K,1,b,B,0.5000,25,L-07,ana\n"
      "K,1,f,A,1.5010,25,L-07,ana\n";
  const FieldBookResult r = reduce_text(book, no_corrections());
  const ReducedSection& ab = find(r, "A", "B");
  CHECK(ab.instrument == "L-12+L-07");  // two instruments: a group of its own
  CHECK(ab.observer == "ana");          // the same observer: named once
  const ReducedSection& bc = find(r, "B", "C");
  CHECK(bc.instrument == "L-12");
}

TEST_CASE("a run closed on its start gives a closure", "[fieldbook]") {
  const std::string book =
      "run,setup,sight,point,reading,distance\n"
      "L,1,b,BM1,1.2,30\nL,1,f,,1.0,30\nL,2,b,,1.1,30\nL,2,f,BM1,1.3012,30\n";
  const FieldBookResult r = reduce_text(book, no_corrections());
  CHECK(r.sections.empty());
  REQUIRE(r.closures.size() == 1);
  CHECK_THAT(r.closures[0].misclosure, WithinAbs(-0.0012, 1e-9));  // 0.2 - 0.2012
  CHECK(r.closures[0].passed);                                     // 12 mm * sqrt(0.12) = 4.2 mm
}

TEST_CASE("bad field books name the row", "[fieldbook][errors]") {
  FieldBookOptions o = no_corrections();
  // A setup without its fore sight.
  CHECK_THROWS_WITH(
      reduce_text("run,setup,sight,point,reading\nR,1,b,A,1\nR,2,b,,1\nR,2,f,B,1\n", o),
      Contains("setup 1") && Contains("no fore sight") && Contains("row 2"));
  // A reading that is text.
  CHECK_THROWS_WITH(reduce_text("run,setup,sight,point,reading\nR,1,b,A,1.2x\nR,1,f,B,1\n", o),
                    Contains("row 2") && Contains("column 'reading'") && Contains("'1.2x'"));
  // A run that never closes on a named point.
  CHECK_THROWS_WITH(reduce_text("run,setup,sight,point,reading\nR,1,b,A,1\nR,1,f,TP1,1\n", o),
                    Contains("row 3") && Contains("must close on a named point"));
  // A broken chain.
  CHECK_THROWS_WITH(
      reduce_text("run,setup,sight,point,reading\nR,1,b,A,1\nR,1,f,TP1,1\nR,2,b,TP2,1\nR,2,f,B,1\n",
                  o),
      Contains("row 4") && Contains("'TP2'") && Contains("'TP1'"));
  // An implausible reading (mm typed into a metre column).
  CHECK_THROWS_WITH(reduce_text("run,setup,sight,point,reading\nR,1,b,A,1523\nR,1,f,B,1\n", o),
                    Contains("row 2") && Contains("rod length"));
  // An unknown sight kind.
  CHECK_THROWS_WITH(reduce_text("run,setup,sight,point,reading\nR,1,x,A,1\n", o),
                    Contains("back (BS)"));
  // Rows of a setup split apart.
  CHECK_THROWS_WITH(
      reduce_text("run,setup,sight,point,reading\nR,1,b,A,1\nR,2,b,,1\nR,1,f,B,1\n", o),
      Contains("row 4") && Contains("appears again"));
  // Collimation without distances.
  FieldBookOptions c = no_corrections();
  c.collimation_mm_per_m = 0.01;
  CHECK_THROWS_WITH(reduce_text("run,setup,sight,point,reading\nR,1,b,A,1\nR,1,f,B,1\n", c),
                    Contains("distance"));
}

TEST_CASE("field-book options are validated", "[fieldbook][options]") {
  FieldBookOptions o;
  o.collimation_mm_per_m = 0.01;
  o.collimation_arcsec = 2.0;
  CHECK_THROWS_AS(o.validate(), OptionError);
  o = {};
  o.refraction_coefficient = 1.2;
  CHECK_THROWS_WITH(o.validate(), Contains("refraction"));
}
