#pragma once
// Plausibility bounds on quantities read from tables and options. A value
// beyond them cannot be a measurement on Earth: it is a typing error, a unit
// mix-up (millimetres read as metres) or a corrupted cell, and is refused at
// the edge with its place named, so that no NaN or inf can arise later.
// The bounds are deliberately wide: they catch nonsense, not outliers (the
// statistical tests do that).

namespace levelhead::bounds {

// Heights (m) of any reference, site datums with a large assumed height
// included: ten times the Earth's relief (Everest 8849 m, Mariana trench
// -10935 m, common knowledge).
inline constexpr double max_abs_height = 100'000.0;
// A levelled height difference (m): no section can span more than the
// Earth's relief (about 20 km, as above).
inline constexpr double max_abs_height_difference = 20'000.0;
// Length of a levelling section (m): 1000 km, longer than any line between
// two benchmarks of a national network.
inline constexpr double max_section_length = 1'000'000.0;
// A standard deviation of a height or height difference (m).
inline constexpr double max_sigma = 1'000.0;
// A sight distance, instrument to rod (m); levelling sights are tens of
// metres (common practice), and no rod can be read beyond a kilometre.
inline constexpr double max_sight_distance = 1'000.0;

// A depth to water below a measuring point (m): the deepest water wells
// are about 2 km, monitoring wells far shallower (common practice); a larger
// value is a unit mix-up (millimetres or feet read as metres). The same
// bound in every stage that reads a levels table.
inline constexpr double max_depth_to_water = 1'000.0;

}  // namespace levelhead::bounds
