#include <catch2/catch.hpp>

#include "levelhead/levelling/network.hpp"
#include "support/network_builders.hpp"

using namespace levelhead;
using Catch::Matchers::Contains;
using Catch::Matchers::WithinAbs;

TEST_CASE("points and sections are read from tables", "[network]") {
  TableOptions feet;
  feet.length_unit = LengthUnit::international_foot;
  const auto points = read_points(parse_delimited_text(
      "id,height,sigma,datum\nA,100,,EPSG:5703\nB,,,\nC,50,0.01,EPSG:5703\n", "p.csv", feet));
  REQUIRE(points.points.size() == 3);
  CHECK(points.file == "p.csv");
  CHECK(points.points[0].is_fixed());
  CHECK_FALSE(points.points[1].has_control());
  CHECK_FALSE(points.points[2].is_fixed());
  CHECK_THAT(*points.points[0].height, WithinAbs(30.48, 1e-12));
  CHECK_THAT(*points.points[2].sigma, WithinAbs(0.003048, 1e-15));
  CHECK(points.points[1].row == 3);

  const auto sections = read_sections(
      parse_delimited_text("From,To,dH,Length,Setups,run\nA,B,1.5,300,4,r1\n", "s.csv"));
  REQUIRE(sections.sections.size() == 1);
  CHECK(*sections.sections[0].setups == 4);
  CHECK(sections.sections[0].run == "r1");
  CHECK(sections.sections[0].group.empty());
}

TEST_CASE("the column that groups sections for variance components", "[network]") {
  const Table table = parse_delimited_text(
      "from,to,dh,run,date,observer\nA,B,1.5,r1,2026-10-06,ana\nB,C,0.2,r2,2026-10-07,\n", "s.csv");
  const auto by_observer = read_sections(table, "observer");
  CHECK(by_observer.sections[0].group == "ana");
  CHECK(by_observer.sections[1].group.empty());
  CHECK(read_sections(table, "date").sections[1].group == "2026-10-07");
  CHECK_THROWS_WITH(read_sections(table, "instrument"),
                    Contains("s.csv") && Contains("no such column") && Contains("'instrument'"));
}

TEST_CASE("bad point and section cells name their row and column", "[network][errors]") {
  CHECK_THROWS_WITH(read_points(parse_delimited_text("id,height\n,10\n", "p.csv")),
                    Contains("p.csv, row 2, column 'id'"));
  CHECK_THROWS_WITH(read_points(parse_delimited_text("id,height,sigma\nA,10,-1\n", "p.csv")),
                    Contains("column 'sigma'") && Contains("negative"));
  CHECK_THROWS_WITH(read_points(parse_delimited_text("id,height,sigma\nA,,0.01\n", "p.csv")),
                    Contains("no height"));
  CHECK_THROWS_WITH(read_sections(parse_delimited_text("from,to,dh,length\nA,B,1,0\n", "s.csv")),
                    Contains("s.csv, row 2, column 'length'") && Contains("> 0"));
  CHECK_THROWS_WITH(read_sections(parse_delimited_text("from,to,dh,length\nA,B,1,-5\n", "s.csv")),
                    Contains("'-5'"));
  CHECK_THROWS_WITH(read_sections(parse_delimited_text("from,to,dh\nA,B,\n", "s.csv")),
                    Contains("column 'dh'"));
  CHECK_THROWS_WITH(read_sections(parse_delimited_text("from,to,dh,setups\nA,B,1,2.5\n", "s.csv")),
                    Contains("whole number"));
  CHECK_THROWS_WITH(read_sections(parse_delimited_text("from,dh\nA,1\n", "s.csv")),
                    Contains("'to' is missing"));
}

TEST_CASE("duplicate ids, unknown points and self-sections are refused", "[network][errors]") {
  using testing::point;
  using testing::section;
  Point second = point("A");
  second.row = 5;
  CHECK_THROWS_WITH(make_network({point("A", 1.0), second}, {}),
                    Contains("'A' appears twice") && Contains("row 5"));
  Section typo = section("A", "BM-9", 1.0);
  typo.row = 12;
  try {
    make_network({point("A", 1.0)}, {typo});
    FAIL("expected a NetworkError");
  } catch (const NetworkError& e) {
    CHECK_THAT(e.what(), Contains("row 12") && Contains("'BM-9'") && Contains("not in the points"));
    CHECK(e.point_ids() == std::vector<std::string>{"BM-9"});
  }
  CHECK_THROWS_WITH(make_network({point("A", 1.0)}, {section("A", "A", 0.0)}),
                    Contains("to itself"));
}
