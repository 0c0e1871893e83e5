#include "levelhead/references/height_converter.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>

#include "levelhead/core/errors.hpp"

namespace levelhead {

double ConvertedHeight::relative_variance_added() const {
  // The shared parts are terms of the sum: what is left is >= 0 up to rounding.
  return std::max(variance_added - total_variance(common), 0.0);
}

namespace {

struct Chain {
  std::vector<const ReferenceDefinition*> steps;  // offsets from the reference down to root
  std::string root;                               // a PROJ CRS
};

Chain follow(const std::string& name, const ReferenceSet& references) {
  Chain chain;
  std::string current = name;
  for (int depth = 0;; ++depth) {
    if (depth > 32) {
      throw ReferenceError(fmt::format("reference '{}' is defined in a loop of bases", name));
    }
    const ReferenceDefinition* d = references.find(current);
    if (!d) {
      chain.root = current;
      return chain;
    }
    if (d->kind == ReferenceDefinition::Kind::crs) {
      chain.root = d->definition;
      return chain;
    }
    chain.steps.push_back(d);
    current = d->base;
  }
}

std::string describe(const ReferenceDefinition& d, int direction) {
  const OffsetRelation& r = d.relation;
  if (d.kind == ReferenceDefinition::Kind::vertoffset) {
    return fmt::format("{} -> {}: offset and slope (EPSG 1046), {:.4f} m{}",
                       direction > 0 ? d.name : d.base, direction > 0 ? d.base : d.name,
                       d.offset_slope.offset, d.source.empty() ? "" : " (" + d.source + ")");
  }
  if (d.kind == ReferenceDefinition::Kind::grid) {
    return fmt::format(
        "{} -> {}: grid {}{}{}", direction > 0 ? d.name : d.base, direction > 0 ? d.base : d.name,
        d.grid.filename().string(),
        std::abs(d.grid_multiplier - 1.0) < 1e-12 ? "" : fmt::format(" x {:g}", d.grid_multiplier),
        d.source.empty() ? "" : " (" + d.source + ")");
  }
  const bool sloped = std::abs(r.slope_x) > 0.0 || std::abs(r.slope_y) > 0.0;
  return fmt::format("{} {} {}: offset {:.4f} m{}{}", direction > 0 ? d.name : d.base, "->",
                     direction > 0 ? d.base : d.name, r.offset, sloped ? " with slope" : "",
                     d.source.empty() ? "" : " (" + d.source + ")");
}

}  // namespace

HeightUnit reference_height_unit(const std::string& reference, const ReferenceSet& references) {
  const Chain chain = follow(reference, references);
  return chain.steps.empty() ? height_unit_of(chain.root) : HeightUnit{};
}

HeightConverter::HeightConverter(const std::string& from, const std::string& to,
                                 const std::string& horizontal_crs, const ReferenceSet& references,
                                 const ProjSettings& settings, std::optional<double> epoch)
    : from_(from),
      to_(to),
      source_unit_(reference_height_unit(from, references)),
      target_unit_(reference_height_unit(to, references)) {
  Chain a = follow(from, references);
  Chain b = follow(to, references);
  // Drop the common part below the lowest shared reference.
  while (a.root == b.root && !a.steps.empty() && !b.steps.empty() &&
         a.steps.back() == b.steps.back()) {
    a.steps.pop_back();
    b.steps.pop_back();
  }
  const auto make_step = [&](const ReferenceDefinition* d, int direction) {
    Step step{*d, direction, nullptr};
    if (d->kind == ReferenceDefinition::Kind::grid) {
      try {
        step.grid = std::make_shared<SurfaceShift>(d->grid, horizontal_crs, settings);
      } catch (const ReferenceError& e) {
        // Name where the grid was given, so the user knows which file to fix.
        throw ReferenceError(fmt::format("{}: reference '{}': {}", d->file, d->name, e.what()));
      }
    } else if (d->kind == ReferenceDefinition::Kind::vertoffset) {
      step.grid = std::make_shared<SurfaceShift>(d->offset_slope, horizontal_crs, settings);
    }
    return step;
  };
  for (const ReferenceDefinition* d : a.steps) steps_before_.push_back(make_step(d, +1));
  for (auto it = b.steps.rbegin(); it != b.steps.rend(); ++it) {
    steps_after_.push_back(make_step(*it, -1));
  }
  for (const std::vector<Step>* steps : {&steps_before_, &steps_after_}) {
    for (const Step& s : *steps) {
      const std::string& crs = s.definition.relation.crs;
      if (!crs.empty() && !horizontal_crs.empty() && crs != horizontal_crs) {
        throw ReferenceError(
            fmt::format("reference '{}' ({}) is defined with x, y in {}; give the "
                        "points in that CRS (--crs {})",
                        s.definition.name, s.definition.file, crs, crs));
      }
    }
  }
  for (const Step& s : steps_before_) descriptions_.push_back(describe(s.definition, +1));
  if (a.root != b.root) {
    proj_ = std::make_unique<VerticalTransformer>(a.root, b.root, horizontal_crs, settings, epoch);
  }
  points_crs_ = !horizontal_crs.empty() ? horizontal_crs : proj_ ? a.root : std::string();
  for (const Step& s : steps_after_) descriptions_.push_back(describe(s.definition, -1));
}

HeightConverter::~HeightConverter() = default;

std::vector<GridUse> HeightConverter::grids() const {
  std::vector<GridUse> out;
  for (const std::vector<Step>* steps : {&steps_before_, &steps_after_}) {
    for (const Step& s : *steps) {
      if (s.grid && !s.grid->grid().name.empty()) out.push_back(s.grid->grid());
    }
  }
  return out;
}

std::vector<ConvertedHeight> HeightConverter::convert(const std::vector<PlanePoint>& points,
                                                      const std::vector<double>& heights) {
  std::vector<ConvertedHeight> out(points.size());
  std::vector<double> current(heights);
  const auto apply = [&](const std::vector<Step>& steps) {
    for (const Step& s : steps) {
      const OffsetRelation& r = s.definition.relation;
      std::vector<std::optional<double>> grid_values;
      if (s.grid) grid_values = s.grid->values(points);
      for (std::size_t i = 0; i < points.size(); ++i) {
        ConvertedHeight& c = out[i];
        if (s.grid) {
          if (!grid_values[i]) {
            if (c.failure.empty()) {
              c.failure = fmt::format("outside grid {} of reference '{}' (or on a nodata node)",
                                      s.grid->grid().name, s.definition.name);
            }
            continue;
          }
          const double scale = s.definition.kind == ReferenceDefinition::Kind::grid
                                   ? s.definition.grid_multiplier
                                   : 1.0;
          current[i] += s.direction * scale * *grid_values[i];
        } else {
          current[i] += s.direction * r.shift(points[i].x, points[i].y);
        }
        const auto variance = r.variance(points[i].x, points[i].y);
        if (variance) {
          c.variance_added += *variance;
          if (*r.common_variance() > 0.0)
            c.common.push_back({"reference " + s.definition.name, *r.common_variance()});
        } else {
          c.variance_complete = false;
        }
        if (!r.inside_hull(points[i].x, points[i].y)) {
          c.flags.push_back(fmt::format("outside-ties-hull({})", s.definition.name));
        }
      }
    }
  };
  apply(steps_before_);
  std::vector<PointConversion> proj_results;
  if (proj_) proj_results = proj_->convert(points, current);
  for (std::size_t i = 0; i < points.size(); ++i) {
    if (!proj_) continue;
    if (!proj_results[i].height) {
      if (out[i].failure.empty()) out[i].failure = proj_results[i].failure;
      continue;
    }
    current[i] = *proj_results[i].height;
  }
  apply(steps_after_);

  for (std::size_t i = 0; i < points.size(); ++i) {
    ConvertedHeight& c = out[i];
    if (!c.failure.empty()) continue;
    c.height = current[i];
    std::vector<std::string> parts;
    for (std::size_t k = 0; k < steps_before_.size(); ++k) parts.push_back(descriptions_[k]);
    if (proj_) {
      const OperationRecord& op = proj_->operations()[*proj_results[i].operation];
      parts.push_back(op.name);
      if (op.accuracy) {
        c.variance_added += *op.accuracy * *op.accuracy;
        if (*op.accuracy > 0.0)
          c.common.push_back({"operation " + op.name, *op.accuracy * *op.accuracy});
      } else {
        c.variance_complete = false;
      }
    }
    for (std::size_t k = steps_before_.size(); k < descriptions_.size(); ++k) {
      parts.push_back(descriptions_[k]);
    }
    c.transform =
        parts.empty() ? std::string("identity") : fmt::format("{}", fmt::join(parts, "; "));
  }
  return out;
}

}  // namespace levelhead
