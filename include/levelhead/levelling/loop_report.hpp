#pragma once
// Outputs of `levelhead loops`, written all-or-nothing into one folder.
//
// loops.csv     loop (1-based), points (ids joined by '>', first repeated at
//               the end), length (m), misclosure (m), tolerance (m), passed
//               (yes/no), sections (count), ratio (|misclosure| / tolerance),
//               shared_with_failing (sections also in other failing loops:
//               "from>to@loops 2 5;...").
// summary.json  counts (sections, points, parts, loops, failed), tolerance,
//               failed loops, unchecked sections, single observations.

#include <filesystem>
#include <string>

#include "levelhead/levelling/loops.hpp"

namespace levelhead {

void write_loop_outputs(const Network& network, const LoopResult& result,
                        const std::filesystem::path& folder);

std::string loop_summary_text(const Network& network, const LoopResult& result);

}  // namespace levelhead
