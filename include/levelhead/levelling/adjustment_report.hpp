#pragma once
// Outputs of `levelhead adjust`, written all-or-nothing into one folder.
//
// heights.csv    id, height (m), sigma (m, a posteriori = sigma0 * sqrt(q);
//                empty when there is no redundancy), sigma_apriori (m,
//                sqrt(q)), control, given_height (m), control_residual (m),
//                control_w, reference, kind. Heights 0.01 mm resolution.
// residuals.csv  from, to, dh (m, observed), residual (m, adjusted - observed),
//                w (normalised residual), adjusted_dh, sigma (m, a priori),
//                weight_rule, redundancy, mdb (m), length (m), run, date,
//                suspect, removed_step.
// summary.json   sigma0, dof, global_test {statistic, lower, upper, alpha,
//                passed}, suspects (worst first: from, to, w, ...), counts,
//                weighting rules, data-snooping settings, factor size.

#include <filesystem>
#include <nlohmann/json.hpp>
#include <string>

#include "levelhead/core/units.hpp"
#include "levelhead/levelling/adjustment.hpp"

namespace levelhead {

struct AdjustmentInputs {
  std::string points_file, sections_file;
  LengthUnit unit = LengthUnit::metre;
};

// Throws OutputError; on failure nothing is left in `folder` that looks finished.
void write_adjustment_outputs(const Network& network, const AdjustmentResult& result,
                              const AdjustmentOptions& options, const AdjustmentInputs& inputs,
                              const std::filesystem::path& folder);

// A few lines for a person: counts, sigma0, global test verdict, worst suspects.
std::string adjustment_summary_text(const Network& network, const AdjustmentResult& result);

// A variance factor for summary.json, and as one line of text (adjust and
// epochs alike).
nlohmann::json variance_component_json(const VarianceComponent& component);
std::string variance_component_line(const VarianceComponent& component);

// True when the global test failed or any observation is a suspect
// (the condition for exit status 3 under --strict).
bool adjustment_has_failed_checks(const AdjustmentResult& result);

}  // namespace levelhead
