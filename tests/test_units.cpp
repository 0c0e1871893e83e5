#include <catch2/catch.hpp>

#include "levelhead/core/errors.hpp"
#include "levelhead/core/units.hpp"

using namespace levelhead;
using Catch::Matchers::Contains;
using Catch::Matchers::WithinAbs;

TEST_CASE("foot definitions are exact and distinct", "[units]") {
  // International foot 0.3048 m exactly (1959 international yard and pound
  // agreement); US survey foot 1200/3937 m (US Federal Register 1959).
  CHECK_THAT(metres_per_unit(LengthUnit::international_foot), WithinAbs(0.3048, 1e-16));
  CHECK_THAT(metres_per_unit(LengthUnit::us_survey_foot), WithinAbs(0.304800609601219, 1e-15));
  // The two differ by 2 ppm: 0.6 mm over 1000 ft, enough to matter for heights.
  CHECK_THAT(1000.0 * (metres_per_unit(LengthUnit::us_survey_foot) -
                       metres_per_unit(LengthUnit::international_foot)),
             WithinAbs(0.000609601, 1e-9));
}

TEST_CASE("unit names parse case-insensitively and unknown ones are refused", "[units]") {
  CHECK(parse_length_unit("M") == LengthUnit::metre);
  CHECK(parse_length_unit(" ft ") == LengthUnit::international_foot);
  CHECK(parse_length_unit("US-FT") == LengthUnit::us_survey_foot);
  CHECK_THROWS_WITH(parse_length_unit("yard"), Contains("yard") && Contains("us-ft"));
  for (LengthUnit u :
       {LengthUnit::metre, LengthUnit::international_foot, LengthUnit::us_survey_foot}) {
    CHECK(parse_length_unit(to_string(u)) == u);
  }
}
