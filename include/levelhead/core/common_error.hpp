#pragma once
// Errors that heights share: the part of a height's uncertainty that every
// height converted through the same step carries alike (a datum's, geoid
// model's or PROJ operation's stated accuracy, an offset's sigma, a tie's
// offset at its centroid). Between two heights that went through the same
// step it cancels (differences, gradients); for an absolute height it counts
// in full.
//
// In:  per height, its shared parts by source.
// Out: the covariance two heights have through the parts they share (m^2):
//      sum over the sources both name of sqrt(v_a v_b), the errors of one
//      step being one and the same error.
// Errors: none.

#include <optional>
#include <string>
#include <string_view>
#include <vector>

namespace levelhead {

struct CommonError {
  std::string source;     // the step: "reference NAME" or "operation NAME"
  double variance = 0.0;  // m^2
};

// Covariance of two heights through their shared parts (m^2).
double shared_covariance(const std::vector<CommonError>& a, const std::vector<CommonError>& b);

// Sum of the variances of `parts` (m^2).
double total_variance(const std::vector<CommonError>& parts);

// As a table cell: "SOURCE=SIGMA; SOURCE=SIGMA" with sigmas in the table's
// unit (`per_metre` of them in a metre) to 4 decimals; empty for none.
std::string format_common_errors(const std::vector<CommonError>& parts, double per_metre = 1.0);
// The cell read back into metres (`metres_per_unit` of the table); nothing
// when it is not in that form.
std::optional<std::vector<CommonError>> parse_common_errors(std::string_view text,
                                                            double metres_per_unit = 1.0);

}  // namespace levelhead
