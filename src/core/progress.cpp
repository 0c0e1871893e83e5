#include "levelhead/core/progress.hpp"

namespace levelhead {

namespace {
thread_local ProgressReporter* current = nullptr;
}  // namespace

ProgressScope::ProgressScope(ProgressReporter* reporter) : previous_(current) {
  current = reporter;
}

ProgressScope::~ProgressScope() { current = previous_; }

void report_progress(const std::string& task, double fraction) {
  if (current) current->report(task, fraction);
}

void report_done(const std::string& task) {
  if (current) current->done(task);
}

}  // namespace levelhead
