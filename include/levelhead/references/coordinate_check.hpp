#pragma once
// Planar coordinates checked against the CRS they are said to be in.
//
// In:  a table with x and y columns (x = easting or longitude, y = northing
//      or latitude, GIS order) and the CRS the caller takes them in.
// Checks, with PROJ's area of use of the CRS (degrees of longitude and
// latitude, extended by `area_margin_degrees` on every side):
//   - a geographic CRS: |latitude| <= 90 and |longitude| <= 360 (metres in a
//     geographic CRS, or latitude and longitude swapped);
//   - a projected CRS: values that all look like degrees (|x| <= 180,
//     |y| <= 90) while they fall outside the area of use;
//   - every point, brought to longitude and latitude, inside the area of use
//     (x and y swapped, coordinates of another CRS or zone); when swapping x
//     and y would put it inside, the message says so.
// CRSs without an area of use (a local engineering CRS) are not checked.
// Errors: InputError naming the file, row, id and the values, the area and
//      the likely cause; ReferenceError when PROJ does not know the CRS.

#include <string>

#include "levelhead/core/table.hpp"

namespace levelhead {

// Sites near the edge of a zone often stay in the neighbouring zone's CRS
// (common practice); 2 degrees (about 200 km) allows that while a point in
// another zone, hemisphere or CRS is still caught.
inline constexpr double area_margin_degrees = 2.0;

void check_coordinates_in_crs(const Table& table, const std::string& crs);

// A CRS x and y can be taken in: PROJ knows it and it has horizontal axes
// (projected, geographic, or a compound CRS with one of them). Throws
// ReferenceError otherwise.
void require_horizontal_crs(const std::string& crs);

// The CRS must have metres on its horizontal axes (a gradient in m/m needs
// distances in metres): throws OptionError naming `option` otherwise.
void require_metric_plane_crs(const std::string& crs, const std::string& option);

}  // namespace levelhead
