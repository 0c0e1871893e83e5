#include "levelhead/core/common_error.hpp"

#include <fmt/format.h>

#include <charconv>
#include <cmath>

namespace levelhead {

double shared_covariance(const std::vector<CommonError>& a, const std::vector<CommonError>& b) {
  double covariance = 0.0;
  for (const CommonError& x : a) {
    for (const CommonError& y : b) {
      if (x.source == y.source) covariance += std::sqrt(x.variance * y.variance);
    }
  }
  return covariance;
}

double total_variance(const std::vector<CommonError>& parts) {
  double sum = 0.0;
  for (const CommonError& p : parts) sum += p.variance;
  return sum;
}

std::string format_common_errors(const std::vector<CommonError>& parts, double per_metre) {
  std::string text;
  for (const CommonError& p : parts) {
    if (!text.empty()) text += "; ";
    text += fmt::format("{}={:.4f}", p.source, std::sqrt(p.variance) * per_metre);
  }
  return text;
}

std::optional<std::vector<CommonError>> parse_common_errors(std::string_view text,
                                                            double metres_per_unit) {
  std::vector<CommonError> parts;
  while (!text.empty()) {
    const std::size_t end = text.find("; ");
    const std::string_view item = text.substr(0, end);
    const std::size_t equals = item.rfind('=');
    if (equals == std::string_view::npos || equals == 0) return std::nullopt;
    double sigma = 0.0;
    const std::string_view number = item.substr(equals + 1);
    const auto [rest, error] = std::from_chars(number.data(), number.data() + number.size(), sigma);
    if (error != std::errc() || rest != number.data() + number.size() || !(sigma >= 0.0))
      return std::nullopt;
    sigma *= metres_per_unit;
    parts.push_back({std::string(item.substr(0, equals)), sigma * sigma});
    text = end == std::string_view::npos ? std::string_view() : text.substr(end + 2);
  }
  return parts;
}

}  // namespace levelhead
