#pragma once
// Validation of numeric options, with messages that name the option, its
// value and the rule broken.

#include <fmt/format.h>

#include <cmath>

#include "levelhead/core/errors.hpp"

namespace levelhead::util {

inline void require_positive(double value, const char* name, const char* unit) {
  if (!(value > 0.0) || !std::isfinite(value)) {
    throw OptionError(fmt::format("{} = {}{}{}: must be a finite number > 0", name, value,
                                  *unit ? " " : "", unit));
  }
}

}  // namespace levelhead::util
