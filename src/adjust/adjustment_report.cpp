#include "levelhead/levelling/adjustment_report.hpp"

#include <fmt/format.h>

#include <cmath>
#include <exception>
#include <nlohmann/json.hpp>
#include <thread>

#include "levelhead/core/output_files.hpp"
#include "levelhead/version.hpp"
#include "util/json_text.hpp"

namespace levelhead {

namespace {

// Resolution of the tables: heights and differences to 0.01 mm, which is
// finer than any levelling measures, so rounding never adds error that matters.
constexpr int metre_decimals = 5;

nlohmann::json optional_number(const std::optional<double>& value) {
  return value ? nlohmann::json(*value) : nlohmann::json(nullptr);
}

nlohmann::json suspect_json(const Network& net, const AdjustmentResult& result, const Suspect& s) {
  if (s.kind == Suspect::Kind::section) {
    const Section& section = net.sections[s.index];
    const AdjustedSection& a = result.sections[s.index];
    return {{"kind", "section"},        {"from", section.from},   {"to", section.to},
            {"statistic", s.statistic}, {"residual", a.residual}, {"mdb", optional_number(a.mdb)},
            {"row", section.row}};
  }
  const Point& p = net.points[s.index];
  const AdjustedPoint& a = result.points[s.index];
  return {{"kind", "control"},
          {"from", ""},
          {"to", p.id},
          {"point", p.id},
          {"statistic", s.statistic},
          {"residual", optional_number(a.control_residual)},
          {"mdb", optional_number(a.control_mdb)},
          {"row", p.row}};
}

// Ids of the points whose heights no redundant observation checks.
std::vector<std::string> unchecked_points(const Network& net, const AdjustmentResult& result) {
  std::vector<std::string> ids;
  for (const AdjustedPoint& p : result.points) {
    if (!p.checked) ids.push_back(net.points[p.point].id);
  }
  return ids;
}

std::string suspect_label(const Network& net, const Suspect& s) {
  if (s.kind == Suspect::Kind::section) {
    const Section& section = net.sections[s.index];
    return fmt::format("section {} -> {} (row {})", section.from, section.to, section.row);
  }
  return fmt::format("known height of {} (row {})", net.points[s.index].id,
                     net.points[s.index].row);
}

}  // namespace

nlohmann::json variance_component_json(const VarianceComponent& c) {
  return {{"group", c.group},
          {"sections", c.sections},
          {"redundancy", c.redundancy},
          {"factor", c.factor ? nlohmann::json(*c.factor) : nlohmann::json(nullptr)},
          {"interval", c.factor ? nlohmann::json({c.low, c.high}) : nlohmann::json(nullptr)},
          {"note", c.factor ? "" : "redundancy below 2: not estimated, a-priori sigmas kept"}};
}

std::string variance_component_line(const VarianceComponent& c) {
  return c.factor ? fmt::format(
                        "Variance factor of {} ({} sections, redundancy {:.1f}): {:.2f} "
                        "[{:.2f}, {:.2f}]",
                        c.group, c.sections, c.redundancy, *c.factor, c.low, c.high)
                  : fmt::format(
                        "Variance factor of {} ({} sections): not estimated, "
                        "redundancy {:.1f} below 2",
                        c.group, c.sections, c.redundancy);
}

bool adjustment_has_failed_checks(const AdjustmentResult& result) {
  return !result.suspects.empty() || (result.global_test && !result.global_test->passed);
}

void write_adjustment_outputs(const Network& net, const AdjustmentResult& result,
                              const AdjustmentOptions& options, const AdjustmentInputs& inputs,
                              const std::filesystem::path& folder) {
  OutputSet out(folder);

  // The two tables are formatted at the same time, one on another core
  // (both opened first: OutputSet's files are not opened from two threads).
  CsvRows heights(out, "heights.csv");
  CsvRows residuals(out, "residuals.csv");
  const auto write_heights = [&] {
    heights.line(
        "id,height,sigma,sigma_apriori,control,given_height,control_residual,control_w,"
        "reference,kind,checked");
    for (const AdjustedPoint& a : result.points) {
      const Point& p = net.points[a.point];
      heights.text(p.id)
          .fixed(a.height, metre_decimals)
          .fixed(a.sigma, metre_decimals)
          .fixed(a.sigma_apriori, metre_decimals)
          .text(to_string(a.control))
          .fixed(p.height, metre_decimals)
          .fixed(a.control_residual, metre_decimals)
          .fixed(a.control_w, 3)
          .text(result.reference)
          .text(p.kind)
          .text(a.checked ? "yes" : "no")
          .end_row();
    }
    heights.finish();
  };
  std::exception_ptr heights_failure;
  std::thread heights_writer([&] {
    try {
      write_heights();
    } catch (...) {
      heights_failure = std::current_exception();
    }
  });
  try {
    residuals.line(
        "from,to,dh,residual,w,tau,adjusted_dh,sigma,weight_rule,redundancy,mdb,length,"
        "run,date,suspect,removed_step");
    for (const AdjustedSection& a : result.sections) {
      const Section& s = net.sections[a.section];
      const auto statistic = a.statistic();
      const bool suspect = statistic && std::abs(*statistic) > result.test.critical;
      residuals.text(s.from)
          .text(s.to)
          .fixed(s.dh, metre_decimals)
          .fixed(a.residual, metre_decimals)
          .fixed(a.w, 3)
          .fixed(a.tau, 3)
          .fixed(a.adjusted_dh, metre_decimals)
          .fixed(a.sigma, metre_decimals)
          .text(to_string(a.rule))
          .fixed(a.redundancy, 4)
          .fixed(a.mdb, metre_decimals)
          .fixed(s.length, 3)
          .text(s.run)
          .text(s.date)
          .text(suspect ? "yes" : "");
      if (a.removal_step)
        residuals.integer(static_cast<long long>(*a.removal_step));
      else
        residuals.empty();
      residuals.end_row();
    }
    residuals.finish();
  } catch (...) {
    heights_writer.join();
    throw;
  }
  heights_writer.join();
  if (heights_failure) std::rethrow_exception(heights_failure);

  nlohmann::json summary;
  summary["levelhead_version"] = version_string();
  summary["format_version"] = output_format_version;
  summary["command"] = "adjust";
  summary["inputs"] = {{"points", inputs.points_file},
                       {"sections", inputs.sections_file},
                       {"units", to_string(inputs.unit)}};
  summary["reference"] = result.reference;
  summary["free_point"] =
      result.free_point ? nlohmann::json(*result.free_point) : nlohmann::json(nullptr);
  summary["counts"] = {{"points", net.points.size()},
                       {"sections", net.sections.size()},
                       {"observations", result.observations},
                       {"unknowns", result.unknowns},
                       {"fixed_points", result.fixed_points},
                       {"weighted_points", result.weighted_points},
                       {"removed_sections", result.removals.size()}};
  summary["dof"] = result.dof;
  summary["vtpv"] = result.vtpv;
  summary["sigma0"] = optional_number(result.sigma0);
  if (result.global_test) {
    const GlobalTest& g = *result.global_test;
    summary["global_test"] = {{"statistic", g.statistic}, {"lower", g.lower},
                              {"upper", g.upper},         {"alpha", g.alpha},
                              {"dof", result.dof},        {"passed", g.passed}};
  } else {
    summary["global_test"] = {{"statistic", result.vtpv},
                              {"lower", nullptr},
                              {"upper", nullptr},
                              {"alpha", options.alpha},
                              {"dof", 0},
                              {"passed", nullptr},
                              {"note", "no redundancy: the observations cannot be tested"}};
  }
  summary["data_snooping"] = {
      {"test", result.test.name()},
      {"statistic", result.test.kind == OutlierTest::Kind::w_test ? "w" : "tau"},
      {"critical", std::isfinite(result.test.critical) ? nlohmann::json(result.test.critical)
                                                       : nlohmann::json(nullptr)},
      {"basis", result.test.basis},
      {"sigma0_use", to_string(options.sigma0)},
      {"alpha0", options.alpha0},
      {"beta0", options.beta0},
      {"w_critical", result.w_critical},
      {"lambda0", result.lambda0},
      {"iterative", options.iterative_snooping}};
  nlohmann::json suspects = nlohmann::json::array();
  for (const Suspect& s : result.suspects) suspects.push_back(suspect_json(net, result, s));
  summary["suspects"] = suspects;
  summary["unchecked_points"] = unchecked_points(net, result);
  nlohmann::json removals = nlohmann::json::array();
  for (std::size_t k = 0; k < result.removals.size(); ++k) {
    const Removal& r = result.removals[k];
    const Section& s = net.sections[r.section];
    removals.push_back({{"step", k + 1},
                        {"from", s.from},
                        {"to", s.to},
                        {"statistic", r.statistic},
                        {"test", r.test.name()},
                        {"sigma0_before", r.sigma0},
                        {"row", s.row}});
  }
  summary["removals"] = removals;
  nlohmann::json components = nlohmann::json::array();
  for (const VarianceComponent& c : result.variance_components)
    components.push_back(variance_component_json(c));
  summary["variance_components"] = {
      {"groups", options.variance_groups.empty() ? std::string("none") : options.variance_groups},
      {"alpha", options.alpha},
      {"iterations", result.variance_iterations},
      {"components", components}};
  summary["weights"] = {
      {"sections_by_rule",
       {{"sigma", result.weight_rule_counts[static_cast<int>(WeightRule::given_sigma)]},
        {"length", result.weight_rule_counts[static_cast<int>(WeightRule::length)]},
        {"setups", result.weight_rule_counts[static_cast<int>(WeightRule::setups)]}}},
      {"mm_per_sqrt_km", options.mm_per_sqrt_km},
      {"levelling_class", options.levelling_class.empty()
                              ? nlohmann::json(nullptr)
                              : nlohmann::json(options.levelling_class)},
      {"mm_per_setup", options.mm_per_setup}};
  // Run times are left out on purpose: the same inputs give the same file.
  summary["solver"] = {{"factor_nonzeros", result.factor_nonzeros},
                       {"supernodal", result.supernodal}};
  summary["units"] = "m";
  out.open("summary.json") << util::json_text(summary) << '\n';
  out.commit();
}

std::string adjustment_summary_text(const Network& net, const AdjustmentResult& result) {
  std::string text;
  text += fmt::format(
      "Adjusted {} points from {} sections ({} unknowns, {} fixed, {} weighted "
      "known heights){}\n",
      net.points.size(), net.sections.size(), result.unknowns, result.fixed_points,
      result.weighted_points,
      result.free_point ? fmt::format("; free adjustment holding {}", *result.free_point) : "");
  text += fmt::format("Weights: {} from sigma, {} from length at {}, {} from setups\n",
                      result.weight_rule_counts[0], result.weight_rule_counts[1], result.precision,
                      result.weight_rule_counts[2]);
  if (result.global_test) {
    const GlobalTest& g = *result.global_test;
    text += fmt::format(
        "Redundancy {}, sigma0 = {:.3f}; global test (alpha {}): v'Pv = {:.3f} in [{:.3f}, {:.3f}] "
        "-> {}\n",
        result.dof, *result.sigma0, g.alpha, g.statistic, g.lower, g.upper,
        g.passed ? "passed" : "FAILED");
  } else {
    text += "Redundancy 0: no check on the observations is possible\n";
  }
  for (std::size_t k = 0; k < result.removals.size(); ++k) {
    const Removal& r = result.removals[k];
    text += fmt::format("Removed (step {}): {} with {} = {:.2f} ({}, because {})\n", k + 1,
                        suspect_label(net, {Suspect::Kind::section, r.section, r.statistic}),
                        r.test.kind == OutlierTest::Kind::w_test ? "w" : "tau", r.statistic,
                        r.test.statement(), r.test.basis);
  }
  if (const auto unchecked = unchecked_points(net, result); !unchecked.empty()) {
    text += fmt::format(
        "{} point(s) rest on single observations that nothing checks (side shots, spurs): {}{}\n",
        unchecked.size(),
        fmt::join(unchecked.begin(),
                  unchecked.begin() + std::min<std::ptrdiff_t>(unchecked.size(), 10), ", "),
        unchecked.size() > 10 ? ", ..." : "");
  }
  for (const VarianceComponent& c : result.variance_components)
    text += variance_component_line(c) + '\n';
  const OutlierTest& test = result.test;
  const char* symbol = test.kind == OutlierTest::Kind::w_test ? "w" : "tau";
  text += fmt::format("Data snooping{}: {}, because {}\n",
                      result.removals.empty() ? "" : " after the removals", test.statement(),
                      test.basis);
  if (result.suspects.empty()) {
    text += "No suspect observations\n";
  } else {
    text += fmt::format("{} suspect observation(s), worst first:\n", result.suspects.size());
    for (std::size_t k = 0; k < result.suspects.size() && k < 5; ++k) {
      text += fmt::format("  {}: {} = {:.2f}\n", suspect_label(net, result.suspects[k]), symbol,
                          result.suspects[k].statistic);
    }
  }
  return text;
}

}  // namespace levelhead
