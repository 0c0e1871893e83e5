#include "levelhead/heads.hpp"

#include <cpl_conv.h>
#include <fmt/format.h>
#include <gdal.h>
#include <ogr_api.h>
#include <ogr_srs_api.h>

#include <algorithm>
#include <charconv>
#include <cmath>
#include <deque>
#include <nlohmann/json.hpp>

#include "levelhead/density.hpp"
#include "levelhead/errors.hpp"
#include "levelhead/event_qa.hpp"
#include "levelhead/levels.hpp"
#include "levelhead/output_files.hpp"
#include "levelhead/version.hpp"
#include "util/json_text.hpp"
#include "util/option_checks.hpp"
#include "util/text.hpp"

namespace levelhead {

void HeadOptions::validate() const {
  util::require_positive(depth_sigma, "depth sigma", "m");
  util::require_positive(mp_change_tolerance, "measuring-point change tolerance", "m");
  util::require_positive(repeat_tolerance, "repeat tolerance", "m");
  util::require_positive(repeat_window_hours, "repeat window", "h");
  util::require_positive(synoptic_window_hours, "synoptic window", "h");
  util::require_positive(max_depth, "largest plausible depth", "m");
  util::require_positive(history_tolerance, "history tolerance", "m");
  if (map_contour_interval)
    util::require_positive(*map_contour_interval, "map contour interval", "m");
  if (target.empty()) throw OptionError("a target reference is needed (--to)");
  if (environmental_reference && !std::isfinite(*environmental_reference)) {
    throw OptionError("the environmental-head reference elevation must be a number (m)");
  }
}

std::optional<double> method_sigma(const std::string& method,
                                   std::optional<double> contour_interval) {
  const std::string m = util::to_lower(method);
  if (m == "levelled" || m == "leveled" || m == "levelling") return 0.005;
  if (m == "gnss" || m == "gps" || m == "rtk") return 0.03;
  if (m == "hand-level") return 0.02;
  if (m == "altimeter") return 1.0;
  if (m == "map") {
    if (!contour_interval) {
      throw OptionError(
          "a measuring point read from a map has no sigma: give the map's contour "
          "interval (--map-contour-interval) or the record's sigma");
    }
    return 0.5 * *contour_interval;
  }
  return std::nullopt;
}

namespace {

// The `checked` cell (yes/no) of the outputs of `adjust` and `epochs`.
bool read_checked(const Table& t, std::size_t row, std::size_t column) {
  const std::string_view value = t.cell(row, column);
  if (!util::iequals(value, "yes") && !util::iequals(value, "no")) {
    throw InputError(t.location(row, column), std::string(value),
                     "expected yes or no, as the outputs of `levelhead adjust` and `levelhead "
                     "epochs` have");
  }
  return util::iequals(value, "yes");
}

}  // namespace

void require_metric_target(const std::string& target, const ReferenceSet& references) {
  const HeightUnit unit = reference_height_unit(target, references);
  if (unit.metric()) return;
  throw ReferenceError(fmt::format(
      "the target reference '{}' measures heights in {}; heads are computed and written in "
      "metres and would be mislabelled with it. Give {} as the target and convert the unit for "
      "display",
      target, unit.name,
      unit.metre_equivalent.empty() ? std::string("the metre CRS of the same datum")
                                    : unit.metre_equivalent + " (the same datum in metres)"));
}

NetworkHeights read_network_heights(const Table& t) {
  const std::size_t id = t.require_column("id"), height = t.require_column("height");
  const auto sigma = t.find_column("sigma"), reference = t.find_column("reference");
  const auto checked = t.find_column("checked");
  NetworkHeights out;
  for (std::size_t r = 0; r < t.row_count(); ++r) {
    const auto h = t.height(r, height);
    if (!h) continue;
    NetworkHeight n;
    n.height = *h;
    if (sigma) n.sigma = t.sigma(r, *sigma);
    if (reference) n.reference = std::string(t.cell(r, *reference));
    if (checked) n.checked = read_checked(t, r, *checked);
    out.emplace(std::string(t.cell(r, id)), n);
  }
  return out;
}

MonitoredHeights read_monitored_heights(const Table& t) {
  const std::size_t point = t.require_column("point"), time = t.require_column("time");
  const std::size_t height = t.require_column("height"), reference = t.require_column("reference");
  const auto sigma = t.find_column("sigma"), checked = t.find_column("checked");
  MonitoredHeights out;
  for (std::size_t r = 0; r < t.row_count(); ++r) {
    const std::string id(t.cell(r, point));
    const auto when = parse_iso8601(t.cell(r, time));
    if (!when) {
      throw InputError(
          t.location(r, time), std::string(t.cell(r, time)),
          "expected an ISO 8601 time, as heights_by_epoch.csv of `levelhead epochs` has");
    }
    const auto h = t.height(r, height);
    if (!h) throw InputError(t.location(r, height), "", "every epoch height needs a value");
    MonitoredSeries& series = out[id];
    const std::string ref(t.cell(r, reference));
    if (series.epochs.empty()) {
      series.reference = ref;
    } else if (series.reference != ref) {
      throw InputError(
          t.location(r, reference), ref,
          fmt::format("point '{}' has epochs in '{}' and '{}'; one reference per point", id,
                      series.reference, ref));
    }
    series.epochs.push_back({when->seconds, *h, sigma ? t.sigma(r, *sigma).value_or(0.0) : 0.0,
                             checked ? read_checked(t, r, *checked) : true});
  }
  for (auto& [id, series] : out) {
    std::stable_sort(
        series.epochs.begin(), series.epochs.end(),
        [](const MonitoredEpoch& a, const MonitoredEpoch& b) { return a.time < b.time; });
    // Heights are interpolated in time between epochs: two at one time
    // leave no time between them (a division by zero).
    for (std::size_t i = 1; i < series.epochs.size(); ++i) {
      if (series.epochs[i].time - series.epochs[i - 1].time < 1.0) {
        throw InputError(t.source(),
                         fmt::format("point '{}' has two epochs at {}; epochs must be apart in "
                                     "time (merge them, or correct the dates in `levelhead "
                                     "epochs`)",
                                     id, format_utc(series.epochs[i].time)));
      }
    }
  }
  return out;
}

// Linear in time between the two epochs around `time`, or through the
// nearest two beyond them (flagged); sigma interpolated alike, and the
// nearest epoch's beyond them (an extrapolation is less certain than that).
MonitoredValue monitored_at(const MonitoredSeries& series, double time) {
  const auto& e = series.epochs;
  if (e.size() == 1)
    return {e[0].height, e[0].sigma, std::abs(time - e[0].time) > 0.5, e[0].checked};
  const bool before = time<e.front().time, after = time> e.back().time;
  std::size_t i = 1;
  while (i + 1 < e.size() && e[i].time < time) ++i;
  const MonitoredEpoch& a = e[i - 1];
  const MonitoredEpoch& b = e[i];
  const double f = (time - a.time) / (b.time - a.time);
  MonitoredValue v;
  v.height = a.height + f * (b.height - a.height);
  v.sigma = before ? a.sigma : after ? b.sigma : a.sigma + f * (b.sigma - a.sigma);
  v.extrapolated = before || after;
  v.checked = a.checked && b.checked;
  return v;
}

namespace {

// Decimals a head deserves: about one below its standard deviation, so no
// table shows more digits than the data carry (0.003 m -> 3, 0.02 m -> 2).
int decimals_for(double sigma) {
  if (!(sigma > 0.0)) return 3;
  return std::clamp(static_cast<int>(std::ceil(-std::log10(sigma))), 1, 4);
}

struct History {
  std::vector<std::size_t> records;  // indices, by valid_from
};

struct WellState {
  double last_time = -INFINITY;
  std::optional<EventHead> event;  // contourable reading nearest the event
  double event_distance = INFINITY;
  bool repeat_problem = false;
  std::vector<std::pair<double, double>> series;  // (time, head) of contourable numeric heads
  std::deque<std::pair<double, double>> recent;   // (time, head) within the repeat window
};

}  // namespace

HeadsSummary compute_heads(const WellSet& wells, const std::vector<MeasuringPointRecord>& records,
                           const NetworkHeights& network, const MonitoredHeights& monitored,
                           const ReferenceSet& references, const ProjSettings& settings,
                           const HeadOptions& options, const std::filesystem::path& levels,
                           const TableOptions& levels_table, const std::filesystem::path& folder,
                           bool geopackage) {
  options.validate();
  require_metric_target(options.target, references);
  std::vector<QaEntry> qa;  // measuring-point entries; reading entries are streamed

  // 1. Every measuring point in the target reference.
  std::vector<MeasuringPointElevation> elevation(records.size());
  std::map<std::string, std::vector<std::size_t>> by_datum;
  std::vector<double> given(records.size()), given_sigma(records.size(), NAN);
  for (std::size_t k = 0; k < records.size(); ++k) {
    const MeasuringPointRecord& m = records[k];
    std::string datum = m.datum;
    // A point seen in one epoch only shows no movement: the network's height is used.
    auto monitored_point = m.point.empty() ? monitored.end() : monitored.find(m.point);
    if (monitored_point != monitored.end() && monitored_point->second.epochs.size() < 2)
      monitored_point = monitored.end();
    if (!m.moves_with.empty()) {
      const auto it = monitored.find(m.moves_with);
      if (it == monitored.end()) {
        throw InputError(CellLocation{"measuring points", m.row, "moves_with"}, m.moves_with,
                         "this point is not among the monitored heights (--monitored, "
                         "heights_by_epoch.csv of `levelhead epochs`)");
      }
      elevation[k].motion = &it->second;
      elevation[k].motion_base = monitored_at(it->second, m.valid_from.seconds);
    }
    if (monitored_point != monitored.end()) {
      const MonitoredValue at_survey = monitored_at(monitored_point->second, m.valid_from.seconds);
      given[k] = at_survey.height;
      given_sigma[k] = at_survey.sigma;
      datum = monitored_point->second.reference;
      elevation[k].source = "monitored:" + m.point;
      elevation[k].motion = &monitored_point->second;
      elevation[k].follows_point = true;
      elevation[k].motion_base = at_survey;
      if (!m.moves_with.empty()) {
        throw InputError(CellLocation{"measuring points", m.row, "moves_with"}, m.moves_with,
                         "a record that names a monitored point already moves with it; leave "
                         "moves_with empty");
      }
    } else if (!m.point.empty()) {
      const auto it = network.find(m.point);
      if (it == network.end()) {
        throw InputError(CellLocation{"measuring points", m.row, "point"}, m.point,
                         "this point is not among the adjusted heights (--adjusted)");
      }
      given[k] = it->second.height;
      if (it->second.sigma) given_sigma[k] = *it->second.sigma;
      datum = it->second.reference.empty() ? m.datum : it->second.reference;
      elevation[k].source = "network:" + m.point;
      if (!it->second.checked) elevation[k].flags.push_back("mp-unchecked");
      if (datum.empty()) {
        throw InputError(CellLocation{"measuring points", m.row, "datum"}, "",
                         fmt::format("the adjusted heights name no reference for point '{}'; give "
                                     "the datum in the measuring-point table",
                                     m.point));
      }
    } else {
      given[k] = *m.height;
      if (m.sigma) {
        given_sigma[k] = *m.sigma;
      } else if (const auto by_method = method_sigma(m.method, options.map_contour_interval)) {
        given_sigma[k] = *by_method;
        elevation[k].flags.push_back("mp-sigma-from-method");
      }
      elevation[k].source = m.source.empty() ? m.datum : m.source;
    }
    if (!m.moves_with.empty()) elevation[k].source += ", moving with monitored:" + m.moves_with;
    // Levelling that nothing checks: once per record here; its readings carry mp-unchecked.
    const std::string fix = "a blunder there cannot show; level a loop through it";
    if (std::find(elevation[k].flags.begin(), elevation[k].flags.end(), "mp-unchecked") !=
        elevation[k].flags.end()) {
      qa.push_back({m.well, m.valid_from_text, "mp-unchecked",
                    fmt::format("point '{}' of the adjustment rests on levelling nothing checks "
                                "(a side shot or spur); {}",
                                m.point, fix),
                    m.row, "measuring-points"});
    }
    if (elevation[k].motion) {
      std::vector<std::string> unchecked;
      for (const MonitoredEpoch& e : elevation[k].motion->epochs) {
        if (!e.checked) unchecked.push_back(format_utc(e.time).substr(0, 10));
      }
      if (!unchecked.empty()) {
        qa.push_back({m.well, m.valid_from_text, "mp-unchecked",
                      fmt::format("the epochs {} of '{}' rest on levelling nothing checks (a side "
                                  "shot or spur); {}",
                                  fmt::join(unchecked, ", "),
                                  m.moves_with.empty() ? m.point : m.moves_with, fix),
                      m.row, "measuring-points"});
      }
    }
    by_datum[datum].push_back(k);
  }
  for (const auto& [datum, indices] : by_datum) {
    std::optional<HeightConverter> made;
    try {
      made.emplace(datum, options.target, options.crs, references, settings);
    } catch (const ReferenceError& e) {
      std::vector<std::string> named;
      for (std::size_t k : indices) {
        if (named.size() < 5)
          named.push_back(fmt::format("well '{}' (row {})", records[k].well, records[k].row));
      }
      throw ReferenceError(fmt::format(
          "measuring points of {}{} are in '{}', which cannot be brought into '{}': {}. Define "
          "'{}' in a references file (an offset, a tie or a grid) or correct the datum; heads in "
          "different references are never merged",
          fmt::join(named, ", "), indices.size() > named.size() ? " and others" : "", datum,
          options.target, e.what(), datum));
    }
    HeightConverter& converter = *made;
    // A height written in a foot reference but read as metres (or the other
    // foot) is off by a factor: the table's unit must be the reference's.
    for (std::size_t k : indices) {
      const MeasuringPointRecord& m = records[k];
      if (!m.height) continue;
      if (const auto problem = table_unit_mismatch(converter.source_unit(), datum, m.table_unit))
        throw InputError(CellLocation{"measuring points", m.row, "datum"}, datum, *problem);
    }
    std::vector<PlanePoint> points;
    std::vector<double> heights;
    for (std::size_t k : indices) {
      const Well& w = wells.wells[wells.index.at(records[k].well)];
      points.push_back({w.x, w.y});
      heights.push_back(given[k]);
    }
    const auto converted = converter.convert(points, heights);
    for (std::size_t j = 0; j < indices.size(); ++j) {
      const std::size_t k = indices[j];
      if (!converted[j].height) {
        throw ReferenceError(fmt::format(
            "well '{}' (measuring points row {}): its height in '{}' cannot be brought into '{}': "
            "{}",
            records[k].well, records[k].row, datum, options.target, converted[j].failure));
      }
      MeasuringPointElevation& e = elevation[k];
      e.height = *converted[j].height;
      const double s = std::isnan(given_sigma[k]) ? 0.0 : given_sigma[k];
      e.sigma = std::sqrt(s * s + converted[j].variance_added);
      e.sigma_known = !std::isnan(given_sigma[k]) && converted[j].variance_complete;
      e.transform = converted[j].transform;
      e.flags.insert(e.flags.end(), converted[j].flags.begin(), converted[j].flags.end());
      if (!e.sigma_known) e.flags.push_back("mp-sigma-unknown");
    }
  }

  // 2. Histories, and changes between surveys.
  std::vector<History> history(wells.wells.size());
  for (std::size_t k = 0; k < records.size(); ++k) {
    history[wells.index.at(records[k].well)].records.push_back(k);
  }
  for (History& h : history) {
    std::stable_sort(h.records.begin(), h.records.end(), [&](std::size_t a, std::size_t b) {
      return records[a].valid_from.seconds < records[b].valid_from.seconds;
    });
    for (std::size_t j = 1; j < h.records.size(); ++j) {
      const MeasuringPointRecord& a = records[h.records[j - 1]];
      const MeasuringPointRecord& b = records[h.records[j]];
      if (std::abs(a.valid_from.seconds - b.valid_from.seconds) < 0.5) {
        throw InputError(CellLocation{"measuring points", b.row, "valid_from"}, b.valid_from_text,
                         fmt::format("well '{}' has two measuring-point records from the same "
                                     "time (rows {} and {})",
                                     b.well, a.row, b.row));
      }
      const double change = elevation[h.records[j]].height - elevation[h.records[j - 1]].height;
      if (std::abs(change) > options.mp_change_tolerance) {
        qa.push_back({b.well, b.valid_from_text, "mp-changed",
                      fmt::format("{:+.3f} m since {}{}", change, a.valid_from_text,
                                  b.reason.empty() ? std::string(" (no reason given: subsidence, "
                                                                 "damage or a datum mix-up?)")
                                                   : " (" + b.reason + ")"),
                      b.row, "measuring-points"});
      }
    }
  }

  OutputSet out(folder);
  std::ostream& mp_csv = out.open("measuring_points.csv");
  mp_csv << "well,valid_from,height,sigma,reference,source,method,reason,transform,flags,row\n";
  for (std::size_t w = 0; w < history.size(); ++w) {
    for (std::size_t k : history[w].records) {
      const MeasuringPointRecord& m = records[k];
      const MeasuringPointElevation& e = elevation[k];
      mp_csv << csv_cell(m.well) << ',' << csv_cell(m.valid_from_text) << ','
             << fmt::format("{:.4f},{:.4f}", e.height, e.sigma) << ',' << csv_cell(options.target)
             << ',' << csv_cell(e.source) << ',' << csv_cell(m.method) << ',' << csv_cell(m.reason)
             << ',' << csv_cell(e.transform) << ','
             << csv_cell(fmt::format("{}", fmt::join(e.flags, " "))) << ',' << m.row << '\n';
    }
  }

  // 3. GeoPackage layer, the vertical reference as columns and metadata.
  GDALDatasetH gpkg = nullptr;
  OGRLayerH layer = nullptr;
  if (geopackage) {
    GDALAllRegister();
    CPLSetThreadLocalConfigOption("OGR_CURRENT_DATE", "2000-01-01T00:00:00.000Z");  // reproducible
    const std::filesystem::path path = out.reserve("heads.gpkg");
    gpkg = GDALCreate(GDALGetDriverByName("GPKG"), path.string().c_str(), 0, 0, 0, GDT_Unknown,
                      nullptr);
    if (!gpkg) throw OutputError("cannot create heads.gpkg: " + std::string(CPLGetLastErrorMsg()));
    OGRSpatialReferenceH srs = OSRNewSpatialReference(nullptr);
    if (OSRSetFromUserInput(srs, options.crs.c_str()) != OGRERR_NONE) {
      OSRDestroySpatialReference(srs);
      GDALClose(gpkg);
      throw OptionError(fmt::format("--crs '{}' is not a CRS GDAL knows", options.crs));
    }
    OSRSetAxisMappingStrategy(srs, OAMS_TRADITIONAL_GIS_ORDER);
    layer = GDALDatasetCreateLayer(gpkg, "heads", srs, wkbPoint, nullptr);
    OSRDestroySpatialReference(srs);
    for (const auto& [name, type] :
         std::vector<std::pair<const char*, OGRFieldType>>{{"well", OFTString},
                                                           {"time", OFTString},
                                                           {"time_utc", OFTString},
                                                           {"head", OFTReal},
                                                           {"sigma", OFTReal},
                                                           {"datum", OFTString},
                                                           {"mp_elevation", OFTReal},
                                                           {"state", OFTString},
                                                           {"flags", OFTString},
                                                           {"contour", OFTString}}) {
      OGRFieldDefnH field = OGR_Fld_Create(name, type);
      OGR_L_CreateField(layer, field, 1);
      OGR_Fld_Destroy(field);
    }
    GDALSetMetadataItem(layer, "VERTICAL_REFERENCE", options.target.c_str(), nullptr);
    GDALSetMetadataItem(layer, "HEIGHT_UNIT", "metre", nullptr);
    GDALSetMetadataItem(layer, "PRODUCER", version_string().c_str(), nullptr);
    GDALDatasetStartTransaction(gpkg, 1);
  }
  struct GpkgCloser {
    GDALDatasetH& ds;
    ~GpkgCloser() {
      if (ds) GDALClose(ds);
    }
  } closer{gpkg};

  std::ostream& qa_csv = out.open("qa.csv");
  qa_csv << "table,row,well,time,flag,detail\n";
  const auto write_qa = [&](const QaEntry& e) {
    qa_csv << e.table << ',' << e.row << ',' << csv_cell(e.well) << ',' << csv_cell(e.time) << ','
           << e.flag << ',' << csv_cell(e.detail) << '\n';
  };
  for (const QaEntry& e : qa) write_qa(e);

  std::ostream& heads_csv = out.open("heads.csv");
  heads_csv << "well,time,head,sigma,datum,time_utc,mp_elevation,mp_sigma,mp_source,depth,state,"
               "flags,contour,reason,transform,density,freshwater_head,environmental_head\n";

  // 4. Readings, streamed.
  HeadsSummary summary;
  std::string row;
  const std::string target_cell = csv_cell(options.target);
  std::vector<std::string> source_cells, transform_cells;
  for (const MeasuringPointElevation& e : elevation) {
    source_cells.push_back(csv_cell(e.source));
    transform_cells.push_back(csv_cell(e.transform));
  }
  std::vector<WellState> state(wells.wells.size());
  const double repeat_window = options.repeat_window_hours * 3600.0;
  const double half_window = options.synoptic_window_hours * 3600.0 / 2.0;
  read_table_in_batches(levels, levels_table, 100000, [&](Table& t) {
    const std::size_t well_col = t.require_column("well"), time_col = t.require_column("time");
    const std::size_t depth_col = t.require_column("depth");
    const auto status_col = t.find_column("status"), sigma_col = t.find_column("sigma");
    const auto above_col = t.find_column("above");
    const auto density_col = t.find_column("density");
    const auto temperature_col = t.find_column("temperature");
    const auto salinity_col = t.find_column("salinity");
    const auto flags_col = t.find_column("flags");  // carried from an earlier stage (transducer)
    for (std::size_t r = 0; r < t.row_count(); ++r) {
      ++summary.readings;
      const std::string well_id(t.cell(r, well_col));
      const auto wit = wells.index.find(well_id);
      if (wit == wells.index.end()) {
        throw InputError(t.location(r, well_col), well_id, "this well is not in the wells table");
      }
      const Well& well = wells.wells[wit->second];
      const std::string time_text(t.cell(r, time_col));
      const auto when = parse_iso8601(time_text);
      if (!when) {
        throw InputError(
            t.location(r, time_col), time_text,
            "expected an ISO 8601 time, e.g. 2026-10-06T08:30 or 2026-10-06T08:30+02:00");
      }
      const double time = when->seconds;
      std::vector<std::string> flags;
      if (flags_col) {
        std::string_view given = util::trim(t.cell(r, *flags_col));
        while (!given.empty()) {
          const std::size_t space = given.find(' ');
          const std::string_view flag = given.substr(0, space);
          if (!flag.empty()) flags.emplace_back(flag);
          given = space == std::string_view::npos ? std::string_view()
                                                  : util::trim(given.substr(space));
        }
      }

      // Depth or state.
      const LevelValue level = read_level_value(t, r, depth_col, status_col, options.max_depth);
      const std::optional<double> depth = level.depth;
      const std::string& reading_state = level.state;
      const std::string& status = level.status;
      const std::optional<double> above = above_col ? t.depth(r, *above_col) : std::nullopt;
      const bool flowing = reading_state == "flowing" || status == "flowing";

      // Measuring point at that time.
      const History& h = history[wit->second];
      if (h.records.empty()) {
        throw InputError(t.location(r, well_col), well_id,
                         "this well has no measuring-point record; add its survey");
      }
      auto after = std::upper_bound(
          h.records.begin(), h.records.end(), time,
          [&](double tt, std::size_t k) { return tt < records[k].valid_from.seconds; });
      std::size_t k;
      if (after == h.records.begin()) {
        if (!options.allow_before_first) {
          throw InputError(t.location(r, time_col), time_text,
                           fmt::format("this reading of well '{}' is older than its first "
                                       "measuring-point survey ({}); add the earlier survey or "
                                       "allow it with --allow-before-first",
                                       well_id, records[h.records.front()].valid_from_text));
        }
        k = h.records.front();
        flags.push_back("before-first-survey");
      } else {
        k = *(after - 1);
      }
      double mp = elevation[k].height;
      double mp_sigma = elevation[k].sigma;
      if (const MeasuringPointElevation& e = elevation[k]; e.motion) {
        // Ground movement from the levelling epochs (heads.hpp).
        const MonitoredValue now = monitored_at(*e.motion, time);
        mp += now.height - e.motion_base.height;
        const double kept =
            e.follows_point
                ? std::max(mp_sigma * mp_sigma - e.motion_base.sigma * e.motion_base.sigma, 0.0)
                : mp_sigma * mp_sigma;
        mp_sigma = std::sqrt(kept + now.sigma * now.sigma);
        if (now.extrapolated) flags.push_back("mp-motion-extrapolated");
        if (!now.checked || !e.motion_base.checked) flags.push_back("mp-unchecked");
      } else if (options.interpolate && after != h.records.begin() && after != h.records.end() &&
                 !records[*after].starts_new_series()) {
        const std::size_t next = *after;
        const double t0 = records[k].valid_from.seconds, t1 = records[next].valid_from.seconds;
        const double f = (time - t0) / (t1 - t0);
        mp = (1.0 - f) * elevation[k].height + f * elevation[next].height;
        mp_sigma = std::hypot((1.0 - f) * elevation[k].sigma, f * elevation[next].sigma);
        flags.push_back("mp-interpolated");
      }
      for (const std::string& f : elevation[k].flags) flags.push_back(f);

      // Head.
      std::optional<double> head;
      const double depth_sigma =
          sigma_col && t.sigma(r, *sigma_col) ? *t.sigma(r, *sigma_col) : options.depth_sigma;
      if (depth) {
        head = mp - *depth;
        if (*depth < 0.0 && !flowing) flags.push_back("water-above-mp");
      } else if (flowing && above) {
        head = mp + *above;
      }
      const double sigma = std::hypot(mp_sigma, depth_sigma);
      // Saline wells: the density of this reading, else from its temperature
      // and salinity, else the well's; then the freshwater head at the screen.
      std::optional<double> density = density_col ? t.number(r, *density_col) : std::nullopt;
      if (!density && temperature_col && salinity_col) {
        const auto tc = t.number(r, *temperature_col), sal = t.number(r, *salinity_col);
        if (tc && sal) density = water_density_eos80(*sal, *tc);
      }
      if (!density) density = well.density;
      std::optional<double> fresh_head, environmental;
      if (density && head) {
        if (well.ground && well.screen_top && well.screen_bottom) {
          const double screen = *well.ground - 0.5 * (*well.screen_top + *well.screen_bottom);
          fresh_head = freshwater_head(*head, *density, screen);
          if (options.environmental_reference && well.column_density) {
            environmental = environmental_head(*fresh_head, *well.column_density, screen,
                                               *options.environmental_reference);
          }
        } else {
          flags.push_back("freshwater-head-needs-screen");
        }
      }
      if (head && well.ground && !flowing && *head > *well.ground)
        flags.push_back("water-above-ground");
      if (head && well.ground && well.screen_bottom && *head < *well.ground - *well.screen_bottom) {
        flags.push_back("below-screen-bottom");
      }
      if (status == "pumping" || status == "recently-pumped" || reading_state == "pumping" ||
          reading_state == "recently-pumped") {
        flags.push_back("pumping");
      }
      if (options.event && std::abs(time - *options.event) > half_window) {
        flags.push_back("outside-synoptic-window");
      }
      WellState& ws = state[wit->second];
      if (std::abs(time - ws.last_time) < 0.5) {
        flags.push_back("duplicate");
      } else if (time < ws.last_time) {
        flags.push_back("out-of-order");
      }
      while (!ws.recent.empty() && std::abs(time - ws.recent.front().first) > repeat_window) {
        ws.recent.pop_front();
      }
      if (head) {
        for (const auto& [other_time, other_head] : ws.recent) {
          if (std::abs(other_head - *head) > options.repeat_tolerance) {
            flags.push_back("repeat-disagrees");
            write_qa({well_id, time_text, "repeat-disagrees",
                      fmt::format("{:+.3f} m against the reading at {}", *head - other_head,
                                  format_utc(other_time)),
                      t.source_row(r), "levels"});
            break;
          }
        }
        ws.recent.emplace_back(time, *head);
      }
      ws.last_time = std::max(ws.last_time, time);

      // Contouring decision.
      std::string reason;
      const std::string shown_state = !reading_state.empty() ? reading_state : status;
      if (!head) {
        reason = "no head: " + shown_state;
      } else {
        for (const char* excluded : {"pumping", "water-above-mp", "outside-synoptic-window",
                                     "repeat-disagrees", "duplicate", "before-first-survey"}) {
          if (std::find(flags.begin(), flags.end(), excluded) != flags.end()) {
            reason = excluded;
            break;
          }
        }
        // An earlier stage rejected the reading (e.g. transducer-drift-rejected).
        for (const std::string& f : flags) {
          if (reason.empty() && f.size() > 9 && f.compare(f.size() - 9, 9, "-rejected") == 0)
            reason = f;
        }
      }
      const bool contour = reason.empty();
      if (contour && options.event && std::abs(time - *options.event) < ws.event_distance) {
        ws.event_distance = std::abs(time - *options.event);
        std::optional<double> middle;
        if (well.screen_top && well.screen_bottom)
          middle = 0.5 * (*well.screen_top + *well.screen_bottom);
        ws.event = EventHead{well_id, well.aquifer, well.nest, time_text, well.x,
                             well.y,  *head,        sigma,     middle};
      }
      if (std::find(flags.begin(), flags.end(), "repeat-disagrees") != flags.end()) {
        ws.repeat_problem = true;
      }
      if (head && (reason.empty() || reason == "outside-synoptic-window")) {
        ws.series.emplace_back(time, *head);
      }
      summary.heads += head.has_value();
      summary.contourable += contour;
      if (!shown_state.empty()) {
        ++summary.states;
        ++summary.states_by_kind[shown_state.substr(0, shown_state.find(':'))];
      }
      for (const std::string& f : flags) {
        ++summary.flags[f];
        // Informational flags stay in heads.csv; qa.csv lists what needs a look.
        if (f != "repeat-disagrees" && f != "mp-sigma-unknown" && f != "mp-interpolated" &&
            f != "outside-synoptic-window" && f != "mp-unchecked") {
          write_qa({well_id, time_text, f, "", t.source_row(r), "levels"});
        }
      }

      const int dp = decimals_for(sigma);
      const std::string flag_text = fmt::format("{}", fmt::join(flags, " "));
      // One buffer per row, written at once: this loop runs 1e7 times.
      row.clear();
      auto to = std::back_inserter(row);
      append_csv_cell(row, well_id);
      row += ',';
      append_csv_cell(row, time_text);
      row += ',';
      if (head)
        fmt::format_to(to, "{:.{}f},{:.{}f}", *head, dp, sigma, dp + 1);
      else
        row += ',';
      row += ',';
      row += target_cell;
      row += ',';
      row += format_utc(time);
      fmt::format_to(to, ",{:.4f},{:.4f},", mp, mp_sigma);
      row += source_cells[k];
      row += ',';
      if (depth) fmt::format_to(to, "{:.4f}", *depth);
      row += ',';
      append_csv_cell(row, shown_state);
      row += ',';
      append_csv_cell(row, flag_text);
      row += contour ? ",yes," : ",no,";
      append_csv_cell(row, reason);
      row += ',';
      row += transform_cells[k];
      row += ',';
      if (density) fmt::format_to(to, "{:.2f}", *density);
      row += ',';
      if (fresh_head) fmt::format_to(to, "{:.{}f}", *fresh_head, dp);
      row += ',';
      if (environmental) fmt::format_to(to, "{:.{}f}", *environmental, dp);
      row += '\n';
      heads_csv.write(row.data(), static_cast<std::streamsize>(row.size()));
      if (layer) {
        OGRFeatureH f = OGR_F_Create(OGR_L_GetLayerDefn(layer));
        OGR_F_SetFieldString(f, 0, well_id.c_str());
        OGR_F_SetFieldString(f, 1, time_text.c_str());
        OGR_F_SetFieldString(f, 2, format_utc(time).c_str());
        if (head) {
          OGR_F_SetFieldDouble(f, 3, std::round(*head * std::pow(10.0, dp)) / std::pow(10.0, dp));
          OGR_F_SetFieldDouble(f, 4, sigma);
        }
        OGR_F_SetFieldString(f, 5, options.target.c_str());
        OGR_F_SetFieldDouble(f, 6, mp);
        OGR_F_SetFieldString(f, 7, shown_state.c_str());
        OGR_F_SetFieldString(f, 8, flag_text.c_str());
        OGR_F_SetFieldString(f, 9, contour ? "yes" : "no");
        OGRGeometryH g = OGR_G_CreateGeometry(wkbPoint);
        OGR_G_SetPoint_2D(g, 0, well.x, well.y);
        OGR_F_SetGeometryDirectly(f, g);
        const OGRErr err = OGR_L_CreateFeature(layer, f);
        OGR_F_Destroy(f);
        if (err != OGRERR_NONE)
          throw OutputError("writing heads.gpkg failed: " + std::string(CPLGetLastErrorMsg()));
      }
    }
  });
  if (gpkg) {
    GDALDatasetCommitTransaction(gpkg);
    GDALClose(gpkg);
    gpkg = nullptr;
  }

  // 5. Each well against its own history: a head that departs from the
  // running median of its 5 neighbours in time on each side by more than
  // max(tolerance, 5 * 1.4826 * MAD of the well's departures) (a robust
  // scale, Hampel 1974) goes on the re-measure list.
  std::map<std::string, std::vector<std::string>> history_departures;
  for (std::size_t w = 0; w < state.size(); ++w) {
    auto& series = state[w].series;
    if (series.size() < 7) continue;
    std::sort(series.begin(), series.end());
    std::vector<double> departure(series.size());
    for (std::size_t i = 0; i < series.size(); ++i) {
      std::vector<double> around;
      for (std::size_t j = i >= 5 ? i - 5 : 0; j <= std::min(series.size() - 1, i + 5); ++j) {
        if (j != i) around.push_back(series[j].second);
      }
      std::nth_element(around.begin(), around.begin() + around.size() / 2, around.end());
      departure[i] = series[i].second - around[around.size() / 2];
    }
    std::vector<double> magnitude;
    for (double d : departure) magnitude.push_back(std::abs(d));
    std::nth_element(magnitude.begin(), magnitude.begin() + magnitude.size() / 2, magnitude.end());
    const double limit =
        std::max(options.history_tolerance, 5.0 * 1.4826 * magnitude[magnitude.size() / 2]);
    for (std::size_t i = 0; i < series.size(); ++i) {
      if (std::abs(departure[i]) <= limit) continue;
      const std::string when = format_utc(series[i].first);
      write_qa({wells.wells[w].id, when, "departs-from-history",
                fmt::format("{:+.3f} m from the well's running median", departure[i]), 0,
                "levels"});
      history_departures[wells.wells[w].id].push_back(
          fmt::format("head at {} departs {:+.3f} m from its own trend", when, departure[i]));
      ++summary.flags["departs-from-history"];
    }
  }

  // 6. Across wells, for the synoptic event.
  nlohmann::json event_summary = nullptr;
  if (options.event) {
    std::vector<EventHead> event_heads;
    for (const WellState& ws : state) {
      if (ws.event) event_heads.push_back(*ws.event);
    }
    const EventQaResult e = check_event(event_heads, EventQaOptions{});
    std::ostream& ev = out.open("event.csv");
    ev << "well,time,head,sigma,aquifer,nest,prediction,misfit,flags\n";
    std::map<std::string, std::vector<std::string>> remeasure;
    for (std::size_t i = 0; i < event_heads.size(); ++i) {
      const EventHead& h = event_heads[i];
      const EventCheck& c = e.wells[i];
      const int dp = decimals_for(h.sigma);
      ev << csv_cell(h.well) << ',' << csv_cell(h.time) << ','
         << fmt::format("{:.{}f},{:.{}f}", h.head, dp, h.sigma, dp + 1) << ','
         << csv_cell(h.aquifer) << ',' << csv_cell(h.nest) << ','
         << (c.prediction ? fmt::format("{:.{}f}", *c.prediction, dp) : "") << ','
         << (c.misfit ? fmt::format("{:+.{}f}", *c.misfit, dp) : "") << ','
         << csv_cell(fmt::format("{}", fmt::join(c.flags, " "))) << '\n';
      for (const std::string& f : c.flags) {
        if (f == "neighbour-misfit") {
          remeasure[h.well].push_back(
              fmt::format("head {:+.3f} m off its neighbours' plane", *c.misfit));
        }
        if (f == "mp-sigma-large")
          remeasure[h.well].push_back("measuring point too uncertain beside its neighbours");
      }
    }
    for (std::size_t w = 0; w < wells.wells.size(); ++w) {
      if (!state[w].event)
        remeasure[wells.wells[w].id].push_back("no usable reading in the event window");
      if (state[w].repeat_problem)
        remeasure[wells.wells[w].id].push_back("repeat readings disagree");
      for (const std::string& d : history_departures[wells.wells[w].id]) {
        remeasure[wells.wells[w].id].push_back(d);
      }
    }
    std::ostream& nests = out.open("nests.csv");
    nests << "nest,shallow,deep,dh,sigma,direction,significant\n";
    for (const NestPair& n : e.nests) {
      nests << csv_cell(n.nest) << ',' << csv_cell(n.shallow) << ',' << csv_cell(n.deep) << ','
            << fmt::format("{:+.4f},{:.4f}", n.dh, n.sigma) << ',' << n.direction << ','
            << (n.significant ? "yes" : "no") << '\n';
    }
    std::ostream& rm = out.open("remeasure.csv");
    rm << "well,reasons\n";
    for (const auto& [well_id, reasons] : remeasure) {
      rm << csv_cell(well_id) << ',' << csv_cell(fmt::format("{}", fmt::join(reasons, "; ")))
         << '\n';
    }
    event_summary = {{"centre", format_utc(*options.event)},
                     {"wells_with_reading", event_heads.size()},
                     {"remeasure", remeasure.size()},
                     {"nest_pairs", e.nests.size()}};
    summary.remeasure = remeasure.size();
  }

  nlohmann::json s;
  s["event"] = event_summary;
  s["levelhead_version"] = version_string();
  s["command"] = "heads";
  s["target_reference"] = options.target;
  s["units"] = "m";
  s["time_rule"] = "times with a zone are converted to UTC; times without one are read as UTC";
  s["counts"] = {{"readings", summary.readings},
                 {"heads", summary.heads},
                 {"states", summary.states},
                 {"contourable", summary.contourable},
                 {"measuring_point_records", records.size()},
                 {"wells", wells.wells.size()}};
  s["flags"] = summary.flags;
  s["states"] = summary.states_by_kind;
  s["options"] = {{"interpolate", options.interpolate},
                  {"allow_before_first", options.allow_before_first},
                  {"depth_sigma", options.depth_sigma},
                  {"mp_change_tolerance", options.mp_change_tolerance},
                  {"repeat_tolerance", options.repeat_tolerance},
                  {"repeat_window_hours", options.repeat_window_hours},
                  {"synoptic_window_hours", options.synoptic_window_hours},
                  {"max_depth", options.max_depth},
                  {"history_tolerance", options.history_tolerance},
                  {"event", options.event ? nlohmann::json(format_utc(*options.event))
                                          : nlohmann::json(nullptr)}};
  out.open("summary.json") << util::json_text(s) << '\n';
  out.commit();
  return summary;
}

}  // namespace levelhead
