#include "levelhead/references/references_file.hpp"

#include <fmt/format.h>
#include <proj.h>
#include <toml++/toml.h>

#include <Eigen/Eigenvalues>
#include <algorithm>
#include <cmath>
#include <sstream>

#include "levelhead/core/bounds.hpp"
#include "levelhead/core/errors.hpp"
#include "levelhead/core/input_files.hpp"
#include "util/encoding.hpp"
#include "util/text.hpp"

namespace levelhead {

double OffsetRelation::shift(double x, double y) const {
  return offset + slope_x * (x - x0) + slope_y * (y - y0);
}

std::optional<double> OffsetRelation::variance(double x, double y) const {
  if (covariance) {
    const double g[3] = {1.0, x - x0, y - y0};
    double v = 0.0;
    for (int i = 0; i < 3; ++i) {
      for (int j = 0; j < 3; ++j) v += g[i] * (*covariance)[i][j] * g[j];
    }
    // The covariance is positive semi-definite up to the digits of its file
    // (checked on reading): a slightly negative sum is rounding.
    return std::max(v, 0.0);
  }
  if (sigma) return *sigma * *sigma;
  return std::nullopt;
}

std::optional<double> OffsetRelation::common_variance() const {
  if (covariance) return std::max((*covariance)[0][0], 0.0);
  if (sigma) return *sigma * *sigma;
  return std::nullopt;
}

// Point in polygon by ray crossing (hull vertices in order); a point on the
// boundary counts as inside: within a tolerance of an edge that covers the
// digits the hull was written with (12 significant, to_toml) and the
// rounding of the crossing test, 1e-11 of the coordinates' size plus 1e-9
// of the hull's extent.
bool OffsetRelation::inside_hull(double x, double y) const {
  if (hull.size() < 3) return true;
  bool inside = false;
  double size = std::max(std::abs(x), std::abs(y));
  double min_x = hull[0][0], max_x = min_x, min_y = hull[0][1], max_y = min_y;
  for (std::size_t i = 0, j = hull.size() - 1; i < hull.size(); j = i++) {
    const auto& a = hull[i];
    const auto& b = hull[j];
    if ((a[1] > y) != (b[1] > y) && x < (b[0] - a[0]) * (y - a[1]) / (b[1] - a[1]) + a[0]) {
      inside = !inside;
    }
    size = std::max({size, std::abs(a[0]), std::abs(a[1])});
    min_x = std::min(min_x, a[0]), max_x = std::max(max_x, a[0]);
    min_y = std::min(min_y, a[1]), max_y = std::max(max_y, a[1]);
  }
  if (inside) return true;
  const double tolerance = 1e-11 * size + 1e-9 * std::max(max_x - min_x, max_y - min_y);
  for (std::size_t i = 0, j = hull.size() - 1; i < hull.size(); j = i++) {
    // Distance from (x, y) to the segment a-b.
    const double ax = hull[j][0], ay = hull[j][1];
    const double dx = hull[i][0] - ax, dy = hull[i][1] - ay;
    const double length2 = dx * dx + dy * dy;
    const double f =
        length2 > 0.0 ? std::clamp(((x - ax) * dx + (y - ay) * dy) / length2, 0.0, 1.0) : 0.0;
    if (std::hypot(x - (ax + f * dx), y - (ay + f * dy)) <= tolerance) return true;
  }
  return false;
}

namespace {

// A relative grid path: beside the references file, else a grid of that
// name in PROJ's search paths (where proj-data installs egm96_15.gtx).
std::filesystem::path locate_grid(const std::filesystem::path& folder,
                                  const std::filesystem::path& grid) {
  const std::filesystem::path beside = folder / grid;
  if (path_exists(beside)) return beside;
  const std::string paths = proj_info().searchpath ? proj_info().searchpath : "";
  std::size_t start = 0;
  while (start <= paths.size()) {
    const std::size_t end = std::min(paths.find(':', start), paths.size());
    const std::filesystem::path candidate =
        std::filesystem::path(paths.substr(start, end - start)) / grid;
    if (end > start && path_exists(candidate)) return candidate;
    start = end + 1;
  }
  return beside;  // missing: the converter reports it with the paths searched
}

std::string where(const std::string& file, const toml::node& node) {
  return fmt::format("{}, line {}", file, node.source().begin.line);
}

void check_keys(const std::string& file, const toml::table& table,
                const std::vector<std::string>& allowed) {
  for (const auto& [key, node] : table) {
    const std::string name(key.str());
    if (std::find(allowed.begin(), allowed.end(), name) != allowed.end()) continue;
    throw InputError(where(file, node), fmt::format("unknown key '{}' (did you mean '{}'?)", name,
                                                    util::nearest_name(name, allowed)));
  }
}

// A finite number (TOML allows nan and inf literals; no relation has them).
double finite_number(const std::string& file, const toml::node& node, const std::string& what) {
  const auto v = node.value<double>();
  if (!v) throw InputError(where(file, node), fmt::format("{} must be a number", what));
  if (!std::isfinite(*v)) {
    throw InputError(
        where(file, node),
        fmt::format("{} must be a finite number (nan and inf are not accepted)", what));
  }
  return *v;
}

double number(const std::string& file, const toml::table& t, const char* key, double fallback) {
  const toml::node* node = t.get(key);
  if (!node) return fallback;
  return finite_number(file, *node, fmt::format("'{}'", key));
}

// A standard deviation (m): finite, >= 0 and within the plausible bound.
double sigma_number(const std::string& file, const toml::table& t) {
  const double sigma = number(file, t, "sigma", 0.0);
  if (sigma < 0.0 || sigma > bounds::max_sigma) {
    throw InputError(where(file, *t.get("sigma")),
                     fmt::format("'sigma' = {:g} m: a standard deviation must be between 0 and "
                                 "{:g} m",
                                 sigma, bounds::max_sigma));
  }
  return sigma;
}

std::string text(const std::string& file, const toml::table& t, const char* key, bool required,
                 const std::string& reference) {
  const toml::node* node = t.get(key);
  if (!node) {
    if (required) {
      throw InputError(file, fmt::format("reference '{}' needs '{}'", reference, key));
    }
    return "";
  }
  if (auto v = node->value<std::string>()) return *v;
  throw InputError(where(file, *node), fmt::format("'{}' must be a string", key));
}

}  // namespace

void ReferenceSet::add(ReferenceDefinition definition) {
  const std::string name = definition.name;
  definitions_[name] = std::move(definition);
}

const ReferenceDefinition* ReferenceSet::find(const std::string& name) const {
  const auto it = definitions_.find(name);
  return it == definitions_.end() ? nullptr : &it->second;
}

namespace {

// A covariance must be positive semi-definite: no combination of offset and
// slopes may have a negative variance. Judged on the correlation matrix
// R = D^-1/2 C D^-1/2, so that the offset (m^2) and the slopes ((m/m)^2)
// weigh alike, by its smallest eigenvalue (Eigen's self-adjoint solver);
// the tolerance 1e-6 allows for the printed digits of a file written by
// `levelhead tie`. A zero variance needs zero covariances in its row.
void require_positive_semidefinite(const std::string& file, const toml::node& where_node,
                                   const std::array<std::array<double, 3>, 3>& c) {
  constexpr double tolerance = 1e-6;
  Eigen::Matrix3d correlation = Eigen::Matrix3d::Identity();
  for (int i = 0; i < 3; ++i) {
    for (int j = 0; j < 3; ++j) {
      if (i == j) continue;
      if (c[i][i] > 0.0 && c[j][j] > 0.0) {
        correlation(i, j) = c[i][j] / std::sqrt(c[i][i] * c[j][j]);
      } else if (c[i][j] != 0.0) {
        throw InputError(where(file, where_node),
                         "covariance: a variance of 0 with a non-zero covariance in its row is "
                         "not possible");
      }
    }
  }
  const Eigen::SelfAdjointEigenSolver<Eigen::Matrix3d> solver(correlation, Eigen::EigenvaluesOnly);
  if (solver.eigenvalues().minCoeff() < -tolerance) {
    throw InputError(
        where(file, where_node),
        fmt::format("covariance is not positive semi-definite (smallest eigenvalue of its "
                    "correlation matrix {:.3g}): some combination of offset and slopes would "
                    "have a negative variance; check the entries (a correlation must lie within "
                    "+-1) or copy the matrix as `levelhead tie` wrote it",
                    solver.eigenvalues().minCoeff()));
  }
}

}  // namespace

ReferenceSet ReferenceSet::load(const std::filesystem::path& path) {
  return parse(read_input_text(path), path);
}

ReferenceSet ReferenceSet::parse(std::string_view toml_text, const std::filesystem::path& path) {
  const std::string file = path.string();
  toml::table root;
  try {
    root = toml::parse(toml_text, file);
  } catch (const toml::parse_error& e) {
    throw InputError(fmt::format("{}, line {}", file, e.source().begin.line),
                     std::string(e.description()));
  }
  check_keys(file, root, {"references"});
  const toml::table* references = root["references"].as_table();
  if (!references) throw InputError(file, "expected a [references.NAME] table");
  ReferenceSet set;
  for (const auto& [key, node] : *references) {
    const toml::table* t = node.as_table();
    const std::string name(key.str());
    if (!t) throw InputError(where(file, node), fmt::format("'{}' must be a table", name));
    ReferenceDefinition d;
    d.name = name;
    d.file = file;
    const std::string kind = text(file, *t, "kind", true, name);
    d.source = text(file, *t, "source", false, name);
    if (kind == "crs") {
      check_keys(file, *t, {"kind", "definition", "source"});
      d.kind = ReferenceDefinition::Kind::crs;
      d.definition = text(file, *t, "definition", true, name);
    } else if (kind == "offset") {
      check_keys(file, *t,
                 {"kind", "base", "offset", "slope_x", "slope_y", "x0", "y0", "crs", "sigma",
                  "covariance", "hull", "source"});
      d.kind = ReferenceDefinition::Kind::offset;
      d.base = text(file, *t, "base", true, name);
      OffsetRelation& r = d.relation;
      if (!t->get("offset"))
        throw InputError(file, fmt::format("reference '{}' needs 'offset'", name));
      r.offset = number(file, *t, "offset", 0.0);
      r.slope_x = number(file, *t, "slope_x", 0.0);
      r.slope_y = number(file, *t, "slope_y", 0.0);
      r.x0 = number(file, *t, "x0", 0.0);
      r.y0 = number(file, *t, "y0", 0.0);
      r.crs = text(file, *t, "crs", false, name);
      if (t->get("sigma")) r.sigma = sigma_number(file, *t);
      if (const toml::array* c = (*t)["covariance"].as_array()) {
        std::array<std::array<double, 3>, 3> m{};
        if (c->size() != 3) throw InputError(where(file, *c), "covariance must be 3 x 3");
        for (std::size_t i = 0; i < 3; ++i) {
          const toml::array* row = (*c)[i].as_array();
          if (!row || row->size() != 3)
            throw InputError(where(file, *c), "covariance must be 3 x 3");
          for (std::size_t j = 0; j < 3; ++j)
            m[i][j] = finite_number(file, *row->get(j), "every covariance entry");
        }
        // A covariance is symmetric with variances >= 0; the tolerance allows
        // for the printed digits of a file written by `levelhead tie`.
        for (std::size_t i = 0; i < 3; ++i) {
          if (m[i][i] < 0.0)
            throw InputError(where(file, *c), "covariance: a variance (diagonal) is negative");
          for (std::size_t j = 0; j < i; ++j) {
            const double scale = std::sqrt(std::abs(m[i][i] * m[j][j])) + 1e-300;
            if (std::abs(m[i][j] - m[j][i]) > 1e-6 * scale)
              throw InputError(where(file, *c), "covariance must be symmetric");
          }
        }
        require_positive_semidefinite(file, *c, m);
        r.covariance = m;
      }
      if (const toml::array* h = (*t)["hull"].as_array()) {
        for (const auto& vertex : *h) {
          const toml::array* xy = vertex.as_array();
          if (!xy || xy->size() != 2)
            throw InputError(where(file, vertex), "hull vertices are [x, y]");
          r.hull.push_back({finite_number(file, *xy->get(0), "a hull coordinate"),
                            finite_number(file, *xy->get(1), "a hull coordinate")});
        }
      }
    } else if (kind == "vertoffset") {
      check_keys(file, *t,
                 {"kind", "base", "offset", "slope_lat", "slope_lon", "lat0", "lon0", "ellipsoid",
                  "sigma", "source"});
      d.kind = ReferenceDefinition::Kind::vertoffset;
      d.base = text(file, *t, "base", true, name);
      if (!t->get("offset"))
        throw InputError(file, fmt::format("reference '{}' needs 'offset'", name));
      VerticalOffsetSlope& v = d.offset_slope;
      v.offset = number(file, *t, "offset", 0.0);
      v.slope_lat = number(file, *t, "slope_lat", 0.0);
      v.slope_lon = number(file, *t, "slope_lon", 0.0);
      v.lat0 = number(file, *t, "lat0", 0.0);
      v.lon0 = number(file, *t, "lon0", 0.0);
      const std::string ellipsoid = text(file, *t, "ellipsoid", false, name);
      if (!ellipsoid.empty()) v.ellipsoid = ellipsoid;
      if (t->get("sigma")) d.relation.sigma = sigma_number(file, *t);
    } else if (kind == "grid") {
      check_keys(file, *t, {"kind", "base", "grid", "multiplier", "sigma", "source"});
      d.kind = ReferenceDefinition::Kind::grid;
      d.base = text(file, *t, "base", true, name);
      std::filesystem::path grid = text(file, *t, "grid", true, name);
      if (grid.is_relative()) grid = locate_grid(path.parent_path(), grid);
      std::error_code no_folder;
      const std::filesystem::path absolute = std::filesystem::absolute(grid, no_folder);
      d.grid = (no_folder ? grid : absolute).lexically_normal();
      d.grid_multiplier = number(file, *t, "multiplier", 1.0);
      if (!(std::abs(d.grid_multiplier) > 0.0)) {
        throw InputError(where(file, *t->get("multiplier")), "'multiplier' must not be 0");
      }
      if (t->get("sigma")) d.relation.sigma = sigma_number(file, *t);
    } else {
      throw InputError(where(file, node), fmt::format("reference '{}': kind '{}' is not 'crs', "
                                                      "'offset', 'vertoffset' or 'grid'",
                                                      name, kind));
    }
    set.add(std::move(d));
  }
  return set;
}

std::string to_toml(const ReferenceDefinition& d) {
  const OffsetRelation& r = d.relation;
  std::string out =
      fmt::format("[references.{}]\nkind = \"offset\"\nbase = \"{}\"\n", d.name, d.base);
  out += fmt::format(
      "offset = {:.6f}\nslope_x = {:.9e}\nslope_y = {:.9e}\nx0 = {:.12g}\ny0 = {:.12g}\n", r.offset,
      r.slope_x, r.slope_y, r.x0, r.y0);
  if (!r.crs.empty()) out += fmt::format("crs = \"{}\"\n", r.crs);
  if (r.sigma) out += fmt::format("sigma = {:.6f}\n", *r.sigma);
  if (r.covariance) {
    out += "covariance = [\n";
    for (const auto& row : *r.covariance) {
      out += fmt::format("  [{:.9e}, {:.9e}, {:.9e}],\n", row[0], row[1], row[2]);
    }
    out += "]\n";
  }
  if (!r.hull.empty()) {
    out += "hull = [";
    for (std::size_t i = 0; i < r.hull.size(); ++i) {
      out += fmt::format("{}[{:.12g}, {:.12g}]", i ? ", " : "", r.hull[i][0], r.hull[i][1]);
    }
    out += "]\n";
  }
  if (!d.source.empty()) out += fmt::format("source = \"{}\"\n", d.source);
  return out;
}

void require_reference_name(const std::string& name, const std::string& option) {
  const auto allowed = [](char c) {
    return (c >= 'a' && c <= 'z') || (c >= 'A' && c <= 'Z') || (c >= '0' && c <= '9') || c == '-' ||
           c == '_';
  };
  const bool starts_with_letter =
      !name.empty() && ((name[0] >= 'a' && name[0] <= 'z') || (name[0] >= 'A' && name[0] <= 'Z'));
  const auto bad = std::find_if_not(name.begin(), name.end(), allowed);
  if (starts_with_letter && bad == name.end()) return;
  throw OptionError(fmt::format(
      "{} '{}': a reference name is ASCII letters, digits, '-' and '_', starting with a letter "
      "({}); e.g. site-1998",
      option, util::shortened(name, 40),
      name.empty()          ? "it is empty"
      : !starts_with_letter ? "it starts with something else"
                            : fmt::format("'{}' is not allowed", std::string(1, *bad))));
}

}  // namespace levelhead
