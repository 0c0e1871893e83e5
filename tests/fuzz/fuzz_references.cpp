// Fuzz harness: the references file (TOML) of offset, grid and CRS
// references.
// Checks: every offset relation read gives a finite shift and a finite,
// non-negative variance at its own origin and 1 km away.

#include <cstddef>
#include <cstdint>

#include "fuzz_support.hpp"
#include "levelhead/references/references_file.hpp"

using namespace levelhead;

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  fuzz::accept_typed_errors([&] {
    const ReferenceSet set = ReferenceSet::parse(fuzz::as_text(data, size),
                                                 LEVELHEAD_FIXTURES_DIR "/demo/references.toml");
    for (const auto& [name, definition] : set.definitions()) {
      const OffsetRelation& r = definition.relation;
      for (const double dx : {0.0, 1000.0}) {
        fuzz::require_finite(r.shift(r.x0 + dx, r.y0 + dx), "shift");
        if (const auto variance = r.variance(r.x0 + dx, r.y0 + dx)) {
          fuzz::require_finite(*variance, "variance");
          fuzz::require(*variance >= 0.0, "variance >= 0");
        }
      }
    }
  });
  return 0;
}
