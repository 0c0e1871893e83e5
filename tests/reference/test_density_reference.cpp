#include <catch2/catch.hpp>

#include "levelhead/core/errors.hpp"
#include "levelhead/heads/density.hpp"
#include "levelhead/heads/transducer.hpp"

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

TEST_CASE("freshwater head matches a published worked example", "[reference][density]") {
  // USGS short-course exercise "Calculation of Head and Equivalent Freshwater
  // Head" (SWIM 2016 class material, public repository
  // jdhughes-usgs/SWIM2016_classrepo, notebooks/exHandCalculations_A_completed.ipynb,
  // Exercise 1), using Eq. 3 of Guo and Langevin (2002): a well filled with
  // seawater of 1025 kg/m^3, water level (point-water head) 0 m, point at
  // -5 m, g = 9.81 m/s^2 -> pressure 50276.25 Pa, freshwater head 0.125 m;
  // filled with fresh water -> pressure 49050.0 Pa, freshwater head 0 m.
  CHECK_THAT(freshwater_head(0.0, 1025.0, -5.0), WithinAbs(0.125, 1e-12));
  CHECK_THAT(freshwater_head(0.0, 1000.0, -5.0), WithinAbs(0.0, 1e-12));
  // The same pressures give back the 5 m water column above the point.
  CHECK_THAT(water_column(50.27625, 1025.0, 9.81), WithinAbs(5.0, 1e-12));
  CHECK_THAT(water_column(49.050, 1000.0, 9.81), WithinAbs(5.0, 1e-12));
  // Reference library: Deltares imod-python, imod/tests/test_evaluate/test_head.py
  // (convert_pointwaterhead_freshwaterhead): point-water head 4.0 m, density
  // 1025 kg/m^3, elevation 1.0 m -> 4.075 m; fresh water -> 4.0 m.
  CHECK_THAT(freshwater_head(4.0, 1025.0, 1.0), WithinAbs(4.075, 1e-12));
  CHECK_THAT(freshwater_head(4.0, 1000.0, 1.0), WithinAbs(4.0, 1e-12));
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

TEST_CASE("environmental heads are equal down a column at rest", "[reference][density]") {
  // Hand computation of a hydrostatic column (invented): water table at 0 m,
  // fresh water (1000 kg/m^3) down to -200 m, seawater (1025 kg/m^3) below.
  // With no vertical flow the environmental-water head is the same at every
  // depth (Post, Kooi and Simmons 2007), while freshwater heads grow with depth.
  const double interface = -200.0;
  for (const double screen : {-205.0, -250.0, -295.0}) {
    // Pressure head of fresh water at the screen: p / (rho_f g), m.
    const double fresh_column = -interface + 1.025 * (interface - screen);
    const double point_water_head = fresh_column / 1.025 + screen;  // well full of seawater
    const double h_f = freshwater_head(point_water_head, 1025.0, screen);
    CHECK_THAT(h_f, WithinAbs(fresh_column + screen, 1e-9));
    CHECK(h_f > 0.1);
    const double mean_density = 1000.0 * fresh_column / -screen;
    CHECK_THAT(environmental_head(h_f, mean_density, screen, 0.0), WithinAbs(0.0, 1e-9));
  }
  // 5 m below the interface the excess is 0.025 * 5 m = 0.125 m.
  CHECK_THAT(freshwater_head((200.0 + 1.025 * 5.0) / 1.025 - 205.0, 1025.0, -205.0),
             WithinAbs(0.125, 1e-9));
}
