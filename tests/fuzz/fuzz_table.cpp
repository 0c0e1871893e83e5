// Fuzz harness: the delimited-text reader (CSV, TSV, semicolons) and the
// typed accessors every stage reads cells with.
// Checks: a parsed table's numbers, lengths and counts are finite; its dates
// parse again as ISO 8601; any other failure is a typed error.

#include <cstddef>
#include <cstdint>

#include "fuzz_support.hpp"
#include "levelhead/table.hpp"
#include "levelhead/time.hpp"

using namespace levelhead;

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  fuzz::accept_typed_errors([&] {
    const Table table = parse_delimited_text(fuzz::as_text(data, size), "fuzz.csv");
    // Enough cells to reach every accessor's branches without making large
    // inputs slow.
    constexpr std::size_t max_cells = 4096;
    std::size_t cells = 0;
    for (std::size_t row = 0; row < table.row_count() && cells < max_cells; ++row) {
      for (std::size_t column = 0; column < table.column_names().size() && cells < max_cells;
           ++column, ++cells) {
        fuzz::accept_typed_errors([&] {
          if (const auto v = table.number(row, column)) fuzz::require_finite(*v, "number");
        });
        fuzz::accept_typed_errors([&] {
          if (const auto v = table.length(row, column)) fuzz::require_finite(*v, "length");
        });
        fuzz::accept_typed_errors([&] {
          if (const auto v = table.count(row, column)) fuzz::require(*v >= 0, "count >= 0");
        });
        fuzz::accept_typed_errors([&] {
          if (const auto v = table.date(row, column))
            fuzz::require(parse_iso8601(*v).has_value(), "a date parses again");
        });
      }
    }
  });
  return 0;
}
