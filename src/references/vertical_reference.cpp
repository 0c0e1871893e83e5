#include "levelhead/references/vertical_reference.hpp"

#include <fmt/format.h>
#include <proj.h>
#include <proj_experimental.h>

#include <algorithm>
#include <cmath>
#include <thread>

#include "levelhead/core/checksums.hpp"
#include "levelhead/core/errors.hpp"
#include "levelhead/core/input_files.hpp"
#include "references/proj_handles.hpp"

namespace levelhead {

namespace {

using proj::ContextPtr;
using proj::PjPtr;

std::vector<std::string> split_paths(const char* text) {
  std::vector<std::string> out;
  if (!text) return out;
  std::string item;
  for (const char* c = text; *c; ++c) {
    if (*c == ';' || *c == ':') {
      if (!item.empty()) out.push_back(item);
      item.clear();
    } else {
      item.push_back(*c);
    }
  }
  if (!item.empty()) out.push_back(item);
  return out;
}

bool is_dynamic(PJ_CONTEXT* ctx, const PJ* crs) {
  PjPtr datum(proj_crs_get_datum_forced(ctx, crs));
  if (!datum) return false;
  const PJ_TYPE type = proj_get_type(datum.get());
  return type == PJ_TYPE_DYNAMIC_GEODETIC_REFERENCE_FRAME ||
         type == PJ_TYPE_DYNAMIC_VERTICAL_REFERENCE_FRAME;
}

struct AxisUnit {
  std::string name = "metre";
  double metres = 1.0;
};

AxisUnit axis_unit(PJ_CONTEXT* ctx, const PJ* crs, int axis) {
  PjPtr cs(proj_crs_get_coordinate_system(ctx, crs));
  AxisUnit unit;
  const char* name = nullptr;
  if (cs && proj_cs_get_axis_info(ctx, cs.get(), axis, nullptr, nullptr, nullptr, &unit.metres,
                                  &name, nullptr, nullptr)) {
    unit.name = name ? name : "";
  }
  return unit;
}

// The EPSG vertical CRS of the same datum with heights in metres, if any.
// PROJ's identification matches by name, so the database's vertical CRSs
// are searched by datum instead (a few hundred; only on the error path).
std::string metre_crs_of_datum(PJ_CONTEXT* ctx, const PJ* vertical) {
  PjPtr datum(proj_crs_get_datum(ctx, vertical));
  if (!datum || !proj_get_id_code(datum.get(), 0)) return {};
  const std::string wanted =
      fmt::format("{}:{}", proj_get_id_auth_name(datum.get(), 0), proj_get_id_code(datum.get(), 0));
  PROJ_CRS_LIST_PARAMETERS* params = proj_get_crs_list_parameters_create();
  const PJ_TYPE types[] = {PJ_TYPE_VERTICAL_CRS};
  params->types = types;
  params->typesCount = 1;
  int count = 0;
  PROJ_CRS_INFO** infos = proj_get_crs_info_list_from_database(ctx, "EPSG", params, &count);
  proj_get_crs_list_parameters_destroy(params);
  std::string found;
  for (int k = 0; k < count && found.empty(); ++k) {
    if (infos[k]->deprecated) continue;
    const std::string code = fmt::format("{}:{}", infos[k]->auth_name, infos[k]->code);
    PjPtr candidate(proj_create(ctx, code.c_str()));
    if (!candidate) continue;
    PjPtr candidate_datum(proj_crs_get_datum(ctx, candidate.get()));
    if (!candidate_datum || !proj_get_id_code(candidate_datum.get(), 0)) continue;
    const std::string datum_code =
        fmt::format("{}:{}", proj_get_id_auth_name(candidate_datum.get(), 0),
                    proj_get_id_code(candidate_datum.get(), 0));
    if (datum_code != wanted) continue;
    if (std::abs(axis_unit(ctx, candidate.get(), 0).metres - 1.0) < 1e-12) found = code;
  }
  proj_crs_info_list_destroy(infos);
  return found;
}

// A CRS in three dimensions whose heights are in metres, with its
// horizontal part (what the points' x, y must be transformed into).
struct Crs3d {
  PjPtr crs, horizontal;
  ReferenceInfo info;
};

}  // namespace

struct VerticalTransformer::Impl {
  ContextPtr ctx{proj::make_context()};
  PjPtr points_crs;  // the points' horizontal CRS
  Crs3d source, target;
  PjPtr to_source_plane, to_lonlat;  // horizontal transforms of the points
  struct Candidate {
    PjPtr operation;
    double west = -180, south = -90, east = 180, north = 90;
    bool has_area = false;
  };
  std::vector<Candidate> candidates;
  std::vector<OperationRecord> records;
  std::vector<std::string> warnings;
  double epoch = HUGE_VAL;

  PjPtr create_crs(const std::string& text, const char* role) {
    PjPtr crs(proj_create(ctx.get(), text.c_str()));
    if (!crs || !proj_is_crs(crs.get())) {
      throw ReferenceError(fmt::format(
          "{} '{}' is not a coordinate reference system PROJ knows ({}); give an EPSG code such "
          "as EPSG:5703, a compound code such as EPSG:4326+5773, WKT or PROJJSON",
          role, text, proj::message(ctx.get())));
    }
    return crs;
  }

  PjPtr metre_heights(PJ* vertical, const std::string& text) {
    const AxisUnit unit = axis_unit(ctx.get(), vertical, 0);
    if (std::abs(unit.metres - 1.0) < 1e-15) return PjPtr(proj_clone(ctx.get(), vertical));
    PjPtr metric(proj_crs_alter_cs_linear_unit(ctx.get(), vertical, "metre", 1.0, "EPSG", "9001"));
    if (!metric) {
      throw ReferenceError(fmt::format("cannot express the heights of '{}' in metres: {}", text,
                                       proj::message(ctx.get())));
    }
    return metric;
  }

  Crs3d resolve(const std::string& text, const char* role) {
    PjPtr crs = create_crs(text, role);
    Crs3d out;
    out.info.definition = text;
    out.info.name = proj_get_name(crs.get()) ? proj_get_name(crs.get()) : text;
    out.info.dynamic = is_dynamic(ctx.get(), crs.get());
    switch (proj_get_type(crs.get())) {
      case PJ_TYPE_VERTICAL_CRS: {
        const AxisUnit unit = axis_unit(ctx.get(), crs.get(), 0);
        out.info.unit = unit.name;
        out.info.metres_per_unit = unit.metres;
        PjPtr vertical = metre_heights(crs.get(), text);
        out.horizontal.reset(proj_clone(ctx.get(), points_crs.get()));
        out.crs.reset(proj_create_compound_crs(ctx.get(), "levelhead source", points_crs.get(),
                                               vertical.get()));
        break;
      }
      case PJ_TYPE_COMPOUND_CRS: {
        PjPtr horizontal(proj_crs_get_sub_crs(ctx.get(), crs.get(), 0));
        PjPtr vertical(proj_crs_get_sub_crs(ctx.get(), crs.get(), 1));
        const AxisUnit unit = axis_unit(ctx.get(), vertical.get(), 0);
        out.info.unit = unit.name;
        out.info.metres_per_unit = unit.metres;
        out.info.dynamic = out.info.dynamic || is_dynamic(ctx.get(), horizontal.get()) ||
                           is_dynamic(ctx.get(), vertical.get());
        PjPtr metric = metre_heights(vertical.get(), text);
        out.crs.reset(proj_create_compound_crs(ctx.get(), out.info.name.c_str(), horizontal.get(),
                                               metric.get()));
        out.horizontal = std::move(horizontal);
        break;
      }
      case PJ_TYPE_GEOGRAPHIC_3D_CRS: {
        const AxisUnit unit = axis_unit(ctx.get(), crs.get(), 2);
        out.info.unit = unit.name;
        out.info.metres_per_unit = unit.metres;
        if (std::abs(unit.metres - 1.0) > 1e-15) {
          throw ReferenceError(
              fmt::format("{} '{}': ellipsoidal heights in {} are not supported; "
                          "use the metre version of this CRS",
                          role, text, unit.name));
        }
        out.horizontal.reset(proj_crs_demote_to_2D(ctx.get(), nullptr, crs.get()));
        out.crs = std::move(crs);
        break;
      }
      default:
        throw ReferenceError(fmt::format(
            "{} '{}' ({}) has no heights: give a vertical CRS (e.g. EPSG:5703), a compound CRS "
            "(e.g. EPSG:4326+5773) or a geographic 3D CRS with ellipsoidal heights (e.g. "
            "EPSG:4979)",
            role, text, out.info.name));
    }
    if (!out.crs || !out.horizontal) {
      throw ReferenceError(fmt::format("cannot build a 3D CRS from {} '{}': {}", role, text,
                                       proj::message(ctx.get())));
    }
    return out;
  }

  PjPtr horizontal_transform(const PJ* from, const PJ* to) {
    PjPtr raw(proj_create_crs_to_crs_from_pj(ctx.get(), from, to, nullptr, nullptr));
    if (!raw) {
      throw ReferenceError(
          fmt::format("PROJ cannot transform the points' coordinates from '{}' "
                      "to '{}': {}",
                      proj_get_name(from), proj_get_name(to), proj::message(ctx.get())));
    }
    return PjPtr(proj_normalize_for_visualization(ctx.get(), raw.get()));
  }

  struct Arguments {
    std::string from, to, horizontal;
    ProjSettings settings;
    std::optional<double> epoch;
  } arguments;
  std::vector<std::unique_ptr<Impl>> workers;  // one per extra thread, built on first use

  void find_operations(bool provenance) {
    PJ_OPERATION_FACTORY_CONTEXT* factory =
        proj_create_operation_factory_context(ctx.get(), nullptr);
    proj_operation_factory_context_set_allow_ballpark_transformations(ctx.get(), factory, 0);
    proj_operation_factory_context_set_spatial_criterion(
        ctx.get(), factory, PROJ_SPATIAL_CRITERION_PARTIAL_INTERSECTION);
    proj_operation_factory_context_set_grid_availability_use(
        ctx.get(), factory, PROJ_GRID_AVAILABILITY_USED_FOR_SORTING);
    PJ_OBJ_LIST* list =
        proj_create_operations(ctx.get(), source.crs.get(), target.crs.get(), factory);
    proj_operation_factory_context_destroy(factory);
    const int count = list ? proj_list_get_count(list) : 0;

    std::vector<std::string> missing_grids;
    std::string best_missing;
    for (int i = 0; i < count; ++i) {
      PjPtr op(proj_list_get(ctx.get(), list, i));
      if (!op || proj_coordoperation_has_ballpark_transformation(ctx.get(), op.get())) continue;
      OperationRecord record;
      record.name = proj_get_name(op.get()) ? proj_get_name(op.get()) : "unnamed operation";
      const double accuracy = proj_coordoperation_get_accuracy(ctx.get(), op.get());
      if (accuracy >= 0.0) record.accuracy = accuracy;
      std::vector<std::string> absent;
      for (int g = 0; g < proj_coordoperation_get_grid_used_count(ctx.get(), op.get()); ++g) {
        const char *short_name = nullptr, *full_name = nullptr;
        int available = 0;
        proj_coordoperation_get_grid_used(ctx.get(), op.get(), g, &short_name, &full_name, nullptr,
                                          nullptr, nullptr, nullptr, &available);
        GridUse grid{short_name ? short_name : "", full_name ? full_name : "", ""};
        if (!available || grid.path.empty()) {
          absent.push_back(grid.name);
          grid.path.clear();
        }
        record.grids.push_back(grid);
      }
      if (!proj_coordoperation_is_instantiable(ctx.get(), op.get()) || !absent.empty()) {
        for (const auto& g : absent) {
          if (std::find(missing_grids.begin(), missing_grids.end(), g) == missing_grids.end()) {
            missing_grids.push_back(g);
          }
        }
        if (candidates.empty() && best_missing.empty()) {
          best_missing = fmt::format(
              "'{}'{} needs grid(s) {}", record.name,
              record.accuracy ? fmt::format(" (accuracy {} m)", *record.accuracy) : std::string(),
              fmt::join(absent, ", "));
        }
        continue;
      }
      if (provenance) {
        for (GridUse& grid : record.grids) grid.sha256 = file_sha256(grid.path);
      }
      const char* pipeline = proj_as_proj_string(ctx.get(), op.get(), PJ_PROJ_5, nullptr);
      record.pipeline = pipeline ? pipeline : "";
      Candidate c;
      const char* area_name = nullptr;
      c.has_area = proj_get_area_of_use(ctx.get(), op.get(), &c.west, &c.south, &c.east, &c.north,
                                        &area_name) &&
                   c.west > -1000.0;
      c.operation.reset(proj_normalize_for_visualization(ctx.get(), op.get()));
      if (!c.operation) continue;
      candidates.push_back(std::move(c));
      records.push_back(std::move(record));
    }
    if (list) proj_list_destroy(list);

    if (candidates.empty()) {
      const std::vector<std::string> paths = split_paths(proj_info().searchpath);
      if (!missing_grids.empty()) {
        throw ReferenceError(fmt::format(
            "no usable transformation from '{}' to '{}': PROJ's operations need grid(s) {}, which "
            "are not installed. Searched: {}. Install the grid into one of these folders, point "
            "--grid-path at the folder that holds it, or allow downloads with --network. "
            "levelhead never falls back to a ballpark operation, which would apply no geoid",
            source.info.definition, target.info.definition, fmt::join(missing_grids, ", "),
            fmt::join(paths, ", ")));
      }
      throw ReferenceError(fmt::format(
          "PROJ knows no transformation from '{}' to '{}' other than a ballpark one, which applies "
          "no geoid or datum shift and can be tens of metres wrong; levelhead refuses it. Define "
          "the relation (a grid, an offset, or ties) in a references file",
          source.info.definition, target.info.definition));
    }
    if (!best_missing.empty()) {
      warnings.push_back(
          fmt::format("the most accurate operation {}, which is not installed; "
                      "using '{}' instead",
                      best_missing, records.front().name));
    }
  }
};

namespace {

// Sets up one context with everything a conversion needs. Each thread of a
// batch gets its own (PROJ contexts and operations are not shared between
// threads).
void build(VerticalTransformer::Impl& impl, const std::string& from, const std::string& to,
           const std::string& horizontal_crs, const ProjSettings& settings,
           std::optional<double> epoch, bool provenance) {
  auto* impl_ = &impl;
  PJ_CONTEXT* ctx = impl_->ctx.get();
  proj_context_set_enable_network(ctx, settings.allow_network ? 1 : 0);
  if (!settings.grid_paths.empty()) {
    std::vector<std::string> paths;
    for (const auto& p : settings.grid_paths) paths.push_back(p.string());
    for (const auto& p : split_paths(proj_info().searchpath)) paths.push_back(p);
    std::vector<const char*> raw;
    for (const auto& p : paths) raw.push_back(p.c_str());
    proj_context_set_search_paths(ctx, static_cast<int>(raw.size()), raw.data());
  }
  if (horizontal_crs.empty()) {
    // The points are in the source reference's own horizontal CRS.
    PjPtr given = impl_->create_crs(from, "source reference");
    const PJ_TYPE kind = proj_get_type(given.get());
    if (kind == PJ_TYPE_COMPOUND_CRS) {
      impl_->points_crs.reset(proj_crs_get_sub_crs(ctx, given.get(), 0));
    } else if (kind == PJ_TYPE_GEOGRAPHIC_3D_CRS) {
      impl_->points_crs.reset(proj_crs_demote_to_2D(ctx, nullptr, given.get()));
    } else {
      throw ReferenceError(
          fmt::format("source reference '{}' has no horizontal part: give the "
                      "CRS of the points' x and y (--crs)",
                      from));
    }
  } else {
    impl_->points_crs = impl_->create_crs(horizontal_crs, "horizontal CRS");
  }
  const PJ_TYPE type = proj_get_type(impl_->points_crs.get());
  if (type != PJ_TYPE_PROJECTED_CRS && type != PJ_TYPE_GEOGRAPHIC_2D_CRS) {
    throw ReferenceError(
        fmt::format("horizontal CRS '{}' must be a projected or geographic 2D "
                    "CRS (e.g. EPSG:32633 or EPSG:4326)",
                    horizontal_crs));
  }
  impl_->source = impl_->resolve(from, "source reference");
  impl_->target = impl_->resolve(to, "target reference");
  for (const ReferenceInfo* info : {&impl_->source.info, &impl_->target.info}) {
    if (info->dynamic && !epoch) {
      throw ReferenceError(
          fmt::format("'{}' ({}) is a dynamic reference: heights in it need an "
                      "epoch (--epoch, decimal year)",
                      info->definition, info->name));
    }
  }
  if (epoch) impl_->epoch = *epoch;
  if (!proj_is_equivalent_to(impl_->points_crs.get(), impl_->source.horizontal.get(),
                             PJ_COMP_EQUIVALENT)) {
    impl_->to_source_plane =
        impl_->horizontal_transform(impl_->points_crs.get(), impl_->source.horizontal.get());
  }
  PjPtr lonlat(proj_create(ctx, "EPSG:4326"));
  impl_->to_lonlat = impl_->horizontal_transform(impl_->points_crs.get(), lonlat.get());
  impl_->find_operations(provenance);
}

}  // namespace

VerticalTransformer::VerticalTransformer(const std::string& from, const std::string& to,
                                         const std::string& horizontal_crs,
                                         const ProjSettings& settings, std::optional<double> epoch)
    : impl_(std::make_unique<Impl>()) {
  impl_->arguments = {from, to, horizontal_crs, settings, epoch};
  build(*impl_, from, to, horizontal_crs, settings, epoch, true);
}

VerticalTransformer::~VerticalTransformer() = default;

const ReferenceInfo& VerticalTransformer::source() const { return impl_->source.info; }
const ReferenceInfo& VerticalTransformer::target() const { return impl_->target.info; }
const std::vector<OperationRecord>& VerticalTransformer::operations() const {
  return impl_->records;
}
const std::vector<std::string>& VerticalTransformer::warnings() const { return impl_->warnings; }

// Per point, the first usable operation (in PROJ's order of preference)
// whose area of use holds the point and that gives a finite height; this is
// PROJ's own selection, done here so that the operation used is known and a
// ballpark can never slip in.
namespace {

void convert_range(VerticalTransformer::Impl& im, const std::vector<PlanePoint>& points,
                   const std::vector<double>& heights, std::size_t begin, std::size_t end,
                   std::vector<PointConversion>& out, std::vector<std::size_t>& used) {
  used.assign(im.candidates.size(), 0);
  for (std::size_t i = begin; i < end; ++i) {
    PointConversion& result = out[i];
    if (!std::isfinite(points[i].x) || !std::isfinite(points[i].y) || !std::isfinite(heights[i])) {
      result.failure = "coordinates or height not finite";
      continue;
    }
    PJ_COORD lonlat =
        proj_trans(im.to_lonlat.get(), PJ_FWD, proj_coord(points[i].x, points[i].y, 0.0, HUGE_VAL));
    PJ_COORD plane = proj_coord(points[i].x, points[i].y, 0.0, HUGE_VAL);
    if (im.to_source_plane) plane = proj_trans(im.to_source_plane.get(), PJ_FWD, plane);
    if (!std::isfinite(lonlat.xy.x) || !std::isfinite(plane.xy.x)) {
      result.failure = "the point's x, y cannot be transformed (outside the CRS's area?)";
      continue;
    }
    const double lon = lonlat.xy.x, lat = lonlat.xy.y;
    for (std::size_t k = 0; k < im.candidates.size(); ++k) {
      const auto& c = im.candidates[k];
      if (c.has_area) {
        const bool in_lat = lat >= c.south && lat <= c.north;
        const bool in_lon =
            c.west <= c.east ? (lon >= c.west && lon <= c.east) : (lon >= c.west || lon <= c.east);
        if (!in_lat || !in_lon) continue;
      }
      proj_errno_reset(c.operation.get());
      const PJ_COORD r = proj_trans(c.operation.get(), PJ_FWD,
                                    proj_coord(plane.xy.x, plane.xy.y, heights[i], im.epoch));
      if (r.xyz.z == HUGE_VAL || !std::isfinite(r.xyz.z)) continue;
      result.height = r.xyz.z;
      result.operation = k;
      ++used[k];
      break;
    }
    if (!result.height) {
      result.failure = fmt::format(
          "no usable operation covers lon {:.6f}, lat {:.6f} (outside every grid or area of use)",
          lon, lat);
    }
  }
}

}  // namespace

// Large batches are split over the machine's cores, each thread with its own
// PROJ context and operations; results do not depend on the split.
std::vector<PointConversion> VerticalTransformer::convert(const std::vector<PlanePoint>& points,
                                                          const std::vector<double>& heights) {
  Impl& im = *impl_;
  std::vector<PointConversion> out(points.size());
  constexpr std::size_t per_thread_minimum = 50000;  // below this, setting up a context costs more
  const std::size_t threads =
      std::clamp<std::size_t>(std::min<std::size_t>(std::thread::hardware_concurrency(),
                                                    points.size() / per_thread_minimum),
                              1, 8);
  while (im.workers.size() + 1 < threads) {
    auto worker = std::make_unique<Impl>();
    const auto& a = im.arguments;
    build(*worker, a.from, a.to, a.horizontal, a.settings, a.epoch, false);
    if (worker->candidates.size() != im.candidates.size()) break;  // cannot happen; stay serial
    im.workers.push_back(std::move(worker));
  }
  const std::size_t parts = im.workers.size() + 1 < threads ? 1 : threads;
  std::vector<std::vector<std::size_t>> used(parts);
  std::vector<std::thread> pool;
  const std::size_t chunk = (points.size() + parts - 1) / parts;
  for (std::size_t t = 1; t < parts; ++t) {
    pool.emplace_back([&, t] {
      convert_range(*im.workers[t - 1], points, heights, t * chunk,
                    std::min(points.size(), (t + 1) * chunk), out, used[t]);
    });
  }
  convert_range(im, points, heights, 0, std::min(points.size(), chunk), out, used[0]);
  for (std::thread& th : pool) th.join();
  for (const auto& counts : used) {
    for (std::size_t k = 0; k < counts.size(); ++k) im.records[k].points += counts[k];
  }
  return out;
}

std::string proj_version_text() {
  ContextPtr ctx(proj::make_context());
  const char* epsg = proj_context_get_database_metadata(ctx.get(), "EPSG.VERSION");
  return fmt::format("PROJ {}{}", proj_info().release ? proj_info().release : "?",
                     epsg ? fmt::format(", EPSG {}", epsg) : std::string());
}

HeightUnit height_unit_of(const std::string& definition) {
  ContextPtr ctx(proj::make_context());
  PjPtr crs(proj_create(ctx.get(), definition.c_str()));
  if (!crs || !proj_is_crs(crs.get())) {
    throw ReferenceError(fmt::format(
        "'{}' is not a coordinate reference system PROJ knows ({}); give an EPSG code such as "
        "EPSG:5703, a compound code such as EPSG:4326+5773, WKT or PROJJSON",
        definition, proj::message(ctx.get())));
  }
  PjPtr vertical;
  int axis = 0;
  switch (proj_get_type(crs.get())) {
    case PJ_TYPE_VERTICAL_CRS:
      vertical.reset(proj_clone(ctx.get(), crs.get()));
      break;
    case PJ_TYPE_COMPOUND_CRS:
      vertical.reset(proj_crs_get_sub_crs(ctx.get(), crs.get(), 1));
      break;
    case PJ_TYPE_GEOGRAPHIC_3D_CRS:
      vertical.reset(proj_clone(ctx.get(), crs.get()));
      axis = 2;
      break;
    default:
      throw ReferenceError(fmt::format("'{}' has no heights", definition));
  }
  const AxisUnit unit = axis_unit(ctx.get(), vertical.get(), axis);
  HeightUnit out;
  out.name = unit.name;
  out.metres_per_unit = unit.metres;
  if (!out.metric() && axis == 0)
    out.metre_equivalent = metre_crs_of_datum(ctx.get(), vertical.get());
  return out;
}

std::optional<std::string> describe_crs(const std::string& definition) {
  ContextPtr ctx(proj::make_context());
  PjPtr crs(proj_create(ctx.get(), definition.c_str()));
  proj::message(ctx.get());  // a definition PROJ does not know is no error here
  if (!crs || !proj_is_crs(crs.get())) return std::nullopt;
  const char* name = proj_get_name(crs.get());
  PjPtr unit_of;
  if (proj_get_type(crs.get()) == PJ_TYPE_COMPOUND_CRS)
    unit_of.reset(proj_crs_get_sub_crs(ctx.get(), crs.get(), 1));
  const AxisUnit unit = axis_unit(ctx.get(), unit_of ? unit_of.get() : crs.get(), 0);
  return fmt::format("{} ({}){}", name ? name : "unnamed", definition,
                     unit.name.empty() ? std::string() : ", " + unit.name);
}

std::optional<std::string> table_unit_mismatch(const HeightUnit& unit, const std::string& reference,
                                               LengthUnit table_unit) {
  const std::optional<LengthUnit> own = length_unit_of(unit.metres_per_unit);
  if (unit.metric() || own == table_unit) return std::nullopt;
  return fmt::format(
      "'{}' measures heights in {}, but the table is read in {}; declare the table's unit ({}) "
      "or give the heights in a metre reference{}",
      reference, unit.name, to_string(table_unit),
      own ? "--unit " + to_string(*own) : std::string("--unit"),
      unit.metre_equivalent.empty() ? "" : " (" + unit.metre_equivalent + ")");
}

}  // namespace levelhead
