#include "cli/terminal_progress.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>

namespace levelhead::cli {

std::string progress_line(const std::string& task, double fraction, double elapsed_seconds) {
  fraction = std::clamp(fraction, 0.0, 1.0);
  std::string line = fmt::format("{}: {:.0f} %", task, 100.0 * fraction);
  if (elapsed_seconds >= 1.0 && fraction >= 0.01 && fraction < 1.0) {
    // Linear in the work done: the rest at the pace so far.
    const double left = elapsed_seconds * (1.0 - fraction) / fraction;
    line += left < 90.0 ? fmt::format(" (about {:.0f} s left)", std::max(1.0, std::round(left)))
                        : fmt::format(" (about {:.0f} min left)", std::round(left / 60.0));
  }
  return line;
}

TerminalProgress::~TerminalProgress() {
  if (width_ > 0) done(task_);
}

void TerminalProgress::report(const std::string& task, double fraction) {
  const Clock::time_point now = Clock::now();
  if (task != task_) {
    task_ = task;
    started_ = now;
    shown_ = Clock::time_point{};
  }
  // Work done within a second needs no progress line.
  if (now - started_ < std::chrono::seconds(1) || now - shown_ < std::chrono::milliseconds(250))
    return;
  shown_ = now;
  const std::string line =
      progress_line(task, fraction, std::chrono::duration<double>(now - started_).count());
  terminal_ << '\r' << line << std::string(width_ > line.size() ? width_ - line.size() : 0, ' ')
            << std::flush;
  width_ = std::max(width_, line.size());
}

void TerminalProgress::done(const std::string&) {
  if (width_ == 0) return;
  terminal_ << '\r' << std::string(width_, ' ') << '\r' << std::flush;
  width_ = 0;
  task_.clear();
}

}  // namespace levelhead::cli
