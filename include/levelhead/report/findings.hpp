#pragma once
// The findings of a chain run: what a surveyor or hydrogeologist acts on,
// computed once from the stages' results (stage_results.hpp) and shown the
// same, word for word, at the end of `levelhead run` on the console, at the
// top of the report and in run.json.
//
// In:  the results of the stages that ran.
// Out: findings in the order of the chain (field book, loops, adjustment,
//      GNSS, epochs, transducers, heads, flow), each with the stage it comes
//      from, a stable topic key, a level and one sentence. Counts say what
//      they count; long lists name the first few and how many more.
// Errors: none; a stage that did not run gives no finding.

#include <string>
#include <vector>

#include "levelhead/report/stage_results.hpp"

namespace levelhead {

enum class FindingLevel {
  action,      // something to do in the field or the data before relying on the results
  caution,     // a result that rests on less than it seems
  information  // what the run found, no action needed
};
std::string to_string(FindingLevel level);

struct Finding {
  std::string stage;  // reduce, loops, adjust, gnss-check, epochs, transducer, heads, flow
  std::string topic;  // e.g. field-check, loop-closure, blunder, mark-moving, mp-change
  FindingLevel level = FindingLevel::information;
  std::string text;
};

std::vector<Finding> chain_findings(const StageResults& results);

// "[action] text": a finding as the console and the report show it.
std::string finding_line(const Finding& finding);

}  // namespace levelhead
