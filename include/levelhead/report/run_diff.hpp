#pragma once
// What changed between two runs of the chain (`levelhead diff OLD NEW`).
//
// In:  two output folders of `levelhead run` (each with run.json and the
//      stage folders), a tolerance for heads and heights (m).
// Out: the changes of configuration (inputs by checksum, settings, grids,
//      software versions), adjusted heights that moved, measuring points
//      that moved, and heads that moved, added or dropped, per well, each
//      with its likely cause: new data (the readings or the surveys
//      changed), new settings, a new grid, or new software.
//      What cannot be compared is said too: heights and measuring points
//      found in one run only, and files that are missing, unreadable or no
//      longer the ones the run wrote (their SHA-256 differs from run.json's
//      record, e.g. a file cut short or edited since).
// Errors: InputError when a folder is not a run (no run.json), or its
//      run.json lacks a part or holds the wrong kind of value (named by key).

#include <filesystem>
#include <string>
#include <vector>

namespace levelhead {

struct ConfigurationChange {
  std::string kind;           // input, setting, grid, software
  std::string name;           // role, setting name, grid file, program
  std::string before, after;  // checksum or value; empty when absent
};

struct ValueChange {
  std::string key;                   // point id, or well and time
  double before = 0.0, after = 0.0;  // m
};

// Keys (point ids, or well and survey date) found in one run only.
struct OneSided {
  std::vector<std::string> only_before, only_after;
  bool empty() const { return only_before.empty() && only_after.empty(); }
};

struct WellHeadChanges {
  std::string well;
  std::size_t moved = 0, added = 0, dropped = 0;
  double largest = 0.0;  // m, signed change of largest size
  std::vector<std::string> causes;
};

struct RunDifference {
  std::vector<ConfigurationChange> configuration;
  std::vector<ValueChange> heights;           // adjust/heights.csv
  std::vector<ValueChange> measuring_points;  // heads/measuring_points.csv (well valid_from)
  std::vector<WellHeadChanges> wells;         // heads/heads.csv, wells with a change
  OneSided heights_one_sided, measuring_points_one_sided;
  // Files of either run that are missing, unreadable or changed since the
  // run ("NEW heads/heads.csv: ..."); their values are not compared.
  std::vector<std::string> file_problems;
  std::size_t heads_compared = 0;
  bool identical() const {
    return configuration.empty() && heights.empty() && measuring_points.empty() && wells.empty() &&
           heights_one_sided.empty() && measuring_points_one_sided.empty() && file_problems.empty();
  }
};

RunDifference compare_runs(const std::filesystem::path& before, const std::filesystem::path& after,
                           double tolerance);

// A few paragraphs for a person.
std::string difference_text(const RunDifference& difference, double tolerance);

}  // namespace levelhead
