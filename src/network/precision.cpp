#include "levelhead/levelling/precision.hpp"

#include <fmt/format.h>

#include <string>

#include "levelhead/core/errors.hpp"
#include "util/text.hpp"

namespace levelhead {

const std::vector<LevellingClass>& levelling_classes() {
  // US Federal Geodetic Control Committee, "Standards and Specifications for
  // Geodetic Control Networks" (1984), vertical control: the standard error
  // b of a height difference between directly connected benchmarks, and the
  // section (forward-backward) and loop closures; values recalled from
  // memory. The closures are specifications, about 6 to 8 standard errors:
  // a loop within them may still fail the adjustment's global test at the
  // class's standard error, and the adjustment then estimates sigma0
  // (adjustment.hpp, Sigma0Use) rather than call good sections blunders.
  static const std::vector<LevellingClass> classes = {
      {"fgcc-first-i", 0.5, 3.0, 4.0, "FGCC 1984, first order class I (from memory)"},
      {"fgcc-first-ii", 0.7, 4.0, 5.0, "FGCC 1984, first order class II (from memory)"},
      {"fgcc-second-i", 1.0, 6.0, 6.0, "FGCC 1984, second order class I (from memory)"},
      {"fgcc-second-ii", 1.3, 8.0, 8.0, "FGCC 1984, second order class II (from memory)"},
      {"fgcc-third", 2.0, 12.0, 12.0, "FGCC 1984, third order (from memory)"},
  };
  return classes;
}

const LevellingClass& find_levelling_class(std::string_view name) {
  const std::string key = util::to_lower(util::trim(name));
  std::vector<std::string_view> names;
  for (const LevellingClass& c : levelling_classes()) {
    if (c.name == key) return c;
    names.push_back(c.name);
  }
  throw OptionError(
      fmt::format("unknown levelling class '{}': use one of {}", name, fmt::join(names, ", ")));
}

const LevellingClass& default_levelling_class() { return levelling_classes().back(); }

}  // namespace levelhead
