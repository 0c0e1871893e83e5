#pragma once
// Heights from one vertical reference to another, through our own references
// (offsets and ties, see references_file.hpp) and PROJ.
//
// A named reference is followed down to the PROJ CRS it is built on; when
// both ends share that CRS (or an intermediate named reference), no PROJ
// operation is used at all. Otherwise: source -> its PROJ CRS -> (PROJ) ->
// target's PROJ CRS -> target. Each step adds its variance; a step whose
// variance is unknown is flagged.
//
// In:  points (x, y in the points' CRS), heights (m).
// Out: converted heights (m), added variance (m^2), the steps taken, flags
//      (outside the hull of a tie's points: extrapolation).
// Errors: ReferenceError (see vertical_reference.hpp), also for a reference
//      chain that loops.

#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "levelhead/core/common_error.hpp"
#include "levelhead/references/references_file.hpp"
#include "levelhead/references/surface_shift.hpp"

namespace levelhead {

struct ConvertedHeight {
  std::optional<double> height;     // m
  double variance_added = 0.0;      // m^2, from the steps whose variance is known (all parts)
  std::vector<CommonError> common;  // the shared parts of variance_added
  // variance_added less its shared parts (m^2): the steps' point-to-point
  // error, e.g. a tie's slope terms away from its centroid.
  double relative_variance_added() const;
  bool variance_complete = true;  // false when some step's variance is unknown
  std::string transform;          // the steps, in order
  std::vector<std::string> flags;
  std::string failure;  // why height is empty
};

// The unit of a reference's heights: the metre for a reference of our own
// (offset, tie, grid), else that of the PROJ CRS it names or aliases.
HeightUnit reference_height_unit(const std::string& reference, const ReferenceSet& references);

class HeightConverter {
 public:
  HeightConverter(const std::string& from, const std::string& to, const std::string& horizontal_crs,
                  const ReferenceSet& references, const ProjSettings& settings,
                  std::optional<double> epoch = std::nullopt);
  ~HeightConverter();

  std::vector<ConvertedHeight> convert(const std::vector<PlanePoint>& points,
                                       const std::vector<double>& heights);

  const std::string& from() const { return from_; }
  const std::string& to() const { return to_; }
  // The PROJ part, when one is needed.
  const VerticalTransformer* proj() const { return proj_.get(); }
  // The CRS the points' x and y are taken in: the horizontal CRS given, else,
  // when PROJ converts between the two ends, the source reference's own CRS
  // (whose horizontal part holds x and y); empty when positions are not used.
  const std::string& points_crs() const { return points_crs_; }
  // Descriptions of the named steps, in order.
  const std::vector<std::string>& step_descriptions() const { return descriptions_; }
  // Grid files of grid references used, with checksums.
  std::vector<GridUse> grids() const;
  // Units of the two ends' heights: metres for our own references, else the
  // PROJ CRS's (the converter itself works in metres throughout).
  const HeightUnit& source_unit() const { return source_unit_; }
  const HeightUnit& target_unit() const { return target_unit_; }

 private:
  struct Step {
    ReferenceDefinition definition;      // a copy: the converter outlives the set it came from
    int direction;                       // +1: to its base, -1: from its base
    std::shared_ptr<SurfaceShift> grid;  // for grid references
  };
  std::string from_, to_, points_crs_;
  std::vector<Step> steps_before_, steps_after_;  // around the PROJ step
  std::unique_ptr<VerticalTransformer> proj_;
  std::vector<std::string> descriptions_;
  HeightUnit source_unit_, target_unit_;
};

}  // namespace levelhead
