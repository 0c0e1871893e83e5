// The adjustment's verdicts on simulated networks: false alarms at the
// chosen significance levels when the precision is right, no good section
// removed when the precision is worse than assumed and sigma0 is estimated,
// and a planted blunder still found. Networks are invented (random points in
// a 5 km square, synthetic_networks.hpp); the rates are compared with the
// binomial spread of their expectation.

#include <catch2/catch.hpp>
#include <cmath>
#include <cstddef>
#include <random>

#include "levelhead/levelling/adjustment.hpp"
#include "levelhead/levelling/network.hpp"
#include "support/synthetic_networks.hpp"

using namespace levelhead;

namespace {

// 20 points, 19 tree sections and 15 more: redundancy 15, one point fixed.
Network simulated(std::uint64_t seed) {
  testing::SyntheticNetwork synthetic = testing::random_network(20, 15, seed);
  std::mt19937_64 rng(seed);
  testing::set_control(synthetic, {0}, {}, 0.0, rng);
  return make_network(synthetic.points, synthetic.sections);
}

// |count - expected| within `k` binomial standard deviations of n trials at p.
bool within_binomial(std::size_t count, std::size_t trials, double p, double k) {
  const double n = static_cast<double>(trials);
  return std::abs(static_cast<double>(count) - n * p) <= k * std::sqrt(n * p * (1.0 - p));
}

}  // namespace

TEST_CASE("blunder-free networks at the assumed precision: false alarms at alpha and alpha0",
          "[verdicts]") {
  // The synthetic noise is 1 mm/sqrt(km), the precision assumed here too.
  AdjustmentOptions options = testing::synthetic_precision();
  const std::size_t networks = 2000;
  AdjustmentOptions trusting = options;
  trusting.sigma0 = Sigma0Use::apriori;
  std::size_t global_failures = 0, tested = 0, suspects = 0, suspects_trusting = 0;
  for (std::size_t i = 0; i < networks; ++i) {
    const Network net = simulated(1000 + i);
    const AdjustmentResult r = adjust(net, options);
    REQUIRE(r.global_test);
    global_failures += !r.global_test->passed;
    for (const AdjustedSection& s : r.sections) tested += s.w.has_value();
    suspects += r.suspects.size();
    suspects_trusting += adjust(net, trusting).suspects.size();
  }
  INFO("global test failures " << global_failures << " of " << networks);
  INFO("suspects " << suspects << " (trusting the a-priori: " << suspects_trusting << ") of "
                   << tested << " observations tested");
  // alpha = 0.05: 100 of 2000 expected, binomial sd 9.7.
  CHECK(within_binomial(global_failures, networks, options.alpha, 4.0));
  // Trusting the a-priori precision, each w is N(0, 1): alpha0 = 0.001 per
  // observation (the w's of one network are correlated, so the spread is
  // wider than binomial: 5 sd).
  CHECK(within_binomial(suspects_trusting, tested, options.alpha0, 5.0));
  // The default switches to the tau test in the networks whose global test
  // fails, which are the ones with the largest w: fewer alarms, never more
  // (measured: about half).
  CHECK(suspects <= suspects_trusting);
  CHECK(suspects > 0);
}

TEST_CASE(
    "precision 2x worse than assumed: with sigma0 estimated no good section is removed "
    "more often than alpha0; trusting the a-priori precision removes many",
    "[verdicts]") {
  AdjustmentOptions options;
  options.mm_per_sqrt_km = 0.5 * testing::synthetic_mm_per_sqrt_km;
  options.iterative_snooping = true;
  AdjustmentOptions trusting = options;
  trusting.sigma0 = Sigma0Use::apriori;
  const std::size_t networks = 2000;
  std::size_t global_failures = 0, observations = 0, removed = 0, removed_trusting = 0;
  for (std::size_t i = 0; i < networks; ++i) {
    const Network net = simulated(5000 + i);
    const AdjustmentResult r = adjust(net, options);
    global_failures += r.global_test && !r.global_test->passed;
    observations += net.sections.size();
    removed += r.removals.size();
    removed_trusting += adjust(net, trusting).removals.size();
  }
  INFO("removed " << removed << " (trusting the a-priori: " << removed_trusting << ") of "
                  << observations << " sections; global test failed " << global_failures);
  CHECK(global_failures > networks * 9 / 10);  // the test sees the wrong precision
  // Every section is good: removals are false alarms, alpha0 = 0.001 each.
  CHECK(static_cast<double>(removed) <=
        observations * options.alpha0 +
            5.0 * std::sqrt(observations * options.alpha0 * (1.0 - options.alpha0)));
  // w = 2 N(0, 1) under the trusted 0.5 mm: P(|w| > 3.29) = 10 % per section.
  CHECK(removed_trusting > 20 * removed);
}

TEST_CASE("precision 2x worse than assumed: a planted 20 mm blunder is still found", "[verdicts]") {
  AdjustmentOptions options;
  options.mm_per_sqrt_km = 0.5 * testing::synthetic_mm_per_sqrt_km;
  options.iterative_snooping = true;
  const std::size_t networks = 500;
  std::size_t planted = 0, found_first = 0;
  for (std::size_t i = 0; i < networks; ++i) {
    testing::SyntheticNetwork synthetic = testing::random_network(20, 15, 9000 + i);
    std::mt19937_64 rng(i);
    testing::set_control(synthetic, {0}, {}, 0.0, rng);
    // The blunder goes on a section that other sections check (redundancy
    // of at least 0.3); on a spur no test can see it.
    const AdjustmentResult clean =
        adjust(make_network(synthetic.points, synthetic.sections), options);
    std::size_t target = synthetic.sections.size();
    for (const AdjustedSection& s : clean.sections) {
      if (!s.removed && s.redundancy >= 0.3) {
        target = s.section;
        break;
      }
    }
    if (target == synthetic.sections.size()) continue;
    synthetic.sections[target].dh += 0.020;
    const Network net = make_network(synthetic.points, synthetic.sections);
    const AdjustmentResult r = adjust(net, options);
    ++planted;
    // Sections in series between two junctions have the same residual
    // statistic: the blunder is found when the first removal is the planted
    // section or one that no test can tell from it.
    AdjustmentOptions one_step = options;
    one_step.iterative_snooping = false;
    const auto planted_statistic = adjust(net, one_step).sections[target].statistic();
    found_first += !r.removals.empty() && planted_statistic &&
                   (r.removals.front().section == target ||
                    std::abs(std::abs(r.removals.front().statistic) -
                             std::abs(*planted_statistic)) < 1e-9 * std::abs(*planted_statistic));
  }
  INFO("found first in " << found_first << " of " << planted);
  REQUIRE(planted > networks * 9 / 10);
  CHECK(found_first >= planted * 95 / 100);
}

TEST_CASE("variance components: two runs of different precision are told apart, with intervals",
          "[verdicts][variance]") {
  // Run A levelled at the assumed 1 mm/sqrt(km), run B three times worse.
  std::size_t a_inside = 0, b_inside = 0, networks = 200, removed = 0, observations = 0;
  double b_mean = 0.0;
  for (std::size_t i = 0; i < networks; ++i) {
    testing::SyntheticNetwork synthetic = testing::random_network(40, 40, 20000 + i);
    std::mt19937_64 rng(i);
    testing::set_control(synthetic, {0}, {}, 0.0, rng);
    for (std::size_t s = 0; s < synthetic.sections.size(); ++s) {
      Section& section = synthetic.sections[s];
      section.group = s % 2 == 0 ? "A" : "B";
      if (section.group == "B") {
        // Noise of 3 sigma in all: add sqrt(9 - 1) sigma to the 1 sigma drawn.
        const double sigma = 1e-3 * std::sqrt(*section.length / 1000.0);
        section.dh += std::normal_distribution<double>(0.0, std::sqrt(8.0) * sigma)(rng);
      }
    }
    const Network net = make_network(synthetic.points, synthetic.sections);
    AdjustmentOptions options = testing::synthetic_precision();
    options.variance_groups = "run";
    options.iterative_snooping = true;
    const AdjustmentResult r = adjust(net, options);
    REQUIRE(r.variance_components.size() == 2);
    const VarianceComponent& a = r.variance_components[0];
    const VarianceComponent& b = r.variance_components[1];
    REQUIRE(a.group == "A");
    REQUIRE(a.factor);
    REQUIRE(b.factor);
    a_inside += a.low <= 1.0 && 1.0 <= a.high;
    b_inside += b.low <= 3.0 && 3.0 <= b.high;
    b_mean += *b.factor / static_cast<double>(networks);
    CHECK(r.test.kind == OutlierTest::Kind::tau_test);
    removed += r.removals.size();
    observations += net.sections.size();
  }
  INFO("A's interval holds 1 in " << a_inside << ", B's holds 3 in " << b_inside << " of "
                                  << networks << "; mean factor of B " << b_mean << "; removed "
                                  << removed << " of " << observations);
  // 95 % intervals: 190 of 200 expected, binomial sd 3.1 (and the intervals
  // are approximate: the redundancy is shared between the groups).
  CHECK(a_inside >= 175);
  CHECK(b_inside >= 175);
  CHECK_THAT(b_mean, Catch::Matchers::WithinAbs(3.0, 0.15));
  // No blunder was planted: removals are false alarms at alpha0 each.
  CHECK(static_cast<double>(removed) <=
        observations * 0.001 + 5.0 * std::sqrt(observations * 0.001));
}
