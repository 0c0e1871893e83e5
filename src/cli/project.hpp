#pragma once
// The project file of `levelhead run` (TOML; docs/project-file.md) and the
// chain of stages it describes.
//
// In:  PROJECT.toml. Sections: [site] (name, crs, target, unit, references,
//      grid_path), [inputs] (fieldbook or sections, points, epochs, wells,
//      measuring_points, levels), one section per stage whose keys are that
//      command's options with '_' for '-' ([fieldbook] -> reduce, [loops],
//      [adjustment] -> adjust, [epochs], [heads], [flow]), and [report]
//      (title, prepared_for, prepared_by, contour_interval) and [columns]
//      (a column map per input table: points, sections, fieldbook, epochs,
//      wells, measuring_points, levels) and [time_zones] (the zone of an
//      input table's times written without one: levels, records,
//      measuring_points; [site] time_zone is the default). Relative paths
//      are relative to the project file.
// Out: the stages in chain order, each a command line of the same commands
//      a user would type, writing into its own folder of the output folder.
// Errors: InputError naming the file and line for an unknown section or key
//      (with the nearest valid one), a value of the wrong type, a missing
//      input file or a missing required setting; OptionError when a stage's
//      options do not parse (named by section and key).

#include <filesystem>
#include <map>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

namespace levelhead::cli {

struct ProjectSetting {
  std::string section, key;         // as written
  std::vector<std::string> values;  // the option's values as text ({"true"} for a flag)
  std::string default_text;         // the command's default, empty when none
  std::size_t line = 0;
  bool is_flag = false;        // an on/off option
  bool chain_default = false;  // not in the file: the chain's own default
};

struct ProjectInput {
  std::string role;            // "points", "levels", ...
  std::filesystem::path path;  // resolved
  std::string as_written;      // relative to the project file, as given
};

struct Project {
  std::filesystem::path file, folder;
  std::string name, crs, target, unit = "m";
  std::string levelling_class;  // [site] levelling_class: --levelling-class of reduce, loops,
                                // adjust, epochs
  std::string time_zone;        // [site] time_zone: --time-zone of transducer and heads
  std::map<std::string, std::string> time_zones;  // [time_zones]: input role -> zone
  std::vector<ProjectInput> inputs;               // in the order of [inputs]
  std::filesystem::path references;               // empty when none
  std::vector<std::filesystem::path> grid_paths;
  std::map<std::string, std::string> report;   // title, prepared_for, prepared_by
  std::optional<double> contour_interval;      // m, [report] contour_interval
  std::map<std::string, std::string> columns;  // [columns]: input role -> column map
  std::vector<ProjectSetting> settings;        // stage options given (and chain defaults)

  const ProjectInput* input(const std::string& role) const;
  std::vector<const ProjectInput*> inputs_of(const std::string& role) const;
};

Project load_project(const std::filesystem::path& file);
// The same from the text of a project file; `file` names it in messages and
// relative paths are taken from its folder.
Project parse_project(std::string_view text, const std::filesystem::path& file);

struct Stage {
  std::string name;                 // folder name and command: reduce, loops, adjust, ...
  std::string section;              // its project section
  std::vector<std::string> args;    // without the program name
  std::vector<std::string> inputs;  // roles it reads, for messages
};

// The chain for `project` writing into `out`: only the stages its inputs allow.
std::vector<Stage> plan_stages(const Project& project, const std::filesystem::path& out);

}  // namespace levelhead::cli
