#include "levelhead/heads/levels.hpp"

#include <fmt/format.h>
#include <fmt/ranges.h>

#include <algorithm>
#include <charconv>
#include <cmath>

#include "levelhead/core/errors.hpp"
#include "util/text.hpp"

namespace levelhead {

namespace {

// A finite number, '+' allowed in front (as spreadsheets write it).
bool parse_number(std::string_view text, double& value) {
  text = util::trim(text);
  if (!text.empty() && text.front() == '+') text.remove_prefix(1);
  const auto [end, ec] = std::from_chars(text.data(), text.data() + text.size(), value);
  return ec == std::errc() && end == text.data() + text.size() && std::isfinite(value);
}

bool is_known_state(const std::string& state) {
  const auto& known = reading_states();
  return std::find(known.begin(), known.end(), state) != known.end();
}

}  // namespace

const std::vector<std::string>& reading_states() {
  static const std::vector<std::string> states = {"dry",        "flowing", "frozen",
                                                  "obstructed", "pumping", "recently-pumped"};
  return states;
}

std::string normalise_state(std::string_view text) {
  std::string s = util::to_lower(util::trim(text));
  std::replace(s.begin(), s.end(), '_', '-');
  std::replace(s.begin(), s.end(), ' ', '-');
  return s;
}

LevelValue read_level_value(const Table& t, std::size_t r, std::size_t depth_col,
                            std::optional<std::size_t> status_col, double max_depth) {
  const double unit = metres_per_unit(t.length_unit());
  LevelValue level;
  const std::string_view depth_text = t.cell(r, depth_col);
  double value = 0.0;
  if (parse_number(depth_text, value)) {
    level.depth = value * unit;
    if (std::abs(*level.depth) > max_depth) {
      throw InputError(t.location(r, depth_col), std::string(depth_text),
                       fmt::format("a depth of {:.0f} m is not plausible (largest accepted {:.0f} "
                                   "m); are the depths in another unit than --unit says?",
                                   *level.depth, max_depth));
    }
  } else if (!depth_text.empty() && (depth_text.front() == '>' || depth_text.front() == '<') &&
             parse_number(depth_text.substr(1), value)) {
    level.state = depth_text.front() == '>' ? fmt::format("deeper-than:{}", value * unit)
                                            : fmt::format("shallower-than:{}", value * unit);
  } else if (!depth_text.empty()) {
    level.state = normalise_state(depth_text);
    if (!is_known_state(level.state)) {
      throw InputError(t.location(r, depth_col), std::string(depth_text),
                       fmt::format("expected a depth (m below the measuring point), a censored "
                                   "value such as >12.5, or one of: {}",
                                   fmt::join(reading_states(), ", ")));
    }
  }
  if (status_col) {
    level.status = normalise_state(t.cell(r, *status_col));
    if (!level.status.empty() && !is_known_state(level.status)) {
      throw InputError(t.location(r, *status_col), std::string(t.cell(r, *status_col)),
                       fmt::format("expected one of: {}", fmt::join(reading_states(), ", ")));
    }
  }
  if (!level.depth && level.state.empty() && level.status.empty()) {
    throw InputError(t.location(r, depth_col), "",
                     "a reading needs a depth or a state (dry, flowing, ...)");
  }
  return level;
}

}  // namespace levelhead
