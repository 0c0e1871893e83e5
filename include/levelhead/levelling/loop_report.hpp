#pragma once
// Outputs of `levelhead loops`, written all-or-nothing into one folder.
//
// loops.csv     loop (1-based), points (ids joined by '>', first repeated at
//               the end), length (m), misclosure (m), tolerance (m), passed
//               (yes/no), sections (count), ratio (|misclosure| / tolerance),
//               shared_with_failing (sections also in other failing loops:
//               "from>to@loops 2 5;...").
// unchecked_sections.csv  from, to, row (of the sections table), in_loop
//               (no: no loop checks it), observed_once (yes: no other
//               observation joins the same points): every section a blunder
//               could hide in.
// summary.json  counts (sections, points, parts, loops, failed, unchecked
//               sections, single observations), tolerance, failed loops.
//               The lists are in unchecked_sections.csv: at a million
//               sections they would make the summary hundreds of MB.

#include <filesystem>
#include <string>

#include "levelhead/levelling/loops.hpp"

namespace levelhead {

void write_loop_outputs(const Network& network, const LoopResult& result,
                        const std::filesystem::path& folder);

std::string loop_summary_text(const Network& network, const LoopResult& result);

}  // namespace levelhead
