#include "levelhead/core/units.hpp"

#include <algorithm>
#include <array>
#include <cmath>
#include <utility>

#include "levelhead/core/errors.hpp"
#include "util/text.hpp"

namespace levelhead {

namespace {
// The one list of unit names shared by CLI, tables and reports.
constexpr std::array<std::pair<std::string_view, LengthUnit>, 9> unit_names{{
    {"m", LengthUnit::metre},
    {"metre", LengthUnit::metre},
    {"meter", LengthUnit::metre},
    {"ft", LengthUnit::international_foot},
    {"foot", LengthUnit::international_foot},
    {"feet", LengthUnit::international_foot},
    {"international-foot", LengthUnit::international_foot},
    {"us-ft", LengthUnit::us_survey_foot},
    {"us-survey-foot", LengthUnit::us_survey_foot},
}};
}  // namespace

double metres_per_unit(LengthUnit unit) {
  switch (unit) {
    case LengthUnit::metre:
      return 1.0;
    case LengthUnit::international_foot:
      return metres_per_international_foot;
    case LengthUnit::us_survey_foot:
      return metres_per_us_survey_foot;
  }
  throw std::logic_error("unhandled LengthUnit");
}

LengthUnit parse_length_unit(std::string_view text) {
  const std::string key = util::to_lower(util::trim(text));
  for (const auto& [name, unit] : unit_names) {
    if (key == name) return unit;
  }
  throw OptionError("unknown length unit '" + std::string(text) +
                    "': use m, ft (international foot, 0.3048 m) or us-ft (US survey foot, "
                    "1200/3937 m)");
}

std::string to_string(LengthUnit unit) {
  switch (unit) {
    case LengthUnit::metre:
      return "m";
    case LengthUnit::international_foot:
      return "ft";
    case LengthUnit::us_survey_foot:
      return "us-ft";
  }
  throw std::logic_error("unhandled LengthUnit");
}

std::string unit_label(LengthUnit unit) {
  return unit == LengthUnit::us_survey_foot ? "US ft" : to_string(unit);
}

std::optional<LengthUnit> length_unit_of(double metres) {
  // The three definitions differ by far more than the 1e-12 of rounding.
  for (const LengthUnit unit :
       {LengthUnit::metre, LengthUnit::international_foot, LengthUnit::us_survey_foot}) {
    if (std::abs(metres - metres_per_unit(unit)) < 1e-12) return unit;
  }
  return std::nullopt;
}

}  // namespace levelhead
