#include "levelhead/report/findings.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <map>
#include <set>

#include "levelhead/heads/flags.hpp"

namespace levelhead {

std::string to_string(FindingLevel level) {
  switch (level) {
    case FindingLevel::action:
      return "action";
    case FindingLevel::caution:
      return "caution";
    case FindingLevel::information:
      break;
  }
  return "information";
}

namespace {

// Long lists name this many and say how many more.
constexpr std::size_t listed = 5;

std::string listing(const std::vector<std::string>& items) {
  if (items.size() <= listed) return fmt::format("{}", fmt::join(items, "; "));
  return fmt::format("{}; and {} more", fmt::join(items.begin(), items.begin() + listed, "; "),
                     items.size() - listed);
}

class FindingList {
 public:
  void add(const char* stage, const char* topic, FindingLevel level, std::string text) {
    items_.push_back({stage, topic, level, std::move(text)});
  }
  std::vector<Finding> take() { return std::move(items_); }

 private:
  std::vector<Finding> items_;
};

void field_book_findings(const FieldBookStage& reduce, FindingList& out) {
  const FieldBookResult& r = reduce.result;
  std::vector<std::string> setups;
  for (const SetupReduction& s : r.setups) {
    if (s.failed_checks.empty()) continue;
    setups.push_back(fmt::format("run {} setup {} (field-book row {}): {}", s.run, s.setup,
                                 s.first_row, fmt::join(s.failed_checks, ", ")));
  }
  if (!setups.empty()) {
    out.add("reduce", "field-check", FindingLevel::action,
            fmt::format("{} setup(s) of the field book failed a field check: {} "
                        "(reduce/setups.csv). Re-observe them, or accept them knowingly.",
                        setups.size(), listing(setups)));
  }
  for (const RunClosure& c : r.closures) {
    if (c.passed) continue;
    out.add("reduce", "run-closure", FindingLevel::action,
            c.tolerance
                ? fmt::format("Run {} returns to {} (field-book row {}) with a misclosure of "
                              "{:.2f} mm, beyond its {:.2f} mm; re-level the run.",
                              c.run, c.point, c.row, 1000 * c.misclosure, 1000 * *c.tolerance)
                : fmt::format("Run {} returns to {} (field-book row {}) with a misclosure "
                              "of {:.2f} mm that cannot be judged: the run has no sight "
                              "lengths.",
                              c.run, c.point, c.row, 1000 * c.misclosure));
  }
  for (const ReducedSection& s : r.sections) {
    if (!s.spread || !s.spread_tolerance || *s.spread <= *s.spread_tolerance) continue;
    out.add("reduce", "section-spread", FindingLevel::action,
            fmt::format("The {} runs of section {} -> {} differ by {:.2f} mm, beyond {:.2f} mm; "
                        "re-level the section.",
                        s.runs, s.from, s.to, 1000 * *s.spread, 1000 * *s.spread_tolerance));
  }
}

void loop_findings(const LoopsStage& loops, FindingList& out) {
  const LoopResult& r = loops.result;
  if (r.failed == 0) return;
  std::vector<std::string> failed;
  for (std::size_t k = 0; k < r.loops.size(); ++k) {
    const Loop& loop = r.loops[k];
    if (loop.passed) continue;
    failed.push_back(fmt::format("loop {} ({}) misclosure {:.2f} mm against {:.2f} mm", k + 1,
                                 fmt::join(loops.loop_points[k], ">"), 1000 * loop.misclosure,
                                 1000 * loop.tolerance));
  }
  out.add("loops", "loop-closure", FindingLevel::action,
          fmt::format("{} of {} levelling loops failed their closure tolerance ({:g} "
                      "mm*sqrt(km)): {}. Loops that share a section fail together; the "
                      "adjustment's data snooping names the section.",
                      r.failed, r.loops.size(), r.mm_per_sqrt_km, listing(failed)));
}

// The field-book rows of a section of the chain's sections table: the
// reduction wrote them in order, so sections table row n (header = 1) is
// reduced section n - 2.
std::string field_book_rows(const StageResults& results, const Section& section) {
  if (!results.reduce || section.row < 2) return "";
  const std::vector<ReducedSection>& reduced = results.reduce->result.sections;
  const std::size_t k = section.row - 2;
  if (k >= reduced.size() || reduced[k].from != section.from || reduced[k].to != section.to)
    return "";
  return fmt::format("; field-book row(s) {}", fmt::join(reduced[k].rows, ", "));
}

void adjustment_findings(const StageResults& results, const std::set<std::string>& covered_points,
                         FindingList& out) {
  const AdjustStage& adjust = *results.adjust;
  const Network& net = adjust.network;
  const AdjustmentResult& a = adjust.result;
  const auto symbol = [](const OutlierTest& test) {
    return test.kind == OutlierTest::Kind::w_test ? "w" : "tau";
  };
  for (const Removal& r : a.removals) {
    const Section& s = net.sections[r.section];
    out.add("adjust", "blunder", FindingLevel::action,
            fmt::format("Blunder: the section {} -> {} (sections row {}{}) failed data snooping "
                        "with {} = {:.1f} ({}) and was removed; re-level it. If the new levelling "
                        "agrees with the old, suspect a moved mark or a too optimistic a-priori "
                        "precision instead.",
                        s.from, s.to, s.row, field_book_rows(results, s), symbol(r.test),
                        r.statistic, r.test.statement()));
  }
  std::vector<std::string> suspects;
  for (const Suspect& s : a.suspects) {
    if (s.kind == Suspect::Kind::section) {
      const Section& section = net.sections[s.index];
      suspects.push_back(
          fmt::format("section {} -> {} (sections row {}{}) {} = {:.2f}", section.from, section.to,
                      section.row, field_book_rows(results, section), symbol(a.test), s.statistic));
    } else {
      suspects.push_back(fmt::format("the known height of {} (points row {}) {} = {:.2f}",
                                     net.points[s.index].id, net.points[s.index].row,
                                     symbol(a.test), s.statistic));
    }
  }
  if (!suspects.empty()) {
    out.add("adjust", "suspect", FindingLevel::action,
            fmt::format("{} observation(s) fail data snooping ({}) and were kept: {}. Check them "
                        "in the field book and re-level before relying on the heights they carry.",
                        suspects.size(), a.test.statement(), listing(suspects)));
  }
  for (const VarianceComponent& c : a.variance_components) {
    if (!c.factor) {
      out.add("adjust", "variance-component", FindingLevel::caution,
              fmt::format("The precision of {} cannot be estimated (its sections have a "
                          "redundancy of {:.1f}, below 2): its a-priori sigmas were kept.",
                          c.group, c.redundancy));
    } else if (c.low > 1.0 || c.high < 1.0) {
      out.add("adjust", "variance-component", FindingLevel::caution,
              fmt::format("{} was levelled {:.2f} times {} precisely than assumed (interval "
                          "{:.2f} to {:.2f}, redundancy {:.1f}); its sections are weighted so.",
                          c.group, c.low > 1.0 ? *c.factor : 1.0 / *c.factor,
                          c.low > 1.0 ? "less" : "more", c.low, c.high, c.redundancy));
    }
  }
  if (a.global_test && !a.global_test->passed) {
    const GlobalTest& g = *a.global_test;
    // Where a remaining blunder would most likely sit: the largest |w|.
    const AdjustedSection* largest = nullptr;
    for (const AdjustedSection& s : a.sections) {
      if (!s.removed && s.w && (!largest || std::abs(*s.w) > std::abs(*largest->w))) largest = &s;
    }
    std::string where;
    if (g.statistic > g.upper && largest) {
      const Section& s = net.sections[largest->section];
      where = fmt::format(
          " The largest normalised residual is w = {:.2f} on section {} -> {} "
          "(sections row {}{}).",
          *largest->w, s.from, s.to, s.row, field_book_rows(results, s));
    }
    out.add("adjust", "global-test", FindingLevel::caution,
            fmt::format("The adjustment's global test failed: v'Pv = {:.2f} outside [{:.2f}, "
                        "{:.2f}] (chi-square, {} degrees of freedom, alpha = {:g}). {}{} {}.",
                        g.statistic, g.lower, g.upper, a.dof, g.alpha,
                        g.statistic > g.upper
                            ? "The observations scatter more than the a-priori precision allows: "
                              "a blunder remains or the precision is too optimistic."
                            : "The observations agree better than the a-priori precision says: "
                              "the precision is too pessimistic, and the sigmas are too wide.",
                        where, "Data snooping used " + a.test.statement()));
  }
  std::vector<std::string> unchecked;
  for (const AdjustedPoint& p : a.points) {
    const std::string& id = net.points[p.point].id;
    if (!p.checked && !covered_points.count(id)) unchecked.push_back(id);
  }
  if (!unchecked.empty()) {
    out.add("adjust", "unchecked-point", FindingLevel::caution,
            fmt::format("{} point(s) rest on a side shot or spur that no loop checks, so a blunder "
                        "there would not show: {}.",
                        unchecked.size(), listing(unchecked)));
  }
}

void gnss_findings(const GnssStage& g, FindingList& out) {
  // Each mark once: its own mistake, or its share in an offset or a scatter.
  std::vector<std::string> disagree, scattered;
  std::size_t systematic = 0;
  for (std::size_t i = 0; i < g.marks.size(); ++i) {
    const GnssCheck& c = g.result.marks[i];
    const std::string line =
        fmt::format("{}: levelled - GNSS = {:+.3f} m", g.marks[i].id, c.difference);
    if (c.verdict == GnssVerdict::scattered)
      scattered.push_back(line);
    else if (c.verdict == GnssVerdict::systematic)
      ++systematic;
    else if (c.verdict != GnssVerdict::consistent)
      disagree.push_back(fmt::format("{}, {}", line, explain(c.verdict)));
  }
  if (!disagree.empty()) {
    out.add("gnss-check", "gnss-disagrees", FindingLevel::action,
            fmt::format("{} of {} marks disagree between GNSS and levelling: {}.", disagree.size(),
                        g.marks.size(), listing(disagree)));
  }
  if (g.result.common_offset) {
    out.add("gnss-check", "gnss-offset", FindingLevel::caution,
            fmt::format("{} of {} GNSS marks share an offset of {:+.3f} +- {:.3f} m from the "
                        "levelling: check the references and the geoid model before the heights.",
                        systematic, g.marks.size(), *g.result.common_offset,
                        g.result.fit.offset_sigma));
  }
  if (!scattered.empty()) {
    out.add("gnss-check", "gnss-scatter", FindingLevel::caution,
            fmt::format("{} of {} marks lie beyond the tolerance ({:g} m) without being outliers: "
                        "the GNSS heights scatter more than the tolerance assumes{} ({}).",
                        scattered.size(), g.marks.size(), g.result.tolerance,
                        g.result.fit.sigma0 && g.result.fit.test == "Pope's tau test"
                            ? fmt::format(", sigma {:.3f} m about the offset", *g.result.fit.sigma0)
                            : std::string(),
                        listing(scattered)));
  }
}

void epoch_findings(const EpochAnalysis& e, FindingList& out) {
  for (const EpochQuality& q : e.epochs) {
    if (!q.global_test || q.global_test->passed) continue;
    out.add("epochs", "epoch-global-test", FindingLevel::caution,
            fmt::format("Epoch {}: its global test failed (sigma0 = {:.2f}); its heights rest on "
                        "observations that do not fit their a-priori precision.",
                        q.name, q.sigma0.value_or(0.0)));
  }
  for (const MarkVerdict& m : e.marks) {
    if (m.kind == MarkVerdict::Kind::stable) continue;
    out.add("epochs", "mark-moving", FindingLevel::action,
            fmt::format("Reference mark {} is {}: {}.", m.mark, to_string(m.kind), m.reason));
  }
  if (const std::size_t significant = significant_displacements(e, true); significant > 0) {
    out.add("epochs", "displacements", FindingLevel::information,
            fmt::format("{} significant displacement(s) since the first epoch (a point in a "
                        "later epoch against the first; epochs/displacements.csv); measuring "
                        "points on monitored points follow them.",
                        significant));
  }
  for (const std::string& w : e.warnings)
    out.add("epochs", "epoch-warning", FindingLevel::caution, "Monitoring: " + w);
}

// Rows a stage set aside with --keep-going: its results rest on the others.
void set_aside_finding(const char* stage, std::size_t rejected, const std::string& what,
                       FindingList& out) {
  if (rejected == 0) return;
  out.add(stage, "set-aside", FindingLevel::action,
          fmt::format("{}: {} {} could not be read and were set aside ({}/rejects.csv, each with "
                      "its row and problem); the results rest on the others. Correct them and "
                      "run again.",
                      stage, rejected, what, stage));
}

void transducer_findings(const TransducerStage& t, FindingList& out) {
  for (const SensorSummary& sensor : t.summary.sensors) {
    std::vector<std::string> rejected;
    for (const auto& [flag, count] : sensor.flags) {
      const FlagInfo info = flag_info(flag);
      if (info.kind != FlagClass::rejection) continue;
      rejected.push_back(fmt::format("{} {} ({})", count, flag, info.meaning));
    }
    if (rejected.empty()) continue;
    out.add("transducer", "transducer-rejected", FindingLevel::caution,
            fmt::format("Transducer {} in {}: readings rejected or left uncomputed: {}; they give "
                        "no head (transducer/qa.csv, transducer/checks.csv).",
                        sensor.sensor, sensor.well, fmt::join(rejected, ", ")));
  }
  set_aside_finding("transducer", t.summary.rejected, "record(s) or tape reading(s)", out);
}

void measuring_point_findings(const HeadsStage& heads, FindingList& out) {
  const std::vector<MeasuringPointSurvey>& surveys = heads.result.measuring_points;
  // In the heads' unit, as their tables.
  const double k_unit = 1.0 / metres_per_unit(heads.result.unit);
  const std::string unit = unit_label(heads.result.unit);
  for (std::size_t k = 0; k < surveys.size(); ++k) {
    const MeasuringPointRecord& r = surveys[k].record;
    if (!r.starts_new_series()) continue;
    const bool has_before = k > 0 && surveys[k - 1].record.well == r.well;
    out.add("heads", "mp-change", FindingLevel::information,
            fmt::format(
                "Measuring point of {} changed on {} ({}): now {:.4f} {}{}; heads are not "
                "interpolated across the change.",
                r.well, r.valid_from_text, r.reason, surveys[k].height * k_unit, unit,
                has_before ? fmt::format(", {:+.4f} {} against the survey before",
                                         (surveys[k].height - surveys[k - 1].height) * k_unit, unit)
                           : std::string()));
  }
  // The datum mix-up a naive merge would have made: each record's height
  // as given (in metres) against its converted height.
  std::map<std::string, std::pair<double, std::set<std::string>>> shift_by_datum;
  for (const MeasuringPointSurvey& m : surveys) {
    const MeasuringPointRecord& r = m.record;
    if (!r.height || r.datum.empty() || r.datum == heads.target) continue;
    auto& entry = shift_by_datum[r.datum];
    entry.first = m.height - *r.height;
    entry.second.insert(r.well);
  }
  for (const auto& [datum, entry] : shift_by_datum) {
    if (std::abs(entry.first) < 0.01) continue;
    out.add("heads", "datum-mix-up", FindingLevel::information,
            fmt::format("Datum mix-up avoided: the measuring points of {} well(s) were surveyed "
                        "on '{}'; merged with heights in {} as if in one reference, their heads "
                        "would be {:.3f} {} too {}.",
                        entry.second.size(), datum, heads.target, std::abs(entry.first) * k_unit,
                        unit, entry.first > 0 ? "low" : "high"));
  }
}

void heads_findings(const HeadsStage& heads, const std::set<std::string>& unchecked_wells,
                    FindingList& out) {
  const HeadsSummary& s = heads.result.summary;
  set_aside_finding("heads", s.rejected, "reading(s)", out);
  measuring_point_findings(heads, out);
  if (!unchecked_wells.empty()) {
    out.add("heads", "mp-unchecked", FindingLevel::caution,
            fmt::format("Unchecked levelling: the measuring point(s) of {} rest on a side shot or "
                        "spur that no loop checks, so a blunder there would not show "
                        "(heads/qa.csv); level a loop through them.",
                        fmt::join(unchecked_wells, ", ")));
  }
  for (const auto& [kind, count] : s.states_by_kind) {
    const auto examples = s.state_examples.find(kind);
    out.add("heads", "state", FindingLevel::information,
            fmt::format("{} reading(s) with the state {} ({}{}): no head is contoured from them.",
                        count, kind,
                        examples == s.state_examples.end()
                            ? std::string()
                            : fmt::format("{}", fmt::join(examples->second, "; ")),
                        count > listed ? "; ..." : ""));
  }
  if (heads.result.event && !heads.result.event->remeasure.empty()) {
    std::vector<std::string> wells;
    for (const auto& [well, reasons] : heads.result.event->remeasure)
      wells.push_back(fmt::format("{} ({})", well, fmt::join(reasons, "; ")));
    out.add("heads", "remeasure", FindingLevel::action,
            fmt::format("{} well(s) to re-measure before contouring: {}.", wells.size(),
                        listing(wells)));
  }
}

void flow_findings(const FlowStage& flow, FindingList& out) {
  std::vector<std::string> off;
  for (std::size_t i : flow.result.off_plane)
    off.push_back(fmt::format("{} (tau = {:+.2f})", flow.well_ids[i], *flow.result.tau[i]));
  if (!off.empty()) {
    out.add("flow", "off-plane", FindingLevel::caution,
            fmt::format("{} well(s) depart from the plane of the heads (Pope's tau test, |tau| > "
                        "{:.2f} at alpha0 = {:g}): {}. Check their heads; a well may also sit in "
                        "a local feature (a mound, a pumping cone) the plane cannot follow.",
                        off.size(), flow.result.tau_critical, flow.alpha0, listing(off)));
  }
  out.add("flow", "flow-direction", FindingLevel::information,
          fmt::format("Groundwater flows towards {:.0f} degrees (grid) with a gradient of {:.1e}.",
                      flow.result.azimuth, flow.result.gradient));
}

// Wells whose measuring point rests on unchecked levelling, and the network
// points those records name (the adjustment's finding leaves them to heads').
std::pair<std::set<std::string>, std::set<std::string>> unchecked_measuring_points(
    const StageResults& results) {
  std::set<std::string> wells, points;
  if (!results.heads) return {wells, points};
  for (const QaEntry& e : results.heads->result.measuring_point_qa) {
    if (e.flag == "mp-unchecked") wells.insert(e.well);
  }
  for (const MeasuringPointSurvey& m : results.heads->result.measuring_points) {
    if (wells.count(m.record.well) && !m.record.point.empty()) points.insert(m.record.point);
  }
  return {wells, points};
}

}  // namespace

std::string finding_line(const Finding& finding) {
  return fmt::format("[{}] {}", to_string(finding.level), finding.text);
}

std::vector<Finding> chain_findings(const StageResults& results) {
  FindingList out;
  const auto [unchecked_wells, unchecked_points] = unchecked_measuring_points(results);
  if (results.reduce) field_book_findings(*results.reduce, out);
  if (results.loops) loop_findings(*results.loops, out);
  if (results.adjust) adjustment_findings(results, unchecked_points, out);
  if (results.gnss) gnss_findings(*results.gnss, out);
  if (results.epochs) epoch_findings(results.epochs->analysis, out);
  if (results.transducer) transducer_findings(*results.transducer, out);
  if (results.heads) heads_findings(*results.heads, unchecked_wells, out);
  if (results.flow) flow_findings(*results.flow, out);
  return out.take();
}

}  // namespace levelhead
