#include "levelhead/heads/wells.hpp"

#include <fmt/format.h>

#include "levelhead/core/errors.hpp"
#include "util/text.hpp"

namespace levelhead {

bool MeasuringPointRecord::starts_new_series() const {
  const std::string r = util::to_lower(reason);
  return r == "casing-cut" || r == "repair" || r == "replaced";
}

WellSet read_wells(const Table& t) {
  // The key is `well`, as in every table that names a well; `id` is its
  // earlier name, still read.
  const std::size_t id = t.find_column("well") || !t.find_column("id") ? t.require_column("well")
                                                                       : *t.find_column("id");
  const std::size_t x = t.require_column("x"), y = t.require_column("y");
  const auto ground = t.find_column("ground"), ground_datum = t.find_column("ground_datum");
  const auto top = t.find_column("screen_top"), bottom = t.find_column("screen_bottom");
  const auto nest = t.find_column("nest"), aquifer = t.find_column("aquifer");
  const auto density = t.find_column("density"), column_density = t.find_column("column_density");
  WellSet set{t.source(), {}, {}};
  for (std::size_t r = 0; r < t.row_count(); ++r) {
    Well w;
    w.id = std::string(t.cell(r, id));
    if (w.id.empty()) throw InputError(t.location(r, id), "", "every well needs its id");
    const auto px = t.number(r, x), py = t.number(r, y);
    if (!px || !py) throw InputError(t.location(r, px ? y : x), "", "every well needs x and y");
    w.x = *px;
    w.y = *py;
    if (ground) w.ground = t.height(r, *ground);
    if (ground_datum) w.ground_datum = std::string(t.cell(r, *ground_datum));
    if (top) w.screen_top = t.depth(r, *top);
    if (bottom) w.screen_bottom = t.depth(r, *bottom);
    if (nest) w.nest = std::string(t.cell(r, *nest));
    if (aquifer) w.aquifer = std::string(t.cell(r, *aquifer));
    if (density) w.density = t.number(r, *density);
    if (column_density) w.column_density = t.number(r, *column_density);
    w.row = t.source_row(r);
    if (!set.index.emplace(w.id, set.wells.size()).second) {
      throw InputError(t.location(r, id), w.id, "this well id appears twice; ids must be unique");
    }
    set.wells.push_back(std::move(w));
  }
  return set;
}

std::vector<MeasuringPointRecord> read_measuring_points(const Table& t, const WellSet& wells,
                                                        TimeReader* times) {
  TimeReader as_utc;
  TimeReader& reader = times ? *times : as_utc;
  const std::size_t well = t.require_column("well"), from = t.require_column("valid_from");
  const auto height = t.find_column("height"), datum = t.find_column("datum");
  const auto sigma = t.find_column("sigma"), point = t.find_column("point");
  const auto source = t.find_column("source"), method = t.find_column("method");
  const auto reason = t.find_column("reason"), moves_with = t.find_column("moves_with");
  if (!height && !point) {
    throw InputError(t.source(),
                     "the measuring-point table needs a 'height' column (with "
                     "'datum') or a 'point' column naming adjusted network points");
  }
  std::vector<MeasuringPointRecord> out;
  const auto text = [&](std::size_t r, std::optional<std::size_t> c) {
    return c ? std::string(t.cell(r, *c)) : std::string();
  };
  for (std::size_t r = 0; r < t.row_count(); ++r) {
    MeasuringPointRecord m;
    m.row = t.source_row(r);
    m.well = std::string(t.cell(r, well));
    if (!wells.index.count(m.well)) {
      throw InputError(t.location(r, well), m.well, "this well is not in the wells table");
    }
    m.valid_from_text = std::string(t.cell(r, from));
    m.valid_from = reader.read(m.valid_from_text, t.location(r, from), t.time_zone());
    if (height) m.height = t.height(r, *height);
    m.table_unit = t.length_unit();
    if (sigma) m.sigma = t.sigma(r, *sigma);
    m.datum = text(r, datum);
    m.point = text(r, point);
    m.source = text(r, source);
    m.method = text(r, method);
    m.reason = text(r, reason);
    m.moves_with = text(r, moves_with);
    if (!m.height && m.point.empty()) {
      throw InputError(
          t.location(r, height ? *height : well), "",
          "a measuring-point record needs a height (with its datum) or a network point");
    }
    if (m.height && m.datum.empty()) {
      throw InputError(t.location(r, datum ? *datum : *height), "",
                       "a measuring-point height needs its datum (vertical reference)");
    }
    out.push_back(std::move(m));
  }
  return out;
}

}  // namespace levelhead
