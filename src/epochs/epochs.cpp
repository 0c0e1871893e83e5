#include "levelhead/levelling/epochs.hpp"

#include <fmt/format.h>

#include <Eigen/Dense>
#include <algorithm>
#include <cmath>
#include <ctime>
#include <limits>
#include <memory>
#include <numeric>
#include <unordered_map>

#include "adjust/normal_solver.hpp"
#include "epochs/epoch_block_solver.hpp"
#include "levelhead/core/errors.hpp"
#include "levelhead/core/time.hpp"
#include "levelhead/levelling/statistics.hpp"

namespace levelhead {

std::string to_string(MarkVerdict::Kind kind) {
  switch (kind) {
    case MarkVerdict::Kind::stable:
      return "stable";
    case MarkVerdict::Kind::moving:
      return "moving";
    case MarkVerdict::Kind::unresolved:
      return "unresolved";
  }
  return "?";
}

void EpochOptions::validate() const {
  adjustment.validate();
  if (!(alpha > 0.0 && alpha < 1.0)) {
    throw OptionError(
        fmt::format("alpha = {} must lie strictly between 0 and 1 (e.g. 0.05)", alpha));
  }
  if (!(beta > 0.0 && beta < 1.0)) {
    throw OptionError(
        fmt::format("power = {} must lie strictly between 0 and 1 (e.g. 0.80)", beta));
  }
}

std::vector<EpochSections> split_by_epoch(SectionTable table,
                                          const std::vector<std::string>& epoch_of_row) {
  if (epoch_of_row.size() != table.sections.size()) {
    throw std::logic_error("split_by_epoch: one epoch name per section expected");
  }
  std::vector<EpochSections> out;
  std::unordered_map<std::string, std::size_t> index;
  for (std::size_t s = 0; s < table.sections.size(); ++s) {
    const std::string& name = epoch_of_row[s];
    if (name.empty()) {
      throw InputError(CellLocation{table.file, table.sections[s].row, "epoch"}, "",
                       "every section needs an epoch name when the table has an epoch column");
    }
    const auto [it, added] = index.emplace(name, out.size());
    if (added) out.push_back({name, SectionTable{table.file, {}}});
    out[it->second].sections.sections.push_back(std::move(table.sections[s]));
  }
  return out;
}

namespace {

constexpr double seconds_per_year = 365.25 * 86400.0;

struct Observation {
  std::size_t epoch = 0, from = 0, to = 0;
  double dh = 0.0, weight = 0.0;
};

// The epochs' observations on one list of points (indices into `ids`).
struct Model {
  std::vector<std::string> ids;
  std::unordered_map<std::string, std::size_t> index;
  std::vector<std::optional<double>> known;
  std::vector<double> known_sigma;  // 0 for a height held fixed
  std::vector<std::string> datum;
  std::vector<std::vector<char>> observed;  // [epoch][point]
  std::vector<Observation> observations;
  std::size_t epochs = 0;
};

struct JointSolution {
  double vtpv = 0.0;
  std::vector<std::vector<long>> unknown;  // [epoch][point]: index, -1 held, -2 not observed
  Eigen::VectorXd x;
  // Cofactors of the unknowns; only when asked for.
  std::unique_ptr<detail::EpochBlockSolver> cofactors;
  // Otherwise the factorisation, for further solves.
  std::unique_ptr<detail::NormalSolver> solver;
  double held_height = 0.0;

  double height(std::size_t epoch, std::size_t point) const {
    const long u = unknown[epoch][point];
    return u < 0 ? held_height : x(u);
  }
  // Cofactor of the heights of one point in two epochs (or the same epoch).
  double cofactor(std::size_t e1, std::size_t e2, std::size_t point) const {
    const long a = unknown[e1][point], b = unknown[e2][point];
    return a < 0 || b < 0 ? 0.0 : cofactors->cofactor(static_cast<int>(a), static_cast<int>(b));
  }
};

// Weighted least squares of all epochs at once, the points flagged `shared`
// having one height for every epoch and `held` held at `held_height`
// (Koch, "Parameter Estimation and Hypothesis Testing in Linear Models",
// ch. 3). The normal matrix is sparse and factorised by CHOLMOD; every epoch
// must observe a shared point, so the only datum defect is the one the held
// point removes. With cofactors it is solved epoch by epoch through the
// shared marks (EpochBlockSolver), for which the unknowns are numbered
// shared marks first, then each epoch's own points together.
JointSolution solve_joint(const Model& m, const std::vector<char>& shared, std::size_t held,
                          double held_height, bool with_cofactors, double max_factor_nonzeros) {
  JointSolution s;
  s.held_height = held_height;
  s.unknown.assign(m.epochs, std::vector<long>(m.ids.size(), -2));
  long next = 0;
  std::vector<long> shared_unknown(m.ids.size(), -2);
  for (std::size_t p = 0; p < m.ids.size(); ++p) {
    if (shared[p]) shared_unknown[p] = p == held ? -1 : next++;
  }
  const auto n_shared = static_cast<int>(next);
  std::vector<int> epoch_begin;
  for (std::size_t k = 0; k < m.epochs; ++k) {
    epoch_begin.push_back(static_cast<int>(next));
    for (std::size_t p = 0; p < m.ids.size(); ++p) {
      if (!m.observed[k][p]) continue;
      s.unknown[k][p] = shared[p] ? shared_unknown[p] : next++;
    }
  }
  epoch_begin.push_back(static_cast<int>(next));
  const auto u = static_cast<int>(next);
  std::vector<Eigen::Triplet<double, int>> triplets;
  triplets.reserve(3 * m.observations.size());
  Eigen::VectorXd rhs = Eigen::VectorXd::Zero(u);
  for (const Observation& o : m.observations) {
    const long t = s.unknown[o.epoch][o.to], f = s.unknown[o.epoch][o.from];
    double l = o.dh;
    if (t == -1) l -= held_height;
    if (f == -1) l += held_height;
    if (t >= 0) {
      triplets.emplace_back(t, t, o.weight);
      rhs(t) += o.weight * l;
    }
    if (f >= 0) {
      triplets.emplace_back(f, f, o.weight);
      rhs(f) -= o.weight * l;
    }
    if (t >= 0 && f >= 0) triplets.emplace_back(std::max(t, f), std::min(t, f), -o.weight);
  }
  detail::NormalSolver::LowerMatrix normal(u, u);
  normal.setFromTriplets(triplets.begin(), triplets.end());
  normal.makeCompressed();
  triplets = {};
  try {
    const detail::SolverLimits limits{max_factor_nonzeros};
    if (with_cofactors) {
      s.cofactors = std::make_unique<detail::EpochBlockSolver>(normal, n_shared,
                                                               std::move(epoch_begin), limits);
      s.x = s.cofactors->solve(rhs);
    } else {
      s.solver = std::make_unique<detail::NormalSolver>(normal, limits);
      s.x = s.solver->solve(rhs);
    }
  } catch (const ComputationError& e) {
    throw ComputationError(fmt::format(
        "the joint adjustment of the epochs ({} unknowns): {} (is a point or part of an epoch "
        "cut off from the reference marks?)",
        u, e.what()));
  }
  for (const Observation& o : m.observations) {
    const double v = s.height(o.epoch, o.to) - s.height(o.epoch, o.from) - o.dh;
    s.vtpv += o.weight * v * v;
  }
  return s;
}

struct TestSettings {
  double separate_vtpv = 0.0;
  std::size_t pooled_dof = 0;
  bool pooled = true;
  double alpha = 0.05;
};

// Degrees of freedom of the congruence test: identifications of shared
// heights minus the epochs' datum defects they remove.
std::size_t congruence_dof(const Model& m, const std::vector<char>& shared) {
  long h = -static_cast<long>(m.epochs - 1);
  for (std::size_t p = 0; p < m.ids.size(); ++p) {
    if (!shared[p]) continue;
    long epochs_with = 0;
    for (std::size_t k = 0; k < m.epochs; ++k) epochs_with += m.observed[k][p];
    h += epochs_with - 1;
  }
  return h > 0 ? static_cast<std::size_t>(h) : 0;
}

bool every_epoch_holds_one(const Model& m, const std::vector<char>& shared) {
  for (std::size_t k = 0; k < m.epochs; ++k) {
    bool any = false;
    for (std::size_t p = 0; p < m.ids.size() && !any; ++p) any = shared[p] && m.observed[k][p];
    if (!any) return false;
  }
  return true;
}

std::size_t first_shared(const std::vector<char>& shared) {
  return static_cast<std::size_t>(std::find(shared.begin(), shared.end(), 1) - shared.begin());
}

struct CongruenceFit {
  CongruenceTest test;
  JointSolution joint;  // with its factorisation
};

// Global congruence test (Pelzer 1971; Caspary 2000, sec. 6.3) of the
// marks `shared`, whose joint fit has `joint_vtpv`.
CongruenceTest congruence_verdict(const Model& m, const std::vector<char>& shared,
                                  const TestSettings& t, double joint_vtpv) {
  CongruenceTest test;
  for (std::size_t p = 0; p < m.ids.size(); ++p) {
    if (shared[p]) test.marks.push_back(m.ids[p]);
  }
  test.h = congruence_dof(m, shared);
  // The joint fit can never be better than the separate ones; a tiny
  // negative difference is rounding.
  test.omega = std::max(0.0, joint_vtpv - t.separate_vtpv);
  if (test.h == 0) {
    test.distribution = "none (no redundancy between the marks)";
    return test;
  }
  if (t.pooled) {
    const double s0_squared = t.separate_vtpv / static_cast<double>(t.pooled_dof);
    test.statistic = test.omega / (static_cast<double>(test.h) * s0_squared);
    test.critical = fisher_upper_quantile(t.alpha, test.h, t.pooled_dof);
    test.distribution = fmt::format("F({}, {})", test.h, t.pooled_dof);
  } else {
    test.statistic = test.omega;
    test.critical = chi_square_upper_quantile(t.alpha, test.h);
    test.distribution = fmt::format("chi2({})", test.h);
  }
  test.passed = test.statistic <= test.critical;
  return test;
}

// The joint fit of the marks `shared` and their congruence test.
CongruenceFit congruence_test(const Model& m, const std::vector<char>& shared,
                              const TestSettings& t, double max_factor_nonzeros) {
  CongruenceFit fit;
  fit.joint = solve_joint(m, shared, first_shared(shared), 0.0, false, max_factor_nonzeros);
  fit.test = congruence_verdict(m, shared, t, fit.joint.vtpv);
  return fit;
}

// How much v'Pv of the joint fit drops when mark `p` stops being shared,
// from that fit's own factorisation: freeing the mark adds one parameter
// per epoch that observes it after the first, the offset of its height in
// that epoch (columns C: +1 on the epoch's observations to the mark, -1 on
// those from it). The drop is the test statistic of q added parameters,
// T_q = g' M^-1 g with g = C'P v and M = C'P Q_v P C = C'PC - C'PA N^-1 A'PC,
// which equals the difference of the two fits' v'Pv exactly (Teunissen,
// "Testing Theory: an introduction", 2000, the generalised likelihood
// ratio test of a linear model). One solve with N per added parameter
// replaces a factorisation per candidate. nullopt when M is not safely
// positive definite (an offset the epochs cannot determine): the caller
// refits then.
std::optional<double> vtpv_drop_when_freed(const Model& m, const JointSolution& joint,
                                           const std::vector<std::size_t>& observations_at_p,
                                           std::size_t p) {
  std::vector<std::size_t> epochs;
  for (const std::size_t o : observations_at_p) epochs.push_back(m.observations[o].epoch);
  std::sort(epochs.begin(), epochs.end());
  epochs.erase(std::unique(epochs.begin(), epochs.end()), epochs.end());
  if (epochs.size() < 2) return 0.0;  // seen in one epoch: nothing is shared
  const std::size_t q = epochs.size() - 1;
  const Eigen::Index u = joint.x.size();
  Eigen::VectorXd g = Eigen::VectorXd::Zero(static_cast<Eigen::Index>(q));
  Eigen::VectorXd ctpc = Eigen::VectorXd::Zero(static_cast<Eigen::Index>(q));
  Eigen::MatrixXd atpc = Eigen::MatrixXd::Zero(u, static_cast<Eigen::Index>(q));
  for (const std::size_t index : observations_at_p) {
    const Observation& o = m.observations[index];
    const auto at = std::lower_bound(epochs.begin(), epochs.end(), o.epoch);
    if (at == epochs.begin()) continue;  // the first epoch keeps the shared height
    const auto column = static_cast<Eigen::Index>(at - epochs.begin() - 1);
    const double c = o.to == p ? 1.0 : -1.0;
    const double v = joint.height(o.epoch, o.to) - joint.height(o.epoch, o.from) - o.dh;
    g(column) += c * o.weight * v;
    ctpc(column) += o.weight;
    if (const long t = joint.unknown[o.epoch][o.to]; t >= 0) atpc(t, column) += c * o.weight;
    if (const long f = joint.unknown[o.epoch][o.from]; f >= 0) atpc(f, column) -= c * o.weight;
  }
  Eigen::MatrixXd mq = ctpc.asDiagonal();
  for (Eigen::Index j = 0; j < static_cast<Eigen::Index>(q); ++j) {
    const Eigen::VectorXd y = joint.solver->solve(atpc.col(j));
    mq.col(j) -= atpc.transpose() * y;
  }
  const Eigen::LDLT<Eigen::MatrixXd> ldlt(mq);
  // A pivot below 1e-10 of C'PC is an offset the other observations
  // barely fix: its drop would be rounding noise amplified.
  if (ldlt.info() != Eigen::Success || ldlt.vectorD().minCoeff() <= 1e-10 * ctpc.maxCoeff())
    return std::nullopt;
  return g.dot(ldlt.solve(g));
}

int season_of(double seconds) {
  const std::time_t t = static_cast<std::time_t>(std::floor(seconds));
  std::tm utc{};
  gmtime_r(&t, &utc);
  return ((utc.tm_mon + 1) % 12) / 3;  // Dec-Feb, Mar-May, Jun-Aug, Sep-Nov
}

// An epoch is one campaign: its sections were levelled within days or weeks.
// A section dated far from the rest of its campaign (a year typed wrong:
// 2034 for 2024) would move the campaign's mid-time and could flip the sign
// of every rate, so it is refused naming its row; so are campaigns that
// overlap in time or share a date, which cannot be told apart in time.
// The limit is generous (a campaign of a large network can take months).
constexpr double max_days_from_campaign_median = 365.0;

struct CampaignSpan {
  std::size_t epoch;
  double first = 0.0, last = 0.0;  // s
  const Section* first_section = nullptr;
  const Section* last_section = nullptr;
};

// Returns each epoch's span, in the order of `epochs`.
std::vector<CampaignSpan> check_campaign_dates(const std::vector<EpochSections>& epochs) {
  std::vector<CampaignSpan> spans;
  for (std::size_t k = 0; k < epochs.size(); ++k) {
    const SectionTable& table = epochs[k].sections;
    std::vector<std::pair<double, const Section*>> dated;
    for (const Section& s : table.sections) {
      const auto when = parse_iso8601(s.date);
      if (!when) {
        throw InputError(CellLocation{table.file, s.row, "date"}, s.date,
                         "each section of an epoch needs a date (ISO 8601, e.g. 2026-05-14) so "
                         "the epoch can be placed in time");
      }
      dated.emplace_back(when->seconds, &s);
    }
    if (dated.empty()) {
      spans.push_back({k});
      continue;
    }
    std::stable_sort(dated.begin(), dated.end(),
                     [](const auto& a, const auto& b) { return a.first < b.first; });
    const double median = dated[(dated.size() - 1) / 2].first;  // the lower median
    for (const auto& [time, section] : dated) {
      const double days = std::abs(time - median) / 86400.0;
      if (days > max_days_from_campaign_median) {
        throw InputError(
            CellLocation{table.file, section->row, "date"}, section->date,
            fmt::format("this section of epoch '{}' is dated {:.0f} days from the middle of its "
                        "campaign ({}); a campaign spans days or weeks: correct the date (a "
                        "mistyped year?) or put the section in its own epoch",
                        epochs[k].name, days, format_utc(median).substr(0, 10)));
      }
    }
    spans.push_back(
        {k, dated.front().first, dated.back().first, dated.front().second, dated.back().second});
  }
  std::vector<CampaignSpan> by_time;
  for (const CampaignSpan& span : spans) {
    if (span.first_section) by_time.push_back(span);
  }
  std::sort(by_time.begin(), by_time.end(),
            [](const CampaignSpan& a, const CampaignSpan& b) { return a.first < b.first; });
  for (std::size_t i = 1; i < by_time.size(); ++i) {
    const CampaignSpan &earlier = by_time[i - 1], &later = by_time[i];
    if (later.first > earlier.last) continue;
    throw InputError(
        CellLocation{epochs[later.epoch].sections.file, later.first_section->row, "date"},
        later.first_section->date,
        fmt::format("epoch '{}' begins on {} before epoch '{}' ends ({}, row {}): epochs are "
                    "campaigns apart in time, and rates need a time between them; correct the "
                    "dates, or merge the two into one epoch",
                    epochs[later.epoch].name, later.first_section->date, epochs[earlier.epoch].name,
                    earlier.last_section->date, earlier.last_section->row));
  }
  return spans;
}

// `span`: the epoch's dates, checked by check_campaign_dates.
EpochQuality adjust_epoch(const PointTable& points, EpochSections& epoch, const CampaignSpan& span,
                          const Model& m, const std::vector<char>& candidate,
                          const EpochOptions& options, std::vector<Observation>& observations,
                          std::size_t epoch_index) {
  EpochQuality q;
  q.name = epoch.name;
  const SectionTable& table = epoch.sections;
  if (table.sections.empty())
    throw NetworkError(fmt::format("epoch '{}' has no sections", epoch.name), {});
  q.first_date = span.first_section->date;
  q.last_date = span.last_section->date;
  q.time = 0.5 * (span.first + span.last);

  // A free network of the points this epoch observes, one candidate held.
  std::vector<char> in_epoch(points.points.size(), 0);
  std::unordered_map<std::string_view, std::size_t> row_of;
  for (std::size_t i = 0; i < points.points.size(); ++i) row_of.emplace(points.points[i].id, i);
  for (const Section& s : table.sections) {
    for (const std::string* id : {&s.from, &s.to}) {
      const auto it = row_of.find(*id);
      if (it != row_of.end()) in_epoch[it->second] = 1;
    }
  }
  PointTable subset{points.file, {}};
  std::optional<std::string> held;
  for (std::size_t i = 0; i < points.points.size(); ++i) {
    if (!in_epoch[i]) continue;
    subset.points.push_back(points.points[i]);
    if (!held && candidate[m.index.at(points.points[i].id)]) held = points.points[i].id;
  }
  if (!held) {
    throw NetworkError(fmt::format("epoch '{}' observes none of the candidate reference marks, so "
                                   "it cannot be compared with the others; level to at least one "
                                   "of them or name another mark",
                                   epoch.name),
                       {});
  }
  AdjustmentOptions adjustment = options.adjustment;
  adjustment.free_point = held;
  adjustment.iterative_snooping = options.remove_suspects;
  try {
    const Network network = make_network(std::move(subset), table);
    const AdjustmentResult r = adjust(network, adjustment);
    q.points = network.points.size();
    q.sections = network.sections.size();
    q.dof = r.dof;
    q.vtpv = r.vtpv;
    q.sigma0 = r.sigma0;
    q.global_test = r.global_test;
    q.test = r.test;
    q.variance_components = r.variance_components;
    for (const Suspect& s : r.suspects) {
      if (s.kind != Suspect::Kind::section) continue;
      const Section& sec = network.sections[s.index];
      q.suspects.push_back({sec.from, sec.to, s.statistic, sec.row});
    }
    for (const AdjustedPoint& p : r.points) {
      if (!p.checked) q.unchecked.push_back(network.points[p.point].id);
    }
    for (const Removal& removal : r.removals) {
      const Section& sec = network.sections[removal.section];
      q.removed.push_back({sec.from, sec.to, removal.statistic, sec.row});
    }
    for (std::size_t s = 0; s < network.sections.size(); ++s) {
      if (r.sections[s].removed) continue;
      const Section& sec = network.sections[s];
      const double sigma = r.sections[s].sigma;
      observations.push_back(
          {epoch_index, m.index.at(sec.from), m.index.at(sec.to), sec.dh, 1.0 / (sigma * sigma)});
    }
  } catch (const NetworkError& e) {
    throw NetworkError(fmt::format("epoch '{}': {}", epoch.name, e.what()), e.point_ids());
  }
  return q;
}

// Weighted least-squares line h(t) = a + r t through one point's epoch
// heights with their full covariance C: r from (X' C^-1 X)^-1 X' C^-1 h
// (generalised least squares; Koch, ch. 3.2).
std::optional<std::pair<double, double>> fit_rate(const std::vector<double>& years,
                                                  const Eigen::VectorXd& heights,
                                                  const Eigen::MatrixXd& covariance) {
  const auto n = static_cast<Eigen::Index>(years.size());
  Eigen::MatrixXd design(n, 2);
  for (Eigen::Index i = 0; i < n; ++i) design.row(i) << 1.0, years[static_cast<std::size_t>(i)];
  const Eigen::LLT<Eigen::MatrixXd> c(covariance);
  if (c.info() != Eigen::Success) return std::nullopt;
  const Eigen::MatrixXd normal = design.transpose() * c.solve(design);
  const Eigen::Vector2d rhs = design.transpose() * c.solve(heights);
  const Eigen::LDLT<Eigen::Matrix2d> f(normal);
  if (f.info() != Eigen::Success) return std::nullopt;
  const Eigen::Vector2d estimate = f.solve(rhs);
  const Eigen::Matrix2d inverse = f.solve(Eigen::Matrix2d::Identity());
  return std::make_pair(estimate(1), std::sqrt(std::max(inverse(1, 1), 0.0)));
}

}  // namespace

EpochAnalysis analyse_epochs(const PointTable& points, std::vector<EpochSections> epochs,
                             const std::vector<std::string>& candidate_marks,
                             const EpochOptions& options) {
  options.validate();
  if (epochs.size() < 2) {
    throw NetworkError(fmt::format("{} epoch(s) given: comparing needs at least two (an epoch "
                                   "column in the sections, or one sections table per epoch)",
                                   epochs.size()),
                       {});
  }
  for (std::size_t a = 0; a < epochs.size(); ++a) {
    for (std::size_t b = a + 1; b < epochs.size(); ++b) {
      if (epochs[a].name == epochs[b].name) {
        throw NetworkError(
            fmt::format("two epochs are named '{}'; give each its own name", epochs[a].name), {});
      }
    }
  }

  const std::vector<CampaignSpan> spans = check_campaign_dates(epochs);

  Model m;
  m.epochs = epochs.size();
  for (const Point& p : points.points) {
    if (!m.index.emplace(p.id, m.ids.size()).second) {
      throw NetworkError(
          fmt::format("point '{}' appears twice in {} (row {})", p.id, points.file, p.row), {p.id});
    }
    m.ids.push_back(p.id);
    m.known.push_back(p.height);
    m.known_sigma.push_back(p.is_fixed() ? 0.0 : p.sigma.value_or(0.0));
    m.datum.push_back(p.datum);
  }
  std::vector<char> candidate(m.ids.size(), 0);
  EpochAnalysis out;
  for (const std::string& id : candidate_marks) {
    const auto it = m.index.find(id);
    if (it == m.index.end()) {
      throw NetworkError(
          fmt::format("reference mark '{}' is not in the points table {}", id, points.file), {id});
    }
    if (!candidate[it->second]) out.candidates.push_back(id);
    candidate[it->second] = 1;
  }
  if (out.candidates.empty()) throw NetworkError("no candidate reference marks were named", {});

  // 1. Each epoch on its own, in time order.
  for (std::size_t k = 0; k < epochs.size(); ++k) {
    out.epochs.push_back(
        adjust_epoch(points, epochs[k], spans[k], m, candidate, options, m.observations, k));
  }
  std::vector<std::size_t> order(epochs.size());
  std::iota(order.begin(), order.end(), 0);
  std::stable_sort(order.begin(), order.end(), [&](std::size_t a, std::size_t b) {
    return out.epochs[a].time < out.epochs[b].time;
  });
  std::vector<std::size_t> rank(order.size());
  for (std::size_t i = 0; i < order.size(); ++i) rank[order[i]] = i;
  for (Observation& o : m.observations) o.epoch = rank[o.epoch];
  std::vector<EpochQuality> sorted;
  for (std::size_t k : order) sorted.push_back(std::move(out.epochs[k]));
  out.epochs = std::move(sorted);
  m.observed.assign(m.epochs, std::vector<char>(m.ids.size(), 0));
  for (const Observation& o : m.observations) {
    m.observed[o.epoch][o.from] = 1;
    m.observed[o.epoch][o.to] = 1;
  }
  for (std::size_t p = 0; p < m.ids.size(); ++p) {
    if (!candidate[p]) continue;
    std::size_t seen = 0;
    for (std::size_t k = 0; k < m.epochs; ++k) seen += m.observed[k][p];
    if (seen == 0) {
      throw NetworkError(fmt::format("reference mark '{}' is observed in no epoch", m.ids[p]),
                         {m.ids[p]});
    }
  }
  for (const EpochQuality& q : out.epochs) {
    if (!q.global_test || q.global_test->passed) continue;
    if (q.sigma0.value_or(0.0) > 1.0) {
      out.warnings.push_back(fmt::format(
          "epoch '{}' failed its own global test (sigma0 = {:.2f}): observation errors may be read "
          "as movement; look at its suspects first",
          q.name, q.sigma0.value_or(0.0)));
    } else {
      out.warnings.push_back(fmt::format(
          "epoch '{}' fits better than its a-priori sigmas say (sigma0 = {:.2f}, global test "
          "failed low): the sigmas look pessimistic; the pooled variance factor scales the tests",
          q.name, q.sigma0.value_or(0.0)));
    }
  }

  // 2. The variance factor: pooled from the epochs, or the a-priori one.
  TestSettings settings;
  settings.alpha = options.alpha;
  for (const EpochQuality& q : out.epochs) {
    settings.separate_vtpv += q.vtpv;
    settings.pooled_dof += q.dof;
  }
  // A pooled sigma0 a million times below the a-priori one means the
  // observations were fitted exactly (invented data); it cannot scale a test.
  const bool exact = settings.pooled_dof > 0 &&
                     settings.separate_vtpv / static_cast<double>(settings.pooled_dof) < 1e-12;
  settings.pooled = options.variance == VarianceFactor::pooled && settings.pooled_dof > 0 && !exact;
  if (options.variance == VarianceFactor::pooled && !settings.pooled) {
    out.warnings.push_back(
        settings.pooled_dof == 0
            ? "the epochs have no redundancy of their own: the a-priori variance "
              "factor is used"
            : "the epochs fit their observations exactly: the a-priori variance "
              "factor is used");
  }
  out.pooled_dof = settings.pooled_dof;
  out.s0 = settings.pooled
               ? std::sqrt(settings.separate_vtpv / static_cast<double>(settings.pooled_dof))
               : 1.0;

  // 3. Congruence of the marks, then stepwise removal of the moving ones.
  std::vector<char> stable = candidate;
  if (!every_epoch_holds_one(m, stable)) {
    throw std::logic_error("analyse_epochs: an epoch without a candidate passed adjust_epoch");
  }
  const double max_nonzeros = options.adjustment.max_factor_nonzeros;
  CongruenceFit current = congruence_test(m, stable, settings, max_nonzeros);
  out.tests.push_back(current.test);
  std::vector<std::vector<std::size_t>> observations_at(m.ids.size());
  if (!current.test.passed) {
    for (std::size_t o = 0; o < m.observations.size(); ++o) {
      observations_at[m.observations[o].from].push_back(o);
      observations_at[m.observations[o].to].push_back(o);
    }
  }
  std::size_t step = 0;
  while (!out.tests.back().passed && out.tests.back().marks.size() > 2) {
    const double omega = out.tests.back().omega;
    // Each candidate's Omega from the current fit (vtpv_drop_when_freed);
    // the chosen set is refitted only when a further step needs its fit.
    std::optional<std::size_t> best, second;
    double best_omega = 0.0, second_omega = 0.0, best_vtpv = 0.0;
    for (std::size_t p = 0; p < m.ids.size(); ++p) {
      if (!stable[p]) continue;
      std::vector<char> without = stable;
      without[p] = 0;
      if (!every_epoch_holds_one(m, without)) continue;
      const std::optional<double> drop =
          vtpv_drop_when_freed(m, current.joint, observations_at[p], p);
      const double vtpv = drop ? current.joint.vtpv - *drop
                               : congruence_test(m, without, settings, max_nonzeros).joint.vtpv;
      const double candidate_omega = std::max(0.0, vtpv - settings.separate_vtpv);
      if (!best || candidate_omega < best_omega) {
        second = best;
        second_omega = best_omega;
        best = p;
        best_omega = candidate_omega;
        best_vtpv = vtpv;
      } else if (!second || candidate_omega < second_omega) {
        second = p;
        second_omega = candidate_omega;
      }
    }
    if (!best) break;
    std::vector<char> without = stable;
    without[*best] = 0;
    CongruenceTest best_test = congruence_verdict(m, without, settings, best_vtpv);
    if (!best_test.passed && best_test.marks.size() > 2) {
      current = congruence_test(m, without, settings, max_nonzeros);
      best_test = current.test;
    }
    ++step;
    MarkVerdict v;
    v.mark = m.ids[*best];
    v.kind = MarkVerdict::Kind::moving;
    v.step = step;
    v.contribution = omega - best_test.omega;
    v.reason = fmt::format(
        "step {}: the marks failed the congruence test ({} = {:.3f} > {:.3f}); leaving this mark "
        "out lowered Omega most, from {:.4g} to {:.4g}",
        step, out.tests.back().distribution, out.tests.back().statistic, out.tests.back().critical,
        omega, best_test.omega);
    if (second) {
      v.next_best = m.ids[*second];
      v.next_best_omega = second_omega;
      // How clear the choice was: close Omegas mean the data hardly tell
      // which of the two marks moved.
      v.reason += fmt::format(" (leaving out {} instead: {:.4g})", v.next_best, second_omega);
    }
    out.marks.push_back(std::move(v));
    stable[*best] = 0;
    out.tests.push_back(std::move(best_test));
  }
  const CongruenceTest& last = out.tests.back();
  for (std::size_t p = 0; p < m.ids.size(); ++p) {
    if (!stable[p]) continue;
    MarkVerdict v;
    v.mark = m.ids[p];
    if (last.passed) {
      v.kind = MarkVerdict::Kind::stable;
      v.reason = last.h == 0
                     ? "held as the datum (no other mark to compare it with)"
                     : fmt::format("congruent with the other stable marks ({} = {:.3f} <= {:.3f})",
                                   last.distribution, last.statistic, last.critical);
    } else {
      v.kind = MarkVerdict::Kind::unresolved;
      v.reason =
          "the marks left are not congruent and the test cannot tell which of them moved; "
          "level to more marks or check them by other means";
    }
    out.marks.push_back(std::move(v));
  }
  if (!last.passed) {
    out.warnings.push_back(
        "no congruent set of reference marks was found: displacements below are relative to marks "
        "that moved against each other");
  }

  // 4. The final joint adjustment on the stable marks, holding the stable
  // candidate with the best known height (fixed, else the smallest sigma;
  // ties in the order the candidates were named), so that the datum does not
  // depend on the order of the tables' rows.
  std::optional<std::size_t> held;
  std::optional<std::size_t> first_stable;
  for (const std::string& id : out.candidates) {
    const std::size_t p = m.index.at(id);
    if (!stable[p]) continue;
    if (!first_stable) first_stable = p;
    if (m.known[p] && (!held || m.known_sigma[p] < m.known_sigma[*held])) held = p;
  }
  const std::size_t held_point = held.value_or(first_stable.value_or(first_shared(stable)));
  out.held_mark = m.ids[held_point];
  const double held_height = held ? *m.known[held_point] : 0.0;
  out.reference =
      held ? (m.datum[held_point].empty() ? fmt::format("as the known height of {}", out.held_mark)
                                          : m.datum[held_point])
           : fmt::format("local: {} held at 0 m", out.held_mark);
  const JointSolution final_fit =
      solve_joint(m, stable, held_point, held_height, true, options.adjustment.max_factor_nonzeros);
  const double variance = out.s0 * out.s0;
  if (settings.pooled) {
    out.test_critical = student_t_quantile(1.0 - options.alpha / 2.0, settings.pooled_dof);
    out.test_distribution = fmt::format("t({})", settings.pooled_dof);
  } else {
    out.test_critical = normal_quantile(1.0 - options.alpha / 2.0);
    out.test_distribution = "normal";
  }
  const double sqrt_lambda = std::sqrt(baarda_noncentrality(options.alpha, options.beta));

  for (std::size_t p = 0; p < m.ids.size(); ++p) {
    std::vector<std::size_t> seen;
    for (std::size_t k = 0; k < m.epochs; ++k) {
      if (m.observed[k][p]) seen.push_back(k);
    }
    if (seen.empty()) continue;
    out.points.push_back(m.ids[p]);
    std::vector<EpochHeight>& series = out.heights.emplace_back();
    for (std::size_t k : seen) {
      const std::vector<std::string>& unchecked = out.epochs[k].unchecked;
      series.push_back(
          {k, final_fit.height(k, p),
           out.s0 * std::sqrt(std::max(final_fit.cofactor(k, k, p), 0.0)),
           std::find(unchecked.begin(), unchecked.end(), m.ids[p]) == unchecked.end()});
    }
    const auto displacement = [&](std::size_t a, std::size_t b, bool against_first) {
      Displacement d;
      d.point = m.ids[p];
      d.from_epoch = a;
      d.to_epoch = b;
      d.against_first = against_first;
      d.years = (out.epochs[b].time - out.epochs[a].time) / seconds_per_year;
      d.value = final_fit.height(b, p) - final_fit.height(a, p);
      const double q = std::max(final_fit.cofactor(b, b, p) + final_fit.cofactor(a, a, p) -
                                    2.0 * final_fit.cofactor(a, b, p),
                                0.0);
      d.datum_mark = stable[p] != 0;
      d.sigma = out.s0 * std::sqrt(q);
      d.ci_low = d.value - out.test_critical * d.sigma;
      d.ci_high = d.value + out.test_critical * d.sigma;
      d.statistic = d.sigma > 0.0 ? std::abs(d.value) / d.sigma : 0.0;
      d.significant = !d.datum_mark && d.statistic > out.test_critical;
      d.mdd = sqrt_lambda * std::sqrt(q);  // a-priori precision: a design figure
      out.displacements.push_back(d);
    };
    for (std::size_t i = 1; i < seen.size(); ++i) displacement(seen[i - 1], seen[i], false);
    for (std::size_t i = 1; i < seen.size(); ++i) displacement(seen[0], seen[i], true);

    if (seen.size() >= 2 && !stable[p]) {
      std::vector<double> years;
      Eigen::VectorXd h(static_cast<Eigen::Index>(seen.size()));
      Eigen::MatrixXd c(h.size(), h.size());
      for (std::size_t i = 0; i < seen.size(); ++i) {
        years.push_back((out.epochs[seen[i]].time - out.epochs[seen[0]].time) / seconds_per_year);
        h(static_cast<Eigen::Index>(i)) = final_fit.height(seen[i], p);
        for (std::size_t j = 0; j < seen.size(); ++j) {
          c(static_cast<Eigen::Index>(i), static_cast<Eigen::Index>(j)) =
              variance * final_fit.cofactor(seen[i], seen[j], p);
        }
      }
      if (const auto fit = fit_rate(years, h, c)) {
        Rate r;
        r.point = m.ids[p];
        r.epochs = seen.size();
        r.rate = fit->first;
        r.sigma = fit->second;
        r.significant = r.sigma > 0.0 && std::abs(r.rate) / r.sigma > out.test_critical;
        out.rates.push_back(r);
      }
    }
  }

  // 5. Warnings about the epochs' timing.
  std::vector<int> seasons;
  for (const EpochQuality& q : out.epochs) seasons.push_back(season_of(q.time));
  if (std::adjacent_find(seasons.begin(), seasons.end(), std::not_equal_to<>()) != seasons.end()) {
    out.warnings.push_back(
        "the epochs fall in different seasons: seasonal movement (frost heave, swelling clays, "
        "seasonal pumping) can look like a trend; compare epochs of the same season where you can");
  }
  if (out.epochs.size() >= 3) {
    double shortest = std::numeric_limits<double>::infinity(), longest = 0.0;
    for (std::size_t k = 1; k < out.epochs.size(); ++k) {
      const double gap = out.epochs[k].time - out.epochs[k - 1].time;
      shortest = std::min(shortest, gap);
      longest = std::max(longest, gap);
    }
    if (longest > 1.5 * shortest) {
      out.warnings.push_back(fmt::format(
          "the epochs span unequal intervals ({:.2f} to {:.2f} years): a rate weighs them by "
          "their precision, not their spacing, and a change of rate between them is not tested",
          shortest / seconds_per_year, longest / seconds_per_year));
    }
  }
  return out;
}

std::size_t significant_displacements(const EpochAnalysis& analysis, bool against_first) {
  return static_cast<std::size_t>(std::count_if(
      analysis.displacements.begin(), analysis.displacements.end(),
      [&](const Displacement& d) { return d.significant && d.against_first == against_first; }));
}

}  // namespace levelhead
