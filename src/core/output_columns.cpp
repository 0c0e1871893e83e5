#include "levelhead/core/output_columns.hpp"

#include <algorithm>

namespace levelhead {

const std::vector<OutputColumn>& output_columns() {
  // Lengths are "length": a head, a sigma or a misclosure is in the
  // table's unit. `depth` is text: it holds a number or a state (dry).
  // `time` and `valid_from` are as given (with the zone they were given
  // in), `date` may join the dates of merged runs: text; `time_utc` is
  // the time a GIS uses.
  static const std::vector<OutputColumn> columns = {
      {"adjusted_dh", ColumnType::real, "length"},
      {"against", ColumnType::text, ""},
      {"aquifer", ColumnType::text, ""},
      {"back", ColumnType::text, ""},
      {"back_distance", ColumnType::real, "length"},
      {"back_reading", ColumnType::real, "length"},
      {"base_height", ColumnType::real, "length"},
      {"checked", ColumnType::text, ""},
      {"ci_high", ColumnType::real, "length"},
      {"ci_low", ColumnType::real, "length"},
      {"collimation", ColumnType::real, "length"},
      {"column", ColumnType::text, ""},
      {"common", ColumnType::text, ""},
      {"contour", ColumnType::text, ""},
      {"contribution", ColumnType::real, ""},
      {"control", ColumnType::text, ""},
      {"control_residual", ColumnType::real, "length"},
      {"control_w", ColumnType::real, ""},
      {"curvature_refraction", ColumnType::real, "length"},
      {"date", ColumnType::text, ""},
      {"datum", ColumnType::text, ""},
      {"deep", ColumnType::text, ""},
      {"density", ColumnType::real, "kg/m^3"},
      {"depth", ColumnType::text, ""},
      {"detail", ColumnType::text, ""},
      {"dh", ColumnType::real, "length"},
      {"dh_observed", ColumnType::real, "length"},
      {"difference", ColumnType::real, "length"},
      {"direction", ColumnType::text, ""},
      {"displacement", ColumnType::real, "length"},
      {"dof", ColumnType::integer, ""},
      {"double_difference", ColumnType::real, "length"},
      {"drift", ColumnType::real, "length"},
      {"environmental_head", ColumnType::real, "length"},
      {"epoch", ColumnType::text, ""},
      {"epochs", ColumnType::integer, ""},
      {"failed_checks", ColumnType::text, ""},
      {"file", ColumnType::text, ""},
      {"first_date", ColumnType::date, ""},
      {"flag", ColumnType::text, ""},
      {"flags", ColumnType::text, ""},
      {"fore", ColumnType::text, ""},
      {"fore_distance", ColumnType::real, "length"},
      {"fore_reading", ColumnType::real, "length"},
      {"freshwater_head", ColumnType::real, "length"},
      {"from", ColumnType::text, ""},
      {"from_epoch", ColumnType::text, ""},
      {"from_offset", ColumnType::real, "length"},
      {"given_datum", ColumnType::text, ""},
      {"given_height", ColumnType::real, "length"},
      {"global_test", ColumnType::text, ""},
      {"gnss", ColumnType::real, "length"},
      {"gnss_converted", ColumnType::real, "length"},
      {"head", ColumnType::real, "length"},
      {"height", ColumnType::real, "length"},
      {"id", ColumnType::text, ""},
      {"imbalance", ColumnType::real, "length"},
      {"in_event", ColumnType::text, ""},
      {"in_loop", ColumnType::text, ""},
      {"instrument", ColumnType::text, ""},
      {"kind", ColumnType::text, ""},
      {"last_date", ColumnType::date, ""},
      {"length", ColumnType::real, "length"},
      {"levelled", ColumnType::real, "length"},
      {"levelled_length", ColumnType::real, "length"},
      {"loop", ColumnType::integer, ""},
      {"manual_depth", ColumnType::real, "length"},
      {"mark", ColumnType::text, ""},
      {"mdb", ColumnType::real, "length"},
      {"mdd", ColumnType::real, "length"},
      {"method", ColumnType::text, ""},
      {"misclosure", ColumnType::real, "length"},
      {"misfit", ColumnType::real, "length"},
      {"mp_elevation", ColumnType::real, "length"},
      {"mp_sigma", ColumnType::real, "length"},
      {"mp_source", ColumnType::text, ""},
      {"nest", ColumnType::text, ""},
      {"note", ColumnType::text, ""},
      {"observed_once", ColumnType::text, ""},
      {"observer", ColumnType::text, ""},
      {"off_plane", ColumnType::text, ""},
      {"offset", ColumnType::real, "length"},
      {"passed", ColumnType::text, ""},
      {"point", ColumnType::text, ""},
      {"points", ColumnType::text, ""},
      {"prediction", ColumnType::real, "length"},
      {"problem", ColumnType::text, ""},
      {"rate_mm_per_year", ColumnType::real, "mm/yr"},
      {"ratio", ColumnType::real, ""},
      {"reason", ColumnType::text, ""},
      {"reasons", ColumnType::text, ""},
      {"redundancy", ColumnType::real, ""},
      {"reference", ColumnType::text, ""},
      {"rejected_until_next", ColumnType::text, ""},
      {"removed", ColumnType::integer, ""},
      {"removed_step", ColumnType::integer, ""},
      {"residual", ColumnType::real, "length"},
      {"rod_expansion", ColumnType::real, "length"},
      {"rod_scale", ColumnType::real, "length"},
      {"row", ColumnType::integer, ""},
      {"rows", ColumnType::text, ""},
      {"run", ColumnType::text, ""},
      {"runs", ColumnType::integer, ""},
      {"sections", ColumnType::integer, ""},
      {"sensor", ColumnType::text, ""},
      {"separation", ColumnType::real, "length"},
      {"setup", ColumnType::integer, ""},
      {"setups", ColumnType::integer, ""},
      {"shallow", ColumnType::text, ""},
      {"shared_with_failing", ColumnType::text, ""},
      {"sigma", ColumnType::real, "length"},
      {"sigma0", ColumnType::real, ""},
      {"sigma_apriori", ColumnType::real, "length"},
      {"sigma_mm_per_year", ColumnType::real, "mm/yr"},
      {"sigma_relative", ColumnType::real, "length"},
      {"significant", ColumnType::text, ""},
      {"site_height", ColumnType::real, "length"},
      {"source", ColumnType::text, ""},
      {"spread", ColumnType::real, "length"},
      {"spread_tolerance", ColumnType::real, "length"},
      {"state", ColumnType::text, ""},
      {"statistic", ColumnType::real, ""},
      {"status", ColumnType::text, ""},
      {"step", ColumnType::integer, ""},
      {"suspect", ColumnType::text, ""},
      {"suspects", ColumnType::integer, ""},
      {"table", ColumnType::text, ""},
      {"tau", ColumnType::real, ""},
      {"time", ColumnType::text, ""},
      {"time_utc", ColumnType::date_time, ""},
      {"to", ColumnType::text, ""},
      {"to_epoch", ColumnType::text, ""},
      {"tolerance", ColumnType::real, "length"},
      {"transducer_depth", ColumnType::real, "length"},
      {"transform", ColumnType::text, ""},
      {"valid_from", ColumnType::text, ""},
      {"verdict", ColumnType::text, ""},
      {"w", ColumnType::real, ""},
      {"weight_rule", ColumnType::text, ""},
      {"well", ColumnType::text, ""},
      {"x", ColumnType::real, "CRS"},
      {"y", ColumnType::real, "CRS"},
      {"years", ColumnType::real, "yr"},
  };
  return columns;
}

const OutputColumn* find_output_column(std::string_view name) {
  const auto& columns = output_columns();
  const auto it =
      std::lower_bound(columns.begin(), columns.end(), name,
                       [](const OutputColumn& c, std::string_view n) { return c.name < n; });
  return it != columns.end() && it->name == name ? &*it : nullptr;
}

std::string_view csvt_name(ColumnType type) {
  switch (type) {
    case ColumnType::integer:
      return "Integer";
    case ColumnType::real:
      return "Real";
    case ColumnType::date:
      return "Date";
    case ColumnType::date_time:
      return "DateTime";
    default:
      return "String";
  }
}

std::string csvt_line(const std::vector<std::string>& header) {
  std::string line;
  for (const std::string& name : header) {
    if (!line.empty()) line += ',';
    const OutputColumn* column = find_output_column(name);
    line += '"';
    line += csvt_name(column ? column->type : ColumnType::text);
    line += '"';
  }
  return line;
}

}  // namespace levelhead
