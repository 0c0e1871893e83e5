#include <catch2/catch.hpp>
#include <cmath>
#include <random>

#include "levelhead/core/errors.hpp"
#include "levelhead/flow/flow.hpp"

using namespace levelhead;
using Catch::Matchers::Contains;
using Catch::Matchers::WithinAbs;

TEST_CASE("three wells give the exact three-point solution", "[flow]") {
  // Three-point problem worked by hand: A (0, 0) 10.0 m, B (100, 0) 9.0 m,
  // C (0, 100) 9.5 m. dh/dx = -0.01, dh/dy = -0.005; i = sqrt(1e-4 + 2.5e-5)
  // = 0.0111803; flow along (0.01, 0.005): azimuth atan2(0.01, 0.005) = 63.4349 deg.
  const FlowResult r = estimate_flow(
      {{"A", 0, 0, 10.0, 0.01}, {"B", 100, 0, 9.0, 0.01}, {"C", 0, 100, 9.5, 0.01}}, FlowOptions{});
  CHECK_THAT(r.dh_dx, WithinAbs(-0.01, 1e-12));
  CHECK_THAT(r.dh_dy, WithinAbs(-0.005, 1e-12));
  CHECK_THAT(r.gradient, WithinAbs(0.0111803399, 1e-9));
  CHECK_THAT(r.azimuth, WithinAbs(63.4349488, 1e-6));
  CHECK(r.dof == 0);
  CHECK_FALSE(r.sigma0);
}

TEST_CASE("noise-free planes give gradient and azimuth in all four quadrants", "[flow]") {
  for (double azimuth : {30.0, 135.0, 200.0, 315.0}) {
    INFO(azimuth);
    const double i = 0.004, a = azimuth * M_PI / 180.0;
    // Flow towards the azimuth: heads fall along (sin a, cos a).
    const auto h = [&](double x, double y) {
      return 50.0 - i * (x * std::sin(a) + y * std::cos(a));
    };
    std::vector<FlowWell> wells;
    for (auto [x, y] : std::vector<std::pair<double, double>>{
             {0, 0}, {400, 50}, {120, 380}, {500, 500}, {250, 200}}) {
      wells.push_back({"W", x, y, h(x, y), 0.005});
    }
    const FlowResult r = estimate_flow(wells, FlowOptions{});
    CHECK_THAT(r.gradient, WithinAbs(i, 1e-12));
    CHECK_THAT(r.azimuth, WithinAbs(azimuth, 1e-8));
    for (double v : r.residuals) CHECK_THAT(v, WithinAbs(0.0, 1e-9));
  }
}

TEST_CASE("collinear wells are refused and nearly collinear ones warned", "[flow][errors]") {
  CHECK_THROWS_WITH(
      estimate_flow({{"A", 0, 0, 10, 0.01}, {"B", 100, 100, 9, 0.01}, {"C", 200, 200, 8, 0.01}},
                    FlowOptions{}),
      Contains("on a line"));
  const FlowResult r = estimate_flow(
      {{"A", 0, 0, 10, 0.01}, {"B", 100, 1, 9, 0.01}, {"C", 200, 0, 8, 0.01}}, FlowOptions{});
  CHECK(r.nearly_collinear);
  CHECK_THROWS_AS(estimate_flow({{"A", 0, 0, 10, 0.01}}, FlowOptions{}), InputError);
}

TEST_CASE("the propagated gradient sigma agrees with Monte Carlo", "[flow]") {
  // Sampling heads from their covariance (independent, 1 cm) and refitting:
  // the spread of the gradient and azimuth must match the first-order
  // propagation within 5 % (20000 samples: sampling error of a standard
  // deviation about 0.5 %).
  std::vector<FlowWell> wells = {{"A", 0, 0, 0, 0.01},
                                 {"B", 600, 80, 0, 0.01},
                                 {"C", 150, 550, 0, 0.01},
                                 {"D", 700, 650, 0, 0.01},
                                 {"E", 350, 300, 0, 0.01}};
  for (FlowWell& w : wells) w.head = 30.0 - 0.003 * w.x - 0.002 * w.y;
  const FlowResult truth = estimate_flow(wells, FlowOptions{});
  std::mt19937_64 rng(17);
  std::normal_distribution<double> noise(0.0, 0.01);
  double sum = 0, sum2 = 0, asum = 0, asum2 = 0;
  const int samples = 20000;
  for (int s = 0; s < samples; ++s) {
    std::vector<FlowWell> noisy = wells;
    for (FlowWell& w : noisy) w.head += noise(rng);
    const FlowResult r = estimate_flow(noisy, FlowOptions{});
    sum += r.gradient, sum2 += r.gradient * r.gradient;
    asum += r.azimuth, asum2 += r.azimuth * r.azimuth;
  }
  const double sd = std::sqrt(sum2 / samples - (sum / samples) * (sum / samples));
  const double asd = std::sqrt(asum2 / samples - (asum / samples) * (asum / samples));
  // Without redundancy scaling: the noise-free fit has sigma0 = 0, so scale 1.
  CHECK_THAT(sd, WithinAbs(truth.gradient_sigma, 0.05 * truth.gradient_sigma));
  CHECK_THAT(asd, WithinAbs(truth.azimuth_sigma, 0.05 * truth.azimuth_sigma));
}

TEST_CASE("Darcy ranges from conductivity and porosity ranges", "[flow]") {
  FlowOptions o;
  o.conductivity = Range{1e-5, 1e-3};
  o.porosity = Range{0.1, 0.3};
  o.distance = 100.0;
  const FlowResult r = estimate_flow(
      {{"A", 0, 0, 10.0, 0.01}, {"B", 100, 0, 9.0, 0.01}, {"C", 0, 100, 10.0, 0.01}}, o);
  // i = 0.01: q = 1e-7 .. 1e-5 m/s; v = q / n_e = 1e-7/0.3 .. 1e-5/0.1; t = 100 m / v.
  CHECK_THAT(r.specific_discharge->low, WithinAbs(1e-7, 1e-18));
  CHECK_THAT(r.specific_discharge->high, WithinAbs(1e-5, 1e-16));
  CHECK_THAT(r.velocity->high, WithinAbs(1e-4, 1e-15));
  CHECK_THAT(r.travel_time->low, WithinAbs(1e6, 1e-3));
  CHECK_THAT(r.travel_time->high, WithinAbs(100.0 / (1e-7 / 0.3), 1.0));
}

TEST_CASE("the plane's covariance is scaled by sigma0 squared when the plane misfits", "[flow]") {
  // Four wells on a 100 m square, the plane of the three-point test plus a
  // twist +-15 mm that no plane can follow (orthogonal to 1, x and y on the
  // square), each head with sigma 10 mm. By hand: the slopes are unchanged;
  // v'Pv = 4 * 0.015^2 / 0.01^2 = 9 with 1 degree of freedom, so sigma0 = 3.
  // (A'PA)^-1 for dh/dx is sigma^2 / sum(x - x0)^2 = 1e-4 / 1e4 = 1e-8,
  // scaled by sigma0^2 = 9: 9e-8, so sigma(dh/dx) = sigma(dh/dy) = 3e-4 and,
  // by first-order propagation, sigma(i) = 3e-4 and sigma(azimuth) =
  // 3e-4 / i rad = 3e-4 / 0.0111803 rad = 1.537 degrees.
  const double d = 0.015;
  const FlowResult r = estimate_flow({{"A", 0, 0, 10.0 + d, 0.01},
                                      {"B", 100, 0, 9.0 - d, 0.01},
                                      {"C", 0, 100, 9.5 - d, 0.01},
                                      {"D", 100, 100, 8.5 + d, 0.01}},
                                     FlowOptions{});
  CHECK_THAT(r.dh_dx, WithinAbs(-0.01, 1e-12));
  CHECK_THAT(r.dh_dy, WithinAbs(-0.005, 1e-12));
  REQUIRE(r.sigma0);
  CHECK_THAT(*r.sigma0, WithinAbs(3.0, 1e-9));
  CHECK_THAT(r.cov_xx, WithinAbs(9e-8, 1e-15));
  CHECK_THAT(r.cov_yy, WithinAbs(9e-8, 1e-15));
  CHECK_THAT(r.cov_xy, WithinAbs(0.0, 1e-15));
  CHECK_THAT(r.gradient_sigma, WithinAbs(3e-4, 1e-10));
  CHECK_THAT(r.azimuth_sigma, WithinAbs(3e-4 / 0.0111803399 * 180.0 / M_PI, 1e-6));
}

TEST_CASE(
    "a well off the plane of the heads fails Pope's tau test; the others and a clean "
    "round do not",
    "[flow][tau]") {
  // Eleven wells on a 4 x 3 grid (one corner missing) 100 m apart, heads on
  // the plane 50 - 0.002 x - 0.001 y with noise of 2 mm (fixed draw), sigma 2 mm.
  std::mt19937_64 rng(3);
  std::normal_distribution<double> noise(0.0, 0.002);
  std::vector<FlowWell> wells;
  for (int k = 0; k < 11; ++k) {
    const double x = 100.0 * (k % 4), y = 100.0 * (k / 4);
    wells.push_back(
        {"W" + std::to_string(k), x, y, 50.0 - 0.002 * x - 0.001 * y + noise(rng), 0.002});
  }
  const FlowResult clean = estimate_flow(wells, FlowOptions{});
  REQUIRE(clean.dof == 8);
  // Pope's tau, redundancy 8, alpha0 = 0.001: sqrt(8) t / sqrt(7 + t^2) with
  // t = t(0.9995; 7) = 5.4079 (Student's t tables, e.g. the NIST/SEMATECH
  // e-Handbook; from memory): 2.5407.
  CHECK_THAT(clean.tau_critical, WithinAbs(2.5407, 2e-4));
  CHECK(clean.off_plane.empty());
  for (const auto& t : clean.tau) CHECK(t.has_value());

  wells[5].head += 0.05;  // a misread tape: 25 sigma off
  const FlowResult bad = estimate_flow(wells, FlowOptions{});
  REQUIRE(bad.off_plane.size() == 1);
  CHECK(bad.off_plane.front() == 5);
  CHECK(std::abs(*bad.tau[5]) > bad.tau_critical);

  // Four wells leave a redundancy of 1: no well can be tested.
  wells.resize(4);
  wells[3].y = 100.0;
  const FlowResult few = estimate_flow(wells, FlowOptions{});
  CHECK(few.off_plane.empty());
  CHECK(std::isinf(few.tau_critical));
}

TEST_CASE("Darcy ranges read the same on the console and in the report", "[flow]") {
  // Two significant digits; a Julian year of 365.25 days (IAU, common practice).
  CHECK(describe_velocity({4.79e-8, 9.59e-6}) == "0.0041 to 0.83 m/day");
  CHECK(describe_travel_time({5.2144e7, 1.0429e10}) == "1.7 to 330 years");
  CHECK(describe_travel_time({3 * 86400.0, 40 * 86400.0}) == "3.0 to 40 days");
}
