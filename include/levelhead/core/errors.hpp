#pragma once
// Typed errors thrown by the levelhead library. Only the CLI turns them into
// messages and exit codes; library code never prints.
//
// InputError      a file, row, column or value the user can fix (exit 1)
// NetworkError    the network's structure: datum defect, unknown point (exit 1)
// ComputationError a computation that cannot give a trustworthy answer (exit 1)
// InternalCheckError a ComputationError from a check of levelhead's own
//                 results (a non-finite number about to be written): a
//                 defect of levelhead, not of the input (exit 1)
// OptionError     an option value outside its allowed range (exit 2 from the CLI)
// OutputError     an output that could not be written (exit 1)
// ReferenceError  a vertical reference that cannot be resolved or converted
//                 honestly: unknown CRS, missing grid, point outside a grid (exit 1)

#include <cstddef>
#include <stdexcept>
#include <string>
#include <vector>

namespace levelhead {

class Error : public std::runtime_error {
 public:
  using std::runtime_error::runtime_error;
};

// Where a bad value was found. Rows are counted as a spreadsheet shows them:
// the header is row 1, the first data row is row 2 (for a CSV without quoted
// line breaks this is also the line number).
struct CellLocation {
  std::string file;
  std::size_t row = 0;  // 0 when the problem is not tied to one row
  std::string column;   // empty when not tied to one column
};

class InputError : public Error {
 public:
  // what: what is wrong and how to fix it; location and value are prefixed.
  InputError(const CellLocation& where, const std::string& value, const std::string& what);
  // A problem with a whole file (missing column, unreadable file).
  InputError(const std::string& file, const std::string& what);

  const CellLocation& where() const noexcept { return where_; }

 private:
  CellLocation where_;
};

class NetworkError : public Error {
 public:
  NetworkError(const std::string& what, std::vector<std::string> point_ids);
  // The points concerned (possibly only the first few of a large set).
  const std::vector<std::string>& point_ids() const noexcept { return point_ids_; }

 private:
  std::vector<std::string> point_ids_;
};

class ComputationError : public Error {
 public:
  using Error::Error;
};

class InternalCheckError : public ComputationError {
 public:
  using ComputationError::ComputationError;
};

class OptionError : public Error {
 public:
  using Error::Error;
};

class OutputError : public Error {
 public:
  using Error::Error;
};

class ReferenceError : public Error {
 public:
  using Error::Error;
};

// "file, row 7, column 'length'" for messages; parts that are unknown are left out.
std::string describe(const CellLocation& where);

}  // namespace levelhead
