#pragma once
// Work on contiguous ranges of [0, count) shared among the machine's cores
// (at most 8 threads), for loops whose items are independent.
//
// In:  count, work(begin, end), the fewest items worth a thread of their own.
// Out: work has been called on ranges that cover [0, count) once each.
// Errors: the first exception of any range is rethrown once all have ended.

#include <algorithm>
#include <cstddef>
#include <exception>
#include <mutex>
#include <thread>
#include <vector>

namespace levelhead::util {

template <class Work>
void run_in_parallel_ranges(std::size_t count, Work&& work, std::size_t min_per_thread = 50000) {
  const std::size_t cores = std::max(1u, std::thread::hardware_concurrency());
  const std::size_t threads =
      std::max<std::size_t>(1, std::min<std::size_t>({cores, 8, count / min_per_thread}));
  if (threads == 1) {
    work(std::size_t{0}, count);
    return;
  }
  std::mutex mutex;
  std::exception_ptr failure;
  const auto range = [&](std::size_t t) {
    try {
      work(count * t / threads, count * (t + 1) / threads);
    } catch (...) {
      const std::lock_guard lock(mutex);
      if (!failure) failure = std::current_exception();
    }
  };
  std::vector<std::thread> helpers;
  for (std::size_t t = 1; t < threads; ++t) helpers.emplace_back(range, t);
  range(0);
  for (std::thread& helper : helpers) helper.join();
  if (failure) std::rethrow_exception(failure);
}

}  // namespace levelhead::util
