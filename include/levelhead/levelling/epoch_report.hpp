#pragma once
// Outputs of `levelhead epochs`, written all-or-nothing into one folder.
//
// epochs.csv              epoch, first_date, last_date, time (mid-time, UTC),
//                         points, sections, dof, sigma0, global_test
//                         (passed/failed/none), suspects, removed
// reference_stability.csv mark, verdict (stable/moving/unresolved), step,
//                         contribution (drop of Omega when left out), reason
// displacements.csv       point, from_epoch, to_epoch, against (previous or
//                         first), years, displacement (m, later - earlier),
//                         sigma (m), ci_low, ci_high (m, 1 - alpha interval),
//                         statistic (|d| / sigma), significant (yes/no),
//                         mdd (m, minimal detectable displacement), note
// rates.csv               point, epochs, rate_mm_per_year, sigma_mm_per_year,
//                         significant
// heights_by_epoch.csv    point, epoch, time (UTC), height (m), sigma (m),
//                         reference: read by `levelhead heads --monitored`
// summary.json            epochs, congruence tests in order, verdicts, the
//                         variance factor, settings, warnings

#include <filesystem>
#include <string>

#include "levelhead/levelling/epochs.hpp"

namespace levelhead {

struct EpochInputs {
  std::string points_file;
  std::vector<std::string> sections_files;
};

// Throws OutputError; on failure nothing is left in `folder` that looks finished.
void write_epoch_outputs(const EpochAnalysis& analysis, const EpochOptions& options,
                         const EpochInputs& inputs, const std::filesystem::path& folder);

// Lines for a person: the epochs, the marks' verdicts, the largest movements.
std::string epoch_summary_text(const EpochAnalysis& analysis);

// True when an epoch's global test failed, a mark moved or stayed
// unresolved (the condition for exit status 3 under --strict).
bool epochs_have_failed_checks(const EpochAnalysis& analysis);

}  // namespace levelhead
