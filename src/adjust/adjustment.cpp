#include "levelhead/levelling/adjustment.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <chrono>
#include <cmath>
#include <limits>
#include <map>
#include <optional>

#include "adjust/normal_solver.hpp"
#include "levelhead/levelling/statistics.hpp"
#include "util/option_checks.hpp"
#include "util/parallel.hpp"

namespace levelhead {

std::string to_string(WeightRule rule) {
  switch (rule) {
    case WeightRule::given_sigma:
      return "sigma";
    case WeightRule::length:
      return "length";
    case WeightRule::setups:
      return "setups";
  }
  throw std::logic_error("unhandled WeightRule");
}

std::string to_string(ControlKind kind) {
  switch (kind) {
    case ControlKind::adjusted:
      return "adjusted";
    case ControlKind::fixed:
      return "fixed";
    case ControlKind::weighted:
      return "weighted";
  }
  throw std::logic_error("unhandled ControlKind");
}

std::string to_string(Sigma0Use use) {
  switch (use) {
    case Sigma0Use::apriori:
      return "apriori";
    case Sigma0Use::estimate:
      return "estimate";
    case Sigma0Use::automatic:
      break;
  }
  return "auto";
}

Sigma0Use parse_sigma0_use(const std::string& text) {
  for (const Sigma0Use use : {Sigma0Use::apriori, Sigma0Use::estimate, Sigma0Use::automatic}) {
    if (text == to_string(use)) return use;
  }
  throw OptionError(fmt::format("sigma0 '{}': use apriori, estimate or auto", text));
}

std::string OutlierTest::name() const {
  return kind == Kind::w_test ? "Baarda's w-test" : "Pope's tau test";
}

std::string OutlierTest::statement() const {
  if (!std::isfinite(critical)) return fmt::format("{} (cannot run: redundancy below 2)", name());
  return fmt::format("{}, |{}| > {:.2f} at alpha0 = {:g}", name(),
                     kind == Kind::w_test ? "w" : "tau", critical, alpha0);
}

void AdjustmentOptions::validate() const {
  using util::require_positive;
  require_positive(mm_per_sqrt_km, "sigma per sqrt(km)", "mm");
  require_positive(mm_per_setup, "sigma per setup", "mm");
  const auto probability = [](double value, const char* name, double low, double high) {
    if (!(value > low && value < high)) {
      throw OptionError(
          fmt::format("{} = {}: must lie between {} and {} (exclusive)", name, value, low, high));
    }
  };
  probability(alpha, "alpha (global test)", 0.0, 0.5);
  probability(alpha0, "alpha0 (data snooping)", 0.0, 0.5);
  probability(beta0, "beta0 (power)", 0.5, 1.0);
  require_positive(max_factor_nonzeros, "max factor nonzeros", "");
}

namespace {

using Clock = std::chrono::steady_clock;
double seconds_since(Clock::time_point start) {
  return std::chrono::duration<double>(Clock::now() - start).count();
}

// Redundancy numbers below this are treated as zero: the observation is not
// checked by any other (a spur line or an open traverse). 1e-6 sits well above
// the rounding error of qvv = qll - q_adjusted (about 1e-12 relative) and means
// an error would show in the residual at less than one millionth of its size.
constexpr double min_redundancy = 1e-6;

struct Weighting {
  std::vector<double> sigma;  // m, per section
  std::vector<WeightRule> rule;
};

Weighting weigh_sections(const Network& net, const AdjustmentOptions& options) {
  Weighting out;
  out.sigma.resize(net.sections.size());
  out.rule.resize(net.sections.size());
  for (std::size_t i = 0; i < net.sections.size(); ++i) {
    const Section& s = net.sections[i];
    const double runs = static_cast<double>(s.runs);
    if (s.sigma) {
      out.sigma[i] = *s.sigma;
      out.rule[i] = WeightRule::given_sigma;
    } else if (s.length) {
      out.sigma[i] = options.mm_per_sqrt_km * 1e-3 * std::sqrt(*s.length / 1000.0 / runs);
      out.rule[i] = WeightRule::length;
    } else if (s.setups) {
      // setups counts every run's setups: sigma of one run is s sqrt(setups / runs),
      // and the mean of the runs divides that by sqrt(runs).
      out.sigma[i] = options.mm_per_setup * 1e-3 * std::sqrt(static_cast<double>(*s.setups)) / runs;
      out.rule[i] = WeightRule::setups;
    } else {
      throw InputError(net.section_location(i), "",
                       fmt::format("section {} -> {} has no sigma, no length and no setups, so it "
                                   "cannot be weighted; give one of them",
                                   s.from, s.to));
    }
  }
  return out;
}

struct Control {
  std::vector<ControlKind> kind;  // per point
  std::vector<double> height;     // known height where controlled (m)
  std::vector<double> sigma;      // for weighted points (m)
};

Control choose_control(const Network& net, const AdjustmentOptions& options) {
  Control c;
  const std::size_t n = net.points.size();
  c.kind.assign(n, ControlKind::adjusted);
  c.height.assign(n, 0.0);
  c.sigma.assign(n, 0.0);
  if (options.free_point) {
    const auto it = net.point_index.find(*options.free_point);
    if (it == net.point_index.end()) {
      throw NetworkError(fmt::format("the point to hold in a free adjustment, '{}', is not in the "
                                     "points table",
                                     *options.free_point),
                         {*options.free_point});
    }
    c.kind[it->second] = ControlKind::fixed;
    c.height[it->second] = net.points[it->second].height.value_or(0.0);
    return c;
  }
  for (std::size_t i = 0; i < n; ++i) {
    const Point& p = net.points[i];
    if (!p.height) continue;
    c.height[i] = *p.height;
    if (p.is_fixed()) {
      c.kind[i] = ControlKind::fixed;
    } else {
      c.kind[i] = ControlKind::weighted;
      c.sigma[i] = *p.sigma;
    }
  }
  return c;
}

// A height is checked when a blunder in any observation it rests on would
// show in a residual. An observation of redundancy number r = 0 is a bridge
// of the network graph in which the control points count as one node (Baarda
// 1968: its error goes entirely into the unknowns); everything beyond a
// bridge, seen from the control, inherits that observation's error
// unchecked. So the checked points are those the control reaches over
// observations with r > 0; side shots, spur chains and clusters hung on a
// single line are not.
void mark_checked_points(const Network& net, const std::vector<char>& active,
                         const Control& control, AdjustmentResult& result) {
  std::vector<std::vector<std::size_t>> neighbours(net.points.size());
  for (const AdjustedSection& s : result.sections) {
    if (!active[s.section] || s.redundancy < min_redundancy) continue;
    neighbours[net.from_index[s.section]].push_back(net.to_index[s.section]);
    neighbours[net.to_index[s.section]].push_back(net.from_index[s.section]);
  }
  std::vector<std::size_t> queue;
  for (std::size_t i = 0; i < net.points.size(); ++i) {
    if (control.kind[i] == ControlKind::adjusted) continue;
    result.points[i].checked = true;
    queue.push_back(i);
  }
  while (!queue.empty()) {
    const std::size_t i = queue.back();
    queue.pop_back();
    for (const std::size_t j : neighbours[i]) {
      if (result.points[j].checked) continue;
      result.points[j].checked = true;
      queue.push_back(j);
    }
  }
}

// Approximate heights by walking the network outward from every controlled
// point (breadth first). They make the unknowns small corrections, which
// keeps rounding low, and every point left unreached lies in a part of the
// network with no known height: a datum defect, reported by id.
std::vector<double> approximate_heights(const Network& net, const Control& control,
                                        const std::vector<char>& active) {
  const std::size_t n = net.points.size();
  std::vector<std::size_t> start(n + 1, 0);
  for (std::size_t s = 0; s < net.sections.size(); ++s) {
    if (!active[s]) continue;
    ++start[net.from_index[s] + 1];
    ++start[net.to_index[s] + 1];
  }
  for (std::size_t i = 0; i < n; ++i) start[i + 1] += start[i];
  std::vector<std::size_t> fill(start.begin(), start.end() - 1);
  std::vector<std::size_t> edge(start[n]);
  for (std::size_t s = 0; s < net.sections.size(); ++s) {
    if (!active[s]) continue;
    edge[fill[net.from_index[s]]++] = s;
    edge[fill[net.to_index[s]]++] = s;
  }

  std::vector<double> x0(n, 0.0);
  std::vector<char> reached(n, 0);
  std::vector<std::size_t> queue;
  queue.reserve(n);
  for (std::size_t i = 0; i < n; ++i) {
    if (control.kind[i] != ControlKind::adjusted) {
      reached[i] = 1;
      x0[i] = control.height[i];
      queue.push_back(i);
    }
  }
  const auto walk = [&](std::size_t head) {
    for (; head < queue.size(); ++head) {
      const std::size_t p = queue[head];
      for (std::size_t e = start[p]; e < start[p + 1]; ++e) {
        const std::size_t s = edge[e];
        const bool forward = net.from_index[s] == p;
        const std::size_t q = forward ? net.to_index[s] : net.from_index[s];
        if (reached[q]) continue;
        reached[q] = 1;
        x0[q] = x0[p] + (forward ? net.sections[s].dh : -net.sections[s].dh);
        queue.push_back(q);
      }
    }
  };
  walk(0);
  if (queue.size() == n) return x0;

  // Name the first part without control: walk it from its first point.
  std::size_t first = 0;
  while (reached[first]) ++first;
  const std::size_t before = queue.size();
  reached[first] = 1;
  queue.push_back(first);
  walk(before);
  std::vector<std::string> ids;
  for (std::size_t k = before; k < queue.size() && ids.size() < 10; ++k) {
    ids.push_back(net.points[queue[k]].id);
  }
  const std::size_t part_size = queue.size() - before;
  const std::size_t unreached = n - before;
  throw NetworkError(
      fmt::format("datum defect: {} point(s) are in a part of the network with no known height{} "
                  "({}{}). Give one of them a known height in the points table, connect the part "
                  "by a section to a point with a known height, or run a free adjustment that "
                  "holds one point",
                  part_size,
                  unreached > part_size ? fmt::format(" ({} such points in all)", unreached) : "",
                  fmt::join(ids, ", "), part_size > ids.size() ? ", ..." : ""),
      ids);
}

// The outlier test that fits what is known of sigma0. Baarda's w-test
// (Baarda 1968) assumes the a-priori variance of unit weight; once sigma0
// is estimated from the same residuals, tau = w / sigma0_hat follows Pope's
// tau distribution, and the normal critical value would be wrong (Pope 1976,
// NOAA Technical Report NOS 65 NGS 1). With Sigma0Use::automatic the
// a-priori precision is trusted while the two-sided global test accepts it.
OutlierTest choose_outlier_test(const AdjustmentOptions& options, const AdjustmentResult& r) {
  OutlierTest test;
  test.alpha0 = options.alpha0;
  test.critical = r.w_critical;
  if (!r.global_test) {
    test.basis = "no redundancy: no observation can be tested";
    return test;
  }
  bool estimated = false;
  switch (options.sigma0) {
    case Sigma0Use::apriori:
      test.basis = "the a-priori precision is trusted (sigma0 apriori)";
      break;
    case Sigma0Use::estimate:
      estimated = true;
      test.basis =
          fmt::format("sigma0 is estimated from the data ({:.3f}; sigma0 estimate)", *r.sigma0);
      break;
    case Sigma0Use::automatic:
      estimated = !r.global_test->passed;
      test.basis = estimated ? fmt::format(
                                   "the global test rejects the a-priori precision, so sigma0 "
                                   "is estimated from the data ({:.3f})",
                                   *r.sigma0)
                             : std::string("the global test accepts the a-priori precision");
      break;
  }
  if (!estimated) return test;
  test.kind = OutlierTest::Kind::tau_test;
  if (r.dof < 2) {
    test.critical = std::numeric_limits<double>::infinity();
    test.basis += "; with a redundancy below 2 the tau test cannot run";
  } else {
    test.critical = tau_test_critical_value(options.alpha0, static_cast<double>(r.dof));
  }
  return test;
}

// Normal equations for the corrections dx to x0: N dx = A' P (l - A x0),
// over the active sections (weights 1 / sigma^2) and the weighted control.
struct NormalSystem {
  detail::NormalSolver::LowerMatrix matrix;  // lower triangle
  Eigen::VectorXd rhs;
  std::size_t observations = 0;
};

NormalSystem assemble_normal(const Network& net, const std::vector<double>& section_sigma,
                             const std::vector<char>& active, const Control& control,
                             const std::vector<double>& x0, const std::vector<int>& unknown,
                             int n) {
  NormalSystem system;
  std::vector<Eigen::Triplet<double, int>> triplets;
  triplets.reserve(3 * net.sections.size() + net.points.size());
  system.rhs = Eigen::VectorXd::Zero(n);
  Eigen::VectorXd& rhs = system.rhs;
  for (std::size_t s = 0; s < net.sections.size(); ++s) {
    if (!active[s]) continue;
    ++system.observations;
    const std::size_t f = net.from_index[s], t = net.to_index[s];
    const double p = 1.0 / (section_sigma[s] * section_sigma[s]);
    const double reduced = net.sections[s].dh - (x0[t] - x0[f]);
    const int uf = unknown[f], ut = unknown[t];
    if (ut >= 0) {
      triplets.emplace_back(ut, ut, p);
      rhs[ut] += p * reduced;
    }
    if (uf >= 0) {
      triplets.emplace_back(uf, uf, p);
      rhs[uf] -= p * reduced;
    }
    if (ut >= 0 && uf >= 0) triplets.emplace_back(std::max(ut, uf), std::min(ut, uf), -p);
  }
  for (std::size_t i = 0; i < net.points.size(); ++i) {
    if (control.kind[i] != ControlKind::weighted) continue;
    ++system.observations;
    const double p = 1.0 / (control.sigma[i] * control.sigma[i]);
    triplets.emplace_back(unknown[i], unknown[i], p);
    rhs[unknown[i]] += p * (control.height[i] - x0[i]);
  }
  system.matrix.resize(n, n);
  system.matrix.setFromTriplets(triplets.begin(), triplets.end());
  system.matrix.makeCompressed();
  return system;
}

AdjustmentResult adjust_once(const Network& net, const AdjustmentOptions& options,
                             const Weighting& weights, const Control& control,
                             const std::vector<char>& active) {
  AdjustmentResult result;
  const std::size_t n_points = net.points.size();
  const std::vector<double> x0 = approximate_heights(net, control, active);

  auto start = Clock::now();
  std::vector<int> unknown(n_points, -1);
  int n = 0;
  for (std::size_t i = 0; i < n_points; ++i) {
    if (control.kind[i] != ControlKind::fixed) unknown[i] = n++;
    result.fixed_points += control.kind[i] == ControlKind::fixed;
    result.weighted_points += control.kind[i] == ControlKind::weighted;
  }
  result.unknowns = static_cast<std::size_t>(n);

  NormalSystem system = assemble_normal(net, weights.sigma, active, control, x0, unknown, n);
  result.observations = system.observations;
  detail::NormalSolver::LowerMatrix& normal = system.matrix;
  Eigen::VectorXd& rhs = system.rhs;
  result.timings.assembly = seconds_since(start);

  // A network whose every point is fixed has nothing to solve.
  std::optional<detail::NormalSolver> solver;
  Eigen::VectorXd dx, q_diagonal;
  if (n > 0) {
    solver.emplace(normal, detail::SolverLimits{options.max_factor_nonzeros});
    dx = solver->solve(rhs);
    solver->compute_selected_inverse();
    q_diagonal = solver->inverse_diagonal();
    const auto& figures = solver->figures();
    result.timings.ordering = figures.analyse_seconds;
    result.timings.factorisation = figures.factor_seconds;
    result.timings.solve = figures.solve_seconds;
    result.timings.sigmas = figures.inverse_seconds;
    result.factor_nonzeros = figures.factor_nonzeros;
    result.factor_flops = figures.factor_flops;
    result.supernodal = figures.supernodal;
  }

  start = Clock::now();
  std::vector<double> height(x0);
  for (std::size_t i = 0; i < n_points; ++i) {
    if (unknown[i] >= 0) height[i] += dx[unknown[i]];
  }
  const auto cofactor = [&](std::size_t a, std::size_t b) {
    const int ua = unknown[a], ub = unknown[b];
    return ua < 0 || ub < 0 ? 0.0 : solver->inverse_entry(ua, ub);
  };

  // Residuals, their cofactors and the quantities of data snooping
  // (Baarda 1968): qvv = qll - a Qxx a', r = qvv / qll, w = v / sqrt(qvv),
  // MDB = sqrt(lambda0) * sigma / sqrt(r).
  result.lambda0 = baarda_noncentrality(options.alpha0, options.beta0);
  result.w_critical = w_test_critical_value(options.alpha0);
  struct Check {
    double redundancy;
    std::optional<double> w, mdb;
  };
  const auto check = [&](double v, double sigma, double q_adjusted) {
    const double q_ll = sigma * sigma;
    const double r = (q_ll - q_adjusted) / q_ll;
    if (r < min_redundancy) return Check{std::max(r, 0.0), std::nullopt, std::nullopt};
    return Check{r, v / std::sqrt(q_ll - q_adjusted), std::sqrt(result.lambda0 / r) * sigma};
  };

  result.sections.resize(net.sections.size());
  // Each section on its own, so the sections are shared among the cores
  // in contiguous ranges; the sum of v'Pv follows in order, so that it is
  // the same whatever the number of threads.
  const auto check_sections = [&](std::size_t begin, std::size_t end) {
    for (std::size_t s = begin; s < end; ++s) {
      AdjustedSection& out = result.sections[s];
      const std::size_t f = net.from_index[s], t = net.to_index[s];
      out.section = s;
      out.rule = weights.rule[s];
      out.sigma = weights.sigma[s];
      out.adjusted_dh = height[t] - height[f];
      out.residual = out.adjusted_dh - net.sections[s].dh;
      if (!active[s]) continue;
      const double q_adjusted = cofactor(t, t) + cofactor(f, f) - 2.0 * cofactor(f, t);
      const Check c = check(out.residual, out.sigma, q_adjusted);
      out.redundancy = c.redundancy;
      out.w = c.w;
      out.mdb = c.mdb;
    }
  };
  util::run_in_parallel_ranges(net.sections.size(), check_sections);
  double vtpv = 0.0;
  for (std::size_t s = 0; s < net.sections.size(); ++s) {
    if (!active[s]) continue;
    const AdjustedSection& out = result.sections[s];
    vtpv += out.residual * out.residual / (out.sigma * out.sigma);
  }
  result.points.resize(n_points);

  for (std::size_t i = 0; i < n_points; ++i) {
    AdjustedPoint& out = result.points[i];
    out.point = i;
    out.height = height[i];
    out.control = control.kind[i];
    out.sigma_apriori = unknown[i] >= 0 ? std::sqrt(q_diagonal[unknown[i]]) : 0.0;
    if (control.kind[i] != ControlKind::weighted) continue;
    const double v = height[i] - control.height[i];
    vtpv += v * v / (control.sigma[i] * control.sigma[i]);
    const Check c = check(v, control.sigma[i], q_diagonal[unknown[i]]);
    out.control_residual = v;
    out.control_redundancy = c.redundancy;
    out.control_w = c.w;
    out.control_mdb = c.mdb;
  }

  mark_checked_points(net, active, control, result);

  // Inputs are bounded at the table edge, so a non-finite value here is a
  // numerical breakdown: never written, always an error.
  if (!std::isfinite(vtpv) ||
      std::any_of(result.points.begin(), result.points.end(), [](const AdjustedPoint& p) {
        return !std::isfinite(p.height) || !std::isfinite(p.sigma_apriori);
      })) {
    throw ComputationError(
        "the adjustment gave non-finite heights or sigmas (a numerical breakdown: check for "
        "sections with extreme dh, length or sigma, and for very unequal weights)");
  }
  result.vtpv = vtpv;
  const std::size_t observations = result.observations;
  result.dof = observations > static_cast<std::size_t>(n) ? observations - n : 0;
  if (result.dof > 0) {
    const double dof = static_cast<double>(result.dof);
    result.sigma0 = std::sqrt(vtpv / dof);
    GlobalTest test;
    test.statistic = vtpv;
    test.alpha = options.alpha;
    test.lower = chi_square_quantile(options.alpha / 2.0, dof);
    test.upper = chi_square_upper_quantile(options.alpha / 2.0, dof);
    test.passed = vtpv >= test.lower && vtpv <= test.upper;
    result.global_test = test;
    for (AdjustedPoint& p : result.points) {
      if (p.control != ControlKind::fixed)
        p.sigma = *result.sigma0 * p.sigma_apriori;
      else
        p.sigma = 0.0;
    }
  } else {
    for (AdjustedPoint& p : result.points) {
      if (p.control == ControlKind::fixed) p.sigma = 0.0;
    }
  }

  result.test = choose_outlier_test(options, result);
  if (result.test.kind == OutlierTest::Kind::tau_test && result.sigma0) {
    // sigma_v scales with the estimated sigma0: so do tau and the MDB.
    const double s0 = *result.sigma0;
    for (AdjustedSection& s : result.sections) {
      if (s.w) s.tau = *s.w / s0;
      if (s.mdb) s.mdb = *s.mdb * s0;
    }
    for (AdjustedPoint& p : result.points) {
      if (p.control_w) p.control_tau = *p.control_w / s0;
      if (p.control_mdb) p.control_mdb = *p.control_mdb * s0;
    }
  }
  for (const AdjustedSection& s : result.sections) {
    if (const auto t = s.statistic(); t && std::abs(*t) > result.test.critical)
      result.suspects.push_back({Suspect::Kind::section, s.section, *t});
  }
  for (const AdjustedPoint& p : result.points) {
    const auto t = p.control_tau ? p.control_tau : p.control_w;
    if (t && std::abs(*t) > result.test.critical)
      result.suspects.push_back({Suspect::Kind::control, p.point, *t});
  }
  std::stable_sort(result.suspects.begin(), result.suspects.end(),
                   [](const Suspect& a, const Suspect& b) {
                     return std::abs(a.statistic) > std::abs(b.statistic);
                   });
  result.timings.sigmas += seconds_since(start);
  return result;
}

// Variance components per group of sections, by the iterative estimator of
// Foerstner (1979, Allgemeine Vermessungs-Nachrichten 86; the simplified
// Helmert estimator, Koch, "Parameter Estimation and Hypothesis Testing in
// Linear Models", 2nd ed. 1999, ch. 3.6): with the current weights,
//     f_g^2 <- f_g^2 * (v_g' P_g v_g) / r_g,
// r_g the sum of the redundancy numbers of group g, until no factor changes
// by more than 1e-4 (or 50 rounds). A group with r_g < 2 keeps its a-priori
// sigmas and is reported as not estimated. The interval of a factor is that
// of a variance with r_g degrees of freedom: r f^2 / chi2(1 - alpha/2, r) to
// r f^2 / chi2(alpha/2, r).
AdjustmentResult adjust_with_variance_components(const Network& net,
                                                 const AdjustmentOptions& options,
                                                 const Weighting& weights, const Control& control,
                                                 const std::vector<char>& active) {
  std::map<std::string, std::size_t> group_index;
  std::vector<std::size_t> group(net.sections.size());
  for (std::size_t s = 0; s < net.sections.size(); ++s) {
    const Section& section = net.sections[s];
    std::string name = section.group;
    if (name.empty()) name = "(none)";
    group[s] = group_index.emplace(name, group_index.size()).first->second;
  }
  const std::size_t groups = group_index.size();
  std::vector<double> factor2(groups, 1.0), vpv(groups), redundancy(groups);
  std::vector<std::size_t> count(groups);
  std::vector<char> estimated(groups, 0);
  Weighting scaled = weights;
  AdjustmentResult result;
  std::size_t round = 0;
  for (bool changed = true; changed && round < 50; ++round) {
    for (std::size_t s = 0; s < net.sections.size(); ++s)
      scaled.sigma[s] = weights.sigma[s] * std::sqrt(factor2[group[s]]);
    result = adjust_once(net, options, scaled, control, active);
    std::fill(vpv.begin(), vpv.end(), 0.0);
    std::fill(redundancy.begin(), redundancy.end(), 0.0);
    std::fill(count.begin(), count.end(), 0);
    for (const AdjustedSection& a : result.sections) {
      if (!active[a.section]) continue;
      const std::size_t g = group[a.section];
      vpv[g] += a.residual * a.residual / (a.sigma * a.sigma);
      redundancy[g] += a.redundancy;
      ++count[g];
    }
    changed = false;
    for (std::size_t g = 0; g < groups; ++g) {
      estimated[g] = redundancy[g] >= 2.0;
      if (!estimated[g] || vpv[g] <= 0.0) continue;
      const double next = factor2[g] * vpv[g] / redundancy[g];
      changed = changed || std::abs(std::sqrt(next / factor2[g]) - 1.0) > 1e-4;
      factor2[g] = next;
    }
  }
  result.variance_iterations = round;
  for (const auto& [name, g] : group_index) {
    VarianceComponent c;
    c.group = name;
    c.sections = count[g];
    c.redundancy = redundancy[g];
    if (estimated[g]) {
      const double r = redundancy[g];
      c.factor = std::sqrt(factor2[g]);
      c.low = std::sqrt(r * factor2[g] / chi_square_upper_quantile(options.alpha / 2.0, r));
      c.high = std::sqrt(r * factor2[g] / chi_square_quantile(options.alpha / 2.0, r));
    }
    result.variance_components.push_back(c);
  }
  result.test.basis =
      fmt::format("variance factors estimated per {} from the data", options.variance_groups);
  return result;
}

// The control heights must share one vertical reference; mixing them would
// bend the network by the datum offset.
std::string common_reference(const Network& net, const Control& control,
                             const AdjustmentOptions& options) {
  if (options.free_point) return "free adjustment holding " + *options.free_point;
  std::string reference;
  std::size_t first = 0;
  for (std::size_t i = 0; i < net.points.size(); ++i) {
    if (control.kind[i] == ControlKind::adjusted || net.points[i].datum.empty()) continue;
    if (reference.empty()) {
      reference = net.points[i].datum;
      first = i;
    } else if (net.points[i].datum != reference) {
      throw NetworkError(
          fmt::format("known heights are in different vertical references: '{}' is '{}' but '{}' "
                      "is '{}'; convert them to one reference first (levelhead convert) or hold "
                      "only points of one reference",
                      net.points[first].id, reference, net.points[i].id, net.points[i].datum),
          {net.points[first].id, net.points[i].id});
    }
  }
  return reference;
}

}  // namespace

// Weighted least squares with optional iterative data snooping: while the
// worst section fails the w-test, remove it and adjust again (Baarda 1968;
// the iterative use is common practice). Control points are never removed:
// a failing control height is reported for the user to decide.
AdjustmentResult adjust(const Network& network, const AdjustmentOptions& options) {
  options.validate();
  const Weighting weights = weigh_sections(network, options);
  const Control control = choose_control(network, options);
  const std::string reference = common_reference(network, control, options);
  std::vector<char> active(network.sections.size(), 1);

  std::vector<Removal> removals;
  // With variance groups the variances come from the data: the tau test.
  AdjustmentOptions tested = options;
  if (!options.variance_groups.empty()) tested.sigma0 = Sigma0Use::estimate;
  const auto adjust_active = [&] {
    return options.variance_groups.empty()
               ? adjust_once(network, tested, weights, control, active)
               : adjust_with_variance_components(network, tested, weights, control, active);
  };
  AdjustmentResult result = adjust_active();
  while (options.iterative_snooping && removals.size() < options.max_removals) {
    const auto worst =
        std::find_if(result.suspects.begin(), result.suspects.end(),
                     [](const Suspect& s) { return s.kind == Suspect::Kind::section; });
    if (worst == result.suspects.end()) break;
    removals.push_back({worst->index, worst->statistic, result.test, result.sigma0.value_or(0.0)});
    active[worst->index] = 0;
    result = adjust_active();
  }
  for (std::size_t k = 0; k < removals.size(); ++k) {
    AdjustedSection& s = result.sections[removals[k].section];
    s.removed = true;
    s.removal_step = k + 1;
  }
  result.removals = std::move(removals);
  for (const AdjustedSection& s : result.sections) {
    ++result.weight_rule_counts[static_cast<std::size_t>(s.rule)];
  }
  result.free_point = options.free_point;
  result.reference = reference;
  result.precision = fmt::format("{:g} mm/sqrt(km) ({})", options.mm_per_sqrt_km,
                                 options.levelling_class.empty()
                                     ? std::string("given")
                                     : "standard error of class " + options.levelling_class);
  return result;
}

// A dense block of N^-1 by solves with the factor (one per point asked):
// N rebuilt with the final adjustment's weights, removals and control, so the
// diagonal is sigma_apriori^2 of each point.
std::vector<double> point_cofactors(const Network& net, const AdjustmentResult& result,
                                    const std::vector<std::size_t>& points,
                                    const AdjustmentOptions& options) {
  const std::size_t n_points = net.points.size(), k = points.size();
  Control control;
  control.kind.resize(n_points);
  control.height.assign(n_points, 0.0);
  control.sigma.assign(n_points, 0.0);
  std::vector<int> unknown(n_points, -1);
  int n = 0;
  for (std::size_t i = 0; i < n_points; ++i) {
    control.kind[i] = result.points[i].control;
    if (control.kind[i] == ControlKind::weighted) control.sigma[i] = *net.points[i].sigma;
    if (control.kind[i] != ControlKind::fixed) unknown[i] = n++;
  }
  std::vector<double> sigma(net.sections.size());
  std::vector<char> active(net.sections.size());
  for (std::size_t s = 0; s < net.sections.size(); ++s) {
    sigma[s] = result.sections[s].sigma;
    active[s] = !result.sections[s].removed;
  }
  std::vector<double> block(k * k, 0.0);
  if (n == 0) return block;
  const NormalSystem system =
      assemble_normal(net, sigma, active, control, std::vector<double>(n_points, 0.0), unknown, n);
  detail::NormalSolver solver(system.matrix, detail::SolverLimits{options.max_factor_nonzeros});
  for (std::size_t a = 0; a < k; ++a) {
    const int ua = unknown[points[a]];
    if (ua < 0) continue;
    Eigen::VectorXd unit = Eigen::VectorXd::Zero(n);
    unit[ua] = 1.0;
    const Eigen::VectorXd column = solver.solve(unit);
    for (std::size_t b = 0; b < k; ++b) {
      const int ub = unknown[points[b]];
      if (ub >= 0) block[a * k + b] = column[ub];
    }
  }
  return block;
}

}  // namespace levelhead
