#include <catch2/catch.hpp>

#include "levelhead/heads/event_qa.hpp"

using namespace levelhead;
using Catch::Matchers::WithinAbs;

namespace {
// An invented water table: h = 100 - 0.001 x - 0.002 y (m).
EventHead on_plane(const char* id, double x, double y, double sigma = 0.005) {
  EventHead h;
  h.well = id;
  h.aquifer = "sand";
  h.x = x;
  h.y = y;
  h.head = 100.0 - 0.001 * x - 0.002 * y;
  h.sigma = sigma;
  return h;
}
}  // namespace

TEST_CASE("a head off its neighbours' plane is flagged, the others are not", "[heads][event]") {
  std::vector<EventHead> heads = {on_plane("A", 0, 0),     on_plane("B", 300, 40),
                                  on_plane("C", 80, 310),  on_plane("D", 350, 330),
                                  on_plane("E", 170, 160), on_plane("F", 500, 120),
                                  on_plane("G", 260, 520)};
  heads[4].head += 0.5;
  const EventQaResult r = check_event(heads, EventQaOptions{});
  for (std::size_t i = 0; i < heads.size(); ++i) {
    INFO(heads[i].well);
    const auto& f = r.wells[i].flags;
    const bool misfit = std::find(f.begin(), f.end(), "neighbour-misfit") != f.end();
    CHECK(misfit == (i == 4));
  }
  // A plane through exact neighbours predicts E exactly: the misfit is the planted 0.5 m.
  CHECK_THAT(*r.wells[4].misfit, WithinAbs(0.5, 1e-9));
}

TEST_CASE("uncertain measuring points, mixed aquifers and nests", "[heads][event]") {
  std::vector<EventHead> heads = {on_plane("A", 0, 0), on_plane("B", 30, 0), on_plane("C", 0, 400),
                                  on_plane("D", 400, 400)};
  heads[1].sigma = 1.0;  // a GNSS top reduced with a global geoid: 1 m
  heads[3].aquifer = "sand+clay";
  EventHead shallow = on_plane("N1-S", 200, 200), deep = on_plane("N1-D", 201, 200);
  shallow.nest = deep.nest = "N1";
  shallow.screen_middle = 5.0;
  deep.screen_middle = 20.0;
  deep.head = shallow.head - 0.20;  // higher head above: water moves down
  heads.push_back(deep);
  heads.push_back(shallow);
  const EventQaResult r = check_event(heads, EventQaOptions{});
  const auto has = [&](std::size_t i, const char* flag) {
    const auto& f = r.wells[i].flags;
    return std::find(f.begin(), f.end(), flag) != f.end();
  };
  CHECK(has(1, "mp-sigma-large"));  // 1 m sigma beside a 0.03 m difference to A
  CHECK_FALSE(has(0, "mp-sigma-large"));
  CHECK(has(3, "multiple-aquifers"));
  REQUIRE(r.nests.size() == 1);
  CHECK(r.nests[0].shallow == "N1-S");
  CHECK_THAT(r.nests[0].dh, WithinAbs(0.20, 1e-9));
  CHECK(r.nests[0].direction == "downward");
  CHECK(r.nests[0].significant);
}

TEST_CASE("errors the heads share cancel in the nest difference and the sigma check",
          "[heads][event][uncertainty]") {
  EventHead shallow = on_plane("N1-S", 200, 200, 0.01), deep = on_plane("N1-D", 201, 200, 0.01);
  shallow.nest = deep.nest = "N1";
  shallow.screen_middle = 5.0;
  deep.screen_middle = 20.0;
  const auto nest_sigma = [&](const EventQaOptions& options) {
    const EventQaResult r = check_event({shallow, deep}, options);
    REQUIRE(r.nests.size() == 1);
    return r.nests[0].sigma;
  };
  CHECK_THAT(nest_sigma({}), WithinAbs(std::sqrt(2.0) * 0.01, 1e-12));  // independent
  // Both tops levelled from one benchmark: covariance 0.9e-4 m^2 (correlation 0.9).
  shallow.network_point = "N1-S-top";
  deep.network_point = "N1-D-top";
  EventQaOptions levelled;
  levelled.network_covariance = [](const std::string&, const std::string&) { return 0.9e-4; };
  CHECK_THAT(nest_sigma(levelled), WithinAbs(std::sqrt(2e-4 - 1.8e-4), 1e-12));
  // The same as a shared error of the conversion.
  shallow.network_point.clear();
  deep.network_point.clear();
  shallow.common = deep.common = {{"reference site", 0.9e-4}};
  CHECK_THAT(nest_sigma({}), WithinAbs(std::sqrt(2e-4 - 1.8e-4), 1e-12));
}
