// Uncertainty end to end: errors that heights share cancel between them
// (gradients, differences) and count in full for absolute heights.

#include <fmt/format.h>

#include <catch2/catch.hpp>
#include <cmath>
#include <fstream>
#include <nlohmann/json.hpp>
#include <numbers>
#include <random>

#include "levelhead/core/common_error.hpp"
#include "levelhead/core/table.hpp"
#include "levelhead/flow/flow.hpp"
#include "levelhead/levelling/adjustment.hpp"
#include "levelhead/levelling/network.hpp"
#include "levelhead/references/height_converter.hpp"
#include "support/cli_run.hpp"
#include "support/network_builders.hpp"
#include "support/temp_folder.hpp"

using namespace levelhead;
using Catch::Matchers::WithinAbs;

namespace {

// Five wells (invented) whose heads lie exactly on a plane: 98.983 m at
// (500400, 4400300), gradient 2.603e-3 towards 50.19 degrees.
struct PlaneSite {
  static constexpr double centre_head = 98.983, gradient = 2.603e-3, azimuth = 50.19;
  std::vector<std::pair<double, double>> at = {{500000, 4400000},
                                               {500800, 4400100},
                                               {500300, 4400700},
                                               {500900, 4400650},
                                               {500050, 4400500}};
  double head(double x, double y) const {
    const double az = azimuth * std::numbers::pi / 180.0;
    // Flow runs along -grad h: dh/dx = -i sin(az), dh/dy = -i cos(az).
    return centre_head - gradient * std::sin(az) * (x - 500400.0) -
           gradient * std::cos(az) * (y - 4400300.0);
  }
};

}  // namespace

TEST_CASE("five GNSS wells on a plane: the geoid model's 1 m cancels in the gradient",
          "[uncertainty][proj]") {
  // Measuring points from ellipsoidal heights (EPSG:4979) brought into EGM96
  // heights (EPSG:5773) by PROJ, whose operation states an accuracy of 1 m:
  // an error of the geoid model that all five share.
  const PlaneSite site;
  testing::TempFolder tmp;
  std::vector<PlanePoint> points;
  std::vector<double> ellipsoidal;
  for (std::size_t i = 0; i < site.at.size(); ++i) {
    points.push_back({site.at[i].first, site.at[i].second});
    ellipsoidal.push_back(93.0 + 0.4 * static_cast<double>(i));  // about 10 m above the heads
  }
  HeightConverter converter("EPSG:4979", "EPSG:5773", "EPSG:32613", ReferenceSet{}, ProjSettings{});
  const std::vector<ConvertedHeight> converted = converter.convert(points, ellipsoidal);
  std::string wells = "id,x,y\n", mp = "well,valid_from,height,datum,sigma\n",
              levels = "well,time,depth\n";
  for (std::size_t i = 0; i < site.at.size(); ++i) {
    REQUIRE(converted[i].height);
    const auto [x, y] = site.at[i];
    const std::string id = fmt::format("G{}", i + 1);
    wells += fmt::format("{},{:.1f},{:.1f}\n", id, x, y);
    mp += fmt::format("{},2026-01-01,{:.6f},EPSG:4979,0.003\n", id, ellipsoidal[i]);
    levels +=
        fmt::format("{},2026-06-10T12:00Z,{:.6f}\n", id, *converted[i].height - site.head(x, y));
  }
  for (const auto& [name, text] :
       {std::pair{"wells.csv", wells}, {"mp.csv", mp}, {"levels.csv", levels}})
    std::ofstream(tmp.path() / name) << text;
  const auto heads = testing::run_cli(
      {"heads", "--wells", (tmp.path() / "wells.csv").string(), "--measuring-points",
       (tmp.path() / "mp.csv").string(), "--levels", (tmp.path() / "levels.csv").string(),
       "--target", "EPSG:5773", "--crs", "EPSG:32613", "--event", "2026-06-10T12:00Z", "--no-gpkg",
       "--quiet", "--out", (tmp.path() / "heads").string()});
  INFO(heads.err);
  REQUIRE(heads.code == 0);

  const Table table = read_table(tmp.path() / "heads" / "heads.csv");
  const std::size_t head_col = *table.find_column("head"), sigma_col = *table.find_column("sigma"),
                    relative_col = *table.find_column("sigma_relative");
  for (std::size_t r = 0; r < table.row_count(); ++r) {
    // Full precision: 0.1 mm, where the 1 m sigma once rounded it to 0.1 m.
    const std::string_view text = table.cell(r, head_col);
    CHECK(text.size() - text.find('.') == 5);
    const auto [x, y] = site.at[r];
    CHECK_THAT(*table.number(r, head_col), WithinAbs(site.head(x, y), 1e-4));
    // The absolute head keeps the geoid model's 1 m ...
    CHECK_THAT(*table.number(r, sigma_col), WithinAbs(1.0, 0.001));
    // ... its own part is the survey's 3 mm and the depth's default 3 mm.
    CHECK_THAT(*table.number(r, relative_col), WithinAbs(std::hypot(0.003, 0.003), 1e-4));
  }
  const std::string event = testing::read_file(tmp.path() / "heads" / "event.csv");
  CHECK_THAT(event, !Catch::Matchers::Contains("mp-sigma-large"));

  const auto flow = testing::run_cli(
      {"flow", "--heads", (tmp.path() / "heads" / "event.csv").string(), "--wells",
       (tmp.path() / "wells.csv").string(), "--quiet", "--out", (tmp.path() / "flow").string()});
  INFO(flow.err);
  REQUIRE(flow.code == 0);
  const auto j = nlohmann::json::parse(testing::read_file(tmp.path() / "flow" / "flow.json"));
  const double gradient = j["gradient"]["value"], azimuth = j["azimuth_degrees"]["value"];
  CHECK(std::abs(gradient / PlaneSite::gradient - 1.0) < 0.01);
  CHECK(std::abs(azimuth - PlaneSite::azimuth) < 0.5);
  // The shared metre does not reach the gradient: its sigma comes from the
  // wells' own 4 mm over some 800 m.
  CHECK(double(j["gradient"]["sigma"]) < 5e-5);
  CHECK(double(j["azimuth_degrees"]["sigma"]) < 1.0);
}

TEST_CASE("shared errors: the covariance of two heads and its cell round trip", "[uncertainty]") {
  const std::vector<CommonError> a = {{"reference site", 0.01 * 0.01}, {"operation geoid", 1.0}};
  const std::vector<CommonError> b = {{"operation geoid", 1.0}};
  CHECK_THAT(shared_covariance(a, b), WithinAbs(1.0, 1e-15));
  CHECK_THAT(shared_covariance(a, {}), WithinAbs(0.0, 1e-15));
  CHECK_THAT(total_variance(a), WithinAbs(1.0001, 1e-15));
  const auto back = parse_common_errors(format_common_errors(a));
  REQUIRE(back);
  REQUIRE(back->size() == 2);
  CHECK((*back)[0].source == "reference site");
  CHECK_THAT((*back)[0].variance, WithinAbs(1e-4, 1e-12));
  CHECK(parse_common_errors("")->empty());
  CHECK_FALSE(parse_common_errors("no sigma here"));
  CHECK_FALSE(parse_common_errors("x=-1"));
}

TEST_CASE("flow: an error every well shares leaves the gradient and its sigma as without it",
          "[uncertainty][flow]") {
  const PlaneSite site;
  std::vector<FlowWell> alone, shared;
  std::mt19937 random(5);
  std::normal_distribution<double> noise(0.0, 0.004);
  for (std::size_t i = 0; i < site.at.size(); ++i) {
    const auto [x, y] = site.at[i];
    FlowWell w{fmt::format("G{}", i + 1), x, y, site.head(x, y) + noise(random), 0.004, {}};
    alone.push_back(w);
    w.sigma = std::hypot(0.004, 1.0);
    w.common = {{"operation geoid", 1.0}};
    shared.push_back(w);
  }
  const FlowResult a = estimate_flow(alone, FlowOptions{});
  const FlowResult b = estimate_flow(shared, FlowOptions{});
  CHECK_THAT(b.gradient, WithinAbs(a.gradient, 1e-12));
  CHECK_THAT(b.azimuth, WithinAbs(a.azimuth, 1e-8));
  CHECK_THAT(b.from_heads.gradient, WithinAbs(a.from_heads.gradient, 1e-3 * a.from_heads.gradient));
  // Treated as independent, the same sigmas would swamp the gradient.
  for (FlowWell& w : shared) w.common.clear();
  const FlowResult independent = estimate_flow(shared, FlowOptions{});
  CHECK(independent.from_heads.gradient > 100.0 * a.from_heads.gradient);
}

TEST_CASE(
    "flow with measuring points from one levelling network: the gradient's sigma from "
    "their covariance agrees with Monte Carlo",
    "[uncertainty][flow][adjustment]") {
  // A benchmark held at 100 m, 6 km away, levelled to W1, and the five wells
  // in a loop (invented), 2 mm/sqrt(km); the heads lie on the plane of
  // PlaneSite, depths read to 1 mm. The long line's error is common to all
  // five measuring points: their covariance is large.
  const PlaneSite site;
  std::vector<Point> points = {testing::point("BM", 100.0)};
  std::vector<std::pair<double, double>> at = {{506000.0, 4400000.0}};
  for (std::size_t i = 0; i < site.at.size(); ++i) {
    points.push_back(testing::point(fmt::format("W{}", i + 1)));
    at.push_back(site.at[i]);
  }
  const double mp_above_head = 10.0;  // every measuring point 10 m above its head
  const auto true_height = [&](std::size_t p) {
    return p == 0 ? 100.0 : site.head(at[p].first, at[p].second) + mp_above_head;
  };
  std::vector<Section> sections;
  for (std::size_t p = 0; p < points.size(); ++p) {
    const std::size_t q = p + 1 < points.size() ? p + 1 : 1;  // BM - W1, then the loop
    const double km = std::hypot(at[q].first - at[p].first, at[q].second - at[p].second) / 1000.0;
    Section s =
        testing::section(points[p].id, points[q].id, true_height(q) - true_height(p), km * 1000.0);
    s.sigma = 0.002 * std::sqrt(km);
    sections.push_back(s);
  }
  const Network net = make_network(points, sections);
  const AdjustmentOptions options;
  const AdjustmentResult adjusted = adjust(net, options);
  const std::vector<std::size_t> wells_at = {1, 2, 3, 4, 5};
  const std::vector<double> q = point_cofactors(net, adjusted, wells_at, options);
  for (std::size_t a = 0; a < 5; ++a)  // the block's diagonal is each point's own
    CHECK_THAT(q[a * 5 + a], WithinAbs(std::pow(adjusted.points[a + 1].sigma_apriori, 2), 1e-15));
  const double depth_sigma = 0.001;
  std::vector<FlowWell> wells;
  std::vector<HeadCovariance> covariances;
  for (std::size_t a = 0; a < 5; ++a) {
    wells.push_back({points[a + 1].id,
                     site.at[a].first,
                     site.at[a].second,
                     site.head(site.at[a].first, site.at[a].second),
                     std::sqrt(q[a * 5 + a] + depth_sigma * depth_sigma),
                     {}});
    for (std::size_t b = 0; b < a; ++b) covariances.push_back({a, b, q[a * 5 + b]});
  }
  const FlowResult predicted = estimate_flow(wells, FlowOptions{}, covariances);
  const FlowResult independent = estimate_flow(wells, FlowOptions{});

  // Monte Carlo: level the loop again with fresh errors, adjust, read the
  // depths again, fit with the same covariance.
  std::mt19937 random(77);
  std::normal_distribution<double> unit(0.0, 1.0);
  const int runs = 4000;
  double sum = 0.0, sum2 = 0.0;
  for (int k = 0; k < runs; ++k) {
    std::vector<Section> observed = sections;
    for (Section& s : observed) s.dh += *s.sigma * unit(random);
    const AdjustmentResult r = adjust(make_network(points, observed), options);
    std::vector<FlowWell> sample = wells;
    for (std::size_t a = 0; a < 5; ++a)
      sample[a].head = r.points[a + 1].height - mp_above_head + depth_sigma * unit(random);
    const double g = estimate_flow(sample, FlowOptions{}, covariances).gradient;
    sum += g;
    sum2 += g * g;
  }
  const double mean = sum / runs, spread = std::sqrt(sum2 / runs - mean * mean);
  INFO("gradient sigma: predicted " << predicted.from_heads.gradient << ", Monte Carlo " << spread
                                    << ", as if independent " << independent.from_heads.gradient);
  // 4000 runs: the sampled sigma is good to about 1.1 % (1 / sqrt(2 n)).
  CHECK(std::abs(spread / predicted.from_heads.gradient - 1.0) < 0.05);
  // Treating the measuring points as independent misstates it.
  CHECK(std::abs(independent.from_heads.gradient / spread - 1.0) > 0.05);
}

TEST_CASE("flow: the misfit's global test fails on clean heads as often as alpha",
          "[uncertainty][flow][verdicts]") {
  // Eight wells (invented) on a plane with 4 mm of noise at their stated
  // sigma: v'Pv ~ chi2(5), so the two-sided test at alpha = 0.05 fails in
  // 5 % of rounds; 20 000 rounds, binomial standard error 0.15 %.
  const PlaneSite site;
  std::vector<std::pair<double, double>> at = site.at;
  at.insert(at.end(), {{500500, 4400250}, {500150, 4400150}, {500700, 4400450}});
  std::mt19937 random(99);
  std::normal_distribution<double> noise(0.0, 0.004);
  const int rounds = 20000;
  int failed = 0;
  for (int k = 0; k < rounds; ++k) {
    std::vector<FlowWell> wells;
    for (const auto& [x, y] : at)
      wells.push_back({"W", x, y, site.head(x, y) + noise(random), 0.004, {}});
    const FlowResult r = estimate_flow(wells, FlowOptions{});
    REQUIRE(r.misfit_passed);
    failed += *r.misfit_passed ? 0 : 1;
  }
  const double rate = static_cast<double>(failed) / rounds;
  INFO("misfit global test failures: " << rate);
  CHECK_THAT(rate, WithinAbs(0.05, 3.0 * std::sqrt(0.05 * 0.95 / rounds)));
}
