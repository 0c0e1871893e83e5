#include "levelhead/references/height_conversion.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <nlohmann/json.hpp>
#include <sstream>

#include "levelhead/core/errors.hpp"
#include "levelhead/core/output_files.hpp"
#include "levelhead/version.hpp"
#include "util/json_text.hpp"

namespace levelhead {

namespace {

// Points converted and written this many at a time: the conversion results
// (a few hundred bytes a point with their steps and notes) never pile up for
// the whole table.
constexpr std::size_t conversion_chunk = 65536;

}  // namespace

struct PointsTableConverter::State {
  HeightConverter& converter;
  HeightConversionOptions options;
  CsvRows& csv;
  std::string source;
  bool started = false;
  std::size_t id_col = 0, x_col = 0, y_col = 0, height_col = 0;
  std::optional<std::size_t> sigma_col;
  std::vector<std::string> added;
  std::vector<std::optional<std::size_t>> existing;
  HeightConversionSummary counts;
  std::vector<std::string> failures;  // the first few, for the message
  nlohmann::json failed = nlohmann::json::array();
  State(HeightConverter& c, const HeightConversionOptions& o, CsvRows& out)
      : converter(c), options(o), csv(out) {}
};

PointsTableConverter::PointsTableConverter(HeightConverter& converter,
                                           const HeightConversionOptions& options, CsvRows& csv)
    : state_(std::make_unique<State>(converter, options, csv)) {}

PointsTableConverter::~PointsTableConverter() = default;

void PointsTableConverter::add(const Table& table) {
  State& st = *state_;
  HeightConverter& converter = st.converter;
  const HeightConversionOptions& options = st.options;
  CsvRows& csv = st.csv;
  if (!st.started) {
    st.started = true;
    st.source = table.source();
    st.id_col = table.require_column("id");
    st.x_col = table.require_column("x");
    st.y_col = table.require_column("y");
    st.height_col = table.require_column("height");
    st.sigma_col = table.find_column("sigma");
    // Columns this conversion writes; a table converted before has them
    // already, and they are replaced rather than repeated.
    st.added = {"sigma_relative", "common", "reference", "transform", "flags"};
    if (options.epoch) st.added.emplace_back("epoch");
    for (const std::string& name : st.added) st.existing.push_back(table.find_column(name));
    for (const std::string& name : table.column_names()) csv.text(name);
    if (!st.sigma_col) csv.text("sigma");
    for (std::size_t i = 0; i < st.added.size(); ++i) {
      if (!st.existing[i]) csv.text(st.added[i]);
    }
    csv.end_row();
  }
  const std::size_t id_col = st.id_col, x_col = st.x_col, y_col = st.y_col;
  const std::size_t height_col = st.height_col;
  const std::optional<std::size_t>& sigma_col = st.sigma_col;
  const std::vector<std::string>& added = st.added;
  const std::vector<std::optional<std::size_t>>& existing = st.existing;
  HeightConversionSummary& counts = st.counts;
  std::vector<std::string>& failures = st.failures;
  nlohmann::json& failed = st.failed;
  const double unit = metres_per_unit(options.output_unit);
  const std::string epoch_text = options.epoch ? fmt::format("{:.3f}", *options.epoch) : "";
  std::vector<PlanePoint> points;
  std::vector<double> heights;
  std::vector<std::optional<double>> sigmas;  // of every row of the chunk
  std::vector<std::optional<std::size_t>> result_of_row;
  for (std::size_t first = 0; first < table.row_count(); first += conversion_chunk) {
    const std::size_t end = std::min(table.row_count(), first + conversion_chunk);
    // Every cell is read and checked before any row of the chunk is written.
    points.clear();
    heights.clear();
    sigmas.assign(end - first, std::nullopt);
    result_of_row.assign(end - first, std::nullopt);
    for (std::size_t row = first; row < end; ++row) {
      if (sigma_col) sigmas[row - first] = table.sigma(row, *sigma_col);
      const auto height = table.height(row, height_col);
      if (!height) continue;  // nothing to convert; copied as is
      const auto x = table.number(row, x_col), y = table.number(row, y_col);
      if (!x || !y) {
        throw InputError(table.location(row, x ? y_col : x_col), "",
                         "a point with a height needs x and y to be converted");
      }
      result_of_row[row - first] = points.size();
      points.push_back({*x, *y});
      heights.push_back(*height);
    }
    const std::vector<ConvertedHeight> results = converter.convert(points, heights);
    counts.points += results.size();
    for (std::size_t row = first; row < end; ++row) {
      const auto k = result_of_row[row - first];
      if (!k) continue;
      if (results[*k].height) {
        ++counts.converted;
        continue;
      }
      ++counts.failed;
      if (failures.size() < 10) {
        failures.push_back(fmt::format("'{}' (row {}): {}", table.cell(row, id_col),
                                       table.source_row(row), results[*k].failure));
      }
      failed.push_back({{"id", std::string(table.cell(row, id_col))},
                        {"row", table.source_row(row)},
                        {"reason", results[*k].failure}});
    }
    // Once a point has failed without --lenient, nothing more is written:
    // the rest is only counted for the message.
    if (counts.failed > 0 && !options.lenient) continue;

    for (std::size_t row = first; row < end; ++row) {
      const auto k = result_of_row[row - first];
      const std::optional<double>& sigma_in = sigmas[row - first];
      std::optional<double> height, sigma_out, relative;
      std::string common_text, transform, flags;
      if (k && results[*k].height) {
        const ConvertedHeight& r = results[*k];
        height = *r.height / unit;
        transform = r.transform;
        std::vector<std::string> notes = r.flags;
        if (sigma_in || r.variance_added > 0.0) {
          const double given = sigma_in ? *sigma_in : 0.0;
          sigma_out = std::sqrt(given * given + r.variance_added) / unit;
          relative = std::sqrt(given * given + r.relative_variance_added()) / unit;
          common_text = format_common_errors(r.common, 1.0 / unit);
        }
        if (!sigma_in) notes.push_back("input-sigma-missing");
        if (!r.variance_complete) notes.push_back("step-variance-unknown");
        flags = fmt::format("{}", fmt::join(notes, " "));
      } else if (k) {
        flags = "not-converted: " + results[*k].failure;
      } else if (sigma_in) {
        sigma_out = *sigma_in / unit;
      }
      const auto write_added = [&](std::size_t i) {
        switch (i) {
          case 0:
            csv.fixed(relative, 5);
            break;
          case 1:
            csv.text(common_text);
            break;
          case 2:
            csv.text(k ? converter.to() : std::string());
            break;
          case 3:
            csv.text(transform);
            break;
          case 4:
            csv.text(flags);
            break;
          default:
            csv.text(k ? epoch_text : std::string());
            break;
        }
      };
      for (std::size_t c = 0; c < table.column_names().size(); ++c) {
        const auto replaced = std::find(existing.begin(), existing.end(), c);
        if (c == height_col && k) {
          csv.fixed(height, 5);
        } else if (sigma_col && c == *sigma_col) {
          csv.fixed(sigma_out, 5);
        } else if (replaced != existing.end()) {
          write_added(static_cast<std::size_t>(replaced - existing.begin()));
        } else {
          csv.text(table.cell(row, c));
        }
      }
      if (!sigma_col) csv.fixed(sigma_out, 5);
      for (std::size_t i = 0; i < added.size(); ++i) {
        if (!existing[i]) write_added(i);
      }
      csv.end_row();
    }
  }
}

HeightConversionSummary PointsTableConverter::finish(std::ostream* summary_json) {
  State& st = *state_;
  HeightConverter& converter = st.converter;
  const HeightConversionOptions& options = st.options;
  const HeightConversionSummary& counts = st.counts;
  const std::vector<std::string>& failures = st.failures;
  if (counts.failed > 0 && !options.lenient) {
    throw ReferenceError(fmt::format(
        "{} of {} point(s) could not be converted from '{}' to '{}': {}{}. Nothing was written; "
        "check the points' x, y and --crs, or use --lenient to write the others and flag these",
        counts.failed, counts.points, converter.from(), converter.to(), fmt::join(failures, "; "),
        counts.failed > failures.size() ? "; ..." : ""));
  }
  st.csv.finish();
  if (!summary_json) return counts;
  nlohmann::json summary;
  summary["levelhead_version"] = version_string();
  summary["format_version"] = output_format_version;
  summary["command"] = "convert";
  summary["proj"] = proj_version_text();
  summary["input"] = st.source;
  summary["units"] = to_string(options.output_unit);
  summary["lenient"] = options.lenient;
  summary["epoch"] = options.epoch ? nlohmann::json(*options.epoch) : nlohmann::json(nullptr);
  summary["from"] = converter.from();
  summary["to"] = converter.to();
  if (const VerticalTransformer* proj = converter.proj()) {
    const auto info = [](const ReferenceInfo& r) {
      return nlohmann::json{{"definition", r.definition},
                            {"name", r.name},
                            {"axis_units", r.unit},
                            {"axis_units_in_m", r.metres_per_unit},
                            {"dynamic", r.dynamic}};
    };
    summary["proj_from"] = info(proj->source());
    summary["proj_to"] = info(proj->target());
  }
  summary["reference_steps"] = converter.step_descriptions();
  nlohmann::json grids = nlohmann::json::array();
  for (const GridUse& g : converter.grids()) {
    grids.push_back({{"name", g.name}, {"path", g.path}, {"sha256", g.sha256}});
  }
  summary["reference_grids"] = grids;
  summary["counts"] = {{"points_with_height", counts.points},
                       {"converted", counts.converted},
                       {"failed", counts.failed}};
  nlohmann::json ops = nlohmann::json::array();
  const std::vector<OperationRecord> no_operations;
  const auto& operations = converter.proj() ? converter.proj()->operations() : no_operations;
  for (const OperationRecord& op : operations) {
    nlohmann::json grids = nlohmann::json::array();
    for (const GridUse& g : op.grids) {
      grids.push_back({{"name", g.name}, {"path", g.path}, {"sha256", g.sha256}});
    }
    ops.push_back(
        {{"name", op.name},
         {"pipeline", op.pipeline},
         {"accuracy", op.accuracy ? nlohmann::json(*op.accuracy) : nlohmann::json(nullptr)},
         {"grids", grids},
         {"points", op.points}});
  }
  summary["operations"] = ops;
  summary["warnings"] =
      converter.proj() ? converter.proj()->warnings() : std::vector<std::string>{};
  summary["failed_points"] = st.failed;
  *summary_json << util::json_text(summary) << '\n';
  return counts;
}

}  // namespace levelhead
