#pragma once
// Monitoring: repeated levelling epochs, stability of the reference marks,
// displacements and rates.
//
// Method: classical deformation analysis of levelling networks (Pelzer 1971,
// "Zur Analyse geodätischer Deformationsmessungen", DGK C 164; Niemeier 1985,
// "Deformationsanalyse", in Pelzer (ed.), Geodätische Netze in Landes- und
// Ingenieurvermessung II; Caspary 2000, "Concepts of Network and Deformation
// Analysis", 3rd ed., UNSW Monograph 11, ch. 6):
//  1. every epoch is adjusted as a free network (one point held) with its
//     own global test and data snooping (adjustment.hpp);
//  2. the global congruence test of the candidate reference marks: the
//     epochs are adjusted jointly with the marks' heights shared; the rise of
//     the weighted sum of squares over the separate adjustments,
//     Omega = v'Pv(joint) - sum v'Pv(epoch), has h = sum_p (m_p - 1) - (m - 1)
//     degrees of freedom (m_p epochs holding mark p, m epochs) and
//     T = Omega / (h s0^2) ~ F(h, f) with the pooled s0^2 = sum v'Pv / f of
//     the epochs (or Omega ~ chi^2(h) with the a-priori variance factor);
//  3. while the test fails, the mark whose removal lowers Omega most is
//     declared moving and the test is repeated on the rest;
//  4. the marks left define the datum of a final joint adjustment; every
//     other point has a height per epoch, and displacements, their
//     confidence intervals, significance, minimal detectable displacements
//     and rates (weighted least squares on the epochs' full covariance)
//     follow from its cofactor matrix.
// Sparse linear algebra (CHOLMOD) with the selected inverse: the covariances
// across epochs the analysis needs are put on the factor's pattern.
//
// In:  the points table (ids, optional known heights and datum: the mark
//      held in the final adjustment keeps its known height), the sections of
//      each epoch (with dates), the candidate reference marks, options.
// Out: EpochAnalysis below. Heights and displacements in m, rates in m per
//      year (365.25 days), times in seconds since 1970-01-01 UTC.
// Errors: InputError for a section without a readable date; NetworkError for
//      fewer than two epochs, an unknown or unobserved mark, an epoch with no
//      candidate mark, or an epoch whose network falls apart; OptionError
//      for an option out of range; ComputationError when the joint
//      adjustment's factor would exceed adjustment.max_factor_nonzeros.

#include <cstddef>
#include <optional>
#include <string>
#include <vector>

#include "levelhead/levelling/adjustment.hpp"
#include "levelhead/levelling/network.hpp"

namespace levelhead {

enum class VarianceFactor { pooled, apriori };

struct EpochOptions {
  AdjustmentOptions adjustment;  // weights and per-epoch tests
  double alpha = 0.05;           // congruence test and displacement tests
  double beta = 0.80;            // power for the minimal detectable displacement
  VarianceFactor variance = VarianceFactor::pooled;
  bool remove_suspects = false;  // iterative data snooping in each epoch first
  void validate() const;
};

struct EpochSections {
  std::string name;
  SectionTable sections;
};

struct EpochQuality {
  std::string name;
  double time = 0.0;  // mid-time of its sections (s, UTC)
  std::string first_date, last_date;
  std::size_t points = 0, sections = 0, dof = 0;
  double vtpv = 0.0;
  std::optional<double> sigma0;
  std::optional<GlobalTest> global_test;
  struct Flagged {
    std::string from, to;
    double statistic = 0.0;  // w or tau, by the epoch adjustment's outlier test
    std::size_t row = 0;
  };
  std::vector<Flagged> suspects;       // observation suspects, worst first
  std::vector<Flagged> removed;        // removed by data snooping (with remove_suspects)
  OutlierTest test;                    // the epoch adjustment's test of single observations
  std::vector<std::string> unchecked;  // points resting on single observations (side shots, spurs)
  // With adjustment.variance_groups: the factors estimated in this epoch
  // (one group "epoch" is the epoch itself). The joint adjustment weighs the
  // epoch's sections with the scaled sigmas.
  std::vector<VarianceComponent> variance_components;
};

struct CongruenceTest {
  std::vector<std::string> marks;  // the marks tested together
  double omega = 0.0;              // m^2 in weight units
  std::size_t h = 0;
  double statistic = 0.0;  // T (F) or Omega (chi-square)
  double critical = 0.0;
  std::string distribution;  // e.g. "F(3, 12)" or "chi2(3)"
  bool passed = true;
};

struct MarkVerdict {
  std::string mark;
  enum class Kind { stable, moving, unresolved } kind = Kind::stable;
  std::optional<std::size_t> step;  // 1-based step at which it was removed
  double contribution = 0.0;        // drop of Omega when it was removed
  // For a moving mark: the candidate whose removal lowered Omega second
  // most at its step, and Omega without it; empty when there was none.
  std::string next_best;
  std::optional<double> next_best_omega;
  std::string reason;
};
std::string to_string(MarkVerdict::Kind kind);

struct EpochHeight {
  std::size_t epoch = 0;
  double height = 0.0, sigma = 0.0;  // m
  bool checked = true;               // false: in the epoch's unchecked list
};

struct Displacement {
  std::string point;
  std::size_t from_epoch = 0, to_epoch = 0;
  bool against_first = false;  // false: against the previous epoch
  double years = 0.0;
  double value = 0.0, sigma = 0.0;  // m
  double ci_low = 0.0, ci_high = 0.0;
  double statistic = 0.0;  // |d| / sigma
  bool significant = false;
  double mdd = 0.0;         // m, minimal detectable displacement
  bool datum_mark = false;  // a stable mark: zero by definition
};

struct Rate {
  std::string point;
  std::size_t epochs = 0;
  double rate = 0.0, sigma = 0.0;  // m per year
  bool significant = false;
};

struct EpochAnalysis {
  std::vector<EpochQuality> epochs;  // in time order
  std::vector<std::string> candidates;
  std::vector<CongruenceTest> tests;  // first: all candidates; then after each removal
  std::vector<MarkVerdict> marks;
  std::string held_mark;  // the mark held in the final adjustment
  std::string reference;  // the reference of the heights
  double s0 = 1.0;        // variance factor used (sqrt)
  std::size_t pooled_dof = 0;
  double test_critical = 0.0;                     // critical value of |d| / sigma
  std::string test_distribution;                  // "t(12)" or "normal"
  std::vector<std::string> points;                // every point observed in some epoch
  std::vector<std::vector<EpochHeight>> heights;  // per point, in epoch order
  std::vector<Displacement> displacements;
  std::vector<Rate> rates;
  std::vector<std::string> warnings;
};

// Significant displacements against the first epoch (one per point and
// later epoch) or against the previous one: the counts the summary, the
// console and the report give.
std::size_t significant_displacements(const EpochAnalysis& analysis, bool against_first);

EpochAnalysis analyse_epochs(const PointTable& points, std::vector<EpochSections> epochs,
                             const std::vector<std::string>& candidate_marks,
                             const EpochOptions& options);

// The epochs of a sections table: by its `epoch` column (the caller passes
// the column's values per row) or the whole table as one epoch named `name`.
std::vector<EpochSections> split_by_epoch(SectionTable table,
                                          const std::vector<std::string>& epoch_of_row);

}  // namespace levelhead
