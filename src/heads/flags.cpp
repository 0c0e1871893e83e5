#include "levelhead/heads/flags.hpp"

#include <unordered_map>

namespace levelhead {

const std::vector<FlagInfo>& head_flags() {
  using enum FlagClass;
  using enum QaListing;
  static const std::vector<FlagInfo> table = {
      // Rejections first, in the order that gives a reading its reason
      // (the first rejection flag it carries in this order).
      {"pumping", "the well was pumping or recently pumped", rejection, true, each_reading, true},
      {"water-above-mp", "a negative depth without the state flowing", rejection, true,
       each_reading, true},
      {"repeat-disagrees", "repeat readings within the repeat window disagree", rejection, true,
       with_detail, true},
      {"duplicate", "a second reading of the well at the same time", rejection, true, each_reading,
       true},
      {"before-first-survey", "the reading is older than the well's first measuring-point survey",
       rejection, true, each_reading, true},
      // Cautions and information.
      {"mp-interpolated", "the measuring point is interpolated between two surveys", information,
       false, none, false},
      {"mp-motion-extrapolated",
       "the measuring point follows monitored heights beyond their first or last epoch", caution,
       false, each_reading, true},
      {"mp-unchecked",
       "the measuring point rests on levelling nothing checks (a side shot or spur)", caution,
       false, none, true},
      {"mp-sigma-from-method", "the measuring point's sigma comes from its survey method", caution,
       false, each_reading, true},
      {"mp-sigma-unknown", "the measuring point's sigma is not known in full", caution, false, none,
       true},
      {"outside-ties-hull", "the well lies outside the points of the tie it is converted with",
       caution, false, each_reading, true},
      {"water-above-ground", "the head lies above the ground of a well that is not flowing",
       caution, false, each_reading, true},
      {"below-screen-bottom", "the head lies below the bottom of the screen", caution, false,
       each_reading, true},
      {"freshwater-head-needs-screen",
       "a density is known but the well has no ground and screen for the freshwater head", caution,
       false, each_reading, true},
      {"out-of-order", "the reading is older than the one before it in the table", caution, false,
       each_reading, true},
      {"departs-from-history", "the head departs from its well's running median", caution, false,
       with_detail, true},
      // Carried from `transducer`.
      {"transducer-drift-rejected", "the logger's offset drifted beyond the limit", rejection, true,
       each_reading, true},
      {"transducer-range-rejected", "the pressure lies outside the sensor's range", rejection, true,
       each_reading, true},
      {"transducer-dry-rejected", "the sensor was out of the water", rejection, true, each_reading,
       true},
      {"baro-gap", "no barometer sample near the record, so no depth was computed", rejection, true,
       with_detail, true},
      {"transducer-beyond-checks", "before the first or after the last manual check", information,
       false, each_reading, false},
      {"transducer-unchecked", "no manual reading checks this logger", caution, false, each_reading,
       true},
      {"baro-elevation-unchecked", "the well has no ground elevation to check its barometer's",
       information, false, each_reading, false},
  };
  return table;
}

std::size_t flag_rank(std::string_view flag) {
  // Looked up for every flag of every reading: an index by name.
  static const std::unordered_map<std::string_view, std::size_t> index = [] {
    std::unordered_map<std::string_view, std::size_t> by_name;
    for (std::size_t i = 0; i < head_flags().size(); ++i) by_name.emplace(head_flags()[i].name, i);
    return by_name;
  }();
  const auto it = index.find(flag.substr(0, flag.find('(')));
  return it == index.end() ? head_flags().size() : it->second;
}

FlagInfo flag_info(std::string_view flag) {
  const std::size_t rank = flag_rank(flag);
  if (rank < head_flags().size()) return head_flags()[rank];
  const std::string_view name = flag.substr(0, flag.find('('));
  constexpr std::string_view rejected = "-rejected";
  const bool rejects = name.size() > rejected.size() && name.ends_with(rejected);
  return {flag,
          "carried from another stage or tool",
          rejects ? FlagClass::rejection : FlagClass::caution,
          rejects,
          QaListing::each_reading,
          true};
}

}  // namespace levelhead
