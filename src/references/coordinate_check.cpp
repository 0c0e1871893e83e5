#include "levelhead/references/coordinate_check.hpp"

#include <fmt/format.h>
#include <proj.h>

#include <cmath>
#include <memory>
#include <optional>
#include <vector>

#include "levelhead/core/errors.hpp"
#include "references/proj_handles.hpp"

namespace levelhead {

namespace {

using proj::ContextPtr;
using proj::PjPtr;

struct Area {
  double west, south, east, north;
  bool contains(double lon, double lat, double margin) const {
    if (lat < south - margin || lat > north + margin) return false;
    const auto wrap = [](double a) { return std::remainder(a, 360.0); };
    const double w = west - margin, e = east + margin;
    if (e - w >= 360.0) return true;
    // Longitudes compared around the circle, so an area across 180 degrees works.
    const double from_west = wrap(lon - w);
    return (from_west < 0 ? from_west + 360.0 : from_west) <= (e - w);
  }
};

// The horizontal CRS of `definition` (the first part of a compound CRS).
PjPtr horizontal_crs(PJ_CONTEXT* ctx, const std::string& definition) {
  PjPtr crs(proj_create(ctx, definition.c_str()));
  if (!crs || !proj_is_crs(crs.get())) {
    throw ReferenceError(fmt::format(
        "'{}', given as the CRS of x and y, is not a coordinate reference system PROJ knows",
        definition));
  }
  if (proj_get_type(crs.get()) == PJ_TYPE_COMPOUND_CRS)
    return PjPtr(proj_crs_get_sub_crs(ctx, crs.get(), 0));
  return crs;
}

std::optional<Area> area_of_use(PJ_CONTEXT* ctx, PJ* crs) {
  Area a{};
  if (!proj_get_area_of_use(ctx, crs, &a.west, &a.south, &a.east, &a.north, nullptr)) {
    return std::nullopt;
  }
  if (a.west < -999 || a.south < -999) return std::nullopt;  // PROJ's "unknown"
  return a;
}

bool geographic(PJ* crs) {
  const PJ_TYPE type = proj_get_type(crs);
  return type == PJ_TYPE_GEOGRAPHIC_2D_CRS || type == PJ_TYPE_GEOGRAPHIC_3D_CRS;
}

}  // namespace

// Area of use from the EPSG database through PROJ (proj_get_area_of_use);
// points brought to WGS 84 longitude and latitude by PROJ (GIS axis order).
void check_coordinates_in_crs(const Table& table, const std::string& crs_text) {
  const auto x_column = table.find_column("x"), y_column = table.find_column("y");
  if (!x_column || !y_column || crs_text.empty()) return;
  struct Located {
    double x, y;
    std::size_t row;
  };
  std::vector<Located> points;
  for (std::size_t r = 0; r < table.row_count(); ++r) {
    const auto x = table.number(r, *x_column), y = table.number(r, *y_column);
    if (x && y) points.push_back({*x, *y, r});
  }
  if (points.empty()) return;

  ContextPtr ctx(proj::make_context());
  const PjPtr crs = horizontal_crs(ctx.get(), crs_text);
  if (!crs) return;
  const auto id_column = table.find_column("id");
  const auto describe_point = [&](const Located& p) {
    const std::string id = id_column ? std::string(table.cell(p.row, *id_column)) : std::string();
    return fmt::format("{}, row {}{}: x = {}, y = {}", table.source(), table.source_row(p.row),
                       id.empty() ? std::string() : " ('" + id + "')", table.cell(p.row, *x_column),
                       table.cell(p.row, *y_column));
  };

  if (geographic(crs.get())) {
    for (const Located& p : points) {
      if (std::abs(p.y) > 90.0 || std::abs(p.x) > 360.0) {
        throw InputError(
            describe_point(p),
            fmt::format("{} is geographic (x = longitude, y = latitude, in degrees), but these are "
                        "not degrees of longitude and latitude{}; give the projected CRS the "
                        "coordinates are in, or put longitude in x and latitude in y",
                        crs_text,
                        std::abs(p.x) <= 90.0 && std::abs(p.y) <= 360.0
                            ? " (latitude and longitude swapped?)"
                            : " (metres?)"));
      }
    }
  }
  const auto area = area_of_use(ctx.get(), crs.get());
  if (!area) return;

  PjPtr wgs84(proj_create(ctx.get(), "EPSG:4326"));
  PjPtr raw(proj_create_crs_to_crs_from_pj(ctx.get(), crs.get(), wgs84.get(), nullptr, nullptr));
  if (!raw) return;
  PjPtr to_lonlat(proj_normalize_for_visualization(ctx.get(), raw.get()));
  if (!to_lonlat) return;
  const auto lonlat = [&](double x, double y) -> std::optional<std::pair<double, double>> {
    const PJ_COORD out = proj_trans(to_lonlat.get(), PJ_FWD, proj_coord(x, y, 0, 0));
    if (!std::isfinite(out.xy.x) || !std::isfinite(out.xy.y)) return std::nullopt;
    return std::make_pair(out.xy.x, out.xy.y);
  };
  const auto inside = [&](double x, double y, double margin) {
    const auto ll = lonlat(x, y);
    return ll && area->contains(ll->first, ll->second, margin);
  };
  const std::string area_text =
      fmt::format("the area of use of {} (longitude {:g} to {:g}, latitude {:g} to {:g} degrees)",
                  crs_text, area->west, area->east, area->south, area->north);

  if (!geographic(crs.get())) {
    bool all_small = true, any_outside = false;
    for (const Located& p : points) {
      all_small = all_small && std::abs(p.x) <= 180.0 && std::abs(p.y) <= 90.0;
      any_outside = any_outside || !inside(p.x, p.y, 0.0);
    }
    if (all_small && any_outside) {
      throw InputError(describe_point(points.front()),
                       fmt::format("every x and y of the table looks like degrees, but {} is a "
                                   "projected CRS (x and y in its linear unit); give the "
                                   "geographic CRS (e.g. EPSG:4326) or project the coordinates",
                                   crs_text));
    }
  }
  std::size_t outside = 0;
  const Located* first = nullptr;
  for (const Located& p : points) {
    if (inside(p.x, p.y, area_margin_degrees)) continue;
    ++outside;
    if (!first) first = &p;
  }
  if (!first) return;
  const bool swapped = inside(first->y, first->x, area_margin_degrees);
  throw InputError(
      describe_point(*first),
      fmt::format("the point lies more than {:g} degrees outside {}{}; {}", area_margin_degrees,
                  area_text,
                  outside > 1 ? fmt::format(", as do {} more point(s)", outside - 1) : "",
                  swapped ? "x and y look swapped (x is the easting or longitude)"
                          : "are x and y in another CRS or zone, or swapped?"));
}

void require_horizontal_crs(const std::string& crs_text) {
  ContextPtr ctx(proj::make_context());
  const PjPtr crs = horizontal_crs(ctx.get(), crs_text);
  const PJ_TYPE type = crs ? proj_get_type(crs.get()) : PJ_TYPE_UNKNOWN;
  if (!geographic(crs.get()) && type != PJ_TYPE_PROJECTED_CRS) {
    throw ReferenceError(fmt::format(
        "'{}', given as the CRS of x and y, has no horizontal axes (a vertical CRS?); give a "
        "projected or geographic CRS such as EPSG:32613",
        crs_text));
  }
}

void require_metric_plane_crs(const std::string& crs_text, const std::string& option) {
  ContextPtr ctx(proj::make_context());
  const PjPtr crs = horizontal_crs(ctx.get(), crs_text);
  if (geographic(crs.get()) || proj_get_type(crs.get()) != PJ_TYPE_PROJECTED_CRS) {
    throw OptionError(fmt::format(
        "{} {}: distances for a gradient need a projected CRS in metres (e.g. a UTM zone such "
        "as EPSG:32613), not a geographic one in degrees",
        option, crs_text));
  }
  PjPtr cs(proj_crs_get_coordinate_system(ctx.get(), crs.get()));
  double metres = 0.0;
  const char* unit = nullptr;
  if (!cs ||
      !proj_cs_get_axis_info(ctx.get(), cs.get(), 0, nullptr, nullptr, nullptr, &metres, &unit,
                             nullptr, nullptr) ||
      std::abs(metres - 1.0) > 1e-12) {
    throw OptionError(
        fmt::format("{} {}: its axes are in {}, not metres; give the metre CRS of "
                    "the same projection, with x and y in metres",
                    option, crs_text, unit ? unit : "another unit"));
  }
}

}  // namespace levelhead
