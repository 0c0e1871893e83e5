// Fuzz harness: the levelling field book, read and reduced with the default
// options (levelhead/levelling/fieldbook.hpp).
// Checks: every reduced setup, section and run closure is finite.

#include <cstddef>
#include <cstdint>

#include "fuzz_support.hpp"
#include "levelhead/core/table.hpp"
#include "levelhead/levelling/fieldbook.hpp"

using namespace levelhead;

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  fuzz::accept_typed_errors([&] {
    const Table table = parse_delimited_text(fuzz::as_text(data, size), "fieldbook.csv");
    const FieldBookResult result = reduce_field_book(read_field_book(table), FieldBookOptions{});
    for (const SetupReduction& s : result.setups) fuzz::require_finite(s.dh, "setup dh");
    for (const ReducedSection& s : result.sections) {
      fuzz::require_finite(s.dh, "section dh");
      if (s.length) fuzz::require_finite(*s.length, "section length");
    }
    for (const RunClosure& c : result.closures) fuzz::require_finite(c.misclosure, "misclosure");
  });
  return 0;
}
