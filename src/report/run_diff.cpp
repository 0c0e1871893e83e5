#include "levelhead/report/run_diff.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <fstream>
#include <map>
#include <nlohmann/json.hpp>
#include <optional>
#include <set>

#include "levelhead/core/checksums.hpp"
#include "levelhead/core/errors.hpp"
#include "levelhead/core/input_files.hpp"
#include "levelhead/core/table.hpp"
#include "levelhead/references/vertical_reference.hpp"

namespace levelhead {

namespace fs = std::filesystem;

namespace {

nlohmann::json read_record(const fs::path& folder) {
  const fs::path file = folder / "run.json";
  note_input_file(file);
  std::ifstream in(file);
  if (!in) {
    throw InputError(folder.string(),
                     "not the output folder of a levelhead run (no run.json); give the "
                     "--out folders of two runs");
  }
  try {
    return nlohmann::json::parse(in);
  } catch (const nlohmann::json::exception& e) {
    throw InputError(file.string(), std::string("not valid JSON: ") + e.what());
  }
}

// The record's parts, read with every key and type checked: a record that
// was edited, cut short or written by another program is named, not a crash.
class Record {
 public:
  explicit Record(const fs::path& folder) : file_((folder / "run.json").string()) {
    json_ = read_record(folder);
    if (!json_.is_object()) fail("", "expected a JSON object");
  }
  const nlohmann::json& list(const char* key) const {
    const auto it = json_.find(key);
    if (it == json_.end()) fail(key, "is missing");
    if (!it->is_array()) fail(key, "is not a list");
    return *it;
  }
  bool has(const char* key) const { return json_.contains(key); }
  std::string text(const nlohmann::json& item, const char* list_key, const char* key) const {
    const auto it = item.is_object() ? item.find(key) : item.end();
    if (it == item.end() || !it->is_string())
      fail(fmt::format("{}[].{}", list_key, key), "is missing or not text");
    return it->get<std::string>();
  }
  std::string optional_text(const char* key) const {
    const auto it = json_.find(key);
    return it != json_.end() && it->is_string() ? it->get<std::string>() : std::string();
  }

 private:
  [[noreturn]] void fail(const std::string& key, const std::string& what) const {
    throw InputError(file_, fmt::format("the run's record is damaged: '{}' {} (a run.json edited "
                                        "or cut short? rerun the project to write it again)",
                                        key, what));
  }
  std::string file_;
  nlohmann::json json_;
};

using Values = std::map<std::string, std::string>;

void compare(const std::string& kind, const Values& before, const Values& after,
             std::vector<ConfigurationChange>& out) {
  std::set<std::string> names;
  for (const auto& [k, v] : before) names.insert(k);
  for (const auto& [k, v] : after) names.insert(k);
  for (const std::string& name : names) {
    const auto b = before.find(name), a = after.find(name);
    const std::string vb = b == before.end() ? "" : b->second,
                      va = a == after.end() ? "" : a->second;
    if (vb != va) out.push_back({kind, name, vb, va});
  }
}

Values inputs_of(const Record& record) {
  Values v;
  for (const auto& i : record.list("inputs")) {
    v[record.text(i, "inputs", "role") + " (" + record.text(i, "inputs", "path") + ")"] =
        record.text(i, "inputs", "sha256");
  }
  return v;
}

Values settings_of(const Record& record) {
  Values v;
  for (const auto& s : record.list("settings_changed"))
    v[record.text(s, "settings_changed", "setting")] = record.text(s, "settings_changed", "value");
  return v;
}

// The site's settings: a change of target or CRS changes every head.
Values site_of(const Record& record) {
  Values v;
  for (const char* key : {"target", "crs"}) {
    if (record.has(key)) v[fmt::format("[site] {}", key)] = record.optional_text(key);
  }
  return v;
}

Values grids_of(const Record& record) {
  Values v;
  for (const auto& g : record.list("grids"))
    v[record.text(g, "grids", "file")] = record.text(g, "grids", "sha256");
  return v;
}

Values software_of(const Record& record) {
  Values v;
  for (const char* key : {"levelhead_version", "proj_version", "gdal_version", "epsg_version"}) {
    if (record.has(key)) v[key] = record.optional_text(key);
  }
  return v;
}

// The run's own files as its record lists them: those missing or changed
// since are named (`side` is OLD or NEW) and left out of the comparison.
std::set<std::string> unusable_outputs(const Record& record, const fs::path& folder,
                                       const std::string& side,
                                       std::vector<std::string>& problems) {
  std::set<std::string> unusable;
  if (!record.has("outputs")) {
    problems.push_back(fmt::format(
        "{}: its run.json lists no output checksums (written by an older levelhead), so its "
        "files cannot be checked for changes since the run",
        side));
    return unusable;
  }
  for (const auto& o : record.list("outputs")) {
    const std::string name = record.text(o, "outputs", "path");
    const fs::path file = folder / name;
    std::error_code ec;
    if (!fs::is_regular_file(file, ec)) {
      problems.push_back(fmt::format("{} {}: missing (the run wrote it)", side, name));
      unusable.insert(name);
    } else if (file_sha256(file) != record.text(o, "outputs", "sha256")) {
      problems.push_back(fmt::format(
          "{} {}: changed since the run (its SHA-256 differs from run.json's; edited or cut "
          "short?); not compared",
          side, name));
      unusable.insert(name);
    }
  }
  return unusable;
}

struct Row {
  std::optional<double> value;
  std::map<std::string, std::string> text;
};

// A text column of a row; empty when the table has no such column.
std::string text_of(const Row& row, const std::string& column) {
  const auto it = row.text.find(column);
  return it == row.text.end() ? std::string() : it->second;
}

// key columns joined by a space -> the numeric column and some text columns.
// `value` in metres: the table is read in `unit`, the unit its run wrote it in.
std::map<std::string, Row> read_keyed(const fs::path& file, const std::vector<std::string>& keys,
                                      const std::string& value,
                                      const std::vector<std::string>& texts, LengthUnit unit) {
  std::map<std::string, Row> out;
  if (!path_exists(file)) return out;
  TableOptions options;
  options.length_unit = unit;
  const Table t = read_table(file, options);
  std::vector<std::size_t> key_columns;
  for (const std::string& k : keys) key_columns.push_back(t.require_column(k));
  const std::size_t value_column = t.require_column(value);
  for (std::size_t r = 0; r < t.row_count(); ++r) {
    std::string key;
    for (std::size_t c : key_columns) {
      if (!key.empty()) key += ' ';
      key.append(t.cell(r, c));
    }
    Row row;
    row.value = t.height(r, value_column);
    for (const std::string& name : texts) {
      if (const auto c = t.find_column(name)) row.text[name] = std::string(t.cell(r, *c));
    }
    out[key] = std::move(row);
  }
  return out;
}

std::vector<ValueChange> moved(const std::map<std::string, Row>& before,
                               const std::map<std::string, Row>& after, double tolerance,
                               OneSided& one_sided) {
  std::vector<ValueChange> out;
  for (const auto& [key, b] : before) {
    const auto a = after.find(key);
    if (a == after.end()) {
      one_sided.only_before.push_back(key);
      continue;
    }
    if (!b.value || !a->second.value) continue;
    if (std::abs(*a->second.value - *b.value) > tolerance)
      out.push_back({key, *b.value, *a->second.value});
  }
  for (const auto& [key, a] : after) {
    if (!before.count(key)) one_sided.only_after.push_back(key);
  }
  return out;
}

bool changed(const std::vector<ConfigurationChange>& config, const std::string& kind,
             const std::string& prefix) {
  return std::any_of(config.begin(), config.end(), [&](const ConfigurationChange& c) {
    return c.kind == kind && c.name.rfind(prefix, 0) == 0;
  });
}

// Why a measuring point would move, from what changed in the configuration.
std::vector<std::string> measuring_point_causes(const RunDifference& d) {
  std::vector<std::string> causes;
  if (changed(d.configuration, "input", "measuring_points"))
    causes.push_back("new data: measuring-point surveys");
  if (!d.heights.empty()) causes.push_back("the adjusted network heights changed");
  if (changed(d.configuration, "input", "references"))
    causes.push_back("new data: references file");
  if (changed(d.configuration, "grid", "")) causes.push_back("a new grid");
  // Settings and software only when no data explains the move.
  if (causes.empty() && changed(d.configuration, "setting", "")) causes.push_back("new settings");
  if (causes.empty() && changed(d.configuration, "software", ""))
    causes.push_back("new software versions");
  return causes;
}

}  // namespace

RunDifference compare_runs(const fs::path& before, const fs::path& after, double tolerance) {
  const Record b(before), a(after);
  RunDifference d;
  compare("input", inputs_of(b), inputs_of(a), d.configuration);
  compare("setting", settings_of(b), settings_of(a), d.configuration);
  compare("setting", site_of(b), site_of(a), d.configuration);
  // The record's checksum of the whole configuration, as a last net: named
  // only when nothing above says what changed.
  const bool setting_named =
      std::any_of(d.configuration.begin(), d.configuration.end(),
                  [](const ConfigurationChange& c) { return c.kind == "setting"; });
  if (!setting_named && b.has("configuration_sha256") && a.has("configuration_sha256") &&
      b.optional_text("configuration_sha256") != a.optional_text("configuration_sha256")) {
    d.configuration.push_back({"setting", "configuration checksum",
                               b.optional_text("configuration_sha256").substr(0, 12),
                               a.optional_text("configuration_sha256").substr(0, 12)});
  }
  compare("grid", grids_of(b), grids_of(a), d.configuration);
  compare("software", software_of(b), software_of(a), d.configuration);
  const std::set<std::string> unusable_before = unusable_outputs(b, before, "OLD", d.file_problems);
  const std::set<std::string> unusable_after = unusable_outputs(a, after, "NEW", d.file_problems);

  // One of the compared tables of both runs; a table only one run has (the
  // stage did not run there) or that changed since its run is named and
  // compared as if empty on both sides.
  // Heads and measuring points are written in the target's unit (feet for a
  // target in feet): compared in metres, as the tolerance is.
  const auto heads_unit = [](const fs::path& run) {
    std::ifstream in(run / "heads" / "summary.json");
    const auto summary = nlohmann::json::parse(in, nullptr, false);
    if (summary.is_discarded() || !summary.contains("units")) return LengthUnit::metre;
    return parse_length_unit(summary["units"].get<std::string>());
  };
  const auto both = [&](const std::string& name, const std::vector<std::string>& keys,
                        const std::string& value, const std::vector<std::string>& texts) {
    const bool usable = !unusable_before.count(name) && !unusable_after.count(name);
    const bool in_before = path_exists(before / name), in_after = path_exists(after / name);
    if (usable && in_before != in_after) {
      d.file_problems.push_back(fmt::format("{} {}: not written by that run (stage not run?)",
                                            in_before ? "NEW" : "OLD", name));
    }
    if (!usable || in_before != in_after) {
      return std::pair<std::map<std::string, Row>, std::map<std::string, Row>>{};
    }
    const bool in_heads = name.rfind("heads/", 0) == 0;
    return std::pair{read_keyed(before / name, keys, value, texts,
                                in_heads ? heads_unit(before) : LengthUnit::metre),
                     read_keyed(after / name, keys, value, texts,
                                in_heads ? heads_unit(after) : LengthUnit::metre)};
  };
  const auto [heights_before, heights_after] = both("adjust/heights.csv", {"id"}, "height", {});
  d.heights = moved(heights_before, heights_after, tolerance, d.heights_one_sided);
  const auto [mp_before, mp_after] =
      both("heads/measuring_points.csv", {"well", "valid_from"}, "height", {});
  d.measuring_points = moved(mp_before, mp_after, tolerance, d.measuring_points_one_sided);

  const std::vector<std::string> texts = {"well", "depth", "mp_elevation", "state"};
  const auto [heads_before, heads_after] = both("heads/heads.csv", {"well", "time"}, "head", texts);
  std::map<std::string, WellHeadChanges> wells;
  std::map<std::string, std::set<std::string>> causes;
  const bool readings_changed = changed(d.configuration, "input", "levels");
  for (const auto& [key, row] : heads_before) {
    const std::string well = text_of(row, "well");
    const auto other = heads_after.find(key);
    if (other == heads_after.end()) {
      ++wells[well].dropped;
      causes[well].insert(readings_changed ? "new data: readings dropped" : "readings dropped");
      continue;
    }
    ++d.heads_compared;
    const Row& next = other->second;
    const bool state_changed = text_of(row, "state") != text_of(next, "state") ||
                               row.value.has_value() != next.value.has_value();
    const double change = row.value && next.value ? *next.value - *row.value : 0.0;
    if (!state_changed && std::abs(change) <= tolerance) continue;
    WellHeadChanges& w = wells[well];
    ++w.moved;
    if (std::abs(change) > std::abs(w.largest)) w.largest = change;
    if (text_of(row, "depth") != text_of(next, "depth") || state_changed)
      causes[well].insert("new data: the reading changed");
    if (text_of(row, "mp_elevation") != text_of(next, "mp_elevation")) {
      const auto mp = measuring_point_causes(d);
      if (mp.empty()) causes[well].insert("its measuring point moved");
      for (const std::string& c : mp) causes[well].insert("measuring point moved: " + c);
    }
  }
  for (const auto& [key, row] : heads_after) {
    if (heads_before.count(key)) continue;
    const std::string well = text_of(row, "well");
    ++wells[well].added;
    causes[well].insert(readings_changed ? "new data: readings added" : "readings added");
  }
  for (auto& [well, w] : wells) {
    w.well = well;
    w.causes.assign(causes[well].begin(), causes[well].end());
    if (w.causes.empty()) {
      w.causes.push_back(changed(d.configuration, "setting", "") ? "new settings"
                                                                 : "new software versions");
    }
    d.wells.push_back(std::move(w));
  }
  return d;
}

std::string difference_text(const RunDifference& d, double tolerance) {
  if (d.identical()) {
    return fmt::format(
        "The runs agree: same inputs, settings, grids and software, and no height or head "
        "differs by more than {:g} m.\n",
        tolerance);
  }
  std::string text;
  if (!d.file_problems.empty()) {
    text += fmt::format("Files that could not be compared: {}\n", d.file_problems.size());
    for (const std::string& p : d.file_problems) text += "  " + p + "\n";
  }
  text += fmt::format("Configuration: {} change(s)\n", d.configuration.size());
  for (const ConfigurationChange& c : d.configuration) {
    const auto shown = [&](const std::string& v) {
      if (v.empty()) return std::string("(none)");
      return c.kind == "input" || c.kind == "grid" ? v.substr(0, 12) : v;
    };
    text += fmt::format("  {} {}: {} -> {}\n", c.kind, c.name, shown(c.before), shown(c.after));
  }
  const auto list = [&](const char* what, const std::vector<ValueChange>& changes) {
    if (changes.empty()) return;
    text += fmt::format("{}: {} moved by more than {:g} m\n", what, changes.size(), tolerance);
    for (std::size_t i = 0; i < changes.size() && i < 20; ++i) {
      const ValueChange& c = changes[i];
      text += fmt::format("  {}: {:.4f} -> {:.4f} ({:+.4f} m)\n", c.key, c.before, c.after,
                          c.after - c.before);
    }
    if (changes.size() > 20) text += fmt::format("  ... and {} more\n", changes.size() - 20);
  };
  const auto one_sided = [&](const char* what, const OneSided& o) {
    for (const auto& [side, keys] :
         {std::pair{"OLD", &o.only_before}, std::pair{"NEW", &o.only_after}}) {
      if (keys->empty()) continue;
      text +=
          fmt::format("{} only in {}: {}{}\n", what, side,
                      fmt::join(keys->begin(),
                                keys->begin() + std::min<std::ptrdiff_t>(20, keys->size()), ", "),
                      keys->size() > 20 ? fmt::format(" and {} more", keys->size() - 20) : "");
    }
  };
  list("Adjusted heights", d.heights);
  one_sided("Adjusted heights", d.heights_one_sided);
  list("Measuring points", d.measuring_points);
  one_sided("Measuring points", d.measuring_points_one_sided);
  std::size_t moved = 0;
  for (const WellHeadChanges& w : d.wells) moved += w.moved;
  text += fmt::format("Heads: {} of {} compared moved by more than {:g} m, in {} well(s)\n", moved,
                      d.heads_compared, tolerance, d.wells.size());
  for (const WellHeadChanges& w : d.wells) {
    text += fmt::format("  {}: {} moved (largest {:+.3f} m), {} added, {} dropped; cause: {}\n",
                        w.well, w.moved, w.largest, w.added, w.dropped, fmt::join(w.causes, "; "));
  }
  return text;
}

}  // namespace levelhead
