#include "levelhead/report/stage_results.hpp"

#include <system_error>

namespace levelhead {

NetworkHeights AdjustStage::heights() const {
  NetworkHeights out;
  for (const AdjustedPoint& a : result.points) {
    NetworkHeight n;
    n.height = a.height;
    n.sigma = a.sigma;
    n.reference = result.reference;
    n.checked = a.checked;
    out.emplace(network.points[a.point].id, n);
  }
  return out;
}

MonitoredHeights EpochsStage::monitored() const {
  MonitoredHeights out;
  for (std::size_t p = 0; p < analysis.points.size(); ++p) {
    MonitoredSeries& series = out[analysis.points[p]];
    series.reference = analysis.reference;
    for (const EpochHeight& h : analysis.heights[p])
      series.epochs.push_back({analysis.epochs[h.epoch].time, h.height, h.sigma, h.checked});
  }
  order_monitored_epochs(out, written_to.string());
  return out;
}

bool names_file(const std::string& option_value, const std::filesystem::path& written_to) {
  if (option_value.empty() || written_to.empty()) return false;
  std::error_code ec;
  return std::filesystem::equivalent(option_value, written_to, ec) && !ec;
}

std::vector<double> AdjustStage::covariance(const std::vector<std::string>& ids) const {
  std::vector<std::size_t> points;
  std::vector<std::size_t> asked;  // positions in `ids` of the points found
  for (std::size_t k = 0; k < ids.size(); ++k) {
    const auto it = network.point_index.find(ids[k]);
    if (it == network.point_index.end()) continue;
    points.push_back(it->second);
    asked.push_back(k);
  }
  const std::vector<double> q = point_cofactors(network, result, points, options);
  const double scale = result.sigma0 ? *result.sigma0 * *result.sigma0 : 1.0;
  std::vector<double> c(ids.size() * ids.size(), 0.0);
  for (std::size_t a = 0; a < points.size(); ++a) {
    for (std::size_t b = 0; b < points.size(); ++b)
      c[asked[a] * ids.size() + asked[b]] = scale * q[a * points.size() + b];
  }
  return c;
}

}  // namespace levelhead
