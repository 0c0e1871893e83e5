#pragma once
// One manual water-level reading (a row of the levels table): its depth or
// its state, read by the same rules wherever a levels table is read
// (`heads`, and `transducer`, which passes the table through and uses its
// readings as checks).
//
// In:  the levels table, a row, its depth column and optional status column.
//      depth: m below the measuring point in the table's length unit, a
//      censored value (>12.5 deeper than the tape reached, <0.3 shallower),
//      or a state word; status: a state word or empty. State words are
//      case-insensitive, '_' and ' ' read as '-'.
// Out: LevelValue: the depth in metres, or the state (a word of
//      reading_states(), or deeper-than:X / shallower-than:X with X in m),
//      and the status word.
// Errors: InputError naming the cell: a depth that is neither a number, a
//      censored value nor a state; |depth| beyond max_depth (a unit mix-up);
//      an unknown status; a row with neither a depth nor a state.

#include <cstddef>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "levelhead/core/table.hpp"

namespace levelhead {

// The states a reading can carry instead of a depth; the one list for
// parsing, outputs and docs.
const std::vector<std::string>& reading_states();

// "Recently pumped" -> "recently-pumped".
std::string normalise_state(std::string_view text);

struct LevelValue {
  std::optional<double> depth;  // m below the measuring point
  std::string state;            // from the depth cell, when it is not a number
  std::string status;           // from the status column
};

LevelValue read_level_value(const Table& table, std::size_t row, std::size_t depth_column,
                            std::optional<std::size_t> status_column, double max_depth);

}  // namespace levelhead
