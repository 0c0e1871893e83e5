#pragma once
// The flags a head can carry: one table, read by `heads` (contouring, qa.csv,
// --strict), `transducer` (--strict) and the documentation.
//
// In:  a flag as written in heads.csv, levels.csv or qa.csv. A flag may carry
//      a parameter in parentheses (outside-ties-hull(site-1998)); it is
//      looked up by the part before '('.
// Out: what the flag means and what it does:
//      - excludes_contouring: the head is kept out of contours and the event;
//      - qa: whether qa.csv lists it (once per reading, or with its detail
//        where it is found);
//      - fails_strict: whether --strict exits with status 3 when it occurs.
//      A flag the table does not know (carried from another tool) is a
//      caution: listed in qa.csv and failing --strict, but contoured, unless
//      it ends in "-rejected" (an earlier stage rejected the reading).
// Errors: none.

#include <cstddef>
#include <string_view>
#include <vector>

namespace levelhead {

enum class FlagClass {
  information,  // recorded for the record; changes nothing
  caution,      // needs a look; the head is still used
  rejection     // the head is not used for contours or the event
};

enum class QaListing {
  none,          // heads.csv only
  each_reading,  // one qa.csv line per flagged reading
  with_detail    // one qa.csv line with a detail, where the check finds it
};

struct FlagInfo {
  std::string_view name;
  std::string_view meaning;
  FlagClass kind;
  bool excludes_contouring;
  QaListing qa;
  bool fails_strict;
};

// Every flag levelhead writes on a head or a transducer reading. Order
// matters: a head kept out of contours gives as its reason the first
// rejection flag it carries in this order.
const std::vector<FlagInfo>& head_flags();

// The entry of `flag` (parameter ignored), or the rule for flags the table
// does not know (see the header comment).
FlagInfo flag_info(std::string_view flag);

// The position of `flag` in head_flags() (parameter ignored);
// head_flags().size() for a flag the table does not know.
std::size_t flag_rank(std::string_view flag);

}  // namespace levelhead
