#pragma once
// Least-squares adjustment of a levelling network.
//
// Method: Gauss-Markov model, weighted least squares of observed height
// differences, l + v = A x, P = diag(1 / sigma_i^2), a-priori variance of
// unit weight 1 (Ghilani, "Adjustment Computations", 6th ed., ch. 10 and 12;
// Koch, "Parameter Estimation and Hypothesis Testing in Linear Models").
// Normal equations N = A' P A are assembled sparse, factorised with a
// fill-reducing ordering (CHOLMOD), and the cofactors of the heights come
// from a selected inverse of N (Takahashi recurrences), never a dense inverse.
//
// In:  a Network (points with known heights, sections with dh), options.
//      Known heights with sigma empty or 0 are held fixed; with sigma > 0
//      they enter as weighted observations of the height. In a free
//      adjustment only the chosen point is held (at its known height, or 0).
// Out: adjusted heights (m) with a-posteriori and a-priori sigmas (m);
//      residuals v = adjusted dh - observed dh (m), redundancy numbers,
//      Baarda's normalised residuals w = v / sigma_v, minimal detectable
//      biases (m); sigma0, redundancy, the two-sided chi-square test of the
//      variance factor; suspects, worst first, by the outlier test that fits
//      what is known of sigma0 (OutlierTest below): Baarda's w-test while the
//      a-priori precision is trusted, Pope's tau test (tau = w / sigma0_hat
//      against the tau distribution) when sigma0 is estimated from the same
//      data.
// Errors: InputError for a section that cannot be weighted (no sigma, length
//      or setups); NetworkError for a connected part with no known height,
//      control heights in different references, or a free-adjustment point
//      that does not exist; ComputationError for a
//      numerical failure; OptionError for an option out of range.

#include <cstddef>
#include <optional>
#include <string>
#include <vector>

#include "levelhead/levelling/network.hpp"
#include "levelhead/levelling/precision.hpp"

namespace levelhead {

// How a section's sigma was obtained; the one list for reports and CLI.
enum class WeightRule { given_sigma, length, setups };
std::string to_string(WeightRule rule);

// How far the a-priori precision is trusted when the residuals are tested.
enum class Sigma0Use {
  apriori,   // trusted: Baarda's w-test, whatever the global test says
  estimate,  // not known: sigma0 from the data, Pope's tau test
  automatic  // trusted while the global test passes; estimated once it fails
};
std::string to_string(Sigma0Use use);
Sigma0Use parse_sigma0_use(const std::string& text);  // OptionError naming the choices

struct AdjustmentOptions {
  // sigma = k * sqrt(length in km) when no sigma (mm): the standard error of
  // the levelling class (precision.hpp), or given.
  double mm_per_sqrt_km = default_levelling_class().sigma_mm_per_sqrt_km;
  std::string levelling_class = std::string(default_levelling_class().name);  // empty: k given
  double mm_per_setup = 0.3;              // sigma = s * sqrt(setups) when no sigma, no length (mm)
  double alpha = 0.05;                    // global test, two-sided
  double alpha0 = 0.001;                  // data snooping, per observation, two-sided
  double beta0 = 0.80;                    // power for the minimal detectable bias
  std::optional<std::string> free_point;  // hold only this point (free network check)
  Sigma0Use sigma0 = Sigma0Use::automatic;  // which outlier test (see Sigma0Use)
  // Estimate a variance factor per group of sections: the column of the
  // sections table that names the group (run, date, instrument, observer or
  // any other), its value in Section::group; empty: none. Data snooping then
  // uses Pope's tau test.
  std::string variance_groups;
  bool iterative_snooping = false;   // remove the worst suspect and re-adjust, repeatedly
  std::size_t max_removals = 5;      // cap on removals in iterative snooping
  double max_factor_nonzeros = 2e8;  // refuse larger factors (memory)

  // Throws OptionError naming the option, its value and the rule.
  void validate() const;
};

enum class ControlKind { adjusted, fixed, weighted };
std::string to_string(ControlKind kind);

struct AdjustedPoint {
  std::size_t point = 0;        // index into Network::points
  double height = 0.0;          // m
  std::optional<double> sigma;  // m, a posteriori (sigma0 * sqrt(q)); nullopt when dof = 0
  double sigma_apriori = 0.0;   // m, sqrt(q) with a-priori unit weight
  ControlKind control = ControlKind::adjusted;
  // For weighted control points: the residual (adjusted - given, m), w and MDB.
  std::optional<double> control_residual, control_w, control_tau, control_mdb, control_redundancy;
  // Whether a blunder in any observation this height rests on would show in
  // a residual: true for control points and for the points the control
  // reaches over sections of redundancy r > 0; false beyond a section of
  // r = 0 (side shots, spur chains, clusters hung on a single line).
  bool checked = false;
};

struct AdjustedSection {
  std::size_t section = 0;  // index into Network::sections
  WeightRule rule = WeightRule::given_sigma;
  double sigma = 0.0;                       // m, a-priori sigma of the observation
  bool removed = false;                     // removed by iterative data snooping
  std::optional<std::size_t> removal_step;  // 1-based step of its removal
  // Below: from the final adjustment (for a removed section: its misfit there).
  double adjusted_dh = 0.0;   // m
  double residual = 0.0;      // m, adjusted - observed
  double redundancy = 0.0;    // r = qvv / qll, 0..1
  std::optional<double> w;    // normalised residual; nullopt when r ~ 0 (no check)
  std::optional<double> tau;  // w / sigma0_hat, when the tau test is used
  std::optional<double> mdb;  // m, minimal detectable bias; nullopt when r ~ 0
  // The statistic of the outlier test used: tau when set, else w.
  std::optional<double> statistic() const { return tau ? tau : w; }
};

// The test of single observations (data snooping) an adjustment used.
struct OutlierTest {
  enum class Kind { w_test, tau_test } kind = Kind::w_test;
  double alpha0 = 0.001;  // two-sided, per observation
  // |statistic| above it makes a suspect; infinite when the test cannot run
  // (the tau test needs a redundancy of 2 or more).
  double critical = 0.0;
  std::string basis;  // why this test: what is known of sigma0
  // "Baarda's w-test" or "Pope's tau test".
  std::string name() const;
  // "Baarda's w-test, |w| > 3.29 at alpha0 = 0.001"
  std::string statement() const;
};

struct Suspect {
  enum class Kind { section, control } kind = Kind::section;
  std::size_t index = 0;   // section index, or point index for a control
  double statistic = 0.0;  // w or tau, as the adjustment's OutlierTest
};

struct Removal {
  std::size_t section = 0;
  double statistic = 0.0;  // its w or tau when it was removed
  OutlierTest test;        // the test of that step
  double sigma0 = 0.0;     // sigma0 of the adjustment it was removed from
};

// The estimated precision of one group of sections, as a factor on its
// a-priori sigmas.
struct VarianceComponent {
  std::string group;             // the value of the grouping column; "(none)" where it is empty
  std::size_t sections = 0;      // in the final adjustment
  double redundancy = 0.0;       // sum of the sections' redundancy numbers
  std::optional<double> factor;  // sigma_hat / sigma_apriori; nullopt: redundancy below 2
  double low = 0.0, high = 0.0;  // its 1 - alpha interval (chi-square with `redundancy` dof)
};

struct GlobalTest {
  double statistic = 0.0;  // v'Pv, chi-square with dof degrees of freedom
  double lower = 0.0, upper = 0.0;
  double alpha = 0.05;
  bool passed = true;
};

struct AdjustmentTimings {
  double assembly = 0, ordering = 0, factorisation = 0, solve = 0, sigmas = 0;
};

struct AdjustmentResult {
  std::vector<AdjustedPoint> points;
  std::vector<AdjustedSection> sections;
  std::size_t unknowns = 0, observations = 0, fixed_points = 0, weighted_points = 0;
  std::size_t dof = 0;
  double vtpv = 0.0;
  std::optional<double> sigma0;                        // nullopt when dof = 0
  std::optional<GlobalTest> global_test;               // nullopt when dof = 0
  double w_critical = 0.0, lambda0 = 0.0;              // of Baarda's w-test and its MDB
  OutlierTest test;                                    // the test that made the suspects
  std::vector<Suspect> suspects;                       // beyond test.critical, worst first
  std::vector<Removal> removals;                       // iterative data snooping, in order
  std::vector<VarianceComponent> variance_components;  // with options.variance_groups
  std::size_t variance_iterations = 0;
  std::size_t weight_rule_counts[3] = {0, 0, 0};  // indexed by WeightRule
  std::optional<std::string> free_point;
  // The vertical reference of the adjusted heights: the common `datum` of the
  // control points (empty when none is named), or a note for a free adjustment.
  std::string reference;
  // The a-priori precision of sections weighted by length, as assumed:
  // "2 mm/sqrt(km) (standard error of class fgcc-third)" or "... (given)".
  std::string precision;
  AdjustmentTimings timings;
  double factor_nonzeros = 0.0;
  double factor_flops = 0.0;  // of the factorisation, as CHOLMOD's analysis counts them
  bool supernodal = false;
};

AdjustmentResult adjust(const Network& network, const AdjustmentOptions& options);

// Cofactors of the adjusted heights of `points` (indices into
// Network::points): the k x k block of N^-1 (m^2, a-priori unit weight;
// times sigma0^2 they are covariances as AdjustedPoint::sigma is a sigma),
// row-major, 0 for fixed points. From the final adjustment's weights,
// removals and control, by one solve with its factor per point (a block the
// selected inverse does not hold: points need not share a section).
// Errors: ComputationError as adjust().
std::vector<double> point_cofactors(const Network& network, const AdjustmentResult& result,
                                    const std::vector<std::size_t>& points,
                                    const AdjustmentOptions& options);

}  // namespace levelhead
