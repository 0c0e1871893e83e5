// Fuzz harness: ISO 8601 dates and times.
// Checks: a parsed instant is finite, and its UTC text (format_utc) parses
// back to the same second.

#include <cmath>
#include <cstddef>
#include <cstdint>

#include "fuzz_support.hpp"
#include "levelhead/core/time.hpp"

using namespace levelhead;

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const auto instant = parse_iso8601(fuzz::as_text(data, size));
  if (!instant) return 0;
  fuzz::require_finite(instant->seconds, "seconds");
  const double whole = std::floor(instant->seconds);
  const auto again = parse_iso8601(format_utc(whole));
  fuzz::require(again.has_value(), "format_utc's text parses");
  // Whole seconds are exact in a double far beyond year 9999 (2^53 s).
  fuzz::require(std::abs(again->seconds - whole) < 0.5, "format_utc round trip");
  return 0;
}
