#pragma once
// The precision of levelling, set once for a survey: one named class gives
// the standard error the field-book checks, the loop tolerance and the
// adjustment's weights all assume, so that data which meet the class pass
// every stage alike.
//
// In:  a class name (case-insensitive), e.g. "fgcc-third".
// Out: its standard error of a one-way levelled height difference
//      (mm/sqrt(km)), the weights of the adjustment and the epochs; its
//      section closure (forward/backward runs, mm/sqrt(km)) for the field
//      book; its loop closure (mm/sqrt(km)) for the loops.
// Errors: OptionError naming the classes for an unknown name.

#include <string_view>
#include <vector>

namespace levelhead {

struct LevellingClass {
  std::string_view name;
  double sigma_mm_per_sqrt_km;            // standard error: weights of the adjustment
  double section_closure_mm_per_sqrt_km;  // forward and backward runs of a section
  double loop_closure_mm_per_sqrt_km;     // misclosure of a loop
  std::string_view source;
};

const std::vector<LevellingClass>& levelling_classes();

// Throws OptionError listing the names.
const LevellingClass& find_levelling_class(std::string_view name);

// The class every stage assumes unless told otherwise: fgcc-third.
const LevellingClass& default_levelling_class();

}  // namespace levelhead
