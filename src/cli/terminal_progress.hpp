#pragma once
// Progress of long stages on a terminal: one line on stderr, shown once a
// task has run a second, rewritten in place at most four times a second,
// with an estimate of the time left, and erased when the task is done. Only for a person watching:
// nothing is shown when stderr is not a terminal or the command runs --quiet.

#include <chrono>
#include <ostream>
#include <string>

#include "levelhead/core/progress.hpp"

namespace levelhead::cli {

// "reading records.csv: 40 % (about 15 s left)"; no estimate in the first
// second or below 1 % (too early to say).
std::string progress_line(const std::string& task, double fraction, double elapsed_seconds);

class TerminalProgress : public ProgressReporter {
 public:
  explicit TerminalProgress(std::ostream& terminal) : terminal_(terminal) {}
  ~TerminalProgress() override;
  void report(const std::string& task, double fraction) override;
  void done(const std::string& task) override;

 private:
  using Clock = std::chrono::steady_clock;
  std::ostream& terminal_;
  std::string task_;
  Clock::time_point started_, shown_;
  std::size_t width_ = 0;  // of the line on screen, to erase it
};

}  // namespace levelhead::cli
