#include "levelhead/levelling/loop_report.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <nlohmann/json.hpp>

#include "levelhead/core/output_files.hpp"
#include "levelhead/version.hpp"
#include "util/json_text.hpp"

namespace levelhead {

namespace {

std::string section_label(const Network& net, std::size_t s) {
  return net.sections[s].from + ">" + net.sections[s].to;
}

nlohmann::json section_json(const Network& net, std::size_t s) {
  return {{"from", net.sections[s].from}, {"to", net.sections[s].to}, {"row", net.sections[s].row}};
}

std::string shared_text(const Network& net, const Loop& loop) {
  std::string text;
  for (const auto& [section, loops] : loop.shared_with_failing) {
    if (!text.empty()) text += ';';
    std::vector<std::size_t> numbers;
    for (std::size_t k : loops) numbers.push_back(k + 1);
    text += fmt::format("{}@loops {}", section_label(net, section), fmt::join(numbers, " "));
  }
  return text;
}

std::string shared_human_text(const Network& net, const Loop& loop) {
  std::string text;
  for (const auto& [section, loops] : loop.shared_with_failing) {
    std::vector<std::size_t> numbers;
    for (std::size_t k : loops) numbers.push_back(k + 1);
    text += fmt::format("; section {} is also in failing loop(s) {}", section_label(net, section),
                        fmt::join(numbers, ", "));
  }
  return text;
}

}  // namespace

void write_loop_outputs(const Network& net, const LoopResult& result,
                        const std::filesystem::path& folder) {
  OutputSet out(folder);
  std::ostream& loops = out.open("loops.csv");
  loops << "loop,points,length,misclosure,tolerance,passed,sections,ratio,shared_with_failing\n";
  for (std::size_t k = 0; k < result.loops.size(); ++k) {
    const Loop& loop = result.loops[k];
    loops << k + 1 << ',' << csv_cell(loop_point_list(net, loop)) << ','
          << fmt::format("{:.3f},{:.5f},{:.5f}", loop.length, loop.misclosure, loop.tolerance)
          << ',' << (loop.passed ? "yes" : "no") << ',' << loop.steps.size() << ','
          << fmt::format("{:.2f}", std::abs(loop.misclosure) / loop.tolerance) << ','
          << csv_cell(shared_text(net, loop)) << '\n';
  }

  nlohmann::json summary;
  summary["levelhead_version"] = version_string();
  summary["format_version"] = output_format_version;
  summary["command"] = "loops";
  summary["inputs"] = {{"points", net.points_file}, {"sections", net.sections_file}};
  summary["units"] = "m";
  summary["tolerance_mm_per_sqrt_km"] = result.mm_per_sqrt_km;
  summary["basis"] = result.minimum_basis
                         ? "minimum total length (Horton 1987)"
                         : "short loops completed by fundamental loops (network too large for a "
                           "proven minimum basis)";
  summary["levelling_class"] = result.levelling_class.empty()
                                   ? nlohmann::json(nullptr)
                                   : nlohmann::json(result.levelling_class);
  summary["counts"] = {{"sections", net.sections.size()},
                       {"points_in_sections", result.points_in_sections},
                       {"connected_parts", result.connected_parts},
                       {"loops", result.loops.size()},
                       {"failed", result.failed},
                       {"unchecked_sections", result.unchecked_sections.size()},
                       {"single_observations", result.single_observations.size()}};
  nlohmann::json failed = nlohmann::json::array();
  for (std::size_t k = 0; k < result.loops.size(); ++k) {
    const Loop& loop = result.loops[k];
    if (loop.passed) continue;
    nlohmann::json shared = nlohmann::json::array();
    for (const auto& [section, loops_with] : loop.shared_with_failing) {
      nlohmann::json entry = section_json(net, section);
      std::vector<std::size_t> numbers;
      for (std::size_t j : loops_with) numbers.push_back(j + 1);
      entry["other_failing_loops"] = numbers;
      shared.push_back(entry);
    }
    failed.push_back({{"loop", k + 1},
                      {"points", loop_point_list(net, loop)},
                      {"misclosure", loop.misclosure},
                      {"tolerance", loop.tolerance},
                      {"length", loop.length},
                      {"shared_with_failing", shared}});
  }
  summary["failed_loops"] = failed;
  out.open("summary.json") << util::json_text(summary) << '\n';
  // The sections no loop or repeat checks, one line each: a list that runs
  // to a million lines in a national network belongs in a table, not in
  // the summary (which keeps their counts).
  std::vector<std::size_t> listed = result.unchecked_sections;
  listed.insert(listed.end(), result.single_observations.begin(), result.single_observations.end());
  std::sort(listed.begin(), listed.end());
  listed.erase(std::unique(listed.begin(), listed.end()), listed.end());
  std::ostream& weak = out.open("unchecked_sections.csv");
  weak << "from,to,row,in_loop,observed_once\n";
  const auto among = [](const std::vector<std::size_t>& sorted, std::size_t s) {
    return std::binary_search(sorted.begin(), sorted.end(), s);
  };
  for (const std::size_t s : listed) {
    weak << csv_cell(net.sections[s].from) << ',' << csv_cell(net.sections[s].to) << ','
         << net.sections[s].row << ',' << (among(result.unchecked_sections, s) ? "no" : "yes")
         << ',' << (among(result.single_observations, s) ? "yes" : "no") << '\n';
  }
  out.commit();
}

std::string loop_summary_text(const Network& net, const LoopResult& result) {
  std::string text = fmt::format(
      "{} loops from {} sections and {} points in {} connected part(s); tolerance {} "
      "mm*sqrt(km) ({})\n",
      result.loops.size(), net.sections.size(), result.points_in_sections, result.connected_parts,
      result.mm_per_sqrt_km,
      result.levelling_class.empty() ? std::string("given")
                                     : "loop closure of class " + result.levelling_class);
  if (!result.minimum_basis) {
    text +=
        "The network is too large for a proven minimum loop basis: the loops are short ones "
        "completed by fundamental loops, not proven minimum\n";
  }
  if (result.failed == 0) {
    text += "All loops close within tolerance\n";
  } else {
    text += fmt::format("{} loop(s) FAILED:\n", result.failed);
    for (std::size_t k = 0; k < result.loops.size(); ++k) {
      const Loop& loop = result.loops[k];
      if (loop.passed) continue;
      text += fmt::format("  loop {}: {} misclosure {:.2f} mm, tolerance {:.2f} mm{}\n", k + 1,
                          loop_point_list(net, loop), loop.misclosure * 1e3, loop.tolerance * 1e3,
                          shared_human_text(net, loop));
    }
  }
  if (!result.unchecked_sections.empty()) {
    std::vector<std::string> labels;
    for (std::size_t k = 0; k < result.unchecked_sections.size() && k < 8; ++k) {
      labels.push_back(section_label(net, result.unchecked_sections[k]));
    }
    text += fmt::format("{} section(s) lie in no loop; their heights are unchecked: {}{}\n",
                        result.unchecked_sections.size(), fmt::join(labels, " "),
                        result.unchecked_sections.size() > labels.size() ? " ..." : "");
  }
  text += fmt::format("{} section(s) observed only once (no other section joins the same points)\n",
                      result.single_observations.size());
  return text;
}

}  // namespace levelhead
