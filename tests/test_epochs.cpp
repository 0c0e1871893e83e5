// Repeated levelling epochs: congruence of the reference marks, stepwise
// identification of moving marks, displacements and rates.

#include <fmt/format.h>

#include <catch2/catch.hpp>
#include <cmath>
#include <fstream>
#include <random>

#include "levelhead/core/errors.hpp"
#include "levelhead/levelling/epochs.hpp"
#include "support/network_builders.hpp"

using namespace levelhead;
using namespace levelhead::testing;
using Catch::Matchers::WithinAbs;
using Catch::Matchers::WithinRel;

namespace {

Section dated(std::string from, std::string to, double dh, double sigma, std::string date) {
  Section s = section(std::move(from), std::move(to), dh, std::nullopt);
  s.sigma = sigma;
  s.date = std::move(date);
  return s;
}

EpochSections epoch(std::string name, std::vector<Section> sections) {
  SectionTable table{"sections-" + name, std::move(sections)};
  return {std::move(name), std::move(table)};
}

PointTable point_table(std::vector<Point> points) { return {"points", std::move(points)}; }

// Four reference marks at the corners of a site, three points of interest
// inside; twelve sections, 0.5 mm each. `truth` gives every point's height
// per epoch; the observations get Gaussian noise from `random`.
struct SimulatedSite {
  std::vector<std::string> ids = {"A", "B", "C", "D", "P1", "P2", "P3"};
  std::vector<std::pair<int, int>> lines = {{0, 1}, {1, 2}, {2, 3}, {3, 0}, {0, 4}, {1, 4},
                                            {4, 5}, {2, 5}, {5, 6}, {3, 6}, {6, 0}, {0, 2}};
  double sigma = 0.0005;

  EpochSections make(const std::string& name, const std::string& date,
                     const std::vector<double>& truth, std::mt19937& random) const {
    std::normal_distribution<double> noise(0.0, sigma);
    std::vector<Section> sections;
    for (const auto& [f, t] : lines) {
      sections.push_back(dated(ids[f], ids[t], truth[t] - truth[f] + noise(random), sigma, date));
    }
    return epoch(name, std::move(sections));
  }
  PointTable points() const {
    std::vector<Point> p;
    for (const std::string& id : ids) p.push_back(point(id));
    p[0].height = 100.0;
    p[0].datum = "EPSG:5703";
    return point_table(std::move(p));
  }
};

const std::vector<std::string> four_marks = {"A", "B", "C", "D"};

// Two noise-free epochs of the triangle A -> B -> P -> A, sections of 1 mm:
// the first closes on A = 0, B = 1.000, P = 1.500; the second has the given dh.
std::vector<EpochSections> triangle_epochs(double ab, double bp, double pa) {
  const double s = 0.001;
  std::vector<EpochSections> epochs;
  epochs.push_back(
      epoch("E1", {dated("A", "B", 1.000, s, "2026-03-01"), dated("B", "P", 0.500, s, "2026-03-01"),
                   dated("P", "A", -1.500, s, "2026-03-01")}));
  epochs.push_back(
      epoch("E2", {dated("A", "B", ab, s, "2026-09-01"), dated("B", "P", bp, s, "2026-09-01"),
                   dated("P", "A", pa, s, "2026-09-01")}));
  return epochs;
}

const MarkVerdict& verdict(const EpochAnalysis& a, const std::string& mark) {
  for (const MarkVerdict& v : a.marks) {
    if (v.mark == mark) return v;
  }
  FAIL("no verdict for " << mark);
  throw std::logic_error("unreachable");
}

const Displacement& displacement(const EpochAnalysis& a, const std::string& point,
                                 bool against_first, std::size_t to_epoch) {
  for (const Displacement& d : a.displacements) {
    if (d.point == point && d.against_first == against_first && d.to_epoch == to_epoch) return d;
  }
  FAIL("no displacement for " << point);
  throw std::logic_error("unreachable");
}

}  // namespace

TEST_CASE("a reference mark sinking 8 mm among four is found and left out", "[epochs]") {
  // Invented scenario: D sinks 8 mm after the first epoch; P2 subsides
  // 5 mm a year; everything else is still.
  const SimulatedSite site;
  std::mt19937 random(20261202);
  const std::vector<double> base = {100.0, 101.2, 99.4, 100.7, 100.3, 99.9, 100.1};
  std::vector<EpochSections> epochs;
  const char* dates[] = {"2025-04-15", "2026-04-15", "2027-04-15"};
  for (int k = 0; k < 3; ++k) {
    std::vector<double> truth = base;
    if (k > 0) truth[3] -= 0.008;
    truth[5] -= 0.005 * k;
    epochs.push_back(site.make(fmt::format("E{}", k + 1), dates[k], truth, random));
  }
  const EpochAnalysis a =
      analyse_epochs(site.points(), std::move(epochs), four_marks, EpochOptions{});

  REQUIRE(a.tests.size() == 2);
  CHECK_FALSE(a.tests[0].passed);
  CHECK(a.tests[0].h == 6);  // (4 marks - 1) x (3 epochs - 1)
  CHECK(a.tests[1].passed);
  CHECK(a.tests[1].marks == std::vector<std::string>{"A", "B", "C"});
  CHECK(verdict(a, "D").kind == MarkVerdict::Kind::moving);
  CHECK(verdict(a, "D").step == 1u);
  for (const char* mark : {"A", "B", "C"})
    CHECK(verdict(a, mark).kind == MarkVerdict::Kind::stable);
  CHECK(a.held_mark == "A");
  CHECK(a.reference == "EPSG:5703");

  // D's movement is measured against the stable marks: 8 mm within 4 sigma.
  const Displacement& d = displacement(a, "D", true, 2);
  CHECK(d.significant);
  CHECK_THAT(d.value, WithinAbs(-0.008, 4.0 * d.sigma));
  CHECK(d.ci_low < -0.008);
  CHECK(d.ci_high > -0.008);
  CHECK_FALSE(displacement(a, "B", true, 2).significant);  // a stable mark: zero by definition
  CHECK(displacement(a, "B", true, 2).datum_mark);

  bool found_rate = false;
  for (const Rate& r : a.rates) {
    if (r.point != "P2") continue;
    found_rate = true;
    CHECK(r.epochs == 3);
    CHECK(r.significant);
    CHECK_THAT(r.rate, WithinAbs(-0.005, 4.0 * r.sigma));
  }
  CHECK(found_rate);
  CHECK(a.warnings.empty());  // same season, equal intervals, epochs pass their tests
}

// The stepwise search takes each candidate's Omega from the current fit's
// factorisation (the test of added parameters) instead of refitting: its
// choice must be the mark whose removal a refit of the remaining marks
// finds lowest, and the test it reports must be that refit's.
TEST_CASE("each step leaves out the mark a refit of every candidate set would choose", "[epochs]") {
  const SimulatedSite site;
  const std::vector<double> base = {100.0, 101.2, 99.4, 100.7, 100.3, 99.9, 100.1};
  const char* dates[] = {"2025-04-15", "2026-04-15", "2027-04-15"};
  int steps_checked = 0;
  for (unsigned seed = 1; seed <= 12; ++seed) {
    CAPTURE(seed);
    // Two marks move by a few sigma each, so that the candidates' Omegas lie close.
    std::mt19937 random(seed);
    std::uniform_real_distribution<double> move(0.002, 0.006);
    std::vector<std::vector<double>> truth(3, base);
    truth[1][3] -= move(random);
    truth[2][3] = truth[1][3] - move(random);
    truth[2][1] += move(random);
    const auto epochs = [&] {
      std::mt19937 noise(seed * 7919u);
      std::vector<EpochSections> e;
      for (int k = 0; k < 3; ++k)
        e.push_back(site.make(fmt::format("E{}", k + 1), dates[k], truth[k], noise));
      return e;
    };
    const EpochAnalysis all = analyse_epochs(site.points(), epochs(), four_marks, EpochOptions{});
    if (all.tests.front().passed) continue;
    REQUIRE(all.tests.size() >= 2);
    std::vector<std::pair<double, std::string>> refits;  // Omega without the mark, the mark
    for (const std::string& left_out : four_marks) {
      std::vector<std::string> rest;
      for (const std::string& mark : four_marks)
        if (mark != left_out) rest.push_back(mark);
      refits.emplace_back(
          analyse_epochs(site.points(), epochs(), rest, EpochOptions{}).tests.front().omega,
          left_out);
    }
    std::sort(refits.begin(), refits.end());
    const auto first_moving = std::find_if(
        all.marks.begin(), all.marks.end(),
        [](const MarkVerdict& v) { return v.kind == MarkVerdict::Kind::moving && v.step == 1; });
    REQUIRE(first_moving != all.marks.end());
    CHECK(first_moving->mark == refits[0].second);
    // Refits of the same set: equal but for rounding (1e-9 relative).
    CHECK_THAT(all.tests[1].omega, WithinRel(refits[0].first, 1e-9));
    // The runner-up's Omega comes from the current fit alone: the same to
    // rounding as the refit (the drop of v'Pv is an identity, not a bound).
    CHECK(first_moving->next_best == refits[1].second);
    REQUIRE(first_moving->next_best_omega);
    CHECK_THAT(*first_moving->next_best_omega, WithinRel(refits[1].first, 1e-9));
    ++steps_checked;
  }
  CHECK(steps_checked >= 8);
}

TEST_CASE("with no movement no mark is named", "[epochs]") {
  const SimulatedSite site;
  std::mt19937 random(7);
  const std::vector<double> base = {100.0, 101.2, 99.4, 100.7, 100.3, 99.9, 100.1};
  std::vector<EpochSections> epochs;
  epochs.push_back(site.make("spring", "2025-04-15", base, random));
  epochs.push_back(site.make("autumn", "2025-10-15", base, random));
  const EpochAnalysis a =
      analyse_epochs(site.points(), std::move(epochs), four_marks, EpochOptions{});
  REQUIRE(a.tests.size() == 1);
  CHECK(a.tests[0].passed);
  for (const MarkVerdict& v : a.marks) CHECK(v.kind == MarkVerdict::Kind::stable);
  REQUIRE(a.warnings.size() == 1);
  CHECK(a.warnings[0].find("different seasons") != std::string::npos);
}

TEST_CASE("the congruence test's false-alarm rate is close to alpha", "[epochs]") {
  // Under no movement T ~ F(h, f) exactly (Pelzer 1971), so the test fails
  // in a fraction alpha of simulated campaigns. 4000 runs: the binomial
  // standard error at alpha = 0.05 is 0.0034; 3 of them allowed.
  const SimulatedSite site;
  std::mt19937 random(12345);
  const std::vector<double> base = {100.0, 101.2, 99.4, 100.7, 100.3, 99.9, 100.1};
  const int runs = 4000;
  int alarms = 0;
  for (int i = 0; i < runs; ++i) {
    std::vector<EpochSections> epochs;
    epochs.push_back(site.make("E1", "2025-04-15", base, random));
    epochs.push_back(site.make("E2", "2026-04-15", base, random));
    const EpochAnalysis a =
        analyse_epochs(site.points(), std::move(epochs), four_marks, EpochOptions{});
    alarms += a.tests[0].passed ? 0 : 1;
  }
  const double rate = static_cast<double>(alarms) / runs;
  CHECK_THAT(rate, WithinAbs(0.05, 3.0 * 0.0034));
}

TEST_CASE("three-point case: displacement, interval and test by hand", "[epochs]") {
  // Marks A, B and point P in a triangle, every section 1 mm, P sinking
  // 5 mm between two noise-free epochs. By hand (a-priori variance): the
  // joint normal matrix for (H_B, P1, P2), in 1/mm^2, is
  // [[4, -1, -1], [-1, 2, 0], [-1, 0, 2]], det 12; q(P1) = q(P2) = 7/12,
  // q(P1, P2) = 1/12, so q(d) = 7/12 + 7/12 - 2/12 = 1: sigma_d = 1 mm,
  // d / sigma_d = 5, and the 95 % interval is -5 +- 1.95996 mm (z from the
  // normal table, NIST/SEMATECH e-Handbook 1.3.6.7.1).
  EpochOptions options;
  options.variance = VarianceFactor::apriori;
  const EpochAnalysis a =
      analyse_epochs(point_table({point("A", 50.0), point("B"), point("P")}),
                     triangle_epochs(1.000, 0.495, -1.495), {"A", "B"}, options);
  REQUIRE(a.tests.size() == 1);
  CHECK(a.tests[0].passed);
  CHECK_THAT(a.tests[0].omega, WithinAbs(0.0, 1e-9));
  const Displacement& d = displacement(a, "P", false, 1);
  CHECK_THAT(d.value, WithinAbs(-0.005, 1e-9));
  CHECK_THAT(d.sigma, WithinAbs(0.001, 1e-9));
  CHECK_THAT(d.statistic, WithinAbs(5.0, 1e-6));
  CHECK(d.significant);
  CHECK_THAT(d.ci_low, WithinAbs(-0.005 - 0.00195996, 1e-8));
  CHECK_THAT(d.ci_high, WithinAbs(-0.005 + 0.00195996, 1e-8));
  // MDD = sqrt(lambda) sigma_d with lambda = (z(0.975) + z(0.80))^2 = (1.95996 + 0.84162)^2
  // (same normal table).
  CHECK_THAT(d.mdd, WithinAbs((1.95996 + 0.84162) * 0.001, 1e-7));
  CHECK_THAT(a.heights[0][0].height, WithinAbs(50.0, 1e-12));  // A held at its known height
}

TEST_CASE("congruence statistic of two marks by hand", "[epochs]") {
  // B rises 4 mm against A between epochs (and P sinks 5 mm); each epoch is
  // a noise-free triangle of 1 mm sections, in which B - A has cofactor 2/3
  // (equal-weight triangle, by hand). Omega = 4^2 / (2/3 + 2/3) = 12 with
  // h = 1; against chi2(1) at 5 % (3.841, NIST e-Handbook 1.3.6.7.4) it
  // fails, and with only two marks the test cannot tell which moved.
  EpochOptions options;
  options.variance = VarianceFactor::apriori;
  const EpochAnalysis a =
      analyse_epochs(point_table({point("A"), point("B"), point("P")}),
                     triangle_epochs(1.004, 0.491, -1.495), {"A", "B"}, options);
  REQUIRE(a.tests.size() == 1);
  CHECK(a.tests[0].h == 1);
  CHECK_THAT(a.tests[0].omega, WithinAbs(12.0, 1e-6));  // weight units: mm^2 / (1 mm)^2
  CHECK_THAT(a.tests[0].critical, WithinAbs(3.841, 5e-4));
  CHECK_FALSE(a.tests[0].passed);
  CHECK(verdict(a, "A").kind == MarkVerdict::Kind::unresolved);
  CHECK(verdict(a, "B").kind == MarkVerdict::Kind::unresolved);
  CHECK(a.reference == "local: A held at 0 m");
}

TEST_CASE("rates from three epochs match a weighted straight-line fit", "[epochs]") {
  // One mark held: the epochs are independent, so the rate is the textbook
  // weighted fit of a line (Press et al., Numerical Recipes, 3rd ed., 15.2:
  // slope = (S Sxy - Sx Sy) / Delta, sigma^2 = S / Delta) to the epoch
  // heights and their sigmas. Invented noisy observations, unequal sigmas
  // and intervals.
  std::vector<EpochSections> epochs;
  epochs.push_back(epoch("E1", {dated("A", "P", 0.8003, 0.001, "2024-05-01"),
                                dated("P", "Q", 0.4001, 0.001, "2024-05-01"),
                                dated("Q", "A", -1.2009, 0.001, "2024-05-01")}));
  epochs.push_back(epoch("E2", {dated("A", "P", 0.7951, 0.002, "2025-05-01"),
                                dated("P", "Q", 0.4012, 0.002, "2025-05-01"),
                                dated("Q", "A", -1.1938, 0.002, "2025-05-01")}));
  epochs.push_back(epoch("E3", {dated("A", "P", 0.7849, 0.0015, "2027-05-01"),
                                dated("P", "Q", 0.3996, 0.0015, "2027-05-01"),
                                dated("Q", "A", -1.1851, 0.0015, "2027-05-01")}));
  EpochOptions options;
  options.variance = VarianceFactor::apriori;
  const EpochAnalysis a = analyse_epochs(point_table({point("A"), point("P"), point("Q")}),
                                         std::move(epochs), {"A"}, options);
  std::size_t p = 0;
  while (a.points[p] != "P") ++p;
  double S = 0, Sx = 0, Sy = 0, Sxx = 0, Sxy = 0;
  for (const EpochHeight& h : a.heights[p]) {
    const double x = (a.epochs[h.epoch].time - a.epochs[0].time) / (365.25 * 86400.0);
    const double w = 1.0 / (h.sigma * h.sigma);
    S += w;
    Sx += w * x;
    Sy += w * h.height;
    Sxx += w * x * x;
    Sxy += w * x * h.height;
  }
  const double delta = S * Sxx - Sx * Sx;
  const Rate* rate = nullptr;
  for (const Rate& r : a.rates) {
    if (r.point == "P") rate = &r;
  }
  REQUIRE(rate);
  CHECK(rate->epochs == 3);
  CHECK_THAT(rate->rate, WithinAbs((S * Sxy - Sx * Sy) / delta, 1e-10));
  CHECK_THAT(rate->sigma, WithinAbs(std::sqrt(S / delta), 1e-10));
  // Intervals of one and two years.
  bool unequal = false;
  for (const std::string& w : a.warnings)
    unequal = unequal || w.find("unequal intervals") != std::string::npos;
  CHECK(unequal);
}

TEST_CASE("a side shot is unchecked in every epoch and in its epoch heights", "[epochs]") {
  std::vector<EpochSections> epochs = triangle_epochs(1.000, 0.495, -1.495);
  epochs[0].sections.sections.push_back(dated("P", "S", 0.200, 0.001, "2026-03-01"));
  epochs[1].sections.sections.push_back(dated("P", "S", 0.190, 0.001, "2026-09-01"));
  const EpochAnalysis a =
      analyse_epochs(point_table({point("A", 50.0), point("B"), point("P"), point("S")}),
                     std::move(epochs), {"A", "B"}, EpochOptions{});
  for (const EpochQuality& q : a.epochs) CHECK(q.unchecked == std::vector<std::string>{"S"});
  for (std::size_t p = 0; p < a.points.size(); ++p) {
    for (const EpochHeight& h : a.heights[p]) {
      INFO(a.points[p]);
      CHECK(h.checked == (a.points[p] != "S"));
    }
  }
}

TEST_CASE("the datum is the stable mark with the best known height, whatever the order",
          "[epochs]") {
  // B is named first but weighted (3 mm); A is held fixed: A is held, and
  // the heights are those of A's known height either way round.
  Point a = point("A", 50.0);
  Point b = point("B", 51.0, 0.003);
  const auto held = [&](std::vector<std::string> marks) {
    return analyse_epochs(point_table({a, b, point("P")}), triangle_epochs(1.000, 0.500, -1.500),
                          std::move(marks), EpochOptions{});
  };
  const EpochAnalysis ba = held({"B", "A"});
  const EpochAnalysis ab = held({"A", "B"});
  CHECK(ba.held_mark == "A");
  CHECK(ab.held_mark == "A");
  CHECK_THAT(ba.heights[2][0].height, WithinAbs(ab.heights[2][0].height, 1e-12));
}

TEST_CASE("bad epoch input is refused with the place to fix it", "[epochs]") {
  const double s = 0.001;
  const PointTable points = point_table({point("A"), point("B"), point("P")});
  const auto two = [&](std::string second_date) {
    std::vector<EpochSections> e;
    e.push_back(epoch(
        "E1", {dated("A", "B", 1.0, s, "2026-03-01"), dated("B", "P", 0.5, s, "2026-03-01")}));
    e.push_back(
        epoch("E2", {dated("A", "B", 1.0, s, "2026-09-01"), dated("B", "P", 0.5, s, second_date)}));
    return e;
  };
  SECTION("a section without a date") {
    try {
      analyse_epochs(points, two(""), {"A"}, EpochOptions{});
      FAIL("no error");
    } catch (const InputError& e) {
      INFO(e.what());
      CHECK(std::string(e.what()).find("sections-E2") != std::string::npos);
      CHECK(std::string(e.what()).find("date") != std::string::npos);
    }
  }
  SECTION("one epoch only") {
    auto e = two("2026-09-01");
    e.pop_back();
    CHECK_THROWS_AS(analyse_epochs(points, std::move(e), {"A"}, EpochOptions{}), NetworkError);
  }
  SECTION("an unknown mark") {
    CHECK_THROWS_WITH(analyse_epochs(points, two("2026-09-01"), {"Z"}, EpochOptions{}),
                      Catch::Contains("'Z' is not in the points table"));
  }
  SECTION("an epoch that holds none of the marks") {
    std::vector<EpochSections> e;
    e.push_back(epoch("E1", {dated("A", "B", 1.0, s, "2026-03-01")}));
    e.push_back(epoch("E2", {dated("B", "P", 0.5, s, "2026-09-01")}));
    CHECK_THROWS_WITH(analyse_epochs(points, std::move(e), {"A"}, EpochOptions{}),
                      Catch::Contains("epoch 'E2' observes none of the candidate"));
  }
  SECTION("two epochs of one name") {
    auto e = two("2026-09-01");
    e[1].name = "E1";
    CHECK_THROWS_WITH(analyse_epochs(points, std::move(e), {"A"}, EpochOptions{}),
                      Catch::Contains("two epochs"));
  }
}

TEST_CASE("variance factors per epoch: a worse epoch is found and weighed as such", "[epochs]") {
  // Spring levelled at the assumed 0.5 mm per section, autumn at 1.5 mm
  // (invented): with --variance-groups epoch each epoch's factor comes from
  // its own residuals (Foerstner's estimator on one group is its sigma0).
  const SimulatedSite site;
  SimulatedSite worse = site;
  std::mt19937 random(2024);
  const std::vector<double> base = {100.0, 101.2, 99.4, 100.7, 100.3, 99.9, 100.1};
  EpochOptions options;
  options.adjustment.variance_groups = "epoch";
  const int runs = 2000;
  int alarms = 0;
  double spring_sum = 0.0, autumn_sum = 0.0;
  for (int i = 0; i < runs; ++i) {
    worse.sigma = 3.0 * site.sigma;
    std::vector<EpochSections> epochs;
    epochs.push_back(site.make("spring", "2025-04-15", base, random));
    EpochSections autumn = worse.make("autumn", "2025-10-15", base, random);
    for (Section& s : autumn.sections.sections) s.sigma = site.sigma;  // the assumed sigma
    epochs.push_back(std::move(autumn));
    for (EpochSections& e : epochs) {
      for (Section& s : e.sections.sections) s.group = e.name;
    }
    const EpochAnalysis a = analyse_epochs(site.points(), std::move(epochs), four_marks, options);
    REQUIRE(a.epochs[0].variance_components.size() == 1);
    spring_sum += *a.epochs[0].variance_components[0].factor;
    autumn_sum += *a.epochs[1].variance_components[0].factor;
    alarms += a.tests[0].passed ? 0 : 1;
  }
  // sigma0 of 6 degrees of freedom has mean c4(7) * sigma, c4(7) = 0.959
  // (the bias of a sample standard deviation, from memory).
  CHECK_THAT(spring_sum / runs, WithinAbs(0.959, 0.02));
  CHECK_THAT(autumn_sum / runs, WithinAbs(3.0 * 0.959, 0.06));
  const double rate = static_cast<double>(alarms) / runs;
  INFO("false alarms of the congruence test: " << rate);
  CHECK_THAT(rate, WithinAbs(0.05, 3.0 * std::sqrt(0.05 * 0.95 / runs)));
}
