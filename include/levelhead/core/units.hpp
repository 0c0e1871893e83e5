#pragma once
// Length units accepted at the edges of the program. Inside levelhead every
// height, height difference, sigma and length is in metres.

#include <optional>
#include <string>
#include <string_view>

namespace levelhead {

enum class LengthUnit { metre, international_foot, us_survey_foot };

// Exact definitions: international foot = 0.3048 m (1959 agreement);
// US survey foot = 1200/3937 m (US Federal Register, 1959; retired 2022 but
// still found in older surveys).
inline constexpr double metres_per_international_foot = 0.3048;
inline constexpr double metres_per_us_survey_foot = 1200.0 / 3937.0;

double metres_per_unit(LengthUnit unit);

// Accepted spellings (case-insensitive): m, metre, meter; ft, foot, feet,
// international-foot; us-ft, ftus, us-survey-foot. Throws OptionError listing
// them otherwise.
LengthUnit parse_length_unit(std::string_view text);
std::string to_string(LengthUnit unit);
// The unit as a person reads it beside a number: "m", "ft", "US ft".
std::string unit_label(LengthUnit unit);

// The unit of that many metres (as a CRS states its axis unit); nullopt for
// any other unit.
std::optional<LengthUnit> length_unit_of(double metres_per_unit);

}  // namespace levelhead
