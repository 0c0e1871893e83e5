#include "levelhead/levelling/fieldbook.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <map>
#include <numbers>
#include <set>

#include "levelhead/core/bounds.hpp"
#include "levelhead/core/errors.hpp"
#include "util/option_checks.hpp"
#include "util/text.hpp"

namespace levelhead {

std::string to_string(SightKind kind) {
  switch (kind) {
    case SightKind::back:
      return "back";
    case SightKind::fore:
      return "fore";
    case SightKind::side:
      return "side";
  }
  throw std::logic_error("unhandled SightKind");
}

namespace {

SightKind parse_sight(const Table& table, std::size_t row, std::size_t column) {
  const std::string key = util::to_lower(table.cell(row, column));
  if (key == "back" || key == "b" || key == "bs" || key == "backsight") return SightKind::back;
  if (key == "fore" || key == "f" || key == "fs" || key == "foresight") return SightKind::fore;
  if (key == "side" || key == "s" || key == "is" || key == "intermediate") return SightKind::side;
  throw InputError(table.location(row, column), std::string(table.cell(row, column)),
                   "expected back (BS), fore (FS) or side (IS)");
}

}  // namespace

FieldBook read_field_book(const Table& table) {
  const std::size_t run_col = table.require_column("run");
  const std::size_t setup_col = table.require_column("setup");
  const std::size_t sight_col = table.require_column("sight");
  const std::size_t reading_col = table.require_column("reading");
  const auto date_col = table.find_column("date");
  const auto point_col = table.find_column("point");
  const auto reading2_col = table.find_column("reading2");
  const auto distance_col = table.find_column("distance");
  const auto temperature_col = table.find_column("temperature");
  const auto remark_col = table.find_column("remark");
  const auto instrument_col = table.find_column("instrument");
  const auto observer_col = table.find_column("observer");

  FieldBook book{table.source(), {}};
  book.sights.reserve(table.row_count());
  for (std::size_t row = 0; row < table.row_count(); ++row) {
    Sight s;
    s.row = table.source_row(row);
    s.run = std::string(table.cell(row, run_col));
    if (s.run.empty())
      throw InputError(table.location(row, run_col), "", "every sight needs its run id");
    const auto setup = table.count(row, setup_col);
    if (!setup)
      throw InputError(table.location(row, setup_col), "", "every sight needs its setup number");
    s.setup = *setup;
    s.kind = parse_sight(table, row, sight_col);
    const auto reading = table.length(row, reading_col);
    if (!reading)
      throw InputError(table.location(row, reading_col), "", "every sight needs a rod reading");
    s.reading = *reading;
    if (reading2_col) s.reading2 = table.length(row, *reading2_col);
    if (distance_col) {
      s.distance =
          table.length_within(row, *distance_col, bounds::max_sight_distance, "a sight distance");
      if (s.distance && *s.distance < 0.0) {
        throw InputError(table.location(row, *distance_col),
                         std::string(table.cell(row, *distance_col)),
                         "a sight distance cannot be negative");
      }
    }
    if (temperature_col) s.temperature = table.number(row, *temperature_col);
    if (date_col) s.date = table.date(row, *date_col).value_or("");
    if (point_col) s.point = std::string(table.cell(row, *point_col));
    if (remark_col) s.remark = std::string(table.cell(row, *remark_col));
    if (instrument_col) s.instrument = std::string(table.cell(row, *instrument_col));
    if (observer_col) s.observer = std::string(table.cell(row, *observer_col));
    book.sights.push_back(std::move(s));
  }
  return book;
}

void FieldBookOptions::validate() const {
  using util::require_positive;
  require_positive(max_sight_length, "maximum sight length", "m");
  require_positive(max_setup_imbalance, "maximum setup imbalance", "m");
  require_positive(max_section_imbalance, "maximum section imbalance", "m");
  require_positive(double_reading_tolerance, "double-reading tolerance", "m");
  require_positive(rod_length, "rod length", "m");
  require_positive(section_tolerance_mm_per_sqrt_km, "section tolerance", "mm/sqrt(km)");
  if (!(min_reading >= 0.0) || min_reading >= rod_length) {
    throw OptionError(
        fmt::format("minimum rod reading = {} m: must be >= 0 and below the rod "
                    "length ({} m)",
                    min_reading, rod_length));
  }
  if (collimation_mm_per_m && collimation_arcsec) {
    throw OptionError("give the collimation error either in mm per m or in arc seconds, not both");
  }
  if (!(refraction_coefficient >= 0.0 && refraction_coefficient < 1.0)) {
    throw OptionError(
        fmt::format("refraction coefficient = {}: must lie in [0, 1)", refraction_coefficient));
  }
}

double FieldBookOptions::collimation_slope() const {
  if (collimation_mm_per_m) return *collimation_mm_per_m * 1e-3;
  if (collimation_arcsec)
    return std::tan(*collimation_arcsec * std::numbers::pi / (180.0 * 3600.0));
  return 0.0;
}

namespace {

struct SetupSights {
  const Sight* back = nullptr;
  const Sight* fore = nullptr;
  std::vector<const Sight*> sides;
};

std::string setup_name(const Sight& s) { return fmt::format("run '{}', setup {}", s.run, s.setup); }

double mean_reading(const Sight& s) {
  return s.reading2 ? 0.5 * (s.reading + *s.reading2) : s.reading;
}

// The corrected height difference from the back sight to another sight of
// the same setup (the fore sight or a side shot), with its corrections.
struct SightDifference {
  double observed = 0.0, collimation = 0.0, rod_scale = 0.0, rod_expansion = 0.0;
  std::optional<double> curvature_refraction;
  double corrected() const {
    return observed + collimation + rod_scale + rod_expansion + curvature_refraction.value_or(0.0);
  }
};

class Reducer {
 public:
  Reducer(const FieldBook& book, const FieldBookOptions& options)
      : book_(book), options_(options), slope_(options.collimation_slope()) {}

  FieldBookResult run() {
    for (const auto& setups : group_runs()) reduce_run(setups);
    merge_sections();
    for (const SetupReduction& s : result_.setups)
      result_.failed_setups += !s.failed_checks.empty();
    for (const ReducedSection& s : result_.sections) result_.failed_sections += !s.flags.empty();
    return std::move(result_);
  }

 private:
  CellLocation at(const Sight& s, const char* column = "") const {
    return {book_.file, s.row, column};
  }

  bool is_section_end(const std::string& point) const {
    if (point.empty()) return false;
    const std::string& prefix = options_.turning_point_prefix;
    return prefix.empty() || point.size() < prefix.size() ||
           !util::iequals(std::string_view(point).substr(0, prefix.size()), prefix);
  }

  // Runs in order, each a list of setups in order; rows must keep each run
  // and each setup together.
  std::vector<std::vector<SetupSights>> group_runs() {
    std::vector<std::vector<SetupSights>> runs;
    std::set<std::string> finished_runs;
    std::set<long long> finished_setups;
    const Sight* previous = nullptr;
    for (const Sight& s : book_.sights) {
      const bool new_run = !previous || previous->run != s.run;
      if (new_run) {
        if (previous) finished_runs.insert(previous->run);
        if (finished_runs.count(s.run)) {
          throw InputError(at(s, "run"), s.run,
                           "this run continues after another run began; keep each run's rows "
                           "together, in the order they were observed");
        }
        runs.emplace_back();
        finished_setups.clear();
      }
      if (new_run || previous->setup != s.setup) {
        if (!new_run) finished_setups.insert(previous->setup);
        if (finished_setups.count(s.setup)) {
          throw InputError(at(s, "setup"), std::to_string(s.setup),
                           fmt::format("setup {} of run '{}' appears again after other setups; "
                                       "keep each setup's rows together",
                                       s.setup, s.run));
        }
        runs.back().emplace_back();
      }
      SetupSights& setup = runs.back().back();
      const auto place = [&](const Sight*& slot, const char* what) {
        if (slot) {
          throw InputError(at(s, "sight"), to_string(s.kind),
                           fmt::format("{} has a second {} sight (the first is at row {}); a "
                                       "setup has one back and one fore sight",
                                       setup_name(s), what, slot->row));
        }
        slot = &s;
      };
      if (s.kind == SightKind::back) place(setup.back, "back");
      if (s.kind == SightKind::fore) place(setup.fore, "fore");
      if (s.kind == SightKind::side) setup.sides.push_back(&s);
      previous = &s;
    }
    for (const auto& run : runs) {
      for (const SetupSights& setup : run) {
        const Sight& any = setup.back   ? *setup.back
                           : setup.fore ? *setup.fore
                                        : *setup.sides.front();
        if (!setup.back) {
          throw InputError(at(any, "sight"), to_string(any.kind),
                           fmt::format("{} has no back sight; add it", setup_name(any)));
        }
        if (!setup.fore) {
          throw InputError(at(any, "sight"), to_string(any.kind),
                           fmt::format("{} has no fore sight; add it", setup_name(any)));
        }
      }
    }
    return runs;
  }

  void check_plausible(const Sight& s) const {
    for (const auto& [value, column] : {std::pair{std::optional<double>(s.reading), "reading"},
                                        std::pair{s.reading2, "reading2"}}) {
      if (value && (*value < 0.0 || *value > options_.rod_length)) {
        throw InputError(at(s, column), fmt::format("{}", *value),
                         fmt::format("a rod reading must lie between 0 and the rod length ({} m); "
                                     "check the unit (--unit) and the value",
                                     options_.rod_length));
      }
    }
  }

  SightDifference difference(const Sight& back, const Sight& other) const {
    SightDifference d;
    const double b = mean_reading(back), f = mean_reading(other);
    d.observed = b - f;
    if (back.distance && other.distance) {
      const double db = *back.distance, df = *other.distance;
      d.collimation = -slope_ * (db - df);
      if (options_.curvature_refraction) {
        d.curvature_refraction =
            -(1.0 - options_.refraction_coefficient) / (2.0 * earth_radius_m) * (db * db - df * df);
      }
    } else if (slope_ != 0.0) {
      const Sight& missing = back.distance ? other : back;
      throw InputError(at(missing, "distance"), "",
                       "the collimation correction needs the sight distances of every setup");
    }
    d.rod_scale = d.observed * options_.rod_scale_ppm * 1e-6;
    if (options_.rod_expansion_ppm_per_c) {
      for (const Sight* s : {&back, &other}) {
        if (!s->temperature) {
          throw InputError(at(*s, "temperature"), "",
                           "the rod expansion correction needs the rod temperature of every sight");
        }
      }
      const double alpha = *options_.rod_expansion_ppm_per_c * 1e-6;
      const double t0 = options_.rod_reference_temperature_c;
      d.rod_expansion = alpha * (b * (*back.temperature - t0) - f * (*other.temperature - t0));
    }
    return d;
  }

  SetupReduction reduce_setup(const SetupSights& sights) {
    const Sight& back = *sights.back;
    const Sight& fore = *sights.fore;
    for (const Sight* s : {&back, &fore}) check_plausible(*s);
    for (const Sight* s : sights.sides) check_plausible(*s);
    if (back.reading2.has_value() != fore.reading2.has_value()) {
      const Sight& missing = back.reading2 ? fore : back;
      throw InputError(at(missing, "reading2"), "",
                       fmt::format("{} is read twice on one sight but once on the other; give "
                                   "both readings of both sights",
                                   setup_name(back)));
    }
    SetupReduction r;
    r.run = back.run;
    r.date = back.date;
    r.setup = back.setup;
    r.back = back.point;
    r.fore = fore.point;
    r.back_reading = mean_reading(back);
    r.fore_reading = mean_reading(fore);
    r.back_distance = back.distance;
    r.fore_distance = fore.distance;
    r.first_row = std::min(back.row, fore.row);
    const SightDifference d = difference(back, fore);
    r.dh_observed = d.observed;
    r.collimation = d.collimation;
    r.curvature_refraction = d.curvature_refraction;
    r.rod_scale = d.rod_scale;
    r.rod_expansion = d.rod_expansion;
    r.dh = d.corrected();
    if (back.reading2) {
      r.double_difference = (back.reading - fore.reading) - (*back.reading2 - *fore.reading2);
      if (std::abs(*r.double_difference) > options_.double_reading_tolerance) {
        r.failed_checks.push_back("double-reading");
      }
    }
    if (back.distance && fore.distance) {
      r.imbalance = *back.distance - *fore.distance;
      if (std::max(*back.distance, *fore.distance) > options_.max_sight_length) {
        r.failed_checks.push_back("long-sight");
      }
      if (std::abs(*r.imbalance) > options_.max_setup_imbalance) {
        r.failed_checks.push_back("setup-imbalance");
      }
    } else {
      ++result_.setups_without_distances;
    }
    const auto low = [&](const Sight& s) {
      return std::min(s.reading, s.reading2.value_or(s.reading)) < options_.min_reading;
    };
    if (low(back) || low(fore)) r.failed_checks.push_back("low-reading");
    return r;
  }

  struct OpenSection {
    std::string from;
    double dh = 0.0;
    std::optional<double> length = 0.0;
    std::optional<double> imbalance = 0.0;
    long long setups = 0;
    std::string date;
    std::vector<std::string> flags;
    std::size_t first_row = 0;
  };

  void reduce_run(const std::vector<SetupSights>& setups) {
    ++result_.run_count;
    const Sight& first = *setups.front().back;
    if (!is_section_end(first.point)) {
      throw InputError(
          at(first, "point"), first.point,
          fmt::format("run '{}' starts on {}; a run must start on a named point "
                      "(benchmark, well, mark)",
                      first.run, first.point.empty() ? "an anonymous point" : "a turning point"));
    }
    OpenSection open{first.point, 0.0, 0.0, 0.0, 0, first.date, {}, first.row};
    const Sight* previous_fore = nullptr;
    for (const SetupSights& sights : setups) {
      const Sight& back = *sights.back;
      if (previous_fore && !back.point.empty() && back.point != previous_fore->point) {
        throw InputError(
            at(back, "point"), back.point,
            fmt::format("{} sights back to '{}' but the previous setup sighted "
                        "forward to {} (row {}); the back sight must be the last "
                        "fore sight",
                        setup_name(back), back.point,
                        previous_fore->point.empty() ? std::string("an anonymous point")
                                                     : "'" + previous_fore->point + "'",
                        previous_fore->row));
      }
      SetupReduction setup = reduce_setup(sights);
      for (const Sight* side : sights.sides) add_side_shot(open, back, *side);
      open.dh += setup.dh;
      open.setups += 1;
      if (open.length && setup.back_distance && setup.fore_distance) {
        *open.length += *setup.back_distance + *setup.fore_distance;
        *open.imbalance += *setup.imbalance;
      } else {
        open.length.reset();
        open.imbalance.reset();
      }
      for (const std::string& check : setup.failed_checks) {
        open.flags.push_back(fmt::format("{}(setup {})", check, setup.setup));
      }
      const Sight& fore = *sights.fore;
      result_.setups.push_back(std::move(setup));
      previous_fore = &fore;
      if (!is_section_end(fore.point)) continue;
      close_section(open, fore);
      open = OpenSection{fore.point, 0.0, 0.0, 0.0, 0, fore.date, {}, fore.row};
    }
    if (!is_section_end(previous_fore->point)) {
      throw InputError(
          at(*previous_fore, "point"), previous_fore->point,
          fmt::format("run '{}' ends on {}; a run must close on a named point, or "
                      "the last part of it cannot be used",
                      previous_fore->run,
                      previous_fore->point.empty() ? "an anonymous point" : "a turning point"));
    }
  }

  void close_section(OpenSection& open, const Sight& fore) {
    if (fore.point == open.from) {
      RunClosure c{fore.run, fore.point, open.dh, open.length, std::nullopt, false, fore.row};
      if (c.length) {
        c.tolerance =
            options_.section_tolerance_mm_per_sqrt_km * 1e-3 * std::sqrt(*c.length / 1000.0);
        c.passed = std::abs(c.misclosure) <= *c.tolerance;
      }
      result_.closures.push_back(c);
      return;
    }
    if (open.imbalance && std::abs(*open.imbalance) > options_.max_section_imbalance) {
      open.flags.push_back("section-imbalance");
    }
    ReducedSection s;
    s.from = open.from;
    s.to = fore.point;
    s.dh = open.dh;
    s.length = open.length;
    s.levelled_length = open.length;
    s.setups = open.setups;
    s.run = fore.run;
    s.date = open.date.empty() ? fore.date : open.date;
    s.instrument = fore.instrument;
    s.observer = fore.observer;
    s.imbalance = open.imbalance;
    s.flags = open.flags;
    s.rows = {open.first_row};
    pieces_.push_back(std::move(s));
  }

  void add_side_shot(const OpenSection& open, const Sight& back, const Sight& side) {
    if (!is_section_end(side.point)) {
      throw InputError(at(side, "point"), side.point,
                       "a side shot needs a named point (the mark or well top it was read on)");
    }
    if (side.point == open.from) {
      throw InputError(at(side, "point"), side.point,
                       "a side shot to the start of its own section carries no information");
    }
    const SightDifference d = difference(back, side);
    ReducedSection s;
    s.from = open.from;
    s.to = side.point;
    s.dh = open.dh + d.corrected();
    if (open.length && back.distance && side.distance) {
      s.length = *open.length + *back.distance + *side.distance;
      s.levelled_length = s.length;
    }
    s.setups = open.setups + 1;
    s.run = side.run;
    s.date = side.date.empty() ? open.date : side.date;
    s.instrument = side.instrument;
    s.observer = side.observer;
    s.side_shot = true;
    if (std::min(side.reading, side.reading2.value_or(side.reading)) < options_.min_reading) {
      s.flags.push_back("low-reading(side)");
    }
    s.rows = {side.row};
    ++result_.side_shots;
    pieces_.push_back(std::move(s));
  }

  // Repeated runs over the same pair of points become their mean.
  void merge_sections() {
    std::map<std::pair<std::string, std::string>, std::size_t> group_of;
    std::vector<std::vector<const ReducedSection*>> groups;
    for (const ReducedSection& piece : pieces_) {
      const auto key = std::minmax(piece.from, piece.to);
      const auto [it, inserted] = group_of.emplace(std::pair{key.first, key.second}, groups.size());
      if (inserted) groups.emplace_back();
      groups[it->second].push_back(&piece);
    }
    for (const auto& group : groups) {
      ReducedSection merged = *group.front();
      if (group.size() == 1) {
        result_.sections.push_back(std::move(merged));
        continue;
      }
      std::vector<double> oriented;
      double length_sum = 0.0;
      bool all_lengths = true;
      std::set<std::string> runs;
      merged.setups = 0;
      merged.rows.clear();
      merged.flags.clear();
      for (const ReducedSection* piece : group) {
        oriented.push_back(piece->from == merged.from ? piece->dh : -piece->dh);
        all_lengths = all_lengths && piece->length.has_value();
        if (piece->length) length_sum += *piece->length;
        merged.setups += piece->setups;
        merged.side_shot = merged.side_shot || piece->side_shot;
        merged.rows.push_back(piece->rows.front());
        merged.flags.insert(merged.flags.end(), piece->flags.begin(), piece->flags.end());
        if (runs.insert(piece->run).second && piece != group.front())
          merged.run += "+" + piece->run;
        for (auto [label, own] : {std::pair{&merged.instrument, &piece->instrument},
                                  std::pair{&merged.observer, &piece->observer}}) {
          if (("+" + *label + "+").find("+" + *own + "+") == std::string::npos)
            *label += "+" + *own;
        }
      }
      merged.runs = group.size();
      double sum = 0.0;
      for (double dh : oriented) sum += dh;
      merged.dh = sum / static_cast<double>(oriented.size());
      const auto [low, high] = std::minmax_element(oriented.begin(), oriented.end());
      merged.spread = *high - *low;
      if (all_lengths) {
        merged.length = length_sum / static_cast<double>(group.size());
        merged.levelled_length = length_sum;
        merged.spread_tolerance =
            options_.section_tolerance_mm_per_sqrt_km * 1e-3 * std::sqrt(*merged.length / 1000.0);
        if (*merged.spread > *merged.spread_tolerance) merged.flags.push_back("runs-disagree");
      } else {
        merged.length.reset();
        merged.levelled_length.reset();
        merged.flags.push_back("runs-unchecked(no length)");
      }
      result_.sections.push_back(std::move(merged));
    }
  }

  const FieldBook& book_;
  const FieldBookOptions& options_;
  const double slope_;
  std::vector<ReducedSection> pieces_;
  FieldBookResult result_;
};

}  // namespace

FieldBookResult reduce_field_book(const FieldBook& book, const FieldBookOptions& options) {
  options.validate();
  if (book.sights.empty()) throw InputError(book.file, "the field book has no sights");
  return Reducer(book, options).run();
}

}  // namespace levelhead
