// Fuzz harness: the delimited-text reader (CSV, TSV, semicolons) and the
// typed accessors every stage reads cells with.
// Checks: a parsed table's numbers and heights are finite, its sigmas and
// counts not negative, its dates parse again as ISO 8601; any other failure
// is a typed error.

#include <cstddef>
#include <cstdint>

#include "fuzz_support.hpp"
#include "levelhead/core/table.hpp"
#include "levelhead/core/time.hpp"

using namespace levelhead;

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  fuzz::accept_typed_errors([&] {
    const Table table = parse_delimited_text(fuzz::as_text(data, size), "fuzz.csv");
    // One accessor per cell, taking turns, over the first cells only: every
    // accessor's branches are reached while a refused cell (an exception)
    // costs at most once per cell and large inputs stay fast.
    constexpr std::size_t max_cells = 64;
    const std::size_t columns = table.column_names().size();
    for (std::size_t n = 0; n < max_cells && n < table.row_count() * columns; ++n) {
      const std::size_t row = n / columns, column = n % columns;
      fuzz::accept_typed_errors([&] {
        switch ((row + column) % 5) {
          case 0:
            if (const auto v = table.number(row, column)) fuzz::require_finite(*v, "number");
            break;
          case 1:
            if (const auto v = table.height(row, column)) fuzz::require_finite(*v, "height");
            break;
          case 2:
            if (const auto v = table.sigma(row, column)) fuzz::require(*v >= 0.0, "sigma >= 0");
            break;
          case 3:
            if (const auto v = table.count(row, column)) fuzz::require(*v >= 0, "count >= 0");
            break;
          default:
            if (const auto v = table.date(row, column))
              fuzz::require(parse_iso8601(*v).has_value(), "a date parses again");
        }
      });
    }
  });
  return 0;
}
