#include <catch2/catch.hpp>
#include <cmath>

#include "levelhead/levelling/adjustment.hpp"
#include "support/network_builders.hpp"
#include "support/synthetic_networks.hpp"

using namespace levelhead;
using Catch::Matchers::Contains;
using Catch::Matchers::WithinAbs;
using levelhead::testing::point;
using levelhead::testing::section;

TEST_CASE("a single loop distributes its misclosure in proportion to length", "[adjust]") {
  // Textbook property of weights 1/length (common practice; e.g. Ghilani,
  // Adjustment Computations, 6th ed., ch. 12): each section takes the share
  // -misclosure * L_i / sum(L) of the correction.
  const double misclosure = 0.012;  // m, sum of observed dh around the loop
  const Network net =
      make_network({point("A", 50.0), point("B"), point("C")},
                   {section("A", "B", 1.250, 400.0), section("B", "C", -0.730, 1000.0),
                    section("C", "A", -0.520 + misclosure, 600.0)});
  const AdjustmentResult r = adjust(net, AdjustmentOptions{});
  const double total = 2000.0;
  // Exact in exact arithmetic; 1e-12 m covers rounding of the solve.
  CHECK_THAT(r.sections[0].residual, WithinAbs(-misclosure * 400.0 / total, 1e-12));
  CHECK_THAT(r.sections[1].residual, WithinAbs(-misclosure * 1000.0 / total, 1e-12));
  CHECK_THAT(r.sections[2].residual, WithinAbs(-misclosure * 600.0 / total, 1e-12));
  CHECK(r.dof == 1);
  CHECK_THAT(r.points[1].height, WithinAbs(50.0 + 1.250 - misclosure * 0.2, 1e-12));
  // With one redundancy every section's w has the same size (one loop, one check).
  CHECK_THAT(std::abs(*r.sections[0].w), WithinAbs(std::abs(*r.sections[1].w), 1e-9));
  // Redundancy numbers of one loop add up to the redundancy: r_i = L_i / sum(L).
  CHECK_THAT(r.sections[0].redundancy, WithinAbs(0.2, 1e-9));
}

TEST_CASE("a part of the network without a known height is a datum defect naming its points",
          "[adjust][errors]") {
  const Network net = make_network({point("A", 10.0), point("B"), point("C"), point("D")},
                                   {section("A", "B", 1.0), section("C", "D", 2.0)});
  try {
    adjust(net, AdjustmentOptions{});
    FAIL("expected a NetworkError");
  } catch (const NetworkError& e) {
    CHECK_THAT(e.what(), Contains("datum defect") && Contains("C") && Contains("D"));
    CHECK(e.point_ids() == std::vector<std::string>{"C", "D"});
  }
}

TEST_CASE("a point with neither section nor height is reported", "[adjust][errors]") {
  const Network net =
      make_network({point("A", 10.0), point("B"), point("LONELY")}, {section("A", "B", 1.0)});
  CHECK_THROWS_WITH(adjust(net, AdjustmentOptions{}), Contains("LONELY"));
}

TEST_CASE("a free adjustment gives residuals independent of the point held", "[adjust][free]") {
  testing::SyntheticNetwork synthetic = testing::random_network(60, 40, 7);
  const Network net = make_network(synthetic.points, synthetic.sections);
  AdjustmentOptions hold_first, hold_other;
  hold_first.free_point = "P0";
  hold_other.free_point = "P42";
  const AdjustmentResult a = adjust(net, hold_first);
  const AdjustmentResult b = adjust(net, hold_other);
  REQUIRE(a.sigma0);
  CHECK_THAT(*a.sigma0, WithinAbs(*b.sigma0, 1e-9 * *a.sigma0));
  const double shift = b.points[0].height - a.points[0].height;
  for (std::size_t s = 0; s < net.sections.size(); ++s) {
    CHECK_THAT(a.sections[s].residual, WithinAbs(b.sections[s].residual, 1e-10));
  }
  for (std::size_t i = 0; i < net.points.size(); ++i) {
    CHECK_THAT(b.points[i].height - a.points[i].height, WithinAbs(shift, 1e-10));
  }
  CHECK(a.reference == "free adjustment holding P0");
}

TEST_CASE("a free adjustment ignores a wrong known height that the constrained one flags",
          "[adjust][free]") {
  // Two weighted known heights 30 mm apart from what the levelling says.
  const Network net =
      make_network({point("A", 10.000, 0.002), point("B"), point("C", 12.030, 0.002)},
                   {section("A", "B", 1.0, 500.0), section("B", "C", 1.0, 500.0),
                    section("A", "C", 2.0, 900.0)});
  const AdjustmentResult constrained = adjust(net, AdjustmentOptions{});
  REQUIRE_FALSE(constrained.suspects.empty());
  AdjustmentOptions free;
  free.free_point = "A";
  const AdjustmentResult checked = adjust(net, free);
  CHECK(checked.suspects.empty());
  CHECK(checked.weighted_points == 0);
}

TEST_CASE("heights beyond a section of zero redundancy are unchecked", "[adjust][checked]") {
  // Invented network: loop A-B-C with A known; a side shot C -> S; a spur
  // chain B -> P -> Q; a second loop D-E-F hung on the single line C -> D;
  // G between two known marks A and H (a chain, so it is checked).
  const Network net =
      make_network({point("A", 50.0), point("B"), point("C"), point("S"), point("P"), point("Q"),
                    point("D"), point("E"), point("F"), point("G"), point("H", 51.0)},
                   {section("A", "B", 1.0), section("B", "C", 1.0), section("C", "A", -2.001),
                    section("C", "S", 0.3), section("B", "P", 0.2), section("P", "Q", 0.1),
                    section("C", "D", 0.5), section("D", "E", 0.1), section("E", "F", 0.1),
                    section("F", "D", -0.201), section("A", "G", 0.4), section("G", "H", 0.6)});
  const AdjustmentResult r = adjust(net, AdjustmentOptions{});
  const auto checked = [&](const std::string& id) {
    return r.points[net.point_index.at(id)].checked;
  };
  for (const char* id : {"A", "B", "C", "G", "H"}) {
    INFO(id);
    CHECK(checked(id));
  }
  // The loop D-E-F closes on itself, but its height hangs on C -> D alone.
  for (const char* id : {"S", "P", "Q", "D", "E", "F"}) {
    INFO(id);
    CHECK_FALSE(checked(id));
  }
  // A free adjustment: the held point is the control.
  AdjustmentOptions free;
  free.free_point = "E";
  const AdjustmentResult f = adjust(net, free);
  CHECK(f.points[net.point_index.at("E")].checked);
  CHECK(f.points[net.point_index.at("D")].checked);
  CHECK_FALSE(f.points[net.point_index.at("A")].checked);
}

TEST_CASE("a network without redundancy gives no sigma0 and no tests", "[adjust]") {
  const Network net = make_network({point("A", 10.0), point("B"), point("C")},
                                   {section("A", "B", 1.0), section("B", "C", 0.5)});
  const AdjustmentResult r = adjust(net, AdjustmentOptions{});
  CHECK(r.dof == 0);
  CHECK_FALSE(r.sigma0);
  CHECK_FALSE(r.global_test);
  CHECK_FALSE(r.sections[0].w);
  CHECK_FALSE(r.points[1].sigma);
  CHECK(r.points[1].sigma_apriori > 0.0);
  CHECK_THAT(r.points[2].height, WithinAbs(11.5, 1e-12));
  CHECK_FALSE(r.points[2].checked);  // nothing checks a chain from one known height
  CHECK(r.points[0].checked);
}

TEST_CASE("weights come from sigma, else length, else setups", "[adjust][weights]") {
  Section by_sigma = section("A", "B", 1.0, 400.0);
  by_sigma.sigma = 0.002;
  Section by_setups = section("B", "C", 1.0, std::nullopt);
  by_setups.setups = 4;
  const Network net = make_network({point("A", 10.0), point("B"), point("C", 12.0)},
                                   {by_sigma, by_setups, section("A", "C", 2.0, 900.0)});
  AdjustmentOptions options;
  options.mm_per_sqrt_km = 2.0;
  options.mm_per_setup = 0.5;
  const AdjustmentResult r = adjust(net, options);
  CHECK(r.sections[0].rule == WeightRule::given_sigma);
  CHECK_THAT(r.sections[0].sigma, WithinAbs(0.002, 1e-15));
  CHECK(r.sections[1].rule == WeightRule::setups);
  CHECK_THAT(r.sections[1].sigma, WithinAbs(0.5e-3 * 2.0, 1e-15));  // 0.5 mm * sqrt(4)
  CHECK(r.sections[2].rule == WeightRule::length);
  CHECK_THAT(r.sections[2].sigma, WithinAbs(2.0e-3 * std::sqrt(0.9), 1e-15));
  CHECK(r.weight_rule_counts[0] == 1);
  CHECK(r.weight_rule_counts[1] == 1);
  CHECK(r.weight_rule_counts[2] == 1);
}

TEST_CASE("a mean of repeated runs weighs as their number", "[adjust][weights]") {
  // Mean of n runs: variance / n (common practice). Length rule: k sqrt(L / n);
  // setups rule with setups counted over all runs: s sqrt(setups) / n.
  Section mean_by_length = section("A", "B", 1.0, 400.0);
  mean_by_length.runs = 2;
  Section mean_by_setups = section("B", "C", 1.0, std::nullopt);
  mean_by_setups.setups = 8;
  mean_by_setups.runs = 2;
  const Network net = make_network({point("A", 10.0), point("B"), point("C", 12.0)},
                                   {mean_by_length, mean_by_setups});
  AdjustmentOptions options;
  options.mm_per_sqrt_km = 2.0;
  options.mm_per_setup = 0.5;
  const AdjustmentResult r = adjust(net, options);
  CHECK_THAT(r.sections[0].sigma, WithinAbs(2.0e-3 * std::sqrt(0.4 / 2.0), 1e-15));
  CHECK_THAT(r.sections[1].sigma, WithinAbs(0.5e-3 * std::sqrt(8.0) / 2.0, 1e-15));
}

TEST_CASE("a section with no way to weight it is an error naming its row", "[adjust][errors]") {
  Section bare = section("A", "B", 1.0, std::nullopt);
  bare.row = 9;
  const Network net = make_network({point("A", 10.0), point("B")}, {bare});
  CHECK_THROWS_WITH(adjust(net, AdjustmentOptions{}),
                    Contains("row 9") && Contains("cannot be weighted"));
}

TEST_CASE("known heights in different references are refused", "[adjust][errors]") {
  const Network net = make_network(
      {point("A", 10.0, std::nullopt, "EPSG:5703"), point("B", 11.0, std::nullopt, "EPSG:5714")},
      {section("A", "B", 1.0)});
  CHECK_THROWS_WITH(adjust(net, AdjustmentOptions{}),
                    Contains("different vertical references") && Contains("EPSG:5714"));
}

TEST_CASE("iterative data snooping removes the planted blunder and reports it",
          "[adjust][snooping]") {
  testing::SyntheticNetwork synthetic = testing::random_network(150, 150, 21);
  std::mt19937_64 rng(5);
  testing::set_control(synthetic, {0}, {}, 0.0, rng);
  const std::size_t planted = synthetic.sections.size() - 3;
  synthetic.sections[planted].dh -= 0.025;
  const Network net = make_network(synthetic.points, synthetic.sections);
  AdjustmentOptions options;
  options.iterative_snooping = true;
  const AdjustmentResult r = adjust(net, options);
  REQUIRE(r.removals.size() >= 1);
  CHECK(r.removals.front().section == planted);
  CHECK(std::abs(r.removals.front().statistic) > r.removals.front().test.critical);
  CHECK(r.sections[planted].removed);
  CHECK(r.sections[planted].removal_step == 1u);
  // The removed section no longer counts; its misfit shows the blunder.
  CHECK_THAT(r.sections[planted].residual, WithinAbs(0.025, 0.006));
  CHECK(r.observations == net.sections.size() - r.removals.size());
}

TEST_CASE("a network with every point fixed has nothing to solve", "[adjust]") {
  const Network net =
      make_network({point("A", 10.0), point("B", 11.002)}, {section("A", "B", 1.0, 1000.0)});
  const AdjustmentResult r = adjust(net, AdjustmentOptions{});
  CHECK(r.unknowns == 0);
  CHECK(r.dof == 1);
  CHECK_THAT(r.sections[0].residual, WithinAbs(0.002, 1e-12));
}

TEST_CASE("options out of range are refused with the option's name", "[adjust][options]") {
  AdjustmentOptions options;
  options.alpha = 1.5;
  CHECK_THROWS_WITH(options.validate(), Contains("alpha") && Contains("1.5"));
  options = {};
  options.mm_per_sqrt_km = -1;
  CHECK_THROWS_AS(options.validate(), OptionError);
}

TEST_CASE("the global test's bounds and the MDB against numbers worked by hand",
          "[adjust][statistics]") {
  // The single loop of the first test: misclosure w = 12 mm in 2000 m at
  // 1 mm/sqrt(km). By hand: v_i = -w L_i / sum(L), p_i = 1 / (1e-6 L_i / 1000),
  // so v'Pv = w^2 1e9 / sum(L) = 0.012^2 * 1e9 / 2000 = 72.
  const Network net =
      make_network({point("A", 50.0), point("B"), point("C")},
                   {section("A", "B", 1.250, 400.0), section("B", "C", -0.730, 1000.0),
                    section("C", "A", -0.520 + 0.012, 600.0)});
  AdjustmentOptions apriori;  // Baarda's MDB assumes the a-priori precision
  apriori.sigma0 = Sigma0Use::apriori;
  apriori.mm_per_sqrt_km = 1.0;
  const AdjustmentResult r = adjust(net, apriori);
  REQUIRE(r.global_test);
  CHECK_THAT(r.global_test->statistic, WithinAbs(72.0, 1e-9));
  // Two-sided chi-square bounds for 1 degree of freedom at alpha = 0.05: the
  // 2.5 % and 97.5 % quantiles, 0.000982069 and 5.023886 (from memory; the
  // NIST/SEMATECH e-Handbook's chi-square table gives 0.001 and 5.024).
  CHECK_THAT(r.global_test->lower, WithinAbs(0.000982069, 1e-8));
  CHECK_THAT(r.global_test->upper, WithinAbs(5.023886, 1e-5));
  CHECK_FALSE(r.global_test->passed);
  // Baarda's w-test and MDB at alpha0 = 0.001, beta0 = 0.80: critical value
  // 3.2905 (the normal 99.95 % quantile) and non-centrality lambda0 = 17.075
  // (Baarda 1968, the values commonly tabulated in adjustment textbooks).
  CHECK_THAT(r.w_critical, WithinAbs(3.29053, 1e-5));
  CHECK_THAT(r.lambda0, WithinAbs(17.0747, 1e-3));
  // MDB of A -> B: sigma = 1 mm * sqrt(0.4), r = 0.2:
  // sqrt(17.0747 / 0.2) * 0.00063246 = 0.0058437 m.
  REQUIRE(r.sections[0].mdb);
  CHECK_THAT(*r.sections[0].mdb, WithinAbs(0.0058437, 2e-7));
}
