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

}  // namespace levelhead
