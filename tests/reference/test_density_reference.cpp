#include <catch2/catch.hpp>

#include "levelhead/density.hpp"
#include "levelhead/errors.hpp"

using namespace levelhead;
using Catch::Matchers::WithinAbs;

TEST_CASE("EOS-80 densities match the UNESCO check values", "[reference][density]") {
  // UNESCO (1983), Fofonoff and Millard, "Algorithms for computation of
  // fundamental properties of seawater", technical papers in marine science 44,
  // check value at one atmosphere: S = 35, T = 5 degrees C -> 1027.67547 kg/m^3
  // (recalled from memory). Pure water at 4 degrees C: 999.975 kg/m^3, its
  // maximum (common knowledge, SMOW).
  CHECK_THAT(water_density_eos80(35.0, 5.0), WithinAbs(1027.67547, 1e-4));
  CHECK_THAT(water_density_eos80(0.0, 4.0), WithinAbs(999.975, 1e-3));
  CHECK(water_density_eos80(0.0, 4.0) > water_density_eos80(0.0, 2.0));
  CHECK(water_density_eos80(0.0, 4.0) > water_density_eos80(0.0, 6.0));
  CHECK_THROWS_AS(water_density_eos80(50.0, 10.0), OptionError);
}

TEST_CASE("freshwater head of a saline well, worked by hand", "[reference][density]") {
  // Point-water head 10 m, screen at -20 m, water 1025 kg/m^3:
  // h_f = 1.025 * 10 - 0.025 * (-20) = 10.25 + 0.5 = 10.75 m.
  CHECK_THAT(freshwater_head(10.0, 1025.0, -20.0), WithinAbs(10.75, 1e-12));
  // Fresh water: no change.
  CHECK_THAT(freshwater_head(10.0, 1000.0, -20.0), WithinAbs(10.0, 1e-12));
  // The inverse conversion of Guo and Langevin (2002, SEAWAT, USGS TWRI
  // 6-A7): h = (rho_f / rho) h_f + ((rho - rho_f) / rho) Z gives the
  // point-water head back.
  const double h_f = freshwater_head(10.0, 1025.0, -20.0);
  CHECK_THAT(1000.0 / 1025.0 * h_f + 25.0 / 1025.0 * -20.0, WithinAbs(10.0, 1e-12));
  // The pressure at the screen is the same either way: rho g (h - z) = rho_f g (h_f - z).
  CHECK_THAT(1025.0 * (10.0 + 20.0), WithinAbs(1000.0 * (10.75 + 20.0), 1e-9));
}

TEST_CASE("environmental-water head of the same well, worked by hand", "[reference][density]") {
  // Freshwater head 10.75 m at a screen at -20 m; reference elevation 0 m;
  // mean density of the water between them 1012.5 kg/m^3 (invented):
  // h_n = 10.75 - 0.0125 * (0 - (-20)) = 10.75 - 0.25 = 10.50 m
  // (definition of Lusczynski 1961, as written by Post et al. 2007).
  CHECK_THAT(environmental_head(10.75, 1012.5, -20.0, 0.0), WithinAbs(10.50, 1e-12));
  // The screen's pressure holds: rho_f (h_f - z_i) = rho_f (h_n - z_r) + rho_a (z_r - z_i).
  CHECK_THAT(1000.0 * (10.75 + 20.0), WithinAbs(1000.0 * (10.50 - 0.0) + 1012.5 * 20.0, 1e-9));
  // At the reference elevation itself, environmental and freshwater heads agree.
  CHECK_THAT(environmental_head(10.75, 1012.5, 0.0, 0.0), WithinAbs(10.75, 1e-12));
}
