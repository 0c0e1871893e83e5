#pragma once
// Progress of long work (reading a logger archive of millions of rows, a
// levels table of a national network), for a person watching a terminal.
//
// The library only reports: report_progress() goes to the reporter set on
// this thread by a ProgressScope, and nowhere when there is none (tests,
// library users, output not on a terminal). The CLI sets one on a terminal
// (cli/terminal_progress.hpp).

#include <string>
#include <utility>

namespace levelhead {

class ProgressReporter {
 public:
  virtual ~ProgressReporter() = default;
  // `task` names the work ("reading records.csv"); `fraction` 0..1 done.
  virtual void report(const std::string& task, double fraction) = 0;
  // The task is over (finished or abandoned).
  virtual void done(const std::string& task) = 0;
};

// `reporter` receives this thread's progress while the scope lives.
class ProgressScope {
 public:
  explicit ProgressScope(ProgressReporter* reporter);
  ~ProgressScope();
  ProgressScope(const ProgressScope&) = delete;
  ProgressScope& operator=(const ProgressScope&) = delete;

 private:
  ProgressReporter* previous_;
};

void report_progress(const std::string& task, double fraction);
void report_done(const std::string& task);

// Reports done when it goes out of scope, also on an exception.
class ProgressTask {
 public:
  // Reports 0 at once: the clock of the estimate starts here.
  explicit ProgressTask(std::string task) : task_(std::move(task)) { report_progress(task_, 0.0); }
  ~ProgressTask() { report_done(task_); }
  ProgressTask(const ProgressTask&) = delete;
  ProgressTask& operator=(const ProgressTask&) = delete;
  void report(double fraction) const { report_progress(task_, fraction); }

 private:
  std::string task_;
};

}  // namespace levelhead
