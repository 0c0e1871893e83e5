#include "levelhead/levelling/epoch_report.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <nlohmann/json.hpp>

#include "levelhead/core/output_files.hpp"
#include "levelhead/core/time.hpp"
#include "levelhead/levelling/adjustment_report.hpp"
#include "levelhead/version.hpp"
#include "util/json_text.hpp"

namespace levelhead {

namespace {

// Heights and displacements to 0.01 mm, finer than levelling measures.
std::string metres(double value) { return fmt::format("{:.5f}", value); }
std::string millimetres_per_year(double metres_per_year) {
  return fmt::format("{:.3f}", 1000.0 * metres_per_year);
}
const char* yes_no(bool value) { return value ? "yes" : "no"; }

std::string test_verdict(const EpochQuality& q) {
  if (!q.global_test) return "none";
  return q.global_test->passed ? "passed" : "failed";
}

nlohmann::json flagged_json(const std::vector<EpochQuality::Flagged>& list) {
  nlohmann::json out = nlohmann::json::array();
  for (const auto& f : list)
    out.push_back({{"from", f.from}, {"to", f.to}, {"statistic", f.statistic}, {"row", f.row}});
  return out;
}

std::string variance_name(VarianceFactor v) {
  return v == VarianceFactor::pooled ? "pooled" : "apriori";
}

}  // namespace

bool epochs_have_failed_checks(const EpochAnalysis& a) {
  for (const EpochQuality& q : a.epochs) {
    if (q.global_test && !q.global_test->passed) return true;
  }
  return std::any_of(a.marks.begin(), a.marks.end(),
                     [](const MarkVerdict& v) { return v.kind != MarkVerdict::Kind::stable; });
}

void write_epoch_outputs(const EpochAnalysis& a, const EpochOptions& options,
                         const EpochInputs& inputs, const std::filesystem::path& folder) {
  OutputSet out(folder);

  std::ostream& epochs = out.open("epochs.csv");
  epochs << "epoch,first_date,last_date,time,points,sections,dof,sigma0,global_test,suspects,"
            "removed\n";
  for (const EpochQuality& q : a.epochs) {
    epochs << csv_cell(q.name) << ',' << csv_cell(q.first_date) << ',' << csv_cell(q.last_date)
           << ',' << format_utc(q.time) << ',' << q.points << ',' << q.sections << ',' << q.dof
           << ',' << (q.sigma0 ? fmt::format("{:.3f}", *q.sigma0) : "") << ',' << test_verdict(q)
           << ',' << q.suspects.size() << ',' << q.removed.size() << '\n';
  }

  std::ostream& marks = out.open("reference_stability.csv");
  marks << "mark,verdict,step,contribution,reason\n";
  for (const MarkVerdict& v : a.marks) {
    marks << csv_cell(v.mark) << ',' << to_string(v.kind) << ','
          << (v.step ? std::to_string(*v.step) : "") << ','
          << (v.step ? fmt::format("{:.4g}", v.contribution) : "") << ',' << csv_cell(v.reason)
          << '\n';
  }

  std::ostream& moves = out.open("displacements.csv");
  moves << "point,from_epoch,to_epoch,against,years,displacement,sigma,ci_low,ci_high,statistic,"
           "significant,mdd,note\n";
  for (const Displacement& d : a.displacements) {
    moves << csv_cell(d.point) << ',' << csv_cell(a.epochs[d.from_epoch].name) << ','
          << csv_cell(a.epochs[d.to_epoch].name) << ',' << (d.against_first ? "first" : "previous")
          << ',' << fmt::format("{:.3f}", d.years) << ',' << metres(d.value) << ','
          << metres(d.sigma) << ',' << metres(d.ci_low) << ',' << metres(d.ci_high) << ','
          << fmt::format("{:.2f}", d.statistic) << ',' << yes_no(d.significant) << ','
          << (d.datum_mark ? "" : metres(d.mdd)) << ','
          << (d.datum_mark ? "stable reference mark: zero by definition of the datum" : "") << '\n';
  }

  std::ostream& rates = out.open("rates.csv");
  rates << "point,epochs,rate_mm_per_year,sigma_mm_per_year,significant\n";
  for (const Rate& r : a.rates) {
    rates << csv_cell(r.point) << ',' << r.epochs << ',' << millimetres_per_year(r.rate) << ','
          << millimetres_per_year(r.sigma) << ',' << yes_no(r.significant) << '\n';
  }

  std::ostream& heights = out.open("heights_by_epoch.csv");
  heights << "point,epoch,time,height,sigma,reference,checked\n";
  for (std::size_t p = 0; p < a.points.size(); ++p) {
    for (const EpochHeight& h : a.heights[p]) {
      heights << csv_cell(a.points[p]) << ',' << csv_cell(a.epochs[h.epoch].name) << ','
              << format_utc(a.epochs[h.epoch].time) << ',' << metres(h.height) << ','
              << metres(h.sigma) << ',' << csv_cell(a.reference) << ','
              << (h.checked ? "yes" : "no") << '\n';
    }
  }

  nlohmann::json summary;
  summary["levelhead_version"] = version_string();
  summary["format_version"] = output_format_version;
  summary["command"] = "epochs";
  summary["units"] = "m";
  summary["inputs"] = {{"points", inputs.points_file}, {"sections", inputs.sections_files}};
  nlohmann::json epoch_list = nlohmann::json::array();
  for (const EpochQuality& q : a.epochs) {
    nlohmann::json e = {{"name", q.name},
                        {"first_date", q.first_date},
                        {"last_date", q.last_date},
                        {"time", format_utc(q.time)},
                        {"points", q.points},
                        {"sections", q.sections},
                        {"dof", q.dof},
                        {"vtpv", q.vtpv},
                        {"outlier_test", q.test.statement()},
                        {"outlier_test_basis", q.test.basis},
                        {"suspects", flagged_json(q.suspects)},
                        {"removed", flagged_json(q.removed)},
                        {"unchecked_points", q.unchecked}};
    e["sigma0"] = q.sigma0 ? nlohmann::json(*q.sigma0) : nlohmann::json(nullptr);
    e["variance_components"] = nlohmann::json::array();
    for (const VarianceComponent& c : q.variance_components)
      e["variance_components"].push_back(variance_component_json(c));
    if (q.global_test) {
      e["global_test"] = {{"statistic", q.global_test->statistic},
                          {"lower", q.global_test->lower},
                          {"upper", q.global_test->upper},
                          {"passed", q.global_test->passed}};
    } else {
      e["global_test"] = nullptr;
    }
    epoch_list.push_back(std::move(e));
  }
  summary["epochs"] = std::move(epoch_list);
  summary["candidates"] = a.candidates;
  nlohmann::json tests = nlohmann::json::array();
  for (const CongruenceTest& t : a.tests) {
    tests.push_back({{"marks", t.marks},
                     {"omega", t.omega},
                     {"h", t.h},
                     {"statistic", t.statistic},
                     {"critical", t.critical},
                     {"distribution", t.distribution},
                     {"passed", t.passed}});
  }
  summary["congruence_tests"] = std::move(tests);
  nlohmann::json verdicts = nlohmann::json::array();
  for (const MarkVerdict& v : a.marks) {
    verdicts.push_back(
        {{"mark", v.mark},
         {"verdict", to_string(v.kind)},
         {"step", v.step ? nlohmann::json(*v.step) : nlohmann::json(nullptr)},
         {"next_best", v.next_best.empty() ? nlohmann::json(nullptr) : nlohmann::json(v.next_best)},
         {"next_best_omega",
          v.next_best_omega ? nlohmann::json(*v.next_best_omega) : nlohmann::json(nullptr)},
         {"reason", v.reason}});
  }
  summary["marks"] = std::move(verdicts);
  summary["held_mark"] = a.held_mark;
  summary["reference"] = a.reference;
  summary["variance_factor"] = {
      {"kind", variance_name(options.variance)}, {"s0", a.s0}, {"pooled_dof", a.pooled_dof}};
  summary["displacement_test"] = {{"distribution", a.test_distribution},
                                  {"critical", a.test_critical}};
  summary["settings"] = {
      {"alpha", options.alpha},
      {"power", options.beta},
      {"remove_suspects", options.remove_suspects},
      {"mm_per_sqrt_km", options.adjustment.mm_per_sqrt_km},
      {"levelling_class", options.adjustment.levelling_class.empty()
                              ? nlohmann::json(nullptr)
                              : nlohmann::json(options.adjustment.levelling_class)},
      {"mm_per_setup", options.adjustment.mm_per_setup},
      {"alpha0", options.adjustment.alpha0}};
  // Each count says what it counts: a point and epoch pair appears both
  // against the first epoch and against the previous one.
  summary["significant_displacements"] = {
      {"since_first_epoch", significant_displacements(a, true)},
      {"since_previous_epoch", significant_displacements(a, false)}};
  summary["warnings"] = a.warnings;
  out.open("summary.json") << util::json_text(summary) << '\n';
  out.commit();
}

std::string epoch_summary_text(const EpochAnalysis& a) {
  std::string text = fmt::format("{} epochs, {} points, {} candidate reference marks\n",
                                 a.epochs.size(), a.points.size(), a.candidates.size());
  for (const EpochQuality& q : a.epochs) {
    text +=
        fmt::format("  {:<12} {} .. {}  {} sections, dof {}, sigma0 {}, global test {}{}\n", q.name,
                    q.first_date, q.last_date, q.sections, q.dof,
                    q.sigma0 ? fmt::format("{:.2f}", *q.sigma0) : "-", test_verdict(q),
                    q.suspects.empty() ? "" : fmt::format(", {} suspect(s)", q.suspects.size()));
    for (const VarianceComponent& c : q.variance_components)
      text += "    " + variance_component_line(c) + '\n';
  }
  const CongruenceTest& first = a.tests.front();
  text +=
      fmt::format("Congruence of the marks: {} = {:.3f} against {:.3f}: {}\n", first.distribution,
                  first.statistic, first.critical, first.passed ? "passed" : "failed");
  for (const MarkVerdict& v : a.marks) {
    std::string step;
    if (v.step && v.next_best_omega) {
      step = fmt::format(" (step {}: Omega {:.4g} without it; leaving out {} instead: {:.4g})",
                         *v.step, a.tests[*v.step].omega, v.next_best, *v.next_best_omega);
    } else if (v.step) {
      step = fmt::format(" (step {})", *v.step);
    }
    text += fmt::format("  {:<12} {}{}\n", v.mark, to_string(v.kind), step);
  }
  text += fmt::format("Datum: {} held ({})\n", a.held_mark, a.reference);
  std::vector<const Displacement*> moved;
  for (const Displacement& d : a.displacements) {
    if (d.against_first && d.significant) moved.push_back(&d);
  }
  std::sort(moved.begin(), moved.end(), [](const Displacement* x, const Displacement* y) {
    return std::abs(x->value) > std::abs(y->value);
  });
  text += fmt::format("{} significant displacement(s) since the first epoch\n", moved.size());
  for (std::size_t i = 0; i < moved.size() && i < 10; ++i) {
    const Displacement& d = *moved[i];
    text += fmt::format("  {:<12} {:+.1f} mm +- {:.1f} mm ({} -> {})\n", d.point, 1000.0 * d.value,
                        1000.0 * d.sigma, a.epochs[d.from_epoch].name, a.epochs[d.to_epoch].name);
  }
  for (const std::string& w : a.warnings) text += "Warning: " + w + "\n";
  return text;
}

}  // namespace levelhead
