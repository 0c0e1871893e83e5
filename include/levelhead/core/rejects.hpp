#pragma once
// Records a batch stage sets aside instead of stopping, when the user asks
// for it (--keep-going of `heads` and `transducer`): each bad row is
// written to rejects.csv with the reason and the stage goes on with the
// others; the command then exits with status 4, so the rejects are never
// missed. Without the option the first bad row stops the stage (the
// default).
//
// In:  the InputError a row raised.
// Out: rejects.csv: file, row, column, problem (the full message).
// Errors: none.

#include <ostream>
#include <vector>

#include "levelhead/core/errors.hpp"

namespace levelhead {

struct RejectedRecord {
  CellLocation where;
  std::string problem;
};

inline RejectedRecord rejected_from(const InputError& error) {
  return {error.where(), error.what()};
}

void write_rejects(std::ostream& out, const std::vector<RejectedRecord>& rejects);

}  // namespace levelhead
