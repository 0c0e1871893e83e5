// Pressure to water height against the definitions of the SI.

#include <catch2/catch.hpp>

#include "levelhead/heads/transducer.hpp"

using Catch::Matchers::WithinAbs;

TEST_CASE("10 m of fresh water is 98.0665 kPa at standard gravity", "[reference][transducer]") {
  // Standard acceleration of gravity g_n = 9.80665 m/s^2 (3rd CGPM, 1901;
  // BIPM, The International System of Units, 9th ed., 2019) and
  // 1 Pa = 1 N/m^2: p = rho g h = 1000 kg/m^3 x 9.80665 m/s^2 x 10 m
  // = 98066.5 Pa. The same definition fixes the conventional metre of water,
  // 9.80665 kPa (common practice).
  CHECK_THAT(levelhead::water_column(98.0665, 1000.0, 9.80665), WithinAbs(10.0, 1e-12));
  CHECK_THAT(levelhead::water_column(9.80665, 1000.0, 9.80665), WithinAbs(1.0, 1e-12));
  // Sea water of 1025 kg/m^3 (from memory, a typical density) stands lower
  // for the same pressure: 10 x 1000 / 1025 m.
  CHECK_THAT(levelhead::water_column(98.0665, 1025.0, 9.80665),
             WithinAbs(10.0 * 1000.0 / 1025.0, 1e-12));
}
