#include "levelhead/run_diff.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <fstream>
#include <map>
#include <nlohmann/json.hpp>
#include <optional>
#include <set>

#include "levelhead/errors.hpp"
#include "levelhead/input_files.hpp"
#include "levelhead/table.hpp"

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

Values inputs_of(const nlohmann::json& record) {
  Values v;
  for (const auto& i : record["inputs"]) {
    v[i["role"].get<std::string>() + " (" + i["path"].get<std::string>() + ")"] =
        i["sha256"].get<std::string>();
  }
  return v;
}

Values settings_of(const nlohmann::json& record) {
  Values v;
  for (const auto& s : record["settings_changed"])
    v[s["setting"].get<std::string>()] = s["value"].get<std::string>();
  return v;
}

Values grids_of(const nlohmann::json& record) {
  Values v;
  for (const auto& g : record["grids"])
    v[g["file"].get<std::string>()] = g["sha256"].get<std::string>();
  return v;
}

Values software_of(const nlohmann::json& record) {
  Values v;
  for (const char* key : {"levelhead_version", "proj_version", "gdal_version", "epsg_version"}) {
    if (record.contains(key)) v[key] = record[key].get<std::string>();
  }
  return v;
}

struct Row {
  std::optional<double> value;
  std::map<std::string, std::string> text;
};

// key columns joined by a space -> the numeric column and some text columns.
std::map<std::string, Row> read_keyed(const fs::path& file, const std::vector<std::string>& keys,
                                      const std::string& value,
                                      const std::vector<std::string>& texts) {
  std::map<std::string, Row> out;
  if (!fs::exists(file)) return out;
  const Table t = read_table(file);
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
    row.value = t.number(r, value_column);
    for (const std::string& name : texts) {
      if (const auto c = t.find_column(name)) row.text[name] = std::string(t.cell(r, *c));
    }
    out[key] = std::move(row);
  }
  return out;
}

std::vector<ValueChange> moved(const std::map<std::string, Row>& before,
                               const std::map<std::string, Row>& after, double tolerance) {
  std::vector<ValueChange> out;
  for (const auto& [key, b] : before) {
    const auto a = after.find(key);
    if (a == after.end() || !b.value || !a->second.value) continue;
    if (std::abs(*a->second.value - *b.value) > tolerance)
      out.push_back({key, *b.value, *a->second.value});
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
  const nlohmann::json b = read_record(before), a = read_record(after);
  RunDifference d;
  compare("input", inputs_of(b), inputs_of(a), d.configuration);
  compare("setting", settings_of(b), settings_of(a), d.configuration);
  compare("grid", grids_of(b), grids_of(a), d.configuration);
  compare("software", software_of(b), software_of(a), d.configuration);

  d.heights = moved(read_keyed(before / "adjust" / "heights.csv", {"id"}, "height", {}),
                    read_keyed(after / "adjust" / "heights.csv", {"id"}, "height", {}), tolerance);
  d.measuring_points = moved(
      read_keyed(before / "heads" / "measuring_points.csv", {"well", "valid_from"}, "height", {}),
      read_keyed(after / "heads" / "measuring_points.csv", {"well", "valid_from"}, "height", {}),
      tolerance);

  const std::vector<std::string> texts = {"well", "depth", "mp_elevation", "state"};
  const auto heads_before =
      read_keyed(before / "heads" / "heads.csv", {"well", "time"}, "head", texts);
  const auto heads_after =
      read_keyed(after / "heads" / "heads.csv", {"well", "time"}, "head", texts);
  std::map<std::string, WellHeadChanges> wells;
  std::map<std::string, std::set<std::string>> causes;
  const bool readings_changed = changed(d.configuration, "input", "levels");
  for (const auto& [key, row] : heads_before) {
    const std::string well = row.text.at("well");
    const auto other = heads_after.find(key);
    if (other == heads_after.end()) {
      ++wells[well].dropped;
      causes[well].insert(readings_changed ? "new data: readings dropped" : "readings dropped");
      continue;
    }
    ++d.heads_compared;
    const Row& next = other->second;
    const bool state_changed = row.text.at("state") != next.text.at("state") ||
                               row.value.has_value() != next.value.has_value();
    const double change = row.value && next.value ? *next.value - *row.value : 0.0;
    if (!state_changed && std::abs(change) <= tolerance) continue;
    WellHeadChanges& w = wells[well];
    ++w.moved;
    if (std::abs(change) > std::abs(w.largest)) w.largest = change;
    if (row.text.at("depth") != next.text.at("depth") || state_changed)
      causes[well].insert("new data: the reading changed");
    if (row.text.at("mp_elevation") != next.text.at("mp_elevation")) {
      const auto mp = measuring_point_causes(d);
      if (mp.empty()) causes[well].insert("its measuring point moved");
      for (const std::string& c : mp) causes[well].insert("measuring point moved: " + c);
    }
  }
  for (const auto& [key, row] : heads_after) {
    if (heads_before.count(key)) continue;
    const std::string well = row.text.at("well");
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
  list("Adjusted heights", d.heights);
  list("Measuring points", d.measuring_points);
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
