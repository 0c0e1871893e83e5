#include "cli/project.hpp"

#include <fmt/format.h>
#include <toml++/toml.h>

#include <algorithm>
#include <set>

#include "cli/app.hpp"
#include "levelhead/core/errors.hpp"
#include "levelhead/core/input_files.hpp"
#include "levelhead/core/table.hpp"
#include "levelhead/core/units.hpp"
#include "levelhead/levelling/precision.hpp"
#include "util/text.hpp"

namespace levelhead::cli {

namespace fs = std::filesystem;

const ProjectInput* Project::input(const std::string& role) const {
  for (const ProjectInput& i : inputs) {
    if (i.role == role) return &i;
  }
  return nullptr;
}

std::vector<const ProjectInput*> Project::inputs_of(const std::string& role) const {
  std::vector<const ProjectInput*> out;
  for (const ProjectInput& i : inputs) {
    if (i.role == role) out.push_back(&i);
  }
  return out;
}

namespace {

// Project sections that configure a command, in chain order.
const std::vector<std::pair<std::string, std::string>>& stage_sections() {
  static const std::vector<std::pair<std::string, std::string>> sections = {
      {"fieldbook", "reduce"}, {"loops", "loops"},   {"adjustment", "adjust"},
      {"gnss", "gnss-check"},  {"epochs", "epochs"}, {"transducer", "transducer"},
      {"heads", "heads"},      {"flow", "flow"}};
  return sections;
}

// Options the chain sets itself (inputs, outputs, the site's settings).
bool wired_by_chain(const std::string& key) {
  static const std::set<std::string> wired = {"out",
                                              "strict",
                                              "quiet",
                                              "unit",
                                              "points",
                                              "sections",
                                              "references",
                                              "grid_path",
                                              "network",
                                              "wells",
                                              "measuring_points",
                                              "levels",
                                              "target",
                                              "crs",
                                              "adjusted",
                                              "monitored",
                                              "heads",
                                              "sensors",
                                              "records",
                                              "levelled",
                                              "levelled_ref",
                                              "levelled_unit",
                                              "sections_unit",
                                              "gnss",
                                              "columns",
                                              "points_columns",
                                              "sections_columns",
                                              "wells_columns",
                                              "measuring_points_columns",
                                              "levels_columns",
                                              "time_zone",
                                              "levelling_class",
                                              "levels_time_zone",
                                              "records_time_zone",
                                              "measuring_points_time_zone"};
  return wired.count(key) > 0;
}

// Settings where the chain's default differs from the command's: a chain
// run unattended should remove a blunder and say so rather than stop.
const std::vector<ProjectSetting>& chain_defaults() {
  static const std::vector<ProjectSetting> defaults = {
      {"adjustment", "snoop", {"true"}, "false", 0, true, true}};
  return defaults;
}

std::string where(const Project& p, const toml::node& node) {
  return fmt::format("{}, line {}", p.file.string(), node.source().begin.line);
}

[[noreturn]] void unknown_key(const Project& p, const toml::node& node, const std::string& section,
                              const std::string& key, const std::vector<std::string>& allowed) {
  throw InputError(where(p, node), fmt::format("unknown key '{}' in [{}] (did you mean '{}'?)", key,
                                               section, util::nearest_name(key, allowed)));
}

std::string text_value(const Project& p, const toml::node& node, const std::string& name) {
  if (auto v = node.value<std::string>()) return *v;
  throw InputError(where(p, node), fmt::format("'{}' must be a string (in quotes)", name));
}

// One path or a list of paths.
std::vector<std::string> path_values(const Project& p, const toml::node& node,
                                     const std::string& name) {
  if (const toml::array* list = node.as_array()) {
    std::vector<std::string> out;
    for (const toml::node& item : *list) out.push_back(text_value(p, item, name));
    return out;
  }
  return {text_value(p, node, name)};
}

std::string scalar_text(const Project& p, const toml::node& node, const std::string& name) {
  if (auto v = node.value_exact<std::string>()) return *v;
  if (auto v = node.value_exact<int64_t>()) return std::to_string(*v);
  if (auto v = node.value_exact<double>()) return fmt::format("{}", *v);
  throw InputError(where(p, node), fmt::format("'{}' must be a number or a string", name));
}

// A zone as time.hpp reads it, checked here so that the file's line is named.
std::string zone_value(const Project& p, const toml::node& node, const std::string& name) {
  std::string zone = text_value(p, node, name);
  if (!TimeZone::find(zone)) {
    throw InputError(where(p, node),
                     fmt::format("'{}' = \"{}\" is not a time zone: give an IANA name such as "
                                 "\"America/Chicago\", a fixed offset such as \"-06:00\", or "
                                 "\"UTC\"",
                                 name, zone));
  }
  return zone;
}

fs::path resolve(const Project& p, const std::string& path) {
  const fs::path given(path);
  return given.is_absolute() ? given : p.folder / given;
}

void read_site(Project& p, const toml::table& site) {
  const std::vector<std::string> allowed = {
      "name", "crs", "target", "unit", "time_zone", "references", "grid_path", "levelling_class"};
  for (const auto& [k, node] : site) {
    const std::string key(k.str());
    if (key == "name")
      p.name = text_value(p, node, key);
    else if (key == "crs")
      p.crs = text_value(p, node, key);
    else if (key == "target")
      p.target = text_value(p, node, key);
    else if (key == "time_zone")
      p.time_zone = zone_value(p, node, key);
    else if (key == "unit") {
      p.unit = text_value(p, node, key);
      try {
        parse_length_unit(p.unit);
      } catch (const OptionError& e) {
        throw InputError(where(p, node), e.what());
      }
    } else if (key == "levelling_class") {
      p.levelling_class = text_value(p, node, key);
      try {
        find_levelling_class(p.levelling_class);
      } catch (const OptionError& e) {
        throw InputError(where(p, node), e.what());
      }
    } else if (key == "references")
      p.references = resolve(p, text_value(p, node, key));
    else if (key == "grid_path") {
      for (const std::string& g : path_values(p, node, key)) p.grid_paths.push_back(resolve(p, g));
    } else {
      unknown_key(p, node, "site", key, allowed);
    }
  }
}

void read_inputs(Project& p, const toml::table& inputs) {
  const std::vector<std::string> allowed = {
      "fieldbook",        "sections", "points",  "epochs",  "wells",
      "measuring_points", "levels",   "sensors", "records", "gnss"};
  for (const auto& [k, node] : inputs) {
    const std::string key(k.str());
    if (std::find(allowed.begin(), allowed.end(), key) == allowed.end()) {
      unknown_key(p, node, "inputs", key, allowed);
    }
    const auto values = key == "epochs" ? path_values(p, node, key)
                                        : std::vector<std::string>{text_value(p, node, key)};
    for (const std::string& v : values) {
      const fs::path path = resolve(p, v);
      if (!path_exists(path)) {
        throw InputError(where(p, node), fmt::format("[inputs] {}: file '{}' not found (paths are "
                                                     "relative to the project file)",
                                                     key, v));
      }
      p.inputs.push_back({key, path, v});
    }
  }
  if (p.input("fieldbook") && p.input("sections")) {
    throw InputError(p.file.string(),
                     "[inputs] gives both 'fieldbook' and 'sections': the sections "
                     "come from the field book; give one of them");
  }
}

void read_stage(Project& p, const std::string& section, const std::string& command,
                const toml::table& table) {
  std::vector<OptionInfo> options = command_options(command);
  std::vector<std::string> allowed;
  for (const OptionInfo& o : options) {
    std::string key = o.flag.substr(2);
    std::replace(key.begin(), key.end(), '-', '_');
    if (!wired_by_chain(key)) allowed.push_back(key);
  }
  for (const auto& [k, node] : table) {
    const std::string key(k.str());
    const auto it = std::find(allowed.begin(), allowed.end(), key);
    std::string flag = key;
    std::replace(flag.begin(), flag.end(), '_', '-');
    if (const auto now = renamed_option(command, "--" + flag); now && it == allowed.end()) {
      std::string now_key = now->substr(2);
      std::replace(now_key.begin(), now_key.end(), '-', '_');
      throw InputError(where(p, node),
                       fmt::format("'{}' in [{}] is now '{}' (one name with the command line "
                                   "and the docs)",
                                   key, section, now_key));
    }
    if (it == allowed.end()) unknown_key(p, node, section, key, allowed);
    const OptionInfo& option = *std::find_if(
        options.begin(), options.end(), [&](const OptionInfo& o) { return o.flag == "--" + flag; });
    ProjectSetting s{section,        key,  {}, option.default_text, node.source().begin.line,
                     option.is_flag, false};
    if (option.is_flag) {
      const auto on = node.value_exact<bool>();
      if (!on) throw InputError(where(p, node), fmt::format("'{}' is true or false", key));
      s.values = {*on ? "true" : "false"};
      s.default_text = "false";
    } else if (const toml::array* list = node.as_array()) {
      for (const toml::node& item : *list) s.values.push_back(scalar_text(p, item, key));
    } else {
      s.values = {scalar_text(p, node, key)};
    }
    std::erase_if(p.settings,
                  [&](const ProjectSetting& d) { return d.section == section && d.key == key; });
    p.settings.push_back(std::move(s));
  }
}

void add_setting_args(const Project& p, const std::string& section,
                      std::vector<std::string>& args) {
  for (const ProjectSetting& s : p.settings) {
    if (s.section != section) continue;
    std::string flag = "--" + s.key;
    std::replace(flag.begin(), flag.end(), '_', '-');
    if (s.is_flag) {
      if (s.values[0] == "true") args.push_back(flag);
      continue;
    }
    args.push_back(flag);
    args.insert(args.end(), s.values.begin(), s.values.end());
  }
}

// `flag ZONE` when the project declares a zone for `role`'s times, and
// --time-zone for the site's default zone.
void add_time_zones(const Project& p, const std::vector<std::pair<std::string, const char*>>& roles,
                    std::vector<std::string>& args) {
  if (!p.time_zone.empty()) args.insert(args.end(), {"--time-zone", p.time_zone});
  for (const auto& [role, flag] : roles) {
    const auto it = p.time_zones.find(role);
    if (it != p.time_zones.end()) args.insert(args.end(), {flag, it->second});
  }
}

// `flag MAP` when the project maps the columns of `role`.
void add_columns(const Project& p, const std::string& role, const char* flag,
                 std::vector<std::string>& args) {
  const auto it = p.columns.find(role);
  if (it != p.columns.end()) args.insert(args.end(), {flag, it->second});
}

bool has_setting(const Project& p, const std::string& section, const std::string& key) {
  return std::any_of(p.settings.begin(), p.settings.end(), [&](const ProjectSetting& s) {
    return s.section == section && s.key == key && !s.chain_default;
  });
}

}  // namespace

Project load_project(const fs::path& file) {
  if (!path_exists(file)) throw InputError(file.string(), "project file not found");
  return parse_project(read_input_text(file), file);
}

Project parse_project(std::string_view text, const fs::path& file) {
  Project p;
  p.file = file;
  p.folder = file.has_parent_path() ? file.parent_path() : fs::path(".");
  toml::table root;
  try {
    root = toml::parse(text, file.string());
  } catch (const toml::parse_error& e) {
    throw InputError(fmt::format("{}, line {}", file.string(), e.source().begin.line),
                     std::string(e.description()));
  }
  p.settings = chain_defaults();
  std::vector<std::string> sections = {"site", "inputs", "report", "columns", "time_zones"};
  for (const auto& [section, command] : stage_sections()) sections.push_back(section);
  for (const auto& [k, node] : root) {
    const std::string name(k.str());
    if (std::find(sections.begin(), sections.end(), name) == sections.end()) {
      throw InputError(where(p, node), fmt::format("unknown section [{}] (did you mean [{}]?)",
                                                   name, util::nearest_name(name, sections)));
    }
    const toml::table* table = node.as_table();
    if (!table)
      throw InputError(where(p, node), fmt::format("'{}' must be a section [{}]", name, name));
    if (name == "site") {
      read_site(p, *table);
    } else if (name == "columns") {
      const std::vector<std::string> allowed = {"points", "sections",         "fieldbook", "epochs",
                                                "wells",  "measuring_points", "levels"};
      for (const auto& [ck, cnode] : *table) {
        const std::string key(ck.str());
        if (std::find(allowed.begin(), allowed.end(), key) == allowed.end())
          unknown_key(p, cnode, "columns", key, allowed);
        p.columns[key] = text_value(p, cnode, key);
        try {
          parse_column_map(p.columns[key]);
        } catch (const OptionError& e) {
          throw InputError(where(p, cnode), e.what());
        }
      }
    } else if (name == "time_zones") {
      const std::vector<std::string> allowed = {"levels", "records", "measuring_points"};
      for (const auto& [zk, znode] : *table) {
        const std::string key(zk.str());
        if (std::find(allowed.begin(), allowed.end(), key) == allowed.end())
          unknown_key(p, znode, "time_zones", key, allowed);
        p.time_zones[key] = zone_value(p, znode, key);
      }
    } else if (name == "inputs") {
      read_inputs(p, *table);
    } else if (name == "report") {
      const std::vector<std::string> allowed = {"title", "prepared_for", "prepared_by",
                                                "contour_interval"};
      for (const auto& [rk, rnode] : *table) {
        const std::string key(rk.str());
        if (std::find(allowed.begin(), allowed.end(), key) == allowed.end()) {
          unknown_key(p, rnode, "report", key, allowed);
        }
        if (key == "contour_interval") {
          const auto v = rnode.value<double>();
          if (!v || !(*v > 0.0))
            throw InputError(
                where(p, rnode),
                "'contour_interval' must be a number > 0 (in the unit of the target reference)");
          p.contour_interval = *v;
        } else {
          p.report[key] = text_value(p, rnode, key);
        }
      }
    } else {
      for (const auto& [section, command] : stage_sections()) {
        if (section == name) read_stage(p, section, command, *table);
      }
    }
  }
  return p;
}

std::vector<Stage> plan_stages(const Project& p, const fs::path& out) {
  std::vector<Stage> stages;
  const auto add = [&](Stage stage) {
    // One precision for the whole survey: the field-book checks, the loop
    // tolerance and the weights of the adjustments (precision.hpp).
    const bool levelling = stage.name == "reduce" || stage.name == "loops" ||
                           stage.name == "adjust" || stage.name == "epochs";
    if (levelling && !p.levelling_class.empty())
      stage.args.insert(stage.args.end(), {"--levelling-class", p.levelling_class});
    add_setting_args(p, stage.section, stage.args);
    stage.args.insert(stage.args.end(), {"--out", (out / stage.name).string()});
    stages.push_back(std::move(stage));
  };
  const auto path = [&](const std::string& role) { return p.input(role)->path.string(); };
  const auto require = [&](const std::string& key, const std::string& value,
                           const std::string& why) {
    if (value.empty()) {
      throw InputError(p.file.string(), fmt::format("[site] needs '{}' {}", key, why));
    }
  };

  std::string sections;
  if (p.input("fieldbook")) {
    Stage r{"reduce", "fieldbook", {"reduce", path("fieldbook"), "--unit", p.unit}, {"fieldbook"}};
    add_columns(p, "fieldbook", "--columns", r.args);
    add(std::move(r));
    sections = (out / "reduce" / "sections.csv").string();
  } else if (p.input("sections")) {
    sections = path("sections");
  }
  const bool network = p.input("points") && !sections.empty();
  if (network) {
    const std::vector<std::string> in = {"points", p.input("fieldbook") ? "fieldbook" : "sections"};
    for (const auto& [name, section] :
         {std::pair{"loops", "loops"}, std::pair{"adjust", "adjustment"}}) {
      Stage s{name,
              section,
              {name, "--points", path("points"), "--sections", sections, "--unit", p.unit},
              in};
      add_columns(p, "points", "--points-columns", s.args);
      if (p.input("fieldbook"))
        s.args.insert(s.args.end(), {"--sections-unit", "m"});  // reduce writes metres
      else
        add_columns(p, "sections", "--sections-columns", s.args);  // reduce writes ours
      add(std::move(s));
    }
  }
  if (p.input("gnss")) {
    if (!network)
      throw InputError(p.file.string(),
                       "[inputs] gnss is checked against the levelling: give points and sections "
                       "(or a field book)");
    require("target", p.target, "(the reference of the levelled heights, e.g. \"EPSG:5703\")");
    require("crs", p.crs, "(the horizontal CRS of the GNSS table's x and y)");
    Stage g{"gnss-check",
            "gnss",
            {"gnss-check", "--levelled", (out / "adjust" / "heights.csv").string(),
             "--levelled-ref", p.target, "--gnss", path("gnss"), "--crs", p.crs, "--unit", p.unit,
             "--levelled-unit", "m"},
            {"gnss", "points"}};
    if (!p.references.empty()) g.args.insert(g.args.end(), {"--references", p.references.string()});
    for (const fs::path& grid : p.grid_paths)
      g.args.insert(g.args.end(), {"--grid-path", grid.string()});
    add(std::move(g));
  }
  const auto epoch_files = p.inputs_of("epochs");
  if (!epoch_files.empty()) {
    if (!p.input("points")) {
      throw InputError(p.file.string(),
                       "[inputs] epochs needs 'points' (the marks and points levelled)");
    }
    Stage e{"epochs",
            "epochs",
            {"epochs", "--points", path("points"), "--unit", p.unit},
            {"points", "epochs"}};
    for (const ProjectInput* f : epoch_files)
      e.args.insert(e.args.end(), {"--sections", f->path.string()});
    add_columns(p, "points", "--points-columns", e.args);
    add_columns(p, "epochs", "--sections-columns", e.args);
    add(std::move(e));
  }
  const bool wells = p.input("wells") && p.input("measuring_points") && p.input("levels");
  std::string levels = p.input("levels") ? path("levels") : std::string();
  if (p.input("sensors") || p.input("records")) {
    if (!(p.input("sensors") && p.input("records") && p.input("wells") && p.input("levels"))) {
      throw InputError(p.file.string(),
                       "transducer records need all of [inputs] sensors, records, wells and "
                       "levels (the tape readings that check them)");
    }
    Stage t{"transducer",
            "transducer",
            {"transducer", "--wells", path("wells"), "--sensors", path("sensors"), "--records",
             path("records"), "--levels", path("levels"), "--unit", p.unit},
            {"sensors", "records", "levels"}};
    if (!p.crs.empty()) t.args.insert(t.args.end(), {"--crs", p.crs});
    add_columns(p, "wells", "--wells-columns", t.args);
    add_columns(p, "levels", "--levels-columns", t.args);  // its levels.csv has our names
    // Its levels.csv writes zone-less tape times with their offset.
    add_time_zones(p, {{"levels", "--levels-time-zone"}, {"records", "--records-time-zone"}},
                   t.args);
    add(std::move(t));
    levels = (out / "transducer" / "levels.csv").string();
  }
  if (wells) {
    require("target", p.target, "(the vertical reference of the heads, e.g. \"EPSG:5703\")");
    require("crs", p.crs, "(the horizontal CRS of the wells' x and y, e.g. \"EPSG:32613\")");
    Stage h{"heads",
            "heads",
            {"heads", "--wells", path("wells"), "--measuring-points", path("measuring_points"),
             "--levels", levels, "--target", p.target, "--crs", p.crs, "--unit", p.unit},
            {"wells", "measuring_points", "levels"}};
    if (!p.references.empty()) h.args.insert(h.args.end(), {"--references", p.references.string()});
    for (const fs::path& g : p.grid_paths) h.args.insert(h.args.end(), {"--grid-path", g.string()});
    add_columns(p, "wells", "--wells-columns", h.args);
    add_columns(p, "measuring_points", "--measuring-points-columns", h.args);
    if (!p.input("sensors")) add_columns(p, "levels", "--levels-columns", h.args);
    add_time_zones(
        p,
        p.input("sensors")
            ? std::vector<std::pair<std::string, const char*>>{{"measuring_points",
                                                                "--measuring-points-time-zone"}}
            : std::vector<std::pair<std::string, const char*>>{{"measuring_points",
                                                                "--measuring-points-time-zone"},
                                                               {"levels", "--levels-time-zone"}},
        h.args);
    if (network)
      h.args.insert(h.args.end(), {"--adjusted", (out / "adjust" / "heights.csv").string()});
    if (!epoch_files.empty()) {
      h.args.insert(h.args.end(),
                    {"--monitored", (out / "epochs" / "heights_by_epoch.csv").string()});
    }
    add(std::move(h));
  } else if (p.input("wells") || p.input("measuring_points") || p.input("levels")) {
    throw InputError(p.file.string(),
                     "heads need all three of [inputs] wells, measuring_points and levels");
  }
  if (wells && has_setting(p, "heads", "event")) {
    Stage f{"flow",
            "flow",
            {"flow", "--heads", (out / "heads" / "event.csv").string(), "--wells", path("wells"),
             "--crs", p.crs},
            {"heads", "wells"}};
    add_columns(p, "wells", "--wells-columns", f.args);
    add(std::move(f));
  } else if (std::any_of(p.settings.begin(), p.settings.end(),
                         [](const ProjectSetting& s) { return s.section == "flow"; })) {
    throw InputError(p.file.string(),
                     "[flow] needs one head per well: set [heads] event (the date "
                     "of the synoptic round) and the wells' inputs");
  }
  if (stages.empty()) {
    throw InputError(p.file.string(),
                     "the project has nothing to run: give [inputs] (a field book or "
                     "sections with points, epochs, or wells with measuring points "
                     "and levels)");
  }
  return stages;
}

}  // namespace levelhead::cli
