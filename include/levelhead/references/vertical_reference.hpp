#pragma once
// Height conversion between vertical references known to PROJ.
//
// In:  a source and a target reference: any vertical CRS (e.g. EPSG:5703),
//      compound CRS (e.g. EPSG:4326+5773) or geographic 3D CRS with
//      ellipsoidal heights (e.g. EPSG:4979), as an EPSG code, WKT or
//      PROJJSON; the horizontal CRS of the points (x = easting or longitude,
//      y = northing or latitude, whatever the CRS's axis order); points and
//      their heights in metres.
// Out: per point the converted height in metres, the operation used, or the
//      reason it could not be converted.
// Honesty: ballpark operations (no geoid or grid applied) are never used.
//      When no operation can run because grids are missing, a ReferenceError
//      names the grids PROJ wanted and the folders it searched. A point
//      outside every usable operation's extent (or grid) fails on its own,
//      named by the caller. A dynamic CRS needs an epoch.
// Units: metres in and out; a CRS whose heights are in feet is handled in
//      metres inside (PROJ 9.1 mixes units in some foot cases, OSGeo/PROJ#3938).

#include <cmath>
#include <cstddef>
#include <filesystem>
#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "levelhead/core/units.hpp"

namespace levelhead {

struct ProjSettings {
  std::vector<std::filesystem::path> grid_paths;  // searched before PROJ_DATA
  bool allow_network = false;                     // PROJ's CDN for missing grids
};

struct GridUse {
  std::string name;    // as PROJ names it
  std::string path;    // where it was found; empty if missing
  std::string sha256;  // of the file, when found
};

struct OperationRecord {
  std::string name;
  std::string pipeline;            // PROJ string
  std::optional<double> accuracy;  // m, when PROJ knows it
  std::vector<GridUse> grids;
  std::size_t points = 0;  // points converted with it
};

struct ReferenceInfo {
  std::string definition;  // as given
  std::string name;        // PROJ's name of the CRS
  std::string unit;        // native height unit name
  double metres_per_unit = 1.0;
  bool dynamic = false;
};

// The unit of a PROJ CRS's heights: its vertical axis (the third axis of a
// geographic 3D CRS), and, when that is not the metre, the EPSG CRS of the
// same datum in metres if PROJ can identify one (e.g. EPSG:6360, NAVD88 in
// US survey feet -> EPSG:5703). Throws ReferenceError when `definition` is
// not a CRS with heights.
struct HeightUnit {
  std::string name = "metre";
  double metres_per_unit = 1.0;
  std::string metre_equivalent;  // "EPSG:5703"; empty when metric or none is known
  // PROJ gives the metre as exactly 1; the tolerance only guards rounding.
  bool metric() const { return std::abs(metres_per_unit - 1.0) < 1e-12; }
};
HeightUnit height_unit_of(const std::string& definition);

// A CRS as a person reads it, for reports: "NAVD88 height (EPSG:5703),
// metre"; for a compound CRS the unit of its vertical part. nullopt when PROJ
// does not know the definition (e.g. a reference of a references file).
std::optional<std::string> describe_crs(const std::string& definition);

// When heights labelled with `reference` (whose unit is `unit`) come from a
// table read in `table_unit` and the reference is in feet of another kind,
// the numbers are off by a factor: the message saying so and how to fix it;
// nullopt when they agree (a table in feet with a metre reference is taken
// as declared).
std::optional<std::string> table_unit_mismatch(const HeightUnit& unit, const std::string& reference,
                                               LengthUnit table_unit);

struct PlanePoint {
  double x = 0.0, y = 0.0;
};

struct PointConversion {
  std::optional<double> height;          // m, in the target reference
  std::optional<std::size_t> operation;  // index into operations()
  std::string failure;                   // why not, when height is empty
};

class VerticalTransformer {
 public:
  // horizontal_crs empty: the source reference's own horizontal CRS (it must
  // be compound or geographic 3D). epoch: decimal year, required when either
  // reference is dynamic.
  VerticalTransformer(const std::string& from, const std::string& to,
                      const std::string& horizontal_crs, const ProjSettings& settings,
                      std::optional<double> epoch = std::nullopt);
  ~VerticalTransformer();
  VerticalTransformer(const VerticalTransformer&) = delete;
  VerticalTransformer& operator=(const VerticalTransformer&) = delete;

  const ReferenceInfo& source() const;
  const ReferenceInfo& target() const;

  // heights in metres in the source reference; one result per point.
  std::vector<PointConversion> convert(const std::vector<PlanePoint>& points,
                                       const std::vector<double>& heights);

  const std::vector<OperationRecord>& operations() const;
  // Notes such as a more accurate operation that needs a grid not installed.
  const std::vector<std::string>& warnings() const;

  struct Impl;  // PROJ state of one context (public name for the helpers in the .cpp)

 private:
  std::unique_ptr<Impl> impl_;
};

// PROJ and its database, for provenance: "PROJ 9.1.1, EPSG v10.076".
std::string proj_version_text();

}  // namespace levelhead
